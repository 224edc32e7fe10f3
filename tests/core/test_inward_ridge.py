"""A candidate's ridge that leaves its peak for the lens core's residual (lensmass.core.inward_ridge).

Scenes: an Einstein ring as astropy's Ring2D (a uniform annulus) smeared by a Gaussian seeing (scipy.ndimage
gaussian_filter), and the lens core's leftover light as astropy's Gaussian2D, falling steadily outwards (a one-Sersic
misfit of a sharp core: common practice that such residuals peak at the centre), with Gaussian noise.
"""

import numpy as np
import pytest
from astropy.modeling.models import Gaussian2D, Ring2D
from scipy.ndimage import gaussian_filter

from lensmass.core import ringfinder as rf
from lensmass.core.inward_ridge import CORE_SHARE, left_for_core

N, C = 101, 50.0


def _scene(core_amp: float, core_sigma: float, ring_sigma: float, seed: int = 1) -> np.ndarray:
    y, x = np.mgrid[0:N, 0:N]
    ring = gaussian_filter(Ring2D(1.0, C, C, r_in=15.5, width=1.0)(x, y), ring_sigma)
    ring /= ring.max()
    core = Gaussian2D(core_amp, C, C, core_sigma, core_sigma)(x, y)
    return ring + core + np.random.default_rng(seed).normal(0.0, 0.15, (N, N))


@pytest.mark.parametrize(("core_amp", "core_sigma", "ring_sigma"), [(10.0, 2.5, 3.0), (6.0, 3.0, 3.5), (15.0, 2.0, 3.0)])
def test_a_ring_beside_a_bright_core_residual_is_measured_at_its_own_peak(core_amp, core_sigma, ring_sigma):
    # Before inward_ridge the ring's candidate was measured on the core's residual (2.4-2.8 pixels, "a ring").
    res = _scene(core_amp, core_sigma, ring_sigma)
    out = rf._search(res, C, C, 2.0, 45.0, 24, None, [], None, None)
    assert out.found and out.kind == "ring"
    assert abs(out.radius_pix / 16.0 - 1) <= 0.05


def test_the_rule_did_fire_on_that_scene(monkeypatch):
    fired = []

    def spy(first, basin):
        hit = left_for_core(first, basin)
        fired.append(hit)
        return hit

    monkeypatch.setattr(rf, "left_for_core", spy)
    rf._search(_scene(10.0, 2.5, 3.0), C, C, 2.0, 45.0, 24, None, [], None, None)
    assert any(fired)


def test_a_small_ring_without_a_core_residual_keeps_its_radius():
    # A ring at 6 pixels (2.5 seeing FWHM of a Gaussian of sigma 1: FWHM = 2.355 sigma) alone in the residual.
    y, x = np.mgrid[0:N, 0:N]
    ring = gaussian_filter(Ring2D(1.0, C, C, r_in=5.5, width=1.0)(x, y), 1.0)
    res = ring / ring.max() + np.random.default_rng(2).normal(0.0, 0.1, (N, N))
    out = rf._search(res, C, C, 2.0, 45.0, 24, None, [], None, None)
    assert out.found and abs(out.radius_pix / 6.0 - 1) <= 0.05


def test_core_share_is_a_share():
    assert 0.0 < CORE_SHARE < 1.0
