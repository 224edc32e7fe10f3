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
