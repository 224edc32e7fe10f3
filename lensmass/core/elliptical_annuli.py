"""Elliptical annuli: the shape (axis ratio, angle) that makes a ring candidate sharpest.

An elongated Einstein ring binned in circular radius spreads over a range of radii and looks like partial
arcs at different radii. Binned instead in the elliptical radius

    rho = sqrt(q x'^2 + y'^2 / q),    x' along the ellipse's major axis, q = b / a <= 1,

it falls in one narrow bin when (q, angle) match its shape. This is the intermediate-axis normalisation of
the singular isothermal ellipsoid (Kormann, Schneider & Bartelmann 1994, A&A 284, 285; the convention of
:mod:`lensmass.core.sie` and of the field generators): the critical curve of an SIE of Einstein radius
theta_E is the ellipse rho = theta_E, whose semi-axes are theta_E / sqrt(q) and theta_E sqrt(q), so the
ring's radius in rho is theta_E in the same convention as sqrt(a b) of an ellipse fit, and on a circle
(q = 1) rho is the ordinary radius.

:func:`ring_shape` tries a grid of shapes on the pixels of an annulus around a candidate ring and keeps
the one whose radial profile has the most prominent peak (in units of its pixel noise).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import find_peaks

#: Axis ratios tried (the SIE critical curve has the mass's axis ratio; SIE mass axis ratios of lenses are
#: mostly 0.4-1, common practice, e.g. Koopmans et al. 2006 ApJ 649 599 on SLACS lenses, from memory). The ring
#: finder's elliptical pass tries only those of at least its ``min_axis_ratio``
#: (:data:`lensmass.core.ring_shapes.ELLIPSE_MIN_AXIS_RATIO`, 0.70): a ring's light lies on its ridge r = F(phi),
#: rounder than the critical curve (:data:`SIE_RIDGE_AXIS_RATIOS`), so 0.55 and 0.4 serve direct callers only.
TRIAL_AXIS_RATIOS = (0.85, 0.7, 0.55, 0.4)
#: Number of major-axis angles tried over 180 degrees on the coarse grid (then one finer step around the best).
TRIAL_ANGLES = 12
#: Elliptical radii searched, as fractions of the candidate's (circular) radius.
RHO_RANGE = (0.7, 1.4)
#: Bin width of the shape search's profile, pixels.
SHAPE_BIN_PIX = 0.5
#: Largest number of pixels the shape search bins (a regular sub-sample beyond it: the shape needs no more).
MAX_SHAPE_PIXELS = 40_000
#: :func:`sie_ridge_table` (mass axis ratios 0.3-1): the axis ratio of an SIE ring's ridge and theta_E / sqrt(a b) of it.
SIE_RIDGE_AXIS_RATIOS = (0.6993, 0.7265, 0.7525, 0.7775, 0.8015, 0.8246, 0.8469, 0.8684, 0.8892, 0.9092, 0.9286,
                         0.9474, 0.9655, 0.9831, 1.0000)
SIE_RIDGE_FACTORS = (1.0835, 1.0630, 1.0477, 1.0361, 1.0271, 1.0201, 1.0146, 1.0104, 1.0071, 1.0046, 1.0028, 1.0015,
                     1.0006, 1.0001, 1.0000)
#: A lens light rounder than this axis ratio gives no direction for :func:`mass_alignment_weight`.
ROUND_LIGHT = 0.9


@dataclass(frozen=True)
class RingShape:
    """The sharpest shape: ``axis_ratio`` (1 = circle), ``angle_rad`` (major axis from +x towards +y),
    ``score`` (prominence of its profile's peak, in sigma), ``radius_pix`` (rho of that peak) and
    ``circular_score`` (the same figure for circular annuli)."""

    axis_ratio: float
    angle_rad: float
    score: float
    radius_pix: float
    circular_score: float


def elliptical_radius(dx, dy, axis_ratio: float, angle_rad: float):
    """rho = sqrt(q x'^2 + y'^2 / q) of offsets ``dx, dy`` from the centre (see the module docstring).

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 9)
    >>> q, a = 0.5, 0.3  # an SIE critical curve of theta_E = 10: semi-axes 10 / sqrt(q) and 10 sqrt(q)
    >>> x = 10 / np.sqrt(q) * np.cos(t) * np.cos(a) - 10 * np.sqrt(q) * np.sin(t) * np.sin(a)
    >>> y = 10 / np.sqrt(q) * np.cos(t) * np.sin(a) + 10 * np.sqrt(q) * np.sin(t) * np.cos(a)
    >>> np.allclose(elliptical_radius(x, y, q, a), 10.0)
    True
    """
    c, s = np.cos(angle_rad), np.sin(angle_rad)
    xp = c * dx + s * dy
    yp = -s * dx + c * dy
    return np.sqrt(axis_ratio * xp * xp + yp * yp / axis_ratio)


def radius_along(angle_rad, rho: float, axis_ratio: float, shape_angle_rad: float):
    """Ordinary radius, in the direction ``angle_rad``, of the point at elliptical radius ``rho``.

    Examples
    --------
    >>> round(float(radius_along(0.0, 10.0, 0.25, 0.0)), 6)  # along the major axis: rho / sqrt(q)
    20.0
    """
    d = np.asarray(angle_rad) - shape_angle_rad
    return rho / np.sqrt(axis_ratio * np.cos(d) ** 2 + np.sin(d) ** 2 / axis_ratio)


def _peak_prominence(rho, vals, lo, hi, sigma) -> tuple[float, float]:
    nb = int(np.ceil((hi - lo) / SHAPE_BIN_PIX))
    inside = (rho >= lo) & (rho < hi)
    b = ((rho[inside] - lo) / SHAPE_BIN_PIX).astype(np.int64)
    sums = np.bincount(b, vals[inside], minlength=nb)[:nb]
    counts = np.bincount(b, minlength=nb)[:nb]
    with np.errstate(invalid="ignore", divide="ignore"):
        prof = np.where(counts > 0, sums / counts, 0.0)
    prof = np.convolve(np.pad(prof, 1, mode="edge"), [0.25, 0.5, 0.25], mode="valid")
    peaks, props = find_peaks(prof, prominence=0.0)
    if not peaks.size:
        return 0.0, float("nan")
    prom = props["prominences"] * np.sqrt(np.maximum(counts[peaks], 1)) / sigma
    i = int(np.argmax(prom))
    return float(prom[i]), float(lo + (peaks[i] + 0.5) * SHAPE_BIN_PIX)


def ring_shape(residual: np.ndarray, cx: float, cy: float, radius_pix: float, sigma: float, *,
               min_axis_ratio: float = 0.0) -> RingShape:
    """The axis ratio and angle whose elliptical annuli make the ring near ``radius_pix`` sharpest, among axis
    ratios of at least ``min_axis_ratio``.

    ``residual`` is the lens-subtracted image (NaN = masked), ``sigma`` its pixel noise. Elliptical radii
    :data:`RHO_RANGE` times ``radius_pix`` are searched for each trial shape (the circle, the
    :data:`TRIAL_AXIS_RATIOS` at :data:`TRIAL_ANGLES` angles, then a finer step around the best).

    Examples
    --------
    An SIE critical curve of theta_E = 15 pixels, axis ratio 0.5, major axis at 40 degrees, drawn as a thin ring:

    >>> yy, xx = np.mgrid[0:81, 0:81]
    >>> rho = elliptical_radius(xx - 40.0, yy - 40.0, 0.5, np.radians(40))
    >>> img = np.exp(-0.5 * ((rho - 15) / 1.0) ** 2) + np.random.default_rng(0).normal(0, 0.05, rho.shape)
    >>> s = ring_shape(img, 40.0, 40.0, 15.0, 0.05)
    >>> abs(s.axis_ratio - 0.5) < 0.08, bool(abs(np.degrees(s.angle_rad) - 40) < 8), abs(s.radius_pix - 15) < 0.5
    (True, True, True)
    """
    ny, nx = residual.shape
    lo, hi = RHO_RANGE[0] * radius_pix, RHO_RANGE[1] * radius_pix
    reach = hi / np.sqrt(min(TRIAL_AXIS_RATIOS)) + 1
    x0, x1 = max(0, int(cx - reach)), min(nx, int(cx + reach) + 2)
    y0, y1 = max(0, int(cy - reach)), min(ny, int(cy + reach) + 2)
    box = np.asarray(residual[y0:y1, x0:x1], float)
    dy, dx = np.mgrid[y0:y1, x0:x1]
    dx, dy = dx - cx, dy - cy
    r = np.hypot(dx, dy)
    keep = np.isfinite(box) & (r >= lo * np.sqrt(min(TRIAL_AXIS_RATIOS))) & (r < reach)
    dx, dy, vals = dx[keep], dy[keep], box[keep]
    step = int(np.ceil(vals.size / MAX_SHAPE_PIXELS))
    if step > 1:
        dx, dy, vals = dx[::step], dy[::step], vals[::step]  # every shape is scored on the same sub-sample
    circ, circ_r = _peak_prominence(np.hypot(dx, dy), vals, lo, hi, sigma)
    best = (circ, 1.0, 0.0, circ_r)
    for q in [t for t in TRIAL_AXIS_RATIOS if t >= min_axis_ratio]:
        for a in np.arange(TRIAL_ANGLES) * np.pi / TRIAL_ANGLES:
            s, rr = _peak_prominence(elliptical_radius(dx, dy, q, a), vals, lo, hi, sigma)
            if s > best[0]:
                best = (s, q, float(a), rr)
    if best[1] < 1.0:  # one finer step around the best coarse shape
        _, q0, a0, _ = best
        da = 0.5 * np.pi / TRIAL_ANGLES
        for q in (q0 - 0.07, q0, q0 + 0.07):
            for a in (a0 - da, a0, a0 + da):
                if not max(0.3, min_axis_ratio) <= q < 1.0 or (q == q0 and a == a0):
                    continue
                s, rr = _peak_prominence(elliptical_radius(dx, dy, q, a), vals, lo, hi, sigma)
                if s > best[0]:
                    best = (s, float(q), float(a), rr)
    score, q, a, rr = best
    return RingShape(float(q), float(a % np.pi), float(score), float(rr), float(circ))


def sie_ridge_table() -> tuple[np.ndarray, np.ndarray]:
    """Axis ratio of the ridge r = F(phi) of an SIE of theta_E = 1 (psi = r F(phi), :func:`lensmass.core.sie.potential`
    at unit radius; an ellipse fitted about the centre, :func:`lensmass.core.arcfit.fit_ellipse`) and theta_E / sqrt(a b)
    of that ridge, for mass axis ratios 0.3-1 in steps of 0.05 (what :data:`SIE_RIDGE_AXIS_RATIOS` and
    :data:`SIE_RIDGE_FACTORS` tabulate; about a second to compute, so tests check the table with it)."""
    from lensmass.core.arcfit import fit_ellipse
    from lensmass.core.sie import SIEShear, potential

    phi = np.linspace(0, 2 * np.pi, 37)[:-1]  # 10-degree steps: the table to 1e-4 of the 2-degree one
    x, y = np.cos(phi), np.sin(phi)
    ratios, factors = [], []
    for q in np.linspace(0.3, 1.0, 15):
        f = potential(SIEShear(1.0, q, 0.0), x, y)
        fit = fit_ellipse(f * x, f * y, center=(0.0, 0.0))
        ratios.append(min(fit.axis_ratio, 1.0))
        factors.append(1.0 / fit.theta_e)
    order = np.argsort(ratios)
    return np.asarray(ratios)[order], np.asarray(factors)[order]


def sie_ring_axis_ratio(mass_axis_ratio: float) -> float:
    """Axis ratio of the ring of a compact source near the axis of an SIE of mass axis ratio ``mass_axis_ratio``
    (0.3-1): the ridge r = F(phi) tabulated by :data:`SIE_RIDGE_AXIS_RATIOS` (:func:`sie_ridge_table`), elongated
    across the mass (Kormann, Schneider & Bartelmann 1994).

    Examples
    --------
    >>> round(sie_ring_axis_ratio(1.0), 3), round(sie_ring_axis_ratio(0.4), 3)
    (1.0, 0.752)
    """
    return float(np.interp(mass_axis_ratio, np.linspace(0.3, 1.0, len(SIE_RIDGE_AXIS_RATIOS)), SIE_RIDGE_AXIS_RATIOS))


def sie_ring_factor(ring_axis_ratio: float) -> float:
    """theta_E / sqrt(a b) for the ring of a compact source near the axis of an SIE, given the ring's axis ratio.

    An isothermal lens has the potential psi = r F(phi); a source at the optical axis images where
    r = F(phi) (the radial lens equation), a ridge elongated across the mass, whose sqrt(a b) falls short
    of theta_E (intermediate-axis normalisation, Kormann, Schneider & Bartelmann 1994) by 0.3% for a mass
    axis ratio of 0.8 and 4.6% for 0.4 (ring axis ratios 0.93 and 0.75). An external shear elongates a ring
    too, with sqrt(a b) = theta_E / sqrt(1 - gamma^2) (about 1% long at gamma = 0.15), so the factor applies to
    rings elongated by the mass only (see :func:`mass_alignment_weight`).

    Examples
    --------
    >>> round(sie_ring_factor(1.0), 3), 1.04 < sie_ring_factor(0.75) < 1.06
    (1.0, True)
    """
    return float(np.interp(ring_axis_ratio, SIE_RIDGE_AXIS_RATIOS, SIE_RIDGE_FACTORS))


def mass_alignment_weight(ring_angle_deg: float, light_angle_deg: float, light_axis_ratio: float) -> float:
    """How much a ring's elongation is the SIE's rather than a shear's: cos^2 of the angle between the ring's
    major axis and the lens light's minor axis (an SIE's ring is elongated across its mass, whose major axis
    follows the light's within 10-20 degrees: common practice, e.g. Koopmans et al. 2006 ApJ 649 599 and Bolton
    et al. 2008 on SLACS, from memory; an external shear's direction is unrelated), 0.5 when the light is too
    round (axis ratio above :data:`ROUND_LIGHT`) or unknown to give a direction.

    Examples
    --------
    >>> mass_alignment_weight(90.0, 0.0, 0.6), mass_alignment_weight(0.0, 0.0, 0.6), mass_alignment_weight(0.0, 0.0, 0.95)
    (1.0, 0.0, 0.5)
    """
    if not (np.isfinite(ring_angle_deg) and np.isfinite(light_angle_deg)) or not light_axis_ratio < ROUND_LIGHT:
        return 0.5
    d = np.radians(ring_angle_deg - light_angle_deg - 90.0)
    return float(round(np.cos(d) ** 2, 12))
