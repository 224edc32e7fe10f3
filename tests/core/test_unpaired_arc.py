"""Single arcs the finder cannot pair: the stated interval must hold theta_E although one arc does not say whether it is
part of a ring (theta_E at its radius) or a lone arc outside theta_E (lensmass.core.ring_shapes._unpaired_arc).

The field is made with general-purpose library models: an astropy.modeling Sersic2D lens galaxy (n = 4) and an
astropy Gaussian2D source behind a singular isothermal sphere, mapped through the lens equation
beta = theta - theta_E theta / |theta| with surface brightness conserved (Narayan & Bartelmann 1996, eq. 29; common
practice), blurred by an astropy Gaussian2DKernel PSF, with white noise. A source at beta = 0.5 theta_E gives the
bright arc at theta_E + beta = 1.5 theta_E and a fainter counter-image at theta_E - beta (common practice), so the
truth is two thirds of the arc's radius: outside the +- 25% a ring-like single arc used to state (main 4f45eac: the
truth inside 1 sigma for 5 of these 12 fields).
"""

from __future__ import annotations

import numpy as np
from astropy.convolution import Gaussian2DKernel, convolve_fft
from astropy.modeling.models import Gaussian2D, Sersic2D

from lensmass.core.ring_interval import interval_bounds, truth_inside
from lensmass.core.ringfinder import find_ring


def _sis_arc(seed: int, beta_frac: float = 0.5, source_frac: float = 0.25,
             amplitude: float = 20.0) -> tuple[np.ndarray, float]:
    rng = np.random.default_rng(seed)
    n = 121
    yy, xx = np.mgrid[0:n, 0:n].astype(float)
    c = 60.0 + rng.uniform(-0.5, 0.5, 2)
    fwhm = rng.uniform(2.5, 3.5)
    theta_e = fwhm * rng.uniform(4.0, 5.5)
    lens = 300 * Sersic2D(amplitude=1.0, r_eff=0.6 * theta_e, n=4, x_0=c[0], y_0=c[1], ellip=0.2,
                          theta=rng.uniform(0, np.pi))(xx, yy)
    dx, dy = xx - c[0], yy - c[1]
    r = np.hypot(dx, dy) + 1e-9
    bx, by = dx - theta_e * dx / r, dy - theta_e * dy / r  # the SIS lens equation
    t = rng.uniform(0, 2 * np.pi)
    b, s = beta_frac * theta_e, source_frac * theta_e
    source = Gaussian2D(amplitude=amplitude, x_mean=b * np.cos(t), y_mean=b * np.sin(t), x_stddev=s, y_stddev=s)(bx, by)
    sky = convolve_fft(lens + source, Gaussian2DKernel(fwhm / (2 * np.sqrt(2 * np.log(2)))), boundary="fill")
    return sky + rng.normal(0.0, 1.0, sky.shape), theta_e


SEEDS = range(1, 13)


def test_single_arcs_of_an_isothermal_sphere_inside_the_stated_interval():
    runs = [(find_ring(img), te) for img, te in (_sis_arc(s) for s in SEEDS)]
    assert all(out.found for out, _ in runs)
    unpaired = [(out, te) for out, te in runs
                if out.kind == "arcs" and not out.paired and not np.isfinite(out.lone_arc_radius_pix)]
    # main e3dab55: 5 unpaired arcs and 4 rings at 1.13-1.67 theta_E; with rings 2-3 seeing widths wide given the
    # bulge+disc refit (h26b) 5 more are paired with their counter-arc (0.99-1.04 theta_E), 3 arcs stay unpaired; since
    # lone arcs are told by their light too (h32c, ring_shapes._lone_arc) their counter-images are found in the light's
    # direction: 10 of the 12 within 5% (0.97-1.04 theta_E), one arc stays unpaired (1.29)
    assert len(unpaired) >= 1, [(o.kind, round(o.coverage, 2)) for o, _ in runs]
    assert sum(abs(out.radius_pix / te - 1) <= 0.05 for out, te in runs) >= 8
    for out, te in unpaired:
        lo2, lo1, hi1, hi2 = interval_bounds(out)
        assert truth_inside(out, te, 1), (te, interval_bounds(out))
        # theta_E lies at or inside a tangential arc's radius: the interval reaches further below it than above
        assert out.radius_pix - lo1 > hi1 - out.radius_pix
        assert not out.confident
    inside1 = sum(truth_inside(out, te, 1) for out, te in runs)
    inside2 = sum(truth_inside(out, te, 2) for out, te in runs)
    assert inside1 >= 8 and inside2 >= 9, (inside1, inside2)  # main: 5 and 9 of 12


def test_an_unpaired_arc_keeps_its_radius_and_states_the_tables_spread_with_no_floor_on_top():
    # the rule itself on a found single arc (40% of the directions, no counter-arc): the radius stays (a ring part's
    # answer), the bounds are the radius times the "unpaired" table's quantiles at the normal 1- and 2-sigma
    # probabilities (common practice: 2.275, 15.87, 84.13, 97.725%), its 1-sigma lower side no higher than the
    # floor of lone_arc.UNPAIRED_1SIGMA_LOW_RATIO, and ring_confidence adds no single-arc floor
    from types import SimpleNamespace

    from lensmass.core.lone_arc import UNPAIRED_1SIGMA_LOW_RATIO, lone_arc_ratio_quantiles, unpaired_sigma_ratios
    from lensmass.core.ring_confidence import _calibrate
    from lensmass.core.ring_interval import SIGMA_PROBABILITIES, state_interval
    from lensmass.core.ring_result import RingResult
    from lensmass.core.ring_shapes import _unpaired_arc

    t = np.linspace(-1.2, 1.2, 10)
    light = SimpleNamespace(ok=True, psf_fwhm_pix=3.0, axis_ratio=1.0, angle_deg=0.0, sersic_n=4.0)
    arc = RingResult(True, False, "arcs", 20.0, 0.05, 12.0, 0.4, 50.0, 50.0, 1.0, float("nan"), 0.1,
                     50 + 20 * np.cos(t), 50 + 20 * np.sin(t), np.empty(0), np.empty(0), np.empty(0), 1.0, None,
                     light, ring_width_pix=3.5)
    out = _calibrate(_unpaired_arc(arc))
    state_interval(out)
    assert out.radius_pix == 20.0 and not out.confident
    expected = 20.0 * unpaired_sigma_ratios()
    table = lone_arc_ratio_quantiles(SIGMA_PROBABILITIES, "unpaired")
    np.testing.assert_allclose(expected[2:], 20.0 * table[2:])  # the upper side is the table's
    assert expected[1] == 20.0 * min(table[1], UNPAIRED_1SIGMA_LOW_RATIO)  # the lower reaches the floor
    np.testing.assert_allclose(interval_bounds(out), expected, atol=0.11)  # the 0.05-pixel fit error joined in
    assert out.radius_lo_pix < 0.7 * 20.0 and 1.0 * 20.0 < out.radius_hi_pix < 1.1 * 20.0


def test_a_compact_arc_and_its_counter_image_give_theta_e_as_their_mean_radius():
    # compact sources at beta = 0.3 and 0.6 theta_E: the arc at theta_E + beta is one-sided and its counter-image at
    # theta_E - beta (fainter: |mu-| / mu+ = (1 - b) / (1 + b) for b = beta / theta_E; common practice) is missed by
    # the profile search; found on the far side (lensmass.core.counter_image), their mean radius is theta_E for an
    # isothermal sphere. main 4f45eac reads them as lone or single arcs: within 5% 1 of 16 (its lone-arc scale 0.745
    # suits neither source offset); h15b 12 of 16.
    runs = [(find_ring(img), te) for b, amp in ((0.3, 20.0), (0.6, 30.0))
            for img, te in (_sis_arc(s, b, 0.12, amp) for s in range(1, 9))]
    within = [abs(out.radius_pix / te - 1) <= 0.05 for out, te in runs]
    assert sum(within) >= 10, [round(out.radius_pix / te - 1, 3) for out, te in runs]
    paired = [(out, te) for out, te in runs if out.paired]
    assert len(paired) >= 10
    assert all(truth_inside(out, te, 2) and not out.confident for out, te in paired)
    assert any("counter-image" in w for w in paired[0][0].warnings)


def test_an_unpaired_arc_far_outside_theta_e_is_covered_inside_one_sigma():
    # sources at beta = 0.7 theta_E: the bright arc at theta_E + beta = 1.7 theta_E (common practice, isothermal
    # sphere), so theta_E is 0.59 of its radius, below the "unpaired" table's 15.87% quantile (0.67) but above the
    # isothermal bound 1/2 a lone arc can reach; those the finder cannot pair must still hold the truth inside 1 sigma
    # (lensmass.core.lone_arc.UNPAIRED_1SIGMA_LOW_RATIO; main da46144: 2 of these 4 inside 1 sigma)
    runs = [(find_ring(img), te) for img, te in (_sis_arc(s, 0.7) for s in SEEDS)]
    unpaired = [(out, te) for out, te in runs
                if out.kind == "arcs" and not out.paired and not np.isfinite(out.lone_arc_radius_pix)]
    # main e3dab55 left 4 of 12 unpaired (1.52-1.70 theta_E); since h26b's refit of rings 2-3 seeing widths wide 3 of
    # them are paired with their counter-image (1.06-1.11 theta_E), one stays; since h32c (lone arcs told by their
    # light) none stays: 11 paired (1.00-1.13 theta_E), one lone arc; every answer holds the truth in 1 sigma
    assert all(truth_inside(out, te, 2) for out, te in runs)
    assert sum(truth_inside(out, te, 1) for out, te in runs) >= 10
    assert all(truth_inside(out, te, 1) for out, te in unpaired), [(round(te, 2), interval_bounds(out)) for out, te in unpaired]
    assert all(out.radius_pix > 1.4 * te for out, te in unpaired)  # the radius itself is the arc's, unchanged
