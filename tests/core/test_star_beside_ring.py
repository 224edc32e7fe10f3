"""A bright star left unmasked just outside a ring must not carry the ring's candidate to the star's radius
(lensmass.core.peak_extent). Scene from astropy models: a Gaussian-profile ring (the radial profile of a resolved
Einstein ring, common practice) and a Moffat2D star (Moffat 1969, the seeing profile astropy implements)."""

import numpy as np
from astropy.modeling.models import Gaussian1D, Moffat2D

from lensmass.core.peak_extent import peak_basin
from lensmass.core.ringfinder import find_ring


def _scene(star_peak: float, seed: int = 3) -> np.ndarray:
    yy, xx = np.mgrid[0:121, 0:121].astype(float)
    r = np.hypot(xx - 60, yy - 60)
    ring = Gaussian1D(1.0, 22.0, 3.0)(r)
    star = Moffat2D(star_peak, 60 + 33.0 * np.cos(0.7), 60 + 33.0 * np.sin(0.7), gamma=2.5, alpha=3.0)(xx, yy)
    return ring + star + np.random.default_rng(seed).normal(0, 0.05, r.shape)


def test_ring_beside_a_bright_unmasked_star_is_measured_on_the_ring():
    for peak in (200.0, 1000.0):
        res = find_ring(_scene(peak), 60.0, 60.0, subtract_lens_light=False, auto_mask=False)
        assert res.found and abs(res.radius_pix / 22.0 - 1) < 0.05, (peak, res.radius_pix, res.message)
        assert res.coverage >= 0.9


def test_no_star_no_change():
    res = find_ring(_scene(0.0), 60.0, 60.0, subtract_lens_light=False, auto_mask=False)
    assert res.found and abs(res.radius_pix / 22.0 - 1) < 0.02


def test_peak_basin_stops_at_the_valley_before_a_brighter_peak():
    # Two astropy Gaussian1D peaks: the fainter one's basin ends at the minimum between them.
    x = np.arange(100.0)
    p = Gaussian1D(1.0, 40, 3)(x) + Gaussian1D(5.0, 66, 2)(x)
    lo, hi = peak_basin(p, 40)
    assert lo == 0 and 45 < hi < 62 and hi == 40 + int(np.argmin(p[40:67]))
    assert peak_basin(p, 66) == (0, 99)
