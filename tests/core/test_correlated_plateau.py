"""A sky left over as a plateau under correlated noise does not outbid a ring near the lens (lensmass.core.outer_sky,
lensmass.core.profile_plateau).

The field is built from outside models: astropy's Sersic2D (de Vaucouleurs n = 4 lens) and Ring2D (the ring, blurred
by scipy.ndimage.gaussian_filter), correlated noise as white noise smoothed by a Gaussian of sigma 1 pixel (the
common model of resampled images; scipy.ndimage.gaussian_filter), and a sky left 0.5 noise sigma too high beyond
35 pixels (a sky plateau). Before the change the finder answered a ring at 52-78 pixels in 3 of these 6 fields."""
import numpy as np
import pytest
from astropy.modeling.models import Ring2D, Sersic2D
from scipy.ndimage import gaussian_filter

from lensmass.core.outer_sky import outer_sky_offset
from lensmass.core.profile_plateau import plateau_score
from lensmass.core.ringfinder import find_ring

N, C, RING_PIX = 161, 80.0, 12.0


def _field(seed: int) -> np.ndarray:
    yy, xx = np.mgrid[0:N, 0:N].astype(float)
    noise = gaussian_filter(np.random.default_rng(seed).normal(size=(N, N)), 1.0)
    img = noise / noise.std() + 100.0 + Sersic2D(amplitude=20, r_eff=5, n=4, x_0=C, y_0=C)(xx, yy)
    ring = Ring2D(amplitude=1.0, x_0=C, y_0=C, r_in=RING_PIX - 1.0, width=2.0)(xx, yy)
    img += 7.0 * gaussian_filter(ring, 1.2)
    return img + 0.5 * (np.hypot(xx - C, yy - C) > 35.0)


@pytest.mark.parametrize("seed", range(6))
def test_ring_not_outbid_by_sky_plateau(seed):
    out = find_ring(_field(seed))
    assert out.found and abs(out.radius_pix / RING_PIX - 1) < 0.05


def test_outer_sky_level_taken_off_beyond_fit():
    # Sector profiles of white noise (numpy) with a sky 0.5 sigma off beyond 30 pixels: the offset taken off is that
    # level beyond the ramp and nothing inside the fit radius; on noise alone nothing is taken off.
    rng = np.random.default_rng(1)
    radii = np.arange(0.25, 90, 0.5)
    counts = np.tile(np.maximum(np.round(2 * np.pi * radii * 0.5 / 24), 1), (24, 1))
    noise = rng.normal(size=counts.shape) * np.sqrt(counts)  # sums of unit-sigma pixels
    off = outer_sky_offset(noise + 0.5 * (radii > 30) * counts, counts, radii, 30.0, 1.0)
    assert off is not None and abs(off[radii > 40].mean() - 0.5) < 0.05 and off[radii < 30].max() == 0.0
    assert outer_sky_offset(noise, counts, radii, 30.0, 1.0) is None


def test_plateau_scored_by_height_above_outer_base():
    # A ring (Gaussian profile) falls to the sky outside it; a bump on a sky step does not (scipy peak_prominences).
    r = np.arange(100.0)
    prof = np.exp(-0.5 * ((r - 12) / 1.5) ** 2) + 0.5 * (r > 35) + 0.2 * np.exp(-0.5 * ((r - 70) / 2) ** 2)
    err = np.full(100, 0.05)
    assert plateau_score(20.0, prof, err, 12) == 20.0
    assert plateau_score(14.0, prof, err, 70) == pytest.approx(0.2 / 0.05, rel=0.05)
