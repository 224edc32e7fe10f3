"""Longer than 500 lines because the posterior, its optimiser and its two samplers share private state
(the vectorised posterior object) and are tested together.

Fit an SIE + external shear to marked images and arc points, with a sampled posterior.

Data: points in arcsec (x east, y north), each belonging to a *system* (one background source,
with its own D_ls/D_s) and being either an ``image`` (a point of the source seen in several images:
the images of one compact source or knot) or an ``arc`` point (somewhere along an extended arc of
the source).

Likelihood. Every point is mapped to the source plane, beta_i = theta_i - f_j alpha(theta_i)
(f_j = (D_ls/D_s)_j / (D_ls/D_s)_ref scales the deflection for system j). A point with image-plane
error sigma has the source-plane covariance sigma^2 A_i A_i^T (A = d beta / d theta), and arc points
add the spread s_j^2 of the extended source; the common source position of each system is
integrated out analytically (flat prior), and the Jacobian |det A_i| turns the density back into
the image plane. To first order in the errors this is the image-plane likelihood of the marks
(the magnified source-plane chi^2 of common practice), and it needs no image search per step.
After sampling, the model images of each system are found exactly (:mod:`lensmass.core.image_finder`)
and compared with the marks in the image plane (residuals and the image-plane chi^2).

Priors (stated in every result): theta_E uniform; axis ratio uniform in [Q_MIN, 1] and major-axis
direction uniform; shear components Gaussian of width SHEAR_PRIOR_SIGMA; centre uniform inside the
marks' box unless the lens-light centre is given (then Gaussian); optional Gaussian prior on the
ellipticity from the lens light; arc spread s uniform in [0, ARC_SPREAD_MAX] arcsec.

Sampler: ``emcee`` (Foreman-Mackey et al. 2013, PASP 125, 306), the affine-invariant ensemble sampler
of Goodman & Weare (2010): well kept, pure Python, no tuning of step sizes, handles the strongly
correlated directions (q against shear) of lens models, and evaluates all walkers in one
vectorised call.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.progress import ProgressCallback, StopCallback, check_stop, report
from lensmass.core.sie import (
    SIEShear,
    ellipticity_from_axis_ratio,
    lens_mapping,
)

KINDS = ("image", "arc")
Q_MIN = 0.2
SHEAR_PRIOR_SIGMA = 0.05
SHEAR_MAX = 0.5
ARC_SPREAD_MAX = 2.0
DEFAULT_WALKERS = 32
#: Points marked along an arc are not independent draws (neighbours trace the same part of the source), so
#: the likelihood of a system with arc points is raised to this power: each arc point counts as a third of
#: an independent one. Without it the 95% intervals of theta_E covered the truth in 14 of 20
#: inject-and-recover arc systems (68%: 10 of 20); see benchmarks/bench_lens_model.py for the figures with it.
ARC_LIKELIHOOD_WEIGHT = 1.0 / 3.0
#: Importance sampling is used when its effective sample size reaches this (percentiles of 400
#: independent draws place the 2.5% and 97.5% points to about +-0.8% in probability).
MIN_EFFECTIVE_DRAWS = 400
DEFAULT_STEPS = 1200
DEFAULT_BURN = 300
_LENS_NAMES = ("theta_e", "e1", "e2", "x0", "y0", "gamma1", "gamma2")


@dataclass(frozen=True)
class MarkedSystems:
    """Marked points of one or more lensed sources, in arcsec on the sky (x east, y north).

    ``system`` labels the source of each point; ``kind`` is ``"image"`` or ``"arc"``;
    ``scale`` maps each system label to D_ls/D_s relative to the reference source (1 for all
    when the sources share a redshift).
    """

    x: np.ndarray
    y: np.ndarray
    system: np.ndarray
    kind: np.ndarray
    point_err: np.ndarray
    scale: dict = field(default_factory=dict)

    @property
    def systems(self) -> list[str]:
        return list(dict.fromkeys(self.system.tolist()))


@dataclass(frozen=True)
class LensPriors:
    """Priors of the fit. ``center`` = (x, y, sigma) arcsec from the lens light, or None (uniform);
    ``light_shape`` = (q, angle_rad, sigma_q) of the lens light, or None."""

    center: tuple[float, float, float] | None = None
    light_shape: tuple[float, float, float] | None = None
    theta_e_max: float = 10.0
    center_box: tuple[float, float, float, float] = (-10.0, 10.0, -10.0, 10.0)
    shear_sigma: float = SHEAR_PRIOR_SIGMA
    q_min: float = Q_MIN
    lone_arc: bool = False
    has_arcs: bool = False

    def describe(self) -> list[str]:
        out = [f"theta_E uniform in (0, {self.theta_e_max:.3g}] arcsec",
               f"axis ratio q uniform in [{self.q_min:g}, 1], major-axis angle uniform",
               f"external shear: each component Gaussian, mean 0, sigma {self.shear_sigma:g} (|gamma| < {SHEAR_MAX:g})"]
        if self.center is None:
            out.append("lens centre uniform inside the box of the marks (no lens-light centre given)")
        else:
            out.append(f"lens centre Gaussian about the lens-light centre, sigma {self.center[2]:.3g} arcsec")
        if self.light_shape is not None:
            out.append(f"mass ellipticity Gaussian about the lens light's (q = {self.light_shape[0]:.3g}, "
                       f"sigma_q = {self.light_shape[2]:.3g})")
        if self.has_arcs:
            out.append(f"spread of arc points about their source uniform in [0, {ARC_SPREAD_MAX:g}] arcsec")
        if self.lone_arc:
            out.append("lone arc: not wholly inside the critical curve (part of it outside, as an outer image or "
                       "a merging pair across the curve), from a source that is multiply imaged (inside the cut)")
        return out


# ----------------------------------------------------------------------------------- posterior
def lens_from_rows(p: np.ndarray) -> SIEShear:
    """Parameter rows [theta_e, u1, u2, x0, y0, g1, g2, ...] to lenses; the ellipticity
    e = (1 - q)/(1 + q) = |u|^2 with the major axis at half the angle of u (so that a prior
    uniform in q and angle is smooth in u; see :class:`_Posterior`)."""
    p = np.atleast_2d(p)
    u1, u2 = p[:, 1], p[:, 2]
    e = u1 * u1 + u2 * u2
    return SIEShear(p[:, 0], (1 - e) / (1 + e), 0.5 * np.arctan2(u2, u1), p[:, 3], p[:, 4], p[:, 5], p[:, 6])


def rows_from_lens(theta_e, q, angle_rad, x0, y0, gamma1, gamma2) -> np.ndarray:
    """Inverse of :func:`lens_from_rows` for the seven lens parameters."""
    e = (1 - np.asarray(q, float)) / (1 + np.asarray(q, float))
    u = np.sqrt(e)
    return np.array([theta_e, u * np.cos(2 * angle_rad), u * np.sin(2 * angle_rad), x0, y0, gamma1, gamma2], float)


class _Posterior:
    """Vectorised log posterior over rows [theta_e, u1, u2, x0, y0, g1, g2, s_j...] (s_j the spread of the
    arc points of system j about their source, arcsec).

    A prior uniform in q and in angle has density proportional to 1 / (1 + e)^2 in the (u1, u2)
    plane (e = |u|^2; the area element of the e-plane is 2 e times that of the u-plane), so the
    round lens is not a singular point for the sampler.
    """

    def __init__(self, data: MarkedSystems, priors: LensPriors):
        self.data = data
        self.priors = priors
        self.groups = []
        self.arc_systems = [s for s in data.systems if np.any((data.system == s) & (data.kind == "arc"))]
        for name in data.systems:
            sel = data.system == name
            self.groups.append((name, data.x[sel], data.y[sel], data.kind[sel] == "arc", data.point_err[sel] ** 2,
                                float(data.scale.get(name, 1.0)),
                                self.arc_systems.index(name) if name in self.arc_systems else None))
        self.n_params = len(_LENS_NAMES) + len(self.arc_systems)

    def log_prior(self, p: np.ndarray) -> np.ndarray:
        pr = self.priors
        te, u1, u2, x0, y0, g1, g2 = (p[:, i] for i in range(7))
        e = u1 * u1 + u2 * u2
        e_max = (1 - pr.q_min) / (1 + pr.q_min)
        ok = (te > 0) & (te <= pr.theta_e_max) & (e < e_max) & (g1 * g1 + g2 * g2 < SHEAR_MAX**2)
        lp = -2 * np.log1p(e) - 0.5 * (g1 * g1 + g2 * g2) / pr.shear_sigma**2
        if pr.center is None:
            bx0, bx1, by0, by1 = pr.center_box
            ok &= (x0 > bx0) & (x0 < bx1) & (y0 > by0) & (y0 < by1)
        else:
            cx, cy, cs = pr.center
            lp += -0.5 * ((x0 - cx) ** 2 + (y0 - cy) ** 2) / cs**2
        if pr.light_shape is not None:
            lq, lang, lsig = pr.light_shape
            le1, le2 = ellipticity_from_axis_ratio(lq, lang)
            phi2 = np.arctan2(u2, u1)
            sig_e = max(lsig * 2 / (1 + lq) ** 2, 1e-3)
            lp += -0.5 * ((e * np.cos(phi2) - le1) ** 2 + (e * np.sin(phi2) - le2) ** 2) / sig_e**2
        if self.arc_systems:
            spread = p[:, 7:]
            ok &= np.all((spread >= 0) & (spread < ARC_SPREAD_MAX), axis=1)
        return np.where(ok, lp, -np.inf)

    def chi2(self, row: np.ndarray) -> float:
        """The quadratic (chi^2) part of the likelihood of one parameter row, sources at their best."""
        self._last_chi2: np.ndarray | None = None
        self.log_likelihood(np.atleast_2d(row), want_chi2=True)
        return float(self._last_chi2[0])

    def log_likelihood(self, p: np.ndarray, want_sources: bool = False, want_chi2: bool = False):
        lens = lens_from_rows(p)
        lens = SIEShear(*(np.asarray(v)[:, None] for v in (lens.theta_e, lens.q, lens.angle_rad, lens.x0, lens.y0,
                                                           lens.gamma1, lens.gamma2)))
        total = np.zeros(p.shape[0])
        chi2 = np.zeros(p.shape[0])
        sources = {}
        for name, x, y, is_arc, var, f, arc_index in self.groups:
            bx, by, a11, a22, a12 = lens_mapping(lens.scaled(f) if f != 1.0 else lens, x, y)
            c11 = var * (a11 * a11 + a12 * a12)
            c22 = var * (a12 * a12 + a22 * a22)
            c12 = var * (a11 + a22) * a12
            if arc_index is not None:
                s2 = (p[:, 7 + arc_index] ** 2)[:, None] * is_arc
                c11 = c11 + s2
                c22 = c22 + s2
            det_c = np.maximum(c11 * c22 - c12 * c12, 1e-300)
            p11, p22, p12 = c22 / det_c, c11 / det_c, -c12 / det_c
            f11, f22, f12 = p11.sum(1), p22.sum(1), p12.sum(1)
            v1 = (p11 * bx + p12 * by).sum(1)
            v2 = (p12 * bx + p22 * by).sum(1)
            det_f = np.maximum(f11 * f22 - f12 * f12, 1e-300)
            mx = (f22 * v1 - f12 * v2) / det_f
            my = (f11 * v2 - f12 * v1) / det_f
            # the residual form (not sum(b P b) - m.v): no cancellation when an image sits near a critical curve
            rx, ry = bx - mx[:, None], by - my[:, None]
            quad = (p11 * rx * rx + 2 * p12 * rx * ry + p22 * ry * ry).sum(1)
            det_a = a11 * a22 - a12 * a12
            chi2 += quad
            weight = ARC_LIKELIHOOD_WEIGHT if arc_index is not None else 1.0
            total += weight * (-0.5 * quad - 0.5 * np.log(det_c).sum(1)
                               + np.log(np.maximum(np.abs(det_a), 1e-300)).sum(1) - 0.5 * np.log(det_f))
            if self.priors.lone_arc:
                # a tangential arc is never wholly inside the critical curve: some point has positive parity
                # (both eigenvalues of A positive); its source is multiply imaged (inside the cut, ~ theta_E)
                outer = np.any((det_a > 0) & (a11 + a22 > 0) & is_arc, axis=1)
                inside = np.hypot(mx - p[:, 3], my - p[:, 4]) < p[:, 0] * f
                total = np.where(outer & inside, total, -np.inf)
            if want_sources:
                sources[name] = (mx, my)
        if want_chi2:
            self._last_chi2 = chi2
        return (total, sources) if want_sources else total

    def lone_arc_needs_outer(self, row: np.ndarray) -> bool:
        """A lone-arc start that is ruled out (e.g. inside the critical curve) is moved inwards."""
        return self.priors.lone_arc and not np.isfinite(self(row[None, :])[0])

    def __call__(self, p: np.ndarray) -> np.ndarray:
        p = np.atleast_2d(p)
        lp = self.log_prior(p)
        good = np.isfinite(lp)
        out = np.full(p.shape[0], -np.inf)
        if good.any():
            with np.errstate(all="ignore"):
                ll = self.log_likelihood(p[good])
            out[good] = np.where(np.isfinite(ll), lp[good] + ll, -np.inf)
        return out


# ----------------------------------------------------------------------------------------- fit
@dataclass
class LensModelFit:
    """Posterior of an SIE + shear fit: ``draws`` (n, n_params) rows [theta_e, u1, u2, x0, y0, g1, g2,
    s...], the posterior object, the best (maximum posterior) row, and sampler diagnostics."""

    draws: np.ndarray
    best: np.ndarray
    posterior: _Posterior
    acceptance: float
    autocorr_steps: float
    n_steps: int
    notes: list[str] = field(default_factory=list)
    method: str = "emcee"

    def lenses(self, rows: np.ndarray | None = None) -> SIEShear:
        return lens_from_rows(self.draws if rows is None else rows)

    def sources(self, rows: np.ndarray | None = None) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """Best-fitting source position of each system for each row (arcsec)."""
        p = self.draws if rows is None else np.atleast_2d(rows)
        with np.errstate(all="ignore"):
            return self.posterior.log_likelihood(p, want_sources=True)[1]


def _start(data: MarkedSystems, priors: LensPriors) -> np.ndarray:
    if priors.center is not None:
        cx, cy = priors.center[:2]
    else:
        cx, cy = float(np.mean(data.x)), float(np.mean(data.y))
    r = float(np.median(np.hypot(data.x - cx, data.y - cy)))
    if priors.lone_arc:  # the arc lies outside the critical curve
        r *= 0.8
    return np.array([max(r, 1e-3), 0.0, 0.0, cx, cy, 0.0, 0.0])


def _least_squares(post: _Posterior, start: np.ndarray):
    """Weighted least squares of the linearised image-plane residuals with explicit source positions
    (arc spread held at 0.1 arcsec): a fast, reliable starting point for the sampler. Residuals of
    many parameter vectors come from one vectorised call, so the finite-difference Jacobian costs one
    call too."""
    from scipy.optimize import least_squares

    pr = post.priors
    groups = post.groups
    n_sys = len(groups)
    u_max = np.sqrt((1 - pr.q_min) / (1 + pr.q_min)) * 0.999

    def batch(v):
        lens = lens_from_rows(v[:, :7])
        lens = SIEShear(*(np.asarray(a)[:, None] for a in (lens.theta_e, lens.q, lens.angle_rad, lens.x0, lens.y0,
                                                           lens.gamma1, lens.gamma2)))
        out = []
        for j, (_, x, y, is_arc, var, f, _) in enumerate(groups):
            bx, by, a11, a22, a12 = lens_mapping(lens.scaled(f) if f != 1.0 else lens, x, y)
            r1, r2 = bx - v[:, 7 + 2 * j, None], by - v[:, 8 + 2 * j, None]
            c11 = var * (a11 * a11 + a12 * a12) + 0.01 * is_arc
            c22 = var * (a12 * a12 + a22 * a22) + 0.01 * is_arc
            c12 = var * (a11 + a22) * a12
            l11 = np.sqrt(np.maximum(c11, 1e-30))
            l21 = c12 / l11
            l22 = np.sqrt(np.maximum(c22 - l21 * l21, 1e-30))
            w1 = r1 / l11
            out += [w1, (r2 - l21 * w1) / l22]
        out.append(v[:, 5:7] / pr.shear_sigma)
        if pr.center is not None:
            out.append((v[:, 3:5] - np.array(pr.center[:2])) / pr.center[2])
        return np.concatenate(out, axis=1)

    def residuals(v):
        with np.errstate(all="ignore"):
            return batch(v[None, :])[0]

    def jacobian(v):
        h = 1e-6 * np.maximum(np.abs(v), 1e-2)
        rows = np.vstack([v, v + np.diag(h)])
        with np.errstate(all="ignore"):
            r = batch(rows)
        return (r[1:] - r[0]).T / h

    lo = np.r_[1e-4, -u_max, -u_max, -np.inf, -np.inf, -SHEAR_MAX, -SHEAR_MAX, np.full(2 * n_sys, -np.inf)]
    hi = np.r_[pr.theta_e_max, u_max, u_max, np.inf, np.inf, SHEAR_MAX, SHEAR_MAX, np.full(2 * n_sys, np.inf)]
    start = np.array(start[:7], float)
    u0 = np.hypot(start[1], start[2])
    if u0 > 0.9 * u_max:  # a random start may lie outside the allowed ellipticities
        start[1:3] *= 0.9 * u_max / u0
    start[0] = min(max(start[0], 1e-3), 0.99 * pr.theta_e_max)
    lens0 = lens_from_rows(start)
    beta0 = []
    for _, x, y, _, _, f, _ in groups:
        bx, by, *_ = lens_mapping(lens0.scaled(f), x, y)
        beta0 += [float(np.mean(bx)), float(np.mean(by))]
    v0 = np.clip(np.r_[start[:7], beta0], lo + 1e-9, hi - 1e-9)
    sol = least_squares(residuals, v0, jac=jacobian, bounds=(lo, hi), x_scale="jac", max_nfev=200)
    best = sol.x[:7].copy()
    u = np.hypot(best[1], best[2])
    if u >= u_max * 0.98:  # the box bounds allow corners outside the disc of allowed ellipticities
        best[1:3] *= 0.98 * u_max / u
    return best


def _optimise(post: _Posterior, start: np.ndarray, rng: np.random.Generator, n_starts: int = 3) -> np.ndarray:
    """The best of a few least-squares runs from different shapes, judged by the full posterior."""
    best, best_val = None, -np.inf
    extra = np.full(post.n_params - 7, 0.05)
    for k in range(n_starts):
        p0 = start.copy()
        if k:
            p0[1:3] = rng.normal(0, 0.3, 2)
            p0[5:7] = rng.normal(0, 0.05, 2)
        row = np.r_[_least_squares(post, p0), extra]
        if post.lone_arc_needs_outer(row):
            row[0] = 0.9 * row[0]
        val = post(row[None, :])[0]
        if val > best_val:
            best, best_val = row, val
    if best is None:
        raise LensInputError("No lens model reproduces these marks (every start was ruled out by the priors): "
                             "check the lens centre and which points belong to which system.")
    return best


def _hessian(post: _Posterior, centre: np.ndarray, step: np.ndarray) -> np.ndarray:
    """Finite-difference Hessian of the log posterior; every stencil point in one vectorised call."""
    d = centre.size
    eye = np.eye(d) * step
    rows = [centre]
    for i in range(d):
        rows += [centre + eye[i], centre - eye[i]]
        for j in range(i + 1, d):
            rows += [centre + eye[i] + eye[j], centre + eye[i] - eye[j], centre - eye[i] + eye[j],
                     centre - eye[i] - eye[j]]
    v = post(np.array(rows))
    h = np.zeros((d, d))
    k = 1
    f0 = v[0]
    diag_idx = {}
    for i in range(d):
        h[i, i] = (v[k] - 2 * f0 + v[k + 1]) / step[i] ** 2
        k += 2
        for j in range(i + 1, d):
            h[i, j] = h[j, i] = (v[k] - v[k + 1] - v[k + 2] + v[k + 3]) / (4 * step[i] * step[j])
            k += 4
        diag_idx[i] = k
    return h


def _prior_scales(post: _Posterior, best: np.ndarray) -> np.ndarray:
    """Widths the data may leave to the priors: used to regularise the proposal."""
    pr = post.priors
    cs = pr.center[2] if pr.center is not None else 0.3 * best[0]
    return np.r_[0.3 * best[0], 0.35, 0.35, cs, cs, pr.shear_sigma, pr.shear_sigma, np.full(post.n_params - 7, 0.3)]


def _laplace_proposal(post: _Posterior, best: np.ndarray) -> np.ndarray:
    """Covariance of a Gaussian about the best point: the inverse of minus the Hessian, with the prior
    widths added as a floor of curvature so that directions the data do not fix stay prior-wide."""
    scales = _prior_scales(post, best)
    step = np.maximum(1e-4 * scales, 1e-7)
    h = _hessian(post, best, step)
    if not np.all(np.isfinite(h)):
        return np.diag(scales**2)
    prec = -h + np.diag(1.0 / scales**2)
    w, v = np.linalg.eigh(0.5 * (prec + prec.T))
    w = np.maximum(w, np.min(1.0 / scales**2))
    return (v / w) @ v.T


def _importance(post: _Posterior, best: np.ndarray, cov: np.ndarray, n: int, rng: np.random.Generator,
                df: float = 5.0):
    """Draws from a multivariate Student-t about ``best``, weighted by posterior / proposal."""
    d = best.size
    w_, v_ = np.linalg.eigh(0.5 * (cov + cov.T) * 1.3**2)
    chol = v_ * np.sqrt(np.maximum(w_, 1e-18 * max(w_.max(), 1e-300)))  # a square root of the covariance
    z = rng.normal(size=(n, d))
    g = rng.chisquare(df, size=(n, 1)) / df
    rows = best + (z / np.sqrt(g)) @ chol.T
    maha = np.sum(z * z / g, axis=1)  # Mahalanobis distance^2 of each draw under the scaled proposal
    log_q = -0.5 * (df + d) * np.log1p(maha / df)
    log_p = post(rows)
    log_w = log_p - log_q
    log_w -= np.max(log_w)
    w = np.exp(log_w)
    w[~np.isfinite(w)] = 0.0
    ess = float(w.sum() ** 2 / np.sum(w * w)) if w.sum() > 0 else 0.0
    return rows, w, ess


def _autocorrelation_steps(chain: np.ndarray) -> float:
    """The largest integrated autocorrelation time of the chain (emcee's estimator), quietly."""
    import logging

    import emcee

    logger = logging.getLogger("emcee.autocorr")
    level = logger.level
    logger.setLevel(logging.ERROR)
    try:
        with np.errstate(all="ignore"):
            return float(np.nanmax(emcee.autocorr.integrated_time(chain, quiet=True)))
    except Exception:  # noqa: BLE001 - the estimate itself may fail on short chains
        return float("nan")
    finally:
        logger.setLevel(level)


def sample_lens_model(data: MarkedSystems, priors: LensPriors, *, draws: int = 4000, method: str = "auto",
                      walkers: int = DEFAULT_WALKERS, steps: int = DEFAULT_STEPS, burn: int = DEFAULT_BURN,
                      seed: int | None = 1, progress: ProgressCallback = None,
                      should_stop: StopCallback = None) -> LensModelFit:
    """Maximise, then sample the posterior; returns ``draws`` equally weighted posterior draws.

    ``method="auto"``: importance sampling from a Student-t about the maximum (the Laplace
    approximation, widened) when its effective sample size reaches a third of the draws, which
    is the usual case for quads and arcs with counter-images; otherwise (doubles, lone arcs, strongly
    curved posteriors) the emcee ensemble sampler, started from the importance-weighted draws.
    ``method="emcee"`` always runs the sampler.
    """
    rng = np.random.default_rng(seed)
    post = _Posterior(data, priors)
    best = _optimise(post, _start(data, priors), rng)
    check_stop(should_stop)
    report(progress, 0.1)
    ndim = post.n_params
    cov = _laplace_proposal(post, best)
    centre = best
    rows, w, ess = _importance(post, centre, cov, 3 * draws, rng)
    for _ in range(3):  # adapt the proposal to the weighted draws (adaptive importance sampling)
        if ess >= 0.5 * rows.shape[0] or ess < 20:
            break
        wn = w / w.sum()
        centre = wn @ rows
        dev = rows - centre
        cov_new = (dev * wn[:, None]).T @ dev
        if not np.all(np.isfinite(cov_new)) or np.linalg.eigvalsh(cov_new).min() <= 0:
            break
        rows2, w2, ess2 = _importance(post, centre, cov_new, 3 * draws, rng)
        if ess2 <= ess:
            break
        rows, w, ess, cov = rows2, w2, ess2, cov_new
    if ess > 0 and np.max(w) > 0:
        top = rows[int(np.argmax(w))]
        if post(top[None, :])[0] > post(best[None, :])[0]:
            best = top
    check_stop(should_stop)
    report(progress, 0.2)
    notes: list[str] = []
    if method == "auto" and ess >= min(draws / 4, MIN_EFFECTIVE_DRAWS):
        pick = rng.choice(rows.shape[0], size=draws, replace=True, p=w / w.sum())
        report(progress, 0.95)
        return LensModelFit(rows[pick], best, post, float("nan"), float("nan"), 0,
                            [f"Posterior by importance sampling from a Student-t about the best fit, adapted to "
                             f"the posterior (effective sample size {ess:.0f} of {rows.shape[0]} draws)."],
                            "importance")
    import emcee  # imported here: it loads scipy.stats, which is slow to import

    # emcee, started from the importance draws (or a ball about the best point)
    if w.sum() > 0 and ess >= 2 * walkers:
        p0 = rows[rng.choice(rows.shape[0], size=walkers, replace=False, p=w / w.sum())] if \
            np.count_nonzero(w) >= walkers else None
    else:
        p0 = None
    if p0 is None:
        p0 = best + rng.normal(size=(walkers, ndim)) * np.sqrt(np.diag(cov)) * 0.1
    bad = ~np.isfinite(post(p0))
    p0[bad] = best
    sampler = emcee.EnsembleSampler(walkers, ndim, post, vectorize=True)
    sampler.random_state = np.random.RandomState(int(rng.integers(2**31))).get_state()
    total = burn + steps
    for i, _ in enumerate(sampler.sample(p0, iterations=total)):
        if i % 50 == 0:
            check_stop(should_stop)
            report(progress, 0.2 + 0.75 * i / total)
    chain = sampler.get_chain(discard=burn)
    flat = chain.reshape(-1, ndim)
    tau = _autocorrelation_steps(chain)
    if np.isfinite(tau) and steps < 20 * tau:
        notes.append(f"The sampler's autocorrelation time is {tau:.0f} steps against {steps} kept steps: "
                     "the posterior tails are uncertain; rerun with more steps.")
    logp = sampler.get_log_prob(discard=burn).ravel()
    if np.max(logp) > post(best[None, :])[0]:
        best = flat[int(np.argmax(logp))]
    pick = rng.choice(flat.shape[0], size=min(draws, flat.shape[0]), replace=False)
    notes.insert(0, f"Posterior by the emcee ensemble sampler ({walkers} walkers, {burn} burn-in and {steps} kept "
                    f"steps, acceptance {np.mean(sampler.acceptance_fraction):.2f}); the importance-sampling "
                    f"shortcut was not used (effective sample size {ess:.0f}).")
    report(progress, 0.95)
    return LensModelFit(flat[pick], best, post, float(np.mean(sampler.acceptance_fraction)), tau, steps, notes,
                        "emcee")


def _neg_best(post: _Posterior, best: np.ndarray) -> float:
    return -float(post(best[None, :])[0])

