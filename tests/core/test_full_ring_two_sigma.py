"""A full ring's stated 2-sigma interval reaches theta_E when the ring's ridge lies short of it (issue 14).

Outside reference: for an isothermal elliptical lens (SIE; Kormann, Schneider & Bartelmann 1994, A&A 284, 285) a
small source near the axis images where r = F(phi), the lens potential's angular part (common practice; computed
here from lensmass.core.sie.potential, as tests/core/test_elliptical_rings.py does), and that ridge's sqrt(a b) lies
short of theta_E (intermediate-axis normalisation): 0.94 of it for mass axis ratio 0.35. A full ring measured
there with a small fit error, as the finder states it when it did not follow the ring's shape
(lensmass.core.ring_interval.state_interval, the 5% tail term ring_interval.RING_TAIL_SHARE and the full-ring
coverage calibration of lensmass.core.interval_scale), must hold theta_E inside 2 sigma (a normal distribution's
95.45%: scipy.stats.norm) though not inside 1 sigma. Main 95ad27c's 2-sigma factor 0.8 stated 2 sigma up to 1.052
times the radius and missed theta_E (1.063 times it); the recalibrated factor (1.5, h29e: recorded stress and
realistic_fields answers) reaches 1.086.
"""

from types import SimpleNamespace

import numpy as np

from lensmass.core import sie
from lensmass.core.arcfit import fit_ellipse
from lensmass.core.interval_scale import answer_type
from lensmass.core.ring_interval import RING_TAIL_SHARE, state_interval, truth_inside


def _ridge_share(q: float) -> float:
    """sqrt(a b) / theta_E of an SIE's ridge r = F(phi) (KSB 1994; core/sie.py's potential of a theta_E = 1 lens)."""
    phi = np.linspace(0, 2 * np.pi, 73)[:-1]
    ridge = sie.potential(sie.SIEShear(1.0, q, 0.3), np.cos(phi), np.sin(phi))
    return float(fit_ellipse(ridge * np.cos(phi), ridge * np.sin(phi), center=(0.0, 0.0)).theta_e)


def test_full_ring_on_an_sie_ridge_holds_theta_e_in_two_sigma():
    theta_e = 20.0
    share = _ridge_share(0.35)
    assert 0.93 < share < 0.95
    radius = share * theta_e
    out = SimpleNamespace(found=True, kind="ring", coverage=1.0, paired=False, error_from_images=False,
                          lone_arc_radius_pix=float("nan"), interval_shape_pix=None, radius_pix=radius,
                          radius_err_pix=0.01 * radius, interval_tail_pix=RING_TAIL_SHARE * radius)
    assert answer_type(out) == "full ring"
    state_interval(out)
    assert not truth_inside(out, theta_e, 1)
    assert truth_inside(out, theta_e, 2), (theta_e, out.radius_hi2_pix)
