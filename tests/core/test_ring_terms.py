"""A ring's stated interval carries its coverage calibration in its own terms (lensmass.core.ring_terms), and an
unpaired arc's 2-sigma side reaches a singly imaged source (lensmass.core.lone_arc.UNPAIRED_2SIGMA_LOW_RATIO).

Outside reference: a normal distribution holds 68.27% of its draws within 1 sigma and 95.45% within 2 sigma
(scipy.stats.norm); the issue's band is 60-76% inside 1 sigma and at least 90% inside 2 sigma. The coverage tests run
the finder on two windows of h28d's tuning seeds where main 134dd82's ring intervals (its terms, then the per-type
factors of session 40) left the band, one of each field maker: the independent stress generator
(benchmarks/stress_fields.py, written to FITS and read back as the command line reads a file, the route of notes s41's
collect.py), seeds 924000-924069, main 23 of 28 rings inside 1 sigma (82%, too wide), these terms 20 (71%); our
generator (lensmass.core.realistic_fields), seeds 926144-926227, main 19 of 34 (56%, too narrow), these terms 22 (65%)
(counts from the recorded answers; the radii are the same).
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
from scipy.stats import norm

from lensmass.core.interval_scale import INTERVAL_SCALE, answer_type
from lensmass.core.lone_arc import UNPAIRED_2SIGMA_LOW_RATIO
from lensmass.core.realistic_fields import LENS_KINDS, make_cutout
from lensmass.core.ring_interval import RING_TAIL_SHARE, interval_bounds, state_interval, truth_inside
from lensmass.core.ring_result import RingResult
from lensmass.core.ring_terms import (MEASURED_ERROR_SHARE, PARTIAL_RING_TAIL_SHARE, RING_ERROR_FLOOR,
                                      RING_SCATTER_SHARE, ring_error)
from lensmass.core.ringfinder import find_ring
from tests.core.stress_route import found_answers

P1 = norm.cdf(1) - norm.cdf(-1)  # 0.6827 (scipy.stats.norm)
P2 = norm.cdf(2) - norm.cdf(-2)  # 0.9545


def _is_ring(out) -> bool:
    return answer_type(out) in ("full ring", "partial ring")


def _stress_rings(tmp_path):
    return ((out, truth) for out, truth in found_answers(tmp_path, 924000, 70, 924000) if _is_ring(out))


def _our_rings():
    for seed in range(926144, 926228):
        c = make_cutout(seed, LENS_KINDS[(seed - 926000) % len(LENS_KINDS)])
        out = find_ring(c.image)
        if out.found and _is_ring(out):
            yield out, float(c.truth["radius_pix"])


def _assert_in_band(runs, n_min):
    n = len(runs)
    in1 = sum(truth_inside(out, te, 1) for out, te in runs)
    in2 = sum(truth_inside(out, te, 2) for out, te in runs)
    assert n >= n_min, n
    assert P1 - 0.08 <= in1 / n <= 0.76, (in1, n)  # the band around p1
    assert in2 / n >= 0.90 and in2 / n >= P2 - 0.06, (in2, n)


def test_stress_field_rings_are_not_too_wide(tmp_path):
    _assert_in_band(list(_stress_rings(tmp_path)), 22)


def test_our_generators_rings_are_not_too_narrow():
    _assert_in_band(list(_our_rings()), 28)


def test_a_ring_takes_its_terms_and_no_later_factor():
    # the 1-sigma error joins the floor, the measured share and the scatter share in quadrature (numpy's hypot);
    # a partial ring's 2-sigma sides carry its own tail; interval_scale no longer rescales rings
    assert "full ring" not in INTERVAL_SCALE and "partial ring" not in INTERVAL_SCALE
    err = ring_error(20.0, 0.3, 0.5)
    assert math.isclose(err, float(np.hypot(np.hypot(RING_ERROR_FLOOR * 20.0, MEASURED_ERROR_SHARE * 0.3),
                                             RING_SCATTER_SHARE * 0.5)))
    assert math.isclose(ring_error(20.0, 0.3, float("nan")), float(np.hypot(RING_ERROR_FLOOR * 20.0,
                                                                              MEASURED_ERROR_SHARE * 0.3)))
    for coverage, tail in ((0.7, PARTIAL_RING_TAIL_SHARE), (0.9, RING_TAIL_SHARE)):
        r = SimpleNamespace(found=True, radius_pix=20.0, radius_err_pix=err, interval_shape_pix=None, kind="ring",
                            coverage=coverage, paired=False, error_from_images=False,
                            lone_arc_radius_pix=float("nan"), interval_tail_pix=tail * 20.0)
        state_interval(r)
        assert math.isclose(r.radius_hi_pix - 20.0, err) and r.interval_scale == (0.0, 1.0, 1.0)
        assert math.isclose(r.radius_hi2_pix - 20.0, math.hypot(2 * err, tail * 20.0))


def test_an_unpaired_arc_of_a_singly_imaged_source_is_inside_two_sigma():
    # an isothermal sphere images a source at beta > theta_E once, at theta_E + beta (common practice; Narayan &
    # Bartelmann 1996, eq. 29): beta = 1.4 theta_E puts the arc at 2.4 theta_E, theta_E / radius 0.417, below the
    # isothermal 1/2 and below main's 2-sigma lower side (0.465 of the radius: the "unpaired" table's 2.275% quantile)
    from lensmass.core.ring_confidence import _calibrate
    from lensmass.core.ring_shapes import _unpaired_arc

    theta_e = 10.0
    radius = theta_e * (1 + 1.4)
    t = np.linspace(-1.0, 1.0, 10)
    light = SimpleNamespace(ok=True, psf_fwhm_pix=3.0, axis_ratio=1.0, angle_deg=0.0, sersic_n=4.0)
    arc = RingResult(True, False, "arcs", radius, 0.05, 12.0, 0.35, 50.0, 50.0, 1.0, float("nan"), 0.1,
                     50 + radius * np.cos(t), 50 + radius * np.sin(t), np.empty(0), np.empty(0), np.empty(0), 1.0,
                     None, light, ring_width_pix=3.5)
    out = _calibrate(_unpaired_arc(arc))
    out.interval_tail_pix = RING_TAIL_SHARE * radius
    state_interval(out)
    lo2, lo1, _, _ = interval_bounds(out)
    assert lo2 <= UNPAIRED_2SIGMA_LOW_RATIO * radius + 1e-9
    assert truth_inside(out, theta_e, 2) and not truth_inside(out, theta_e, 1)
