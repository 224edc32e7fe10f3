"""The finder's stated 1- and 2-sigma intervals hold the truth at their nominal rates on a seeded set (issue 14).

Outside reference: a normal distribution holds 68.27% of its draws within 1 sigma and 95.45% within 2 sigma
(scipy.stats.norm); the issue's band is 60-76% inside 1 sigma and at least 90% inside 2 sigma. The fields come from
the independent stress generator (benchmarks/stress_fields.py), written to FITS and read back as the command line
reads a file (the same route, rotation and int16 draws as notes s40's collect.py), seeds 879294-879349 (eight of each
of its seven lens kinds; tuning seeds of session 40's h27b, a window where main's 1 sigma was too wide). Main d03bcda
held the truth inside 1 sigma in 38 of 47 found (81%) and inside 2 sigma in 46; with the coverage calibration of
lensmass.core.interval_scale (full and partial rings, image crosses) 35 of 47 (74%) and 46 (from the recorded
answers; the radii are the same).
"""

from scipy.stats import norm

from lensmass.core.interval_scale import ANSWER_TYPES, INTERVAL_SCALE
from lensmass.core.ring_interval import truth_inside
from tests.core.stress_route import found_answers

FIRST, BASE, N = 879294, 879000, 56


def _answers(tmp_path):
    return found_answers(tmp_path, FIRST, N, BASE)


def test_one_sigma_is_not_too_wide_and_two_sigma_holds(tmp_path):
    p1 = norm.cdf(1) - norm.cdf(-1)  # 0.6827 (scipy.stats.norm)
    p2 = norm.cdf(2) - norm.cdf(-2)  # 0.9545
    runs = list(_answers(tmp_path))
    n = len(runs)
    in1 = sum(truth_inside(out, te, 1) for out, te in runs)
    in2 = sum(truth_inside(out, te, 2) for out, te in runs)
    assert n >= 35
    # the band around p1 (60-76%); a 1-sigma interval as wide as main's (82% here) fails
    assert p1 - 0.09 <= in1 / n <= 0.76, (in1, n)
    assert in2 / n >= 0.90 and in2 / n >= p2 - 0.06, (in2, n)


def test_every_calibrated_type_is_an_answer_type_and_narrows_no_two_sigma_below_one():
    assert set(INTERVAL_SCALE) <= set(ANSWER_TYPES)
    for f, k1, k2 in INTERVAL_SCALE.values():
        assert f >= 0 and k1 > 0 and k2 > 0


def test_a_pictures_lone_arc_keeps_its_arc_interval():
    """A picture's lone or unpaired arc keeps the arc interval held at the isothermal bound theta_E >= r_arc / 2
    (common practice: the singular isothermal sphere's images lie within 2 theta_E), not the pictures' 1-sigma
    factor; other picture answers take it."""
    from types import SimpleNamespace

    from lensmass.core.interval_scale import answer_type

    ring = SimpleNamespace(kind="ring", coverage=0.9, paired=False, error_from_images=False,
                           lone_arc_radius_pix=float("nan"), interval_shape_pix=None)
    lone = SimpleNamespace(**{**vars(ring), "kind": "arcs", "coverage": 0.2, "lone_arc_radius_pix": 12.0})
    unpaired = SimpleNamespace(**{**vars(ring), "kind": "arcs", "coverage": 0.3, "interval_shape_pix": (1, 1, 1, 1)})
    assert answer_type(ring, picture=True) == "picture" and answer_type(ring) == "full ring"
    assert answer_type(lone, picture=True) == "lone arc" == answer_type(lone)
    assert answer_type(unpaired, picture=True) == "unpaired arc" == answer_type(unpaired)
