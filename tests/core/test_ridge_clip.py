"""The ellipse through ridge points with stray points left out (lensmass.core.ridge_clip).

Check values: an ellipse of semi-axes a, b encloses pi a b, so sqrt(a b) is the radius of the circle of equal
area (geometry, common practice); the SIE's critical curve in the intermediate-axis normalisation has semi-axes
theta_E / sqrt(q) and theta_E sqrt(q) (Kormann, Schneider & Bartelmann 1994, A&A 284, 285).
"""

import numpy as np
import pytest

from lensmass.core.arcfit import fit_ellipse
from lensmass.core.ridge_clip import MIN_KEPT, clipped_ellipse_fit, radial_offsets


def _sie_curve(theta_e, q, angle_rad, n=24, center=(50.0, 40.0)):
    t = np.linspace(0, 2 * np.pi, n + 1)[:-1]
    a, b = theta_e / np.sqrt(q), theta_e * np.sqrt(q)
    x = center[0] + a * np.cos(t) * np.cos(angle_rad) - b * np.sin(t) * np.sin(angle_rad)
    y = center[1] + a * np.cos(t) * np.sin(angle_rad) + b * np.sin(t) * np.cos(angle_rad)
    return x, y


@pytest.mark.parametrize("q", [1.0, 0.8, 0.6])
def test_stray_points_are_left_out(q):
    # A critical curve of theta_E = 12 pixels sampled in 24 directions, ridge noise 0.3 pixels, and two points put
    # 6 pixels out (a neighbour's leftover light in two sectors): the plain fit's sqrt(a b) is pulled out, the
    # clipped one is theta_E within its noise.
    rng = np.random.default_rng(3)
    x, y = _sie_curve(12.0, q, 0.4)
    r_hat = np.hypot(x - 50.0, y - 40.0)
    jitter = rng.normal(0, 0.3, x.size)
    jitter[[3, 4]] = 6.0
    x = 50.0 + (x - 50.0) * (1 + jitter / r_hat)
    y = 40.0 + (y - 40.0) * (1 + jitter / r_hat)
    plain = fit_ellipse(x, y, center=(50.0, 40.0))
    clipped = clipped_ellipse_fit(x, y, center=(50.0, 40.0))
    assert plain.theta_e > 12.25
    assert abs(clipped.theta_e - 12.0) < 0.15
    assert clipped.theta_e_err >= plain.theta_e_err and clipped.rms >= plain.rms  # the strays still count in the error
    assert x.size - 4 <= clipped.n_points <= x.size - 2  # the two strays out, at most two noisy points with them


def test_clean_points_give_the_plain_fit():
    x, y = _sie_curve(9.0, 0.7, 1.1)
    plain, clipped = fit_ellipse(x, y, center=(50.0, 40.0)), clipped_ellipse_fit(x, y, center=(50.0, 40.0))
    assert clipped.theta_e == pytest.approx(plain.theta_e, rel=1e-12)
    assert clipped.theta_e == pytest.approx(9.0, rel=1e-6)
    assert clipped.axis_ratio == pytest.approx(0.7, rel=1e-6)
    assert np.allclose(radial_offsets(clipped, x, y), 0.0, atol=1e-6)


def test_never_below_the_fewest_points():
    # Seven points of which two are stray: clipping would leave five, under MIN_KEPT, so all are kept.
    assert MIN_KEPT == 6
    t = np.linspace(0, 2 * np.pi, 8)[:-1]
    r = np.array([10.0, 10.0, 16.0, 10.0, 10.0, 16.0, 10.0])
    x, y = r * np.cos(t), r * np.sin(t)
    assert clipped_ellipse_fit(x, y, center=(0.0, 0.0)).n_points == 7


def test_a_degenerate_plain_fit_does_not_set_the_error():
    # Six ridge points on a circle of radius 10; the whole-window ridge had two adjacent sectors at 1.8 R. Through
    # those six points a held-centre ellipse degenerates (axis ratio ~0.003, error ~10^5 times the radius). The error
    # floor then comes from the points' radial offsets about the kept circle: the standard error of a mean of 6
    # offsets with 3 fitted parameters (statistics, common practice), not from that fit.
    t = np.linspace(0, 2 * np.pi, 7)[:-1]
    x, y = 10 * np.cos(t), 10 * np.sin(t)
    r = np.array([18.0, 18.0, 10.0, 10.0, 10.0, 10.0])
    wx, wy = r * np.cos(t), r * np.sin(t)
    assert fit_ellipse(wx, wy, center=(0.0, 0.0), point_err=0.15).theta_e_err > 1e3
    fit = clipped_ellipse_fit(x, y, center=(0.0, 0.0), point_err=0.15, scatter_points=(wx, wy))
    assert fit.theta_e == pytest.approx(10.0, rel=1e-6)
    off = np.array([8.0, 8.0, 0, 0, 0, 0])
    assert fit.theta_e_err == pytest.approx(np.sqrt(np.mean(off**2)) / np.sqrt(3), rel=1e-6)
