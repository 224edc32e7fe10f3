"""Our generator's overlapping companion (lensmass.core.realistic_fields): a red galaxy on the lens's light.

Checks are facts of image formation (common practice): a convolution with a normalised PSF keeps the flux, so the
companion alone (the field with it less the field without it, same seed and noise) holds the stated share of the
lens's flux, centred where the truth says; the noise and every other part of the field are unchanged.
"""

import numpy as np
import pytest

from lensmass.core.realistic_fields import COLOUR_LENS, make_cutout


@pytest.mark.parametrize("seed", [3, 8])
def test_companion_sits_inside_the_ring_and_changes_nothing_else(seed):
    with_it = make_cutout(seed, "ring", companion=True)
    without = make_cutout(seed, "ring", companion=False)
    t = with_it.truth
    (x0, y0), = [e[1:] for e in t["extras"] if e[0] == "companion"]
    assert not any(e[0] == "companion" for e in without.truth["extras"])
    d = np.hypot(x0 - t["center_x"], y0 - t["center_y"])
    assert 0.35 * t["radius_pix"] <= d <= 0.9 * t["radius_pix"]
    diff = (with_it.bands - without.bands).astype(float)
    assert diff.min() > -1e-3  # light added, noise unchanged
    yy, xx = np.mgrid[0:diff.shape[1], 0:diff.shape[2]]
    r_band = diff[1]
    cx, cy = (r_band * xx).sum() / r_band.sum(), (r_band * yy).sum() / r_band.sum()
    assert np.hypot(cx - x0, cy - y0) < 1.0
    # Its colour is the lens's (a member of the lens's group): band ratios as COLOUR_LENS.
    ratios = diff.sum(axis=(1, 2)) / diff[2].sum()
    np.testing.assert_allclose(ratios, np.array(COLOUR_LENS) / COLOUR_LENS[2], rtol=1e-3)


def test_companion_drawn_for_about_its_share_of_lenses():
    n = sum(any(e[0] == "companion" for e in make_cutout(s, "ring", size=64).truth["extras"]) for s in range(200))
    assert 15 <= n <= 48  # COMPANION_SHARE 0.15 of 200: 30, binomial 3-sigma about +-15
