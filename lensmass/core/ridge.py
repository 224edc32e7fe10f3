"""Move a clicked point onto the brightness ridge of an arc (sub-pixel).

The image is sampled along the radial line from the lens centre through the
point (bilinear interpolation, averaged over a few parallel lines), and the
maximum of the profile inside a small window is located to sub-pixel precision
with a three-point parabola.

A thin ring of radius R blurred by a Gaussian PSF of width sigma has the radial
profile exp(-(r^2 + R^2)/2 sigma^2) I_0(r R / sigma^2) ~ exp(-(r - R)^2 / 2 sigma^2) / sqrt(2 pi r R)
(the large-argument form of the modified Bessel function, Abramowitz & Stegun 1964, eq. 9.7.1):
its peak sits sigma^2 / (2R) inside R. Multiplying the profile by sqrt(r) removes
that shift, so the ridge is found at the ring's true radius.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.ndimage import map_coordinates

#: Default half-length (pixels) of the radial search window.
DEFAULT_HALF_WINDOW_PIX = 4.0
#: A ridge must rise above the chord of the window by this fraction of the profile's range.
MIN_BUMP_FRACTION = 0.02
#: Half-width (pixels) of the window re-centred on the peak for the sub-pixel vertex.
RECENTRE_HALF_PIX = 2.5


@dataclass(frozen=True)
class RidgePoint:
    """A refined point. ``ok`` is False (and x, y are the input) when no ridge lies in the window."""

    x: float
    y: float
    radius_pix: float
    moved_pix: float
    peak_value: float
    ok: bool
    warning: str = ""


def _profile(patch, px, py, ux, uy, s, tangential):
    vx, vy = -uy, ux
    cols = px + s[:, None] * ux + tangential[None, :] * vx
    rows = py + s[:, None] * uy + tangential[None, :] * vy
    vals = map_coordinates(patch, [rows.ravel(), cols.ravel()], order=1, mode="nearest", prefilter=False)
    return vals.reshape(cols.shape).mean(axis=1)


def refine_to_ridge(
    image: np.ndarray,
    x: float,
    y: float,
    center_x: float,
    center_y: float,
    *,
    half_window_pix: float = DEFAULT_HALF_WINDOW_PIX,
    step_pix: float = 0.25,
    tangential_halfwidth_pix: float = 1.0,
    blur_correction: bool = True,
) -> RidgePoint:
    """Move (x, y) along the radial direction from (center_x, center_y) to the brightness ridge.

    Parameters
    ----------
    image : 2-D array
        The image (ideally lens-light subtracted); NaN pixels are filled with the local median.
    x, y : float
        The clicked point (0-based column, row).
    center_x, center_y : float
        The lens centre defining the radial direction.
    half_window_pix : float
        Search from r - half_window to r + half_window along the radius.
    tangential_halfwidth_pix : float
        Average parallel lines within +- this distance (reduces noise).
    blur_correction : bool
        Weight the profile by sqrt(r) to undo the inward shift of a blurred ring's peak.

    Returns
    -------
    RidgePoint

    Examples
    --------
    >>> yy, xx = np.mgrid[0:41, 0:41]
    >>> ring = np.exp(-0.5 * ((np.hypot(xx - 20, yy - 20) - 10.0) / 1.0) ** 2)
    >>> p = refine_to_ridge(ring, 31.5, 20.0, 20.0, 20.0)
    >>> p.ok, abs(p.x - 30.0) < 0.1
    (True, True)
    """
    img = np.asarray(image)
    x, y, cx, cy = float(x), float(y), float(center_x), float(center_y)
    r0 = float(np.hypot(x - cx, y - cy))
    if r0 < 1.0:
        return RidgePoint(x, y, r0, 0.0, float("nan"), False, "The point is on the lens centre: no radial direction.")
    ux, uy = (x - cx) / r0, (y - cy) / r0
    w = float(half_window_pix)
    pad = int(np.ceil(w + tangential_halfwidth_pix)) + 2
    ny, nx = img.shape
    x0, x1 = max(0, int(np.floor(x)) - pad), min(nx, int(np.floor(x)) + pad + 2)
    y0, y1 = max(0, int(np.floor(y)) - pad), min(ny, int(np.floor(y)) + pad + 2)
    if x1 - x0 < 3 or y1 - y0 < 3:
        return RidgePoint(x, y, r0, 0.0, float("nan"), False, "The point is outside the image.")
    patch = np.array(img[y0:y1, x0:x1], dtype=float)
    bad = ~np.isfinite(patch)
    if bad.all():
        return RidgePoint(x, y, r0, 0.0, float("nan"), False, "The point lies on masked (NaN) pixels.")
    if bad.any():
        patch[bad] = np.median(patch[~bad])
    s = np.arange(-w, w + 0.5 * step_pix, step_pix)
    s = s[r0 + s > 0.5]
    n_t = max(1, int(round(2 * tangential_halfwidth_pix)) + 1)
    t = np.linspace(-tangential_halfwidth_pix, tangential_halfwidth_pix, n_t)
    raw = _profile(patch, x - x0, y - y0, ux, uy, s, t)
    # A ridge rises above the straight line joining the window's ends; a falling (convex or
    # straight) lens-light profile alone does not.
    bump = raw - (raw[0] + (raw[-1] - raw[0]) * (s - s[0]) / (s[-1] - s[0]))
    prof = raw * np.sqrt((r0 + s) / r0) if blur_correction else raw
    line = prof[0] + (prof[-1] - prof[0]) * (s - s[0]) / (s[-1] - s[0])
    k = int(np.argmax(prof - line))
    if k == 0 or k == len(s) - 1 or bump.max() <= MIN_BUMP_FRACTION * (raw.max() - raw.min()):
        return RidgePoint(x, y, r0, 0.0, float(prof[k]), False,
                          "No brightness ridge inside the search window: the point was left where it was.")
    # Resample a window centred on the peak (so the chord is not tilted by the window's edge), twice.
    s_best = float(s[k])
    w2 = RECENTRE_HALF_PIX
    for _ in range(2):
        s2 = s_best + np.arange(-w2, w2 + 0.5 * step_pix, step_pix)
        s2 = s2[r0 + s2 > 0.5]
        if s2.size < 5:
            break
        p2 = _profile(patch, x - x0, y - y0, ux, uy, s2, t)
        if blur_correction:
            p2 = p2 * np.sqrt((r0 + s2) / r0)
        new = _local_peak(s2, p2, int(np.argmin(np.abs(s2 - s_best))), len(s2))
        if abs(new - s_best) > w2:
            break
        s_best = new
    if not (s[0] <= s_best <= s[-1]):
        s_best = float(s[k])
    nxp, nyp = x + s_best * ux, y + s_best * uy
    return RidgePoint(float(nxp), float(nyp), r0 + s_best, abs(s_best), float(prof[k]), True)


def _local_peak(s: np.ndarray, prof: np.ndarray, k: int, half: int) -> float:
    """Peak near index k: subtract the chord of a window centred on the peak (removing a linear
    gradient without tilting a symmetric peak), then take the vertex of a parabola through the
    logarithm of the samples above half the maximum (exact for a Gaussian); re-centred twice."""
    best = float(s[k])
    for _ in range(2):
        lo, hi = max(0, k - half), min(len(s) - 1, k + half)
        seg_s, seg = s[lo:hi + 1], prof[lo:hi + 1]
        flat = seg - (seg[0] + (seg[-1] - seg[0]) * (seg_s - seg_s[0]) / (seg_s[-1] - seg_s[0] or 1.0))
        j = int(np.argmax(flat))
        if flat[j] <= 0:
            break
        a, b = j, j + 1  # the contiguous run above half the peak
        while a > 0 and flat[a - 1] > 0.5 * flat[j]:
            a -= 1
        while b < len(seg) and flat[b] > 0.5 * flat[j]:
            b += 1
        if b - a < 3:
            a, b = max(0, j - 1), min(len(seg), j + 2)
        if b - a < 3 or np.any(flat[a:b] <= 0):
            break
        # A Gaussian is a parabola in log: its vertex is the peak (uses the whole upper half).
        a2, a1, _ = np.polyfit(seg_s[a:b] - seg_s[j], np.log(flat[a:b]), 2)
        best = float(seg_s[j] - a1 / (2 * a2)) if a2 < 0 else float(seg_s[j])
        best = float(np.clip(best, seg_s[a], seg_s[b - 1]))
        k = int(np.argmin(np.abs(s - best)))
    return best


def ridge_peak(radii: np.ndarray, values: np.ndarray, r_start: float, width: float) -> float:
    """Ridge of a radial profile near ``r_start``: a Gaussian on a straight-line baseline fitted by
    least squares (the baseline absorbs smooth lens-light residuals); the parabola through the
    highest bins when the fit fails."""
    from scipy.optimize import least_squares, leastsq

    win = np.abs(radii - r_start) <= max(2.5, 2.0 * width)
    r, v = radii[win], values[win]
    ok = np.isfinite(v)
    r, v = r[ok], v[ok]
    if r.size < 5:
        return float(r_start)
    k = int(np.argmax(v))
    fallback = _peak_radius(r, v, k)

    def model(x, a, mu, sig, b0, b1):
        return a * np.exp(-0.5 * ((x - mu) / sig) ** 2) + b0 + b1 * (x - r_start)

    def jacobian(x, a, mu, sig, b0, b1):  # analytic: the fit needs one model call a step, not six
        z = (x - mu) / sig
        g = np.exp(-0.5 * z * z)
        return np.column_stack([g, a * g * z / sig, a * g * z * z / sig, np.ones_like(x), x - r_start])

    s0 = max(0.5, width / 2.355)
    # The least-squares problem scipy's curve_fit poses (same start, bounds, trust-region method and
    # evaluation limit), solved directly: curve_fit's covariance (unused here) and wrappers were a
    # quarter of the finder's ridge time on a 2048 x 2048 field.
    r, v = np.asarray(r, float), np.asarray(v, float)
    p0 = np.array([v[k] - np.median(v), r[k], s0, np.median(v), 0.0])
    lo, hi = np.array([0, r[0], 0.3, -np.inf, -np.inf]), np.array([np.inf, r[-1], 3 * s0 + 1, np.inf, np.inf])
    fun, jac = (lambda p: model(r, *p) - v), (lambda p: jacobian(r, *p))
    # MINPACK's Levenberg-Marquardt first (compiled: a fifth of the trust-region solver's CPU time on these
    # 5-parameter fits); its answer is the bounded problem's minimum whenever it lies inside the bounds,
    # and the bounded trust-region solve runs only when it does not.
    # MINPACK's lmder through scipy's leastsq: the call least_squares(method="lm") makes (same tolerances,
    # evaluation limit and scaling), without its wrappers, which cost as much as the fit (45 fits a 2048^2 field).
    try:
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):  # leastsq's covariance (unused)
            x_lm, _, _, _, info = leastsq(fun, p0, Dfun=jac, full_output=True, ftol=1e-8, xtol=1e-8, gtol=1e-8,
                                          maxfev=400)
        if info in (1, 2, 3, 4) and np.all(x_lm >= lo) and np.all(x_lm <= hi):
            return float(x_lm[1])
        sol = least_squares(fun, p0, jac=jac, method="trf", bounds=(lo, hi), max_nfev=400)
    except ValueError:
        return fallback
    return float(sol.x[1]) if sol.success else fallback


def _peak_radius(radii: np.ndarray, values: np.ndarray, k: int) -> float:
    """Three-point parabolic refinement of a peak at index k."""
    if k <= 0 or k >= len(values) - 1:
        return float(radii[k])
    ym, y0, yp = values[k - 1], values[k], values[k + 1]
    den = ym - 2 * y0 + yp
    shift = 0.5 * (ym - yp) / den if den < 0 else 0.0
    return float(radii[k] + np.clip(shift, -1, 1) * (radii[1] - radii[0]))
