"""The blurred Sersic model of a galaxy on a pixel grid, and its analytic Jacobian (the lens-light fit's model).

The elliptical Sersic profile (Sersic 1968; Graham & Driver 2005, PASA 22, 118, eqs. 1, 4) is sampled at
pixel centres, integrated over the pixel area near the centre (a cusp changes by tens of per cent across
one pixel there), and blurred by a Gaussian PSF (separable; scipy ``correlate1d``). The derivatives with
respect to the nine fit parameters (log flux, log R_e, n, q, angle in degrees, x0, y0, sky, log PSF sigma)
are written out by hand and blurred by the same kernel; the profile's powers and exponentials
(:func:`_profile_terms`) are shared between the model and its Jacobian at the same parameters.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.ndimage import correlate1d

from lensmass.core.sersic import _intensity_at_re, sersic_b

#: The Gaussian PSF kernel reaches this many sigma (as scipy's ``gaussian_filter`` ``truncate``).
PSF_TRUNCATE = 3.5
#: Pixels within this many (fitted-grid) pixels of the model centre are integrated over their area
#: with CORE_SUBSAMPLE x CORE_SUBSAMPLE points (a Sersic cusp is far from linear across them).
CORE_RADIUS_PIX = 2.5
CORE_SUBSAMPLE = 8
#: The profile at those points is softened, r -> sqrt(r^2 + eps^2), with eps this many sub-point spacings:
#: a cusp sampled at fixed points jumps whenever the centre passes close to one, and those jumps trapped
#: the fit in false minima (the demo ring's masked refit stopped at R_e 4.1 px, cost 4x the minimum).
CORE_SOFTENING = 0.5


def blurred_sersic(p, gx: np.ndarray, gy: np.ndarray, step: float = 1.0) -> np.ndarray:
    """Sersic (parameters ``p``, pixels) blurred by a Gaussian PSF, on the grid gx (columns) x gy (rows).

    The Gaussian is separable, so the blur is fast (scipy ``gaussian_filter``); a free
    two-component PSF was tried and absorbed part of the rings into the lens model.
    """
    xx, yy = np.meshgrid(gx, gy)
    return blurred_sersic_on_grid(p, xx, yy, step)


def blurred_sersic_on_grid(p, xx: np.ndarray, yy: np.ndarray, step: float, core=None, terms=None) -> np.ndarray:
    """:func:`blurred_sersic` on a ready-made mesh (the fit evaluates it hundreds of times); ``core`` is
    :func:`core_pixels` fixed for a whole fit (default: around the model's own centre); ``terms`` are
    :func:`grid_and_core_terms` at ``p`` already computed (they then keep the blurred profile for
    :func:`blurred_sersic_jacobian` at the same ``p``). The model has the dtype of ``xx`` (the fit
    passes float32 offsets from its starting centre: twice the speed, and 1e-7 of the model is far
    below any pixel's noise)."""
    if terms is None:
        terms = grid_and_core_terms(p, xx, yy, step, core)
    _blurred_profile(p, xx, yy, step, core, terms)
    return terms.blurred + np.float64(p[7])  # the sky in float64: a large sky level keeps its digits


def _blurred_profile(p, xx, yy, step, core, terms) -> None:
    """The pixel-integrated profile, its blur along rows and its full blur, kept in ``terms``."""
    if terms.blurred is None:
        terms.sb = _sersic_pixels(p, xx, yy, step, core, terms)
        w, _ = _psf_kernel_1d(np.exp(p[8]) / step)
        terms.cols = correlate1d(terms.sb, w, axis=-1, mode="nearest")
        terms.blurred = correlate1d(terms.cols, w, axis=-2, mode="nearest")


def _psf_kernel_1d(sig: float) -> tuple[np.ndarray, np.ndarray]:
    """The sampled, normalised 1-D Gaussian of ``sig`` pixels (as scipy's ``gaussian_filter`` with
    ``truncate`` = :data:`PSF_TRUNCATE` builds it) and its exact derivative with respect to ln sig:
    for w = exp(-x^2 / 2 s^2) / sum, dw/d ln s = w (x^2 - sum(w x^2)) / s^2."""
    half = int(PSF_TRUNCATE * sig + 0.5)
    x = np.arange(-half, half + 1, dtype=float)
    w = np.exp(-0.5 * x * x / (sig * sig))
    w /= w.sum()
    return w, w * (x * x - float((w * x * x).sum())) / (sig * sig)


def _blur(a: np.ndarray, w: np.ndarray, w_rows: np.ndarray | None = None) -> np.ndarray:
    """Separable correlation of the last two axes of ``a`` with ``w`` (columns) and ``w_rows`` (rows,
    default ``w``); edges continue the nearest pixel."""
    out = correlate1d(a, w, axis=-1, mode="nearest")
    return correlate1d(out, w if w_rows is None else w_rows, axis=-2, mode="nearest")


def core_pixels(center: tuple[float, float], xx: np.ndarray, yy: np.ndarray, step: float, reach: float = 0.0):
    """Flat indices of the grid pixels within :data:`CORE_RADIUS_PIX` grid pixels (plus ``reach`` image
    pixels) of ``center``, and the (K, CORE_SUBSAMPLE^2) sub-pixel positions that integrate them over
    their area (dtype of ``xx``). A fit fixes them around its starting centre with ``reach`` = how far
    the centre may move, so the model stays a smooth function of the centre."""
    near = np.flatnonzero(np.hypot(xx - center[0], yy - center[1]).ravel() <= CORE_RADIUS_PIX * step + reach)
    u = (((np.arange(CORE_SUBSAMPLE) + 0.5) / CORE_SUBSAMPLE - 0.5) * step).astype(xx.dtype)
    du, dv = np.meshgrid(u, u)
    return near, xx.ravel()[near][:, None] + du.ravel(), yy.ravel()[near][:, None] + dv.ravel()


def _core_softening(step: float) -> float:
    return CORE_SOFTENING * step / CORE_SUBSAMPLE


@dataclass
class _Terms:
    """The powers and exponentials of the Sersic profile at a set of points, shared by the model and
    its derivatives: rotated offsets ``xp``, ``yp``, squared elliptical radius ``r2``, ln(r / R_e)
    ``lr``, (r / R_e)^(1/n) ``u`` and the profile ``sb``."""

    xp: np.ndarray
    yp: np.ndarray
    r2: np.ndarray
    lr: np.ndarray
    u: np.ndarray
    sb: np.ndarray


@dataclass
class _ModelTerms:
    """What the model computes at one parameter vector and its Jacobian there reuses: the profile's
    terms on the grid and at the core's sub-pixel points, and (once the model was evaluated) the
    pixel-integrated profile ``sb``, its blur along rows ``cols`` and its full blur ``blurred``."""

    grid: _Terms
    core: _Terms
    sb: np.ndarray | None = None
    cols: np.ndarray | None = None
    blurred: np.ndarray | None = None


def grid_and_core_terms(p, xx: np.ndarray, yy: np.ndarray, step: float, core=None) -> _ModelTerms:
    """:func:`_profile_terms` at the grid's pixel centres and at the core's sub-pixel points."""
    near, sx, sy = core_pixels((p[5], p[6]), xx, yy, step) if core is None else core
    return _ModelTerms(_profile_terms(p, xx, yy, step), _profile_terms(p, sx, sy, step, _core_softening(step)))


def _sersic_pixels(p, xx: np.ndarray, yy: np.ndarray, step: float, core=None, terms=None) -> np.ndarray:
    """The Sersic profile at the pixel centres, integrated over the pixel area near the centre (a cusp
    changes by tens of per cent across one pixel there, and images integrate light over pixels)."""
    core = core_pixels((p[5], p[6]), xx, yy, step) if core is None else core
    t = grid_and_core_terms(p, xx, yy, step, core) if terms is None else terms
    sb = t.grid.sb.copy()
    if core[0].size:
        sb.ravel()[core[0]] = t.core.sb.mean(axis=1)
    return sb


@lru_cache(maxsize=64)
def _b_and_derivatives(n: float) -> tuple[float, float, float, float]:
    """b_n (Graham & Driver 2005, eq. 4 via :func:`sersic_b`), its derivative by n (central difference),
    the derivative of ln I_e by n at fixed flux and R_e, and ln(I_e R_e^2 / flux): the same few numbers
    for every pixel, and the same n for the model and its Jacobian."""
    from scipy.special import digamma, gammaincinv

    b = float(sersic_b(n))  # checks n once; the two below as sersic_b without the check (a third of the time)
    h = 1e-4 * max(n, 1.0)
    db = float(gammaincinv(2.0 * (n + h), 0.5) - gammaincinv(2.0 * (n - h), 0.5)) / (2 * h)
    d_lnie_dn = -1.0 / n - db + 2.0 * np.log(b) + 2.0 * n * db / b - 2.0 * digamma(2.0 * n)
    return b, db, float(d_lnie_dn), float(np.log(_intensity_at_re(1.0, 1.0, n, b)))  # b_n once, not again


def _profile_terms(p, xx: np.ndarray, yy: np.ndarray, step: float, eps: float = 0.0) -> _Terms:
    """The elliptical Sersic profile (Graham & Driver 2005, eqs. 1, 4) at points (xx, yy), with its
    intermediate terms, in the dtype of ``xx``; ``eps`` softens the radius (sqrt(r^2 + eps^2)); radii
    under 0.02 ``step`` are raised to it (the cusp's centre)."""
    n, q, ln_re = float(p[2]), float(p[3]), float(p[1])
    c, s = float(np.cos(np.radians(p[4]))), float(np.sin(np.radians(p[4])))
    dx, dy = xx - float(p[5]), yy - float(p[6])
    xp, yp = c * dx + s * dy, c * dy - s * dx
    r2 = q * xp * xp
    r2 += yp * yp / q
    if eps:
        r2 += eps * eps
    np.maximum(r2, (0.02 * step) ** 2, out=r2)
    lr = np.log(r2)
    lr *= 0.5
    lr -= ln_re
    u = np.exp(lr / n)
    b, _, _, ln_ie = _b_and_derivatives(n)
    sb = np.exp(-b * (u - 1.0))
    sb *= float(np.exp(float(p[0]) - 2.0 * ln_re + ln_ie))
    return _Terms(xp, yp, r2, lr, u, sb)


def _sersic_parts(p, xx: np.ndarray, yy: np.ndarray, step: float, eps: float = 0.0,
                  value_only: bool = False, terms: _Terms | None = None) -> np.ndarray:
    """Derivatives (7, ...) of the Sersic profile at points (xx, yy) with respect to log flux, log R_e,
    n, q, angle (degrees), x0, y0 (Graham & Driver 2005, eqs. 1, 4 differentiated by hand); the first is
    the profile itself, which is all ``value_only`` returns. ``eps`` softens the radius (sqrt(r^2 + eps^2));
    ``terms``: :func:`_profile_terms` at these points, when already computed."""
    t = _profile_terms(p, xx, yy, step, eps) if terms is None else terms
    if value_only:
        return t.sb
    n, q = float(p[2]), float(p[3])
    c, s = float(np.cos(np.radians(p[4]))), float(np.sin(np.radians(p[4])))
    b, db, d_lnie_dn, _ = _b_and_derivatives(n)
    sb, u, xp, yp = t.sb, t.u, t.xp, t.yp
    bu_n = (b / n) * u
    g = sb * bu_n
    g /= t.r2                                              # -(d sb / dr) / r
    out = np.empty((7,) + np.shape(sb), dtype=sb.dtype)
    out[0] = sb                                            # d / d log flux
    np.multiply(sb, bu_n - 2.0, out=out[1])                # d / d log R_e
    tmp = bu_n * t.lr
    tmp *= 1.0 / n
    tmp -= db * (u - 1.0)
    tmp += d_lnie_dn
    np.multiply(sb, tmp, out=out[2])                       # d / d n
    np.multiply(xp, xp, out=tmp)
    tmp -= yp * yp / (q * q)
    tmp *= -0.5
    np.multiply(g, tmp, out=out[3])                        # d / d q
    np.multiply(xp, yp, out=tmp)
    tmp *= (1.0 / q - q) * np.pi / 180.0
    np.multiply(g, tmp, out=out[4])                        # d / d angle (deg)
    np.multiply(xp, q * c, out=tmp)
    tmp -= (s / q) * yp
    np.multiply(g, tmp, out=out[5])                        # d / d x0
    np.multiply(xp, q * s, out=tmp)
    tmp += (c / q) * yp
    np.multiply(g, tmp, out=out[6])                        # d / d y0
    return out


def blurred_sersic_jacobian(p, xx: np.ndarray, yy: np.ndarray, step: float, core=None, terms=None) -> np.ndarray:
    """Analytic derivatives (9, ny, nx) of :func:`blurred_sersic_on_grid` with respect to its parameters
    (log flux, log R_e, n, q, angle in degrees, x0, y0, sky, log PSF sigma), in the dtype of ``xx``.

    The blur is linear, so each derivative of the Sersic profile (Graham & Driver 2005, eqs. 1, 4),
    integrated over the core pixels as the model is, is blurred by the same Gaussian; the PSF-width
    term blurs the profile with the exact derivative of the sampled kernel (rows and columns in
    turn). One model's worth of power laws and exponentials replace the nine model evaluations of a
    finite-difference Jacobian; the fit passes the model's own ``terms`` (:func:`grid_and_core_terms`),
    so none are computed again, and the blurred profile (the flux derivative) is the model's own.
    """
    core = core_pixels((p[5], p[6]), xx, yy, step) if core is None else core
    t = grid_and_core_terms(p, xx, yy, step, core) if terms is None else terms
    _blurred_profile(p, xx, yy, step, core, t)
    parts = _sersic_parts(p, xx, yy, step, terms=t.grid)[1:]
    near = core[0]
    if near.size:
        flat = parts.reshape(6, -1)
        flat[:, near] = _sersic_parts(p, core[1], core[2], step, _core_softening(step), terms=t.core)[1:].mean(axis=2)
    w, dw = _psf_kernel_1d(np.exp(p[8]) / step)
    out = np.empty((9,) + xx.shape, dtype=parts.dtype)
    out[0] = t.blurred
    correlate1d(correlate1d(parts, w, axis=-1, mode="nearest"), w, axis=-2, mode="nearest", output=out[1:7])
    out[7] = 1.0
    out[8] = correlate1d(t.cols, dw, axis=-2, mode="nearest") + _blur(t.sb, dw, w)
    return out
