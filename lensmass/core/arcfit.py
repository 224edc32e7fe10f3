"""Geometric fits to marked positions: circles, ellipses and multiple-image estimates.

All functions work in whatever unit the coordinates are given in (pixels, or
arcsec offsets on the sky); :mod:`lensmass.core.einstein` passes arcsec.

References
----------
Kasa (1976), IEEE Trans. Instrum. Meas. IM-25, 8 (algebraic circle fit);
Chernov (2010), Circular and Linear Regression, CRC Press, ch. 4-5 (geometric fit, covariance);
Halir & Flusser (1998), WSCG 98, 125 (numerically stable direct ellipse fit of Fitzgibbon et al. 1999);
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001, sec. 3.3 (SIS: the two images of a
source lie on opposite sides at theta_E + beta and theta_E - beta, so half the separation is theta_E);
Kormann, Schneider & Bartelmann (1994), A&A 284, 285 (isothermal ellipse: theta_E = sqrt(a b)
for the critical curve in the intermediate-axis normalisation).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from lensmass.core.errors import LensInputError

#: Arcs spanning less than this (degrees about the centre) fix the radius poorly.
SHORT_ARC_DEG = 90.0
#: Relative 1-sigma scatter of theta_E from two images (half their separation, or their mean distance from
#: the lens centre) about the true theta_E of SIE + external shear lenses with axis ratio 0.5-0.95, shear up
#: to 0.1 and sources uniform inside theta_E: 5.5% and 5.3% measured by inject-and-recover with
#: lensmass.core.image_finder (tests/core/test_arcfit.py re-checks the coverage).
DOUBLE_MODEL_SCATTER = 0.055
DOUBLE_NOTE = ("Two images fix theta_E only to about 5.5% for elliptical lenses with shear (axis ratio 0.5-0.95, "
               "shear up to 0.1); that scatter is included in the error. Fit the lens model for more.")


@dataclass(frozen=True)
class CircleFit:
    """A circle through marked points.

    ``covariance`` is 3 x 3 over (center_x, center_y, radius); with a held centre
    only the radius entry is non-zero. ``rms`` is the root-mean-square of the
    radial residuals. ``arc_span_deg`` is the angle about the centre covered by
    the points (360 minus the largest gap).
    """

    center_x: float
    center_y: float
    radius: float
    radius_err: float
    covariance: np.ndarray
    rms: float
    n_points: int
    arc_span_deg: float
    center_fixed: bool
    warnings: tuple[str, ...] = ()

    @property
    def center_err(self) -> tuple[float, float]:
        return float(np.sqrt(self.covariance[0, 0])), float(np.sqrt(self.covariance[1, 1]))


@dataclass(frozen=True)
class EllipseFit:
    """An ellipse through marked points.

    ``angle_deg`` is the direction of the major axis, counter-clockwise from the +x
    axis towards +y, in [0, 180). ``theta_e = sqrt(a b)`` (the radius of the circle
    of equal area) with its error ``theta_e_err``. ``covariance`` is 5 x 5 over
    (center_x, center_y, semi_major, semi_minor, angle_rad).
    """

    center_x: float
    center_y: float
    semi_major: float
    semi_minor: float
    angle_deg: float
    theta_e: float
    theta_e_err: float
    covariance: np.ndarray
    rms: float
    n_points: int
    arc_span_deg: float
    center_fixed: bool
    warnings: tuple[str, ...] = ()

    @property
    def axis_ratio(self) -> float:
        return float(self.semi_minor / self.semi_major)


@dataclass(frozen=True)
class MultipleImageEstimate:
    """theta_E from the positions of the multiple images of one source."""

    radius: float
    radius_err: float
    center_x: float
    center_y: float
    method: str
    n_images: int
    warnings: tuple[str, ...] = field(default_factory=tuple)


def _as_points(x, y, minimum: int, what: str) -> tuple[np.ndarray, np.ndarray]:
    x = np.asarray(x, float).ravel()
    y = np.asarray(y, float).ravel()
    if x.shape != y.shape:
        raise LensInputError(f"The {what} needs as many x as y values (got {x.size} and {y.size}).")
    good = np.isfinite(x) & np.isfinite(y)
    if not good.all():
        raise LensInputError(f"Point {int(np.flatnonzero(~good)[0]) + 1} of the {what} is not a finite number; fix or remove it.")
    if x.size < minimum:
        raise LensInputError(f"The {what} needs at least {minimum} points, got {x.size}: mark more points on the arc.")
    pts = np.unique(np.round(np.c_[x, y], 9), axis=0)
    if len(pts) < minimum:
        raise LensInputError(f"The {what} needs at least {minimum} distinct points, got {len(pts)}: some points repeat.")
    return x, y


def arc_span_deg(x, y, center_x: float, center_y: float) -> float:
    """Angle (deg) about the centre covered by the points: 360 minus the largest empty gap.

    Examples
    --------
    >>> round(arc_span_deg([1, 0, -1], [0, 1, 0], 0, 0))
    180
    """
    ang = np.sort(np.mod(np.arctan2(np.asarray(y, float) - center_y, np.asarray(x, float) - center_x), 2 * np.pi))
    if ang.size < 2:
        return 0.0
    gaps = np.diff(np.concatenate([ang, [ang[0] + 2 * np.pi]]))
    return float(np.degrees(2 * np.pi - gaps.max()))


def _algebraic_circle(x, y) -> tuple[float, float, float]:
    """Kasa fit: least squares of x^2 + y^2 + D x + E y + F = 0 (on centred data)."""
    mx, my = x.mean(), y.mean()
    u, v = x - mx, y - my
    sv = np.linalg.svd(np.c_[u, v], compute_uv=False)
    if sv[-1] <= 1e-9 * max(sv[0], 1e-300):
        raise LensInputError("The points lie on a straight line, not an arc: mark points along a curved arc.")
    a = np.c_[u, v, np.ones_like(u)]
    b = -(u**2 + v**2)
    (d, e, f), *_ = np.linalg.lstsq(a, b, rcond=None)
    cx, cy = -d / 2, -e / 2
    r2 = cx**2 + cy**2 - f
    if not np.isfinite(r2) or r2 <= 0:
        raise LensInputError("The points lie on a straight line, not an arc: mark points along a curved arc.")
    return float(cx + mx), float(cy + my), float(np.sqrt(r2))


def _covariance(jac: np.ndarray, residuals: np.ndarray, n_params: int, point_err: float | None) -> np.ndarray:
    """sigma^2 (J^T J)^-1, sigma^2 the larger of the residual variance and point_err^2 (Chernov 2010)."""
    n = residuals.size
    var = float(residuals @ residuals) / (n - n_params) if n > n_params else 0.0
    if point_err is not None:
        var = max(var, float(point_err) ** 2)
    if var == 0.0:
        return np.full((n_params, n_params), np.nan)
    try:
        return var * np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        return np.full((n_params, n_params), np.nan)


def fit_circle(x, y, *, center: tuple[float, float] | None = None, point_err: float | None = None) -> CircleFit:
    """Fit a circle to three or more points.

    An algebraic (Kasa) fit starts a geometric least-squares fit of the radial
    distances (scipy ``least_squares``); the covariance is sigma^2 (J^T J)^-1.

    Parameters
    ----------
    x, y : array_like
        Point coordinates.
    center : (float, float), optional
        Hold the centre here (e.g. at the lens light centre); then the radius is the
        mean distance and its error the standard error of that mean.
    point_err : float, optional
        1-sigma uncertainty of each point; the error scale is the larger of this and
        the scatter of the residuals (needed when three points fit exactly).

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 7)[:-1]
    >>> f = fit_circle(3 + 2 * np.cos(t), -1 + 2 * np.sin(t))
    >>> round(f.center_x, 6), round(f.center_y, 6), round(f.radius, 6)
    (3.0, -1.0, 2.0)
    """
    if center is not None:
        x, y = _as_points(x, y, 1, "circle fit with a fixed centre")
        cx, cy = (float(v) for v in center)
        d = np.hypot(x - cx, y - cy)
        r = float(d.mean())
        res = d - r
        n = d.size
        var = float(res @ res) / (n - 1) if n > 1 else 0.0
        if point_err is not None:
            var = max(var, float(point_err) ** 2)
        cov = np.zeros((3, 3))
        cov[2, 2] = var / n if var > 0 else np.nan
        warn = []
        span = arc_span_deg(x, y, cx, cy)
        if n > 1 and span < SHORT_ARC_DEG:
            warn.append(f"The points span only {span:.0f} deg around the centre: the radius is poorly fixed.")
        if not np.isfinite(cov[2, 2]):
            warn.append("No error estimate: give more than one point or a point uncertainty.")
        return CircleFit(cx, cy, r, float(np.sqrt(cov[2, 2])), cov, float(np.sqrt(np.mean(res**2))), n, span, True,
                         tuple(warn))
    x, y = _as_points(x, y, 3, "circle fit")
    start = _algebraic_circle(x, y)

    def residuals(p):
        return np.hypot(x - p[0], y - p[1]) - p[2]

    sol = least_squares(residuals, start, method="lm", x_scale="jac")
    cx, cy, r = (float(v) for v in sol.x)
    if r < 0:
        r = -r
    res = residuals([cx, cy, r])
    cov = _covariance(sol.jac, res, 3, point_err)
    span = arc_span_deg(x, y, cx, cy)
    warn = []
    if span < SHORT_ARC_DEG:
        warn.append(f"The points span only {span:.0f} deg of the circle: the radius is poorly fixed; "
                    "hold the centre at the lens galaxy or mark a longer arc.")
    if not np.isfinite(cov[2, 2]):
        warn.append("Three points fit a circle exactly: no error estimate without a point uncertainty.")
    return CircleFit(cx, cy, r, float(np.sqrt(cov[2, 2])), cov, float(np.sqrt(np.mean(res**2))), x.size, span, False,
                     tuple(warn))


def _algebraic_ellipse(x, y):
    """Direct least-squares ellipse (Halir & Flusser 1998); returns (cx, cy, a, b, phi)."""
    mx, my, s = x.mean(), y.mean(), max(np.std(x), np.std(y), 1e-300)
    u, v = (x - mx) / s, (y - my) / s
    d1 = np.c_[u * u, u * v, v * v]
    d2 = np.c_[u, v, np.ones_like(u)]
    s1, s2, s3 = d1.T @ d1, d1.T @ d2, d2.T @ d2
    try:
        t = -np.linalg.solve(s3, s2.T)
    except np.linalg.LinAlgError:
        raise LensInputError("The points are degenerate (on a line); mark points along a curved arc.") from None
    m = s1 + s2 @ t
    m = np.array([m[2] / 2, -m[1], m[0] / 2])
    w, vecs = np.linalg.eig(m)
    w, vecs = np.real(w), np.real(vecs)
    cond = 4 * vecs[0] * vecs[2] - vecs[1] ** 2
    ok = np.flatnonzero(cond > 0)
    if ok.size == 0:
        raise LensInputError("No ellipse passes near these points; mark points along the ring, or fit a circle.")
    a1 = vecs[:, ok[0]]
    coef = np.concatenate([a1, t @ a1])
    return _conic_to_geometric(coef, mx, my, s)


def _conic_to_geometric(coef, mx, my, s):
    a, b, c, d, e, f = coef
    den = b * b - 4 * a * c
    cx = (2 * c * d - b * e) / den
    cy = (2 * a * e - b * d) / den
    num = 2 * (a * e * e + c * d * d - b * d * e + den * f)
    root = np.sqrt((a - c) ** 2 + b * b)
    ax1 = -np.sqrt(abs(num * (a + c + root))) / den
    ax2 = -np.sqrt(abs(num * (a + c - root))) / den
    phi = 0.5 * np.arctan2(-b, c - a)
    semi_a, semi_b = abs(ax1), abs(ax2)
    if semi_b > semi_a:
        semi_a, semi_b = semi_b, semi_a
        phi += np.pi / 2
    return cx * s + mx, cy * s + my, semi_a * s, semi_b * s, phi


def _ellipse_xy(p, t):
    cx, cy, a, b, phi = p
    c, s = np.cos(phi), np.sin(phi)
    ex, ey = a * np.cos(t), b * np.sin(t)
    return cx + c * ex - s * ey, cy + s * ex + c * ey


def fit_ellipse(x, y, *, center: tuple[float, float] | None = None, point_err: float | None = None) -> EllipseFit:
    """Fit an ellipse to five (four with a held centre) or more points; theta_E = sqrt(a b).

    A direct algebraic fit (Halir & Flusser 1998) starts an orthogonal-distance fit:
    each point gets its own eccentric anomaly t_i, and the sum of squared distances
    to the points (cx + a cos t cos phi - b sin t sin phi, ...) is minimised.

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 13)[:-1]
    >>> f = fit_ellipse(3 * np.cos(t), 2 * np.sin(t))
    >>> round(f.semi_major, 6), round(f.semi_minor, 6), round(f.theta_e ** 2, 6)
    (3.0, 2.0, 6.0)
    """
    minimum = 4 if center is not None else 5
    x, y = _as_points(x, y, minimum, "ellipse fit")
    if center is None:
        start = _algebraic_ellipse(x, y)
    else:
        # Moments about the fixed centre give the start: the second-moment tensor of points on an ellipse.
        cx0, cy0 = (float(v) for v in center)
        dx, dy = x - cx0, y - cy0
        cov = np.cov(np.c_[dx, dy].T, bias=True) if x.size > 1 else np.eye(2)
        w, v = np.linalg.eigh(cov)
        phi0 = np.arctan2(v[1, 1], v[0, 1])
        r = np.hypot(dx, dy).mean()
        ratio = np.sqrt(max(w[0], 1e-12) / max(w[1], 1e-12))
        start = (cx0, cy0, r / np.sqrt(ratio), r * np.sqrt(ratio), phi0)
    cx, cy, a, b, phi = start
    c, s = np.cos(phi), np.sin(phi)
    lx, ly = c * (x - cx) + s * (y - cy), -s * (x - cx) + c * (y - cy)
    t0 = np.arctan2(ly / b, lx / a)
    fixed = center is not None

    def unpack(q):
        if fixed:
            return (cx0, cy0, q[0], q[1], q[2]), q[3:]
        return tuple(q[:5]), q[5:]

    def residuals(q):
        p, t = unpack(q)
        ex, ey = _ellipse_xy(p, t)
        return np.concatenate([ex - x, ey - y])

    def jacobian(q):  # analytic (the fit's 2-point differences cost one residual call per point and parameter)
        (_, _, ea, eb, ephi), t = unpack(q)
        c, s = np.cos(ephi), np.sin(ephi)
        ct, st = np.cos(t), np.sin(t)
        k, n0 = t.size, q.size - t.size
        jac = np.zeros((2 * k, q.size))
        shape_x = [c * ct, -s * st, -s * ea * ct - c * eb * st]           # d ex / d (a, b, phi)
        shape_y = [s * ct, c * st, c * ea * ct - s * eb * st]             # d ey / d (a, b, phi)
        jac[:k, n0 - 3:n0] = np.column_stack(shape_x)
        jac[k:, n0 - 3:n0] = np.column_stack(shape_y)
        if not fixed:
            jac[:k, 0] = 1.0
            jac[k:, 1] = 1.0
        rows = np.arange(k)
        jac[rows, n0 + rows] = -c * ea * st - s * eb * ct                  # d ex_i / d t_i
        jac[k + rows, n0 + rows] = -s * ea * st + c * eb * ct              # d ey_i / d t_i
        return jac

    q0 = np.concatenate([[a, b, phi] if fixed else [cx, cy, a, b, phi], t0])
    sol = least_squares(residuals, q0, jac=jacobian, method="trf", x_scale="jac")
    p, _ = unpack(sol.x)
    res = residuals(sol.x)
    n_shape = 3 if fixed else 5
    cov_full = _covariance(sol.jac, res, n_shape + x.size, point_err)
    cov_shape = cov_full[:n_shape, :n_shape]
    cov = np.zeros((5, 5))
    if fixed:
        cov[2:, 2:] = cov_shape
    else:
        cov[:, :] = cov_shape
    cx, cy, a, b, phi = (float(v) for v in p)
    a, b = abs(a), abs(b)
    if b > a:
        a, b, phi = b, a, phi + np.pi / 2
        cov[[2, 3]] = cov[[3, 2]]
        cov[:, [2, 3]] = cov[:, [3, 2]]
    theta_e = float(np.sqrt(a * b))
    # d sqrt(ab) = (b da + a db) / (2 sqrt(ab))
    g = np.array([0, 0, b, a, 0]) / (2 * theta_e)
    te_var = float(g @ cov @ g)
    dist = np.hypot(res[: x.size], res[x.size:])
    span = arc_span_deg(x, y, cx, cy)
    warn = []
    if span < 180:
        warn.append(f"The points span only {span:.0f} deg around the centre: the ellipse shape is poorly fixed; "
                    "a circle fit is safer.")
    if not np.isfinite(te_var):
        warn.append("The ellipse passes exactly through the points: no error estimate without a point uncertainty.")
    return EllipseFit(cx, cy, a, b, float(np.degrees(phi) % 180.0), theta_e, float(np.sqrt(te_var)), cov,
                      float(np.sqrt(np.mean(dist**2))), x.size, span, fixed, tuple(warn))


def multiple_image_radius(x, y, *, center: tuple[float, float] | None = None,
                          point_err: float = 0.0) -> MultipleImageEstimate:
    """theta_E from two or four (or more) images of one source.

    - Two images, centre unknown: half their separation (exact for an SIS, Narayan &
      Bartelmann 1996), centre at the midpoint.
    - Two images, centre known: the mean of their distances from the centre.
    - Three or more: the mean distance from the centre (given, or from a circle fit).

    The error combines the position error of the images with, for three or more images, the
    standard error of their distances, and for two images the calibrated scatter
    :data:`DOUBLE_MODEL_SCATTER` of these estimates about theta_E of SIE + shear lenses, in quadrature.

    Examples
    --------
    >>> e = multiple_image_radius([-1.3, 0.9], [0.0, 0.0])
    >>> round(e.radius, 6), round(e.center_x, 6)
    (1.1, -0.2)
    """
    x, y = _as_points(x, y, 2, "multiple-image estimate")
    n = x.size
    warn: list[str] = []
    pe = float(point_err or 0.0)
    if n == 2 and center is None:
        sep = float(np.hypot(x[1] - x[0], y[1] - y[0]))
        err = float(np.hypot(DOUBLE_MODEL_SCATTER * sep / 2, pe / np.sqrt(2)))
        return MultipleImageEstimate(sep / 2, err, float(x.mean()), float(y.mean()),
                                     "half the separation of two images (SIS)", 2,
                                     ("With the lens centre unknown, theta_E is half the image separation; "
                                      "give the lens centre to use the distances instead.", DOUBLE_NOTE))
    if center is None:
        fit = fit_circle(x, y, point_err=pe or None)
        cx, cy = fit.center_x, fit.center_y
        method = f"mean distance of {n} images from the centre of the circle through them"
    else:
        cx, cy = (float(v) for v in center)
        method = f"mean distance of {n} images from the given lens centre"
    d = np.hypot(x - cx, y - cy)
    spread = float(np.std(d, ddof=1) / np.sqrt(n)) if n > 1 else 0.0
    if n == 2:
        spread = float(abs(d[1] - d[0]) / 2)
        dx1, dy1, dx2, dy2 = x[0] - cx, y[0] - cy, x[1] - cx, y[1] - cy
        cosang = (dx1 * dx2 + dy1 * dy2) / (d[0] * d[1]) if d.min() > 0 else 1.0
        if cosang > -0.5:
            warn.append("The two images are not on opposite sides of the centre: check the centre and the images.")
    if n == 2:
        # the distance asymmetry is the source offset, not an error of theta_E: use the calibrated model scatter
        spread = DOUBLE_MODEL_SCATTER * float(d.mean())
        warn.append(DOUBLE_NOTE)
    err = float(np.hypot(spread, pe / np.sqrt(n)))
    return MultipleImageEstimate(float(d.mean()), err, cx, cy, method, n, tuple(warn))
