"""A lone arc told by its light, not its ridge points, and a counter-image's place (lensmass.core.ring_shapes._lone_arc,
lensmass.core.counter_image.COUNTER_MAX_SHARE).

The arc is ray traced through a singular isothermal sphere: an astropy Gaussian2D source at beta = 0.75 theta_E mapped
through the lens equation beta = theta - theta_E theta / |theta| with surface brightness conserved (Narayan &
Bartelmann 1996, eq. 29; common practice), blurred by an astropy Gaussian2DKernel PSF, with white noise. The bright
image lies at theta_E + beta = 1.75 theta_E (common practice), so its radius read as theta_E is 75% too long. A faint
arc's ridge points include the noise's in other directions (stress tuning seeds 1019000-1019419: one arcs' unpaired
answers at 1.7-1.9 theta_E had ridge directions of mean length 0.33-0.63, under the lone-arc test's 0.7), while the
light at its radius lies on one side.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
from astropy.convolution import Gaussian2DKernel, convolve_fft
from astropy.modeling.models import Gaussian2D

from lensmass.core.arc_directions import LONE_ARC_DIRECTEDNESS, mean_direction
from lensmass.core.counter_image import find_counter_image
from lensmass.core.ring_confidence import _calibrate
from lensmass.core.ring_interval import state_interval, truth_inside
from lensmass.core.ring_result import RingResult
from lensmass.core.ring_shapes import _lone_arc, _unpaired_arc

THETA_E, BETA, FWHM, N = 15.0, 0.75 * 15.0, 3.0, 81
CENTRE = 40.0


def _sis_lone_arc(seed: int) -> np.ndarray:
    """Lens-subtracted residual of an SIS lone arc (source at BETA towards +x) with unit white noise."""
    yy, xx = np.mgrid[0:N, 0:N].astype(float)
    dx, dy = xx - CENTRE, yy - CENTRE
    r = np.hypot(dx, dy) + 1e-9
    bx, by = dx - THETA_E * dx / r, dy - THETA_E * dy / r  # the SIS lens equation
    source = Gaussian2D(amplitude=10.0, x_mean=BETA, y_mean=0.0, x_stddev=1.2, y_stddev=1.2)(bx, by)
    sky = convolve_fft(source, Gaussian2DKernel(FWHM / (2 * np.sqrt(2 * np.log(2)))), boundary="fill")
    return sky + np.random.default_rng(seed).normal(0.0, 1.0, sky.shape)


def _found_arc(residual: np.ndarray) -> RingResult:
    """The finder's unpaired single arc on it: the arc's radius, ridge points on the arc and three of the noise."""
    arc = THETA_E + BETA
    phi = np.radians([-12.0, -4.0, 4.0, 12.0, 120.0, 200.0, 260.0])
    light = SimpleNamespace(ok=True, psf_fwhm_pix=FWHM, axis_ratio=1.0, angle_deg=0.0, sersic_n=4.0)
    return RingResult(True, False, "arcs", arc, 0.3, 9.0, 0.29, CENTRE, CENTRE, 1.0, float("nan"), 0.5,
                      CENTRE + arc * np.cos(phi), CENTRE + arc * np.sin(phi), np.empty(0), np.empty(0), np.empty(0),
                      1.0, residual, light, ring_width_pix=4.0)


def test_a_lone_arc_with_stray_ridge_points_is_read_by_its_light():
    for seed in (1, 2, 3):
        best = _found_arc(_sis_lone_arc(seed))
        assert mean_direction(best.points_x, best.points_y, (CENTRE, CENTRE))[1] < LONE_ARC_DIRECTEDNESS
        out = _lone_arc(best, 24, by_light=True)
        # the lone-arc rule (or its counter-image, if found inside) gives theta_E, not the arc's radius
        assert np.isfinite(out.lone_arc_radius_pix) or out.paired
        assert out.radius_pix < 0.9 * (THETA_E + BETA)
        out = _calibrate(_unpaired_arc(out))
        state_interval(out)
        assert truth_inside(out, THETA_E, 1), (out.radius_lo_pix, out.radius_hi_pix)
        assert not out.confident


def test_the_picture_route_keeps_the_ridge_rule():
    # without by_light (the 8-bit picture routes) the ridge points alone decide, as before: an unpaired arc whose
    # message states the asymmetric interval, reaching down towards half the arc's radius
    best = _found_arc(_sis_lone_arc(1))
    out = _lone_arc(best, 24)
    assert not np.isfinite(out.lone_arc_radius_pix) and not out.paired
    out = _calibrate(_unpaired_arc(out))
    state_interval(out)
    assert out.radius_pix == THETA_E + BETA
    assert "1 sigma" in out.message and "half" in out.message
    assert out.radius_lo_pix < 0.6 * out.radius_pix


def test_a_faint_peak_far_out_on_the_far_side_is_no_counter_image():
    # For an isothermal sphere the counter-image of an arc at theta_E + beta lies at theta_E - beta, at
    # (1 - b) / (1 + b) of the arc's radius and as much fainter (common practice); one at 0.8 of it would be a
    # counter-arc 0.8 as bright. A compact peak there, a fifth as bright, is not paired; one at 0.3 of it is.
    yy, xx = np.mgrid[0:81, 0:81].astype(float)
    arc = Gaussian2D(10.0, 64.0, 40.0, 1.5, 6.0)(xx, yy)  # 24 pixels to the right, stretched tangentially
    noise = np.random.default_rng(5).normal(0, 0.3, xx.shape)
    far = Gaussian2D(2.0, 40.0 - 0.8 * 24, 40.0, 1.7, 1.7)(xx, yy)
    near = Gaussian2D(2.0, 40.0 - 0.3 * 24, 40.0, 1.7, 1.7)(xx, yy)
    assert np.isnan(find_counter_image(arc + far + noise, 40.0, 40.0, 24.0, 0.0, 0.3, 4.0))
    assert abs(find_counter_image(arc + near + noise, 40.0, 40.0, 24.0, 0.0, 0.3, 4.0) - 7.2) <= 2.0


def test_an_arc_and_counter_image_pair_states_the_lone_arcs_lower_side():
    # theta_E is the pair's mean radius if the faint feature is the counter-image (isothermal sphere: common
    # practice); if it is other light, the arc alone puts theta_E between half its radius and its radius, so the
    # stated lower sides reach ring_interval.COUNTER_PAIR_LOW_SHARES of the arc's radius; the upper sides stay
    from lensmass.core.ring_interval import COUNTER_PAIR_LOW_SHARES, interval_bounds, is_normal

    empty = np.empty(0)
    pair = RingResult(True, False, "arcs", 14.0, 1.0, 9.0, 0.2, 0.0, 0.0, float("nan"), float("nan"), 0.3, empty, empty,
                      empty, empty, empty, 1.0, None, None, paired=True, pair_arc_radius_pix=20.0)
    state_interval(pair)
    lo2, lo1, hi1, hi2 = interval_bounds(pair)
    assert lo1 == COUNTER_PAIR_LOW_SHARES[1] * 20.0 == 10.0 and lo2 == COUNTER_PAIR_LOW_SHARES[0] * 20.0
    assert (hi1, hi2) == (15.0, 16.0) and not is_normal(pair)
