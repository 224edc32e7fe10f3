"""A round neighbour galaxy just outside the ring, joined to the lens's light, is fitted and subtracted.

Outside references: the lens is a bulge and a disc, astropy.modeling's Sersic2D with n = 4 (de Vaucouleurs 1948) and
n = 1 (an exponential disc); the ring is astropy's Ring2D (a uniform annulus 1.5 pixels wide at theta_E = 14 pixels),
kept in two opposite sectors of 180 degrees each; the neighbour is a small, nearly round Sersic2D (n = 1.5, R_e 1.5
pixels) at 1.3 theta_E; all integrated over pixels by astropy's discretize_model and blurred by astropy's
Gaussian2DKernel (Gaussian seeing of 4 pixels FWHM). With no masks (auto_mask=False) the neighbour stays in the
lens's light, as it does when segmentation joins it to the lens (lensmass.core.inner_neighbour).
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.convolution import Gaussian2DKernel, convolve_fft, discretize_model
from astropy.modeling.models import Ring2D, Sersic2D
from astropy.stats import gaussian_fwhm_to_sigma

from lensmass.core.inner_neighbour import tangential_stretch
from lensmass.core.ringfinder import find_ring

SIZE, CX, CY, THETA_E, NOISE, SEEING_FWHM = 81, 40.2, 39.8, 14.0, 0.03, 4.0
NB_DISTANCE, NB_ANGLE_DEG = 1.3 * THETA_E, 30.0
GRID = dict(x_range=(0, SIZE), y_range=(0, SIZE), mode="oversample", factor=5)


def _blur(light: np.ndarray) -> np.ndarray:
    return convolve_fft(light, Gaussian2DKernel(SEEING_FWHM * gaussian_fwhm_to_sigma))


def _field(seed: int) -> np.ndarray:
    bulge = Sersic2D(amplitude=2.0, r_eff=4.0, n=4.0, x_0=CX, y_0=CY, ellip=0.1, theta=0.4)
    disc = Sersic2D(amplitude=0.15, r_eff=12.0, n=1.0, x_0=CX, y_0=CY, ellip=0.3, theta=0.4)
    nb = Sersic2D(amplitude=1.0, r_eff=1.5, n=1.5, x_0=CX + NB_DISTANCE * np.cos(np.radians(NB_ANGLE_DEG)),
                  y_0=CY + NB_DISTANCE * np.sin(np.radians(NB_ANGLE_DEG)), ellip=0.1, theta=1.0)
    ring = Ring2D(amplitude=0.2, x_0=CX, y_0=CY, r_in=THETA_E - 0.75, width=1.5)
    yy, xx = np.mgrid[0:SIZE, 0:SIZE] + 0.0
    angle = np.degrees(np.arctan2(yy - CY, xx - CX))
    off = np.min([np.abs((angle - a + 180.0) % 360.0 - 180.0) for a in (NB_ANGLE_DEG - 20, NB_ANGLE_DEG + 160)], axis=0)
    light = discretize_model(bulge + disc + nb, **GRID) + discretize_model(ring, **GRID) * (off <= 180.0)
    return _blur(light) + np.random.default_rng(seed).normal(0, NOISE, light.shape)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_a_neighbour_outside_the_ring_is_subtracted(seed):
    """Before the change (main 134dd82) the answers were 1.095, 1.062 and 0.867 theta_E on these seeds: the
    neighbour's light pulled the ring's profile; with the neighbour fitted and subtracted, 0.99, 0.99 and 0.96."""
    found = find_ring(_field(seed), auto_mask=False)
    assert found.found and abs(found.radius_pix / THETA_E - 1) < 0.05, found.message
    assert any("neighbour galaxy" in w for w in found.warnings), found.warnings


def test_tangential_stretch_tells_an_arc_from_a_round_blob():
    """A round Gaussian blob reads about 1; a piece of a Ring2D annulus 40 degrees long reads well above the cut."""
    yy, xx = np.mgrid[0:SIZE, 0:SIZE] + 0.0
    x0, y0 = CX + NB_DISTANCE, CY
    blob = _blur(np.exp(-0.5 * ((xx - x0) ** 2 + (yy - y0) ** 2) / 1.5**2))
    angle = np.degrees(np.arctan2(yy - CY, xx - CX))
    arc = _blur(discretize_model(Ring2D(amplitude=1.0, x_0=CX, y_0=CY, r_in=NB_DISTANCE - 0.75, width=1.5), **GRID)
                * (np.abs(angle) <= 20.0))
    assert tangential_stretch(blob, x0, y0, CX, CY, SEEING_FWHM) == pytest.approx(1.0, abs=0.05)
    assert tangential_stretch(arc, x0, y0, CX, CY, SEEING_FWHM) > 1.5
