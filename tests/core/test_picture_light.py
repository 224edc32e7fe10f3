"""The lens light of an 8-bit picture is fitted with the picture's stretch undone (core/picture_light.py).

Outside references: the galaxy is astropy.modeling's Sersic2D (n = 4, R_eff = 6 pixels) blurred by astropy.convolution's
Gaussian2DKernel (a 3-pixel FWHM seeing), integrated over pixels by astropy's discretize_model; the picture is made
by astropy.visualization's AsinhStretch (y = asinh(x / a) / asinh(1 / a)), written and read back by Pillow as
an 8-bit grey PNG through lensmass.io.images.load_image, as a survey viewer's picture would come.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.convolution import Gaussian2DKernel, convolve_fft, discretize_model
from astropy.modeling.models import Sersic2D
from astropy.visualization import AsinhStretch
from PIL import Image

from lensmass.core.einstein import picture_options
from lensmass.core.lenslight import fit_lens_light_masked
from lensmass.core.picture_light import PICTURE_STRENGTHS, restretch
from lensmass.io.images import load_image

N_TRUE, RE_TRUE, RING_PIX, AMP = 4.0, 6.0, 16.0, 5.0


def _grey_picture(tmp_path, strength: float):
    yy, xx = np.mgrid[0:97, 0:97].astype(float)
    # integrated over each pixel (sampled at pixel centres an n = 4 cusp puts most of the light in one pixel)
    galaxy = discretize_model(Sersic2D(amplitude=AMP, r_eff=RE_TRUE, n=N_TRUE, x_0=48, y_0=48, ellip=0.2, theta=0.5),
                              (0, 97), (0, 97), mode="oversample", factor=10)
    galaxy = convolve_fft(galaxy, Gaussian2DKernel(3.0 / 2.3548))
    ring = 3.0 * np.exp(-0.5 * ((np.hypot(xx - 48, yy - 48) - RING_PIX) / 1.2) ** 2)
    # the black point 3 noise sigma below the sky (as viewers set it), so the sky's noise is not clipped
    flux = galaxy + ring + np.random.default_rng(7).normal(0.9, 0.3, xx.shape)
    top = float(flux.max())
    a = 1 / np.sinh(strength)  # AsinhStretch's a for which asinh(1 / a) is the strength
    picture = 255 * AsinhStretch(a=a)(np.clip(flux / top, 0, 1))
    path = tmp_path / "lens.png"
    Image.fromarray(np.round(picture).astype(np.uint8), "L").save(path)
    return load_image(path)


@pytest.mark.parametrize("strength", [4.5, 6.0])
def test_an_asinh_grey_picture_is_fitted_with_its_stretch_undone(tmp_path, strength):
    image = _grey_picture(tmp_path, strength)
    assert picture_options(image)["stretched"]
    light = fit_lens_light_masked(image.data, **picture_options(image))
    raw = fit_lens_light_masked(image.data)  # the picture's values taken as flux (before this change)
    assert light.ok
    # closer to the galaxy's Sersic than a fit to the stretched values (the index to 25%: the strength is chosen
    # among a few, and R_eff moves with it; the picture's Sersic is only as good as the assumed stretch)
    assert abs(light.sersic_n - N_TRUE) < 0.25 * N_TRUE < abs(raw.sersic_n - N_TRUE), (light.sersic_n, raw.sersic_n)
    assert abs(light.r_eff_pix - RE_TRUE) < abs(raw.r_eff_pix - RE_TRUE)
    assert light.notes[0].startswith("An 8-bit picture") and "asinh" in light.notes[0]
    # the model is in picture values: inside the ring the residual is within a few 8-bit steps
    yy, xx = np.mgrid[0:97, 0:97]
    core = (np.hypot(xx - 48, yy - 48) < 0.6 * RING_PIX) & (np.hypot(xx - 48, yy - 48) > 1.5)
    new, old = np.nanmean(np.abs(light.residual[core])), np.nanmean(np.abs(raw.residual[core]))
    print(f"mean |residual| inside the ring: {new:.2f} levels with the stretch undone, {old:.2f} without")
    assert new < old
    assert np.nanmax(light.model) <= 256  # the model is in picture values, not the linearised flux
    # the ring stands out in the residual as it does in the flux: its mean over the ring's pixels is positive
    on_ring = np.abs(np.hypot(xx - 48, yy - 48) - RING_PIX) < 1.5
    assert np.nanmean(light.residual[on_ring]) > 5 * np.nanmean(np.abs(light.residual[core]))


def test_restretch_undoes_linearising_for_every_strength_tried():
    from lensmass.core.picture_light import _undo

    v = np.linspace(0, 255, 52)
    for strength in PICTURE_STRENGTHS:
        assert np.allclose(restretch(_undo(v, strength, 255.0), strength, 255.0), v)
