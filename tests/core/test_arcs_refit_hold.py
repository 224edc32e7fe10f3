"""Arcs seen in half the directions or more are kept like a ring when the ring-masked refit moves them.

Outside references: the lens is a bulge and a disc, astropy.modeling's Sersic2D with n = 4 (de Vaucouleurs 1948) and
n = 1 (an exponential disc), which one Sersic profile cannot follow; the arcs are astropy's Ring2D (a uniform annulus
1.5 pixels wide at theta_E = 16 pixels) kept in two opposite sectors of 100 degrees each (an extended source near
the lens axis makes two long arcs on opposite sides: common practice); all integrated over pixels by astropy's
discretize_model and blurred by astropy's Gaussian2DKernel (Gaussian seeing of 4 pixels FWHM, theta_E = 4 FWHM).
Masking the arcs' whole annulus frees the single-Sersic refit to leave the disc's light under it, and that light
merges with the arcs into a ring inside them (lensmass.core.refit_hold).
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.convolution import Gaussian2DKernel, convolve_fft, discretize_model
from astropy.modeling.models import Ring2D, Sersic2D
from astropy.stats import gaussian_fwhm_to_sigma

from lensmass.core.refit_hold import NEAR_RING_COVERAGE
from lensmass.core.ringfinder import find_ring

SIZE, CX, CY, THETA_E, NOISE, SEEING_FWHM = 81, 40.2, 39.8, 16.0, 0.03, 4.0
ARC_DIRECTIONS_DEG, ARC_HALF_SPAN_DEG = (30.0, 210.0), 50.0


def _field(seed: int) -> np.ndarray:
    bulge = Sersic2D(amplitude=2.0, r_eff=4.0, n=4.0, x_0=CX, y_0=CY, ellip=0.1, theta=0.4)
    disc = Sersic2D(amplitude=0.15, r_eff=14.0, n=1.0, x_0=CX, y_0=CY, ellip=0.3, theta=0.4)
    ring = Ring2D(amplitude=0.2, x_0=CX, y_0=CY, r_in=THETA_E - 0.75, width=1.5)
    grid = dict(x_range=(0, SIZE), y_range=(0, SIZE), mode="oversample", factor=5)
    yy, xx = np.mgrid[0:SIZE, 0:SIZE] + 0.0
    angle = np.degrees(np.arctan2(yy - CY, xx - CX))
    off = np.min([np.abs((angle - a + 180.0) % 360.0 - 180.0) for a in ARC_DIRECTIONS_DEG], axis=0)
    arcs = discretize_model(ring, **grid) * (off <= ARC_HALF_SPAN_DEG)
    light = discretize_model(bulge + disc, **grid) + arcs
    blurred = convolve_fft(light, Gaussian2DKernel(SEEING_FWHM * gaussian_fwhm_to_sigma))
    return blurred + np.random.default_rng(seed).normal(0, NOISE, light.shape)


@pytest.mark.parametrize("seed", [1, 4])
def test_arcs_kept_when_the_refit_moves_them(seed):
    """The first search sees the arcs at 0.98-0.99 theta_E in 54-58% of the directions; the refit with their
    annulus masked answers a ring at 0.92-0.93 theta_E. Before the change (h26a) the refit's ring was the answer
    (0.920 and 0.926 theta_E on these seeds); now the arcs are kept, the refit's move in their error."""
    found = find_ring(_field(seed), auto_mask=False)
    assert found.found and abs(found.radius_pix / THETA_E - 1) < 0.05, found.message
    assert found.coverage >= NEAR_RING_COVERAGE, found.message
    assert any("moved the arcs" in w and "arcs are kept" in w for w in found.warnings), found.warnings
