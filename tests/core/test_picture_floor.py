"""The search floor of a colour picture under a display stretch stronger than the finder assumes.

A bright, broad lens (astropy.modeling Sersic2D, n = 3, R_eff = 11 pixels, 200-300 noise sigma at the peak) and a
blue ring (astropy Ring2D of radius 11 pixels, the truth: the middle of its annulus), blurred by an astropy
Gaussian2DKernel, stretched by astropy.visualization's make_rgb with LogStretch(1500) over one interval for all bands
(the 0.4 and 99.6 percentiles of the three bands together, astropy's ManualInterval) and stored by Pillow as PNG.
Undone as an asinh of strength 5, such a log stretch leaves the lens core about twice as wide as it is, and a search
floor set from that half-maximum (lensmass.core.ring_pictures.PICTURE_CORE_RATIO) lay above the ring: no ring was
found on any of these eight pictures before the floor was also measured at the strongest assumed stretch."""

from __future__ import annotations

import numpy as np
import pytest

from lensmass.core.ringfinder import find_ring
from lensmass.io.images import load_image

SIZE, RADIUS, FWHM = 80, 11.0, 2.6
LENS_GRI = (0.35, 0.7, 1.0)  # a red early-type lens (g, r, i flux ratios; common practice)
ARC_GRI = (1.0, 0.85, 0.7)  # a star-forming source, bluer than the lens


def _bands(seed: int, peak: float) -> np.ndarray:
    from astropy.convolution import Gaussian2DKernel, convolve_fft, discretize_model
    from astropy.modeling.models import Ring2D, Sersic2D

    c = (SIZE - 1) / 2 + 0.3
    grid = dict(x_range=(0, SIZE), y_range=(0, SIZE), mode="oversample", factor=5)
    lens = discretize_model(Sersic2D(amplitude=1.0, r_eff=11.0, n=3.0, x_0=c, y_0=c, ellip=0.2, theta=1.0), **grid)
    ring = discretize_model(Ring2D(amplitude=1.0, x_0=c, y_0=c, r_in=RADIUS - 1.0, width=2.0), **grid)
    kernel = Gaussian2DKernel(FWHM / 2.3548)
    lens, ring = (convolve_fft(a, kernel) for a in (lens, ring))
    lens, ring = peak * lens / lens.max(), 10 * ring / ring.max()  # in noise sigma
    noise = np.random.default_rng(seed).normal(0.0, 1.0, (3, SIZE, SIZE))
    return np.stack([LENS_GRI[b] * lens + ARC_GRI[b] * ring + noise[b] for b in range(3)])


@pytest.mark.parametrize("peak", [200.0, 300.0])
def test_ring_inside_a_log_stretched_core_is_searched(tmp_path, peak):
    from astropy.visualization import LogStretch, ManualInterval, make_rgb
    from PIL import Image

    from lensmass.core.einstein import picture_options

    radii = []
    for seed in (583000, 583001, 583002, 583003):
        g, r, i = _bands(seed, peak)
        lo, hi = np.percentile(np.stack([i, r, g]), [0.4, 99.6])
        pic = make_rgb(i, r, g, interval=[ManualInterval(lo, hi)] * 3, stretch=LogStretch(1500))
        path = str(tmp_path / f"log_{seed}.png")
        Image.fromarray(pic, "RGB").save(path)
        image = load_image(path)
        out = find_ring(image.data, **picture_options(image))
        radii.append(out.radius_pix if out.found else np.nan)
    # Before (main 4f45eac): none found (floors 10.8-14.8 pixels). After: 8 of 8 within 1.1% (first run, h15c).
    assert np.all(np.abs(np.asarray(radii) / RADIUS - 1) <= 0.05), radii
