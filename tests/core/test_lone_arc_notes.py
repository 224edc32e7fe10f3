"""A lone arc's measurement states the lone-arc rule once in its notes (the report repeated it twice)."""

from __future__ import annotations

import numpy as np

from lensmass.core.einstein import measurement_of_ring
from lensmass.core.ring_result import RingResult


def _ring(**kw) -> RingResult:
    base = dict(found=True, kind="arcs", axis_ratio=1.0, angle_deg=float("nan"), fit_rms_pix=0.3,
                profile_radius_pix=np.arange(3.0), profile=np.zeros(3), profile_err=np.ones(3), noise_sigma=1.0,
                residual=None, lens_light=None, radius_pix=9.0, radius_err_pix=1.0, center_x=30.0, center_y=30.0, score=9.9,
                coverage=0.17, confident=False, message="A lone arc at 12.13 pixels: theta_E about 9.03 pixels.",
                warnings=["A lone arc at 12.13 pixels on one side of the lens: theta_E is 0.74 times its radius."],
                points_x=np.array([40.0, 41.0]), points_y=np.array([30.0, 32.0]))
    base.update(kw)
    return RingResult(**base)


def test_a_lone_arc_is_stated_once_and_a_weak_ring_keeps_its_message():
    image = np.zeros((60, 60))
    lone = measurement_of_ring(_ring(lone_arc_radius_pix=12.13), image, pixel_scale_arcsec=0.2)
    assert sum("A lone arc at 12.13" in n for n in lone.notes) == 1
    weak = measurement_of_ring(_ring(message="A weak ring candidate at 9.00 pixels (2.1 sigma).", warnings=[]),
                               image, pixel_scale_arcsec=0.2)
    assert any("A weak ring candidate" in n for n in weak.notes)


def test_a_counter_image_pairs_interval_says_why_it_reaches_down():
    # an arc at 20 px paired with a counter-image (theta_E their mean, 14 px: isothermal sphere, common practice): its
    # stated interval reaches down to half the arc's radius (ring_interval.COUNTER_PAIR_LOW_SHARES), and the model's
    # words say that reason, not a lone or unpaired arc's calibrated spread (h32c's pair had the latter's words)
    from lensmass.core.ring_interval import ASYMMETRIC_NOTE, PAIR_NOTE, state_interval

    pair = _ring(radius_pix=14.0, paired=True, pair_arc_radius_pix=20.0, warnings=[])
    state_interval(pair)
    m = measurement_of_ring(pair, np.zeros((60, 60)), pixel_scale_arcsec=0.2)
    assert m.asymmetric and m.interval_note.startswith(PAIR_NOTE) and ASYMMETRIC_NOTE not in m.interval_note
    assert abs(m.keys()["theta_e_low1_arcsec"] - 0.5 * 20.0 * 0.2) < 1e-9  # half the arc's 20 px, at 0.2"/px
