"""A small bounded Levenberg-Marquardt solver for the soft-L1 (robust) least-squares cost.

Written for the lens-light fit (:mod:`lensmass.core.lenslight`: 9 parameters, a few thousand pixels,
an analytic Jacobian), where scipy's ``least_squares`` trust-region solver spent as much CPU time on
its own bookkeeping as on the model; it minimises the same cost (checked against scipy in
tests/core/test_lens_light_fit.py).

References
----------
Levenberg (1944), Q. Appl. Math. 2, 164; Marquardt (1963), SIAM J. Appl. Math. 11, 431;
More (1978), Lecture Notes in Mathematics 630, 105 (scaling by the running maximum of the diagonal);
Nielsen (1999), IMM-REP-1999-05 (damping update); Holland & Welsch (1977), Commun. Stat. 6, 813
(iteratively reweighted least squares); scipy ``least_squares`` documentation (the soft-L1 loss).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: The fit has converged when even the undamped step would lower the cost by less than this fraction of it.
FTOL = 1e-5
#: A step stops at this fraction of the way to a bound it would cross.
BOUND_STEP = 0.995
#: A parameter this close to a bound (relative) is on it. Steps stop short of bounds, so a parameter pushed
#: against one creeps up to it, each step 200 times closer; the last steps lower the cost by under 1e-7 of it,
#: which a float32 model (the lens-light fit's) cannot resolve: with 1e-8 such a fit never converged.
BOUND_TOL = 1e-6
#: Starting damping (relative to the scaled diagonal of J^T W J): smaller first steps jumped across a
#: galaxy's angle and stuck the lens-light fit at q = 1.
INITIAL_DAMPING = 0.1


@dataclass
class LMState:
    """Damping and parameter scales, carried from one solve to the next (the lens-light fit's clipping rounds)."""

    damping: float
    scale: np.ndarray | None = None


@dataclass
class LMSolution:
    """What :func:`soft_l1_levenberg_marquardt` found; ``status`` as scipy's ``least_squares``: 0 = the
    evaluation limit was reached, 2 = the cost converged (``ftol``), 3 = no step lowered the cost."""

    x: np.ndarray
    cost: float
    status: int
    nfev: int
    njev: int


def _soft_root(z: np.ndarray) -> np.ndarray:
    """sqrt(1 + z^2), as ``np.sqrt(1 + z * z)`` (a quarter of ``np.hypot``'s CPU time: the fit takes it of a few
    thousand residuals at every evaluation), or ``np.hypot(1, z)`` where z^2 would overflow."""
    with np.errstate(over="ignore"):
        out = np.sqrt(1.0 + z * z)
    return out if np.isfinite(out).all() else np.hypot(1.0, z)


def soft_l1_cost(f: np.ndarray, f_scale: float) -> float:
    """scipy's soft-L1 cost, 0.5 sum rho(f^2) with rho(z) = 2 C^2 (sqrt(1 + z / C^2) - 1), C = ``f_scale``.

    sqrt(1 + (f / C)^2) is taken as ``hypot(1, f / C)`` wherever (f / C)^2 overflows: a trial step far off (a
    residual beyond 1e154 sigma) squared to an overflow in float64 and warned; the hypot keeps such a cost
    finite (C |f|), so the step is simply refused as costlier.

    Examples
    --------
    >>> round(soft_l1_cost(np.array([3.0, 4.0]), 3.0), 6), soft_l1_cost(np.array([1e200]), 1.0) > 1e199
    (9.727922, True)
    """
    return float(f_scale * f_scale * np.sum(_soft_root(f / f_scale) - 1.0))


def _newton_decrement(hess: np.ndarray, grad: np.ndarray, scale: np.ndarray) -> float:
    """How much the undamped (Gauss-Newton) step would lower the cost, 0.5 g^T H^-1 g: the fit has
    converged when even that is a negligible fraction of the cost."""
    try:
        return float(0.5 * grad @ np.linalg.solve(hess + 1e-12 * np.diag(scale), grad))
    except np.linalg.LinAlgError:
        return np.inf


def soft_l1_levenberg_marquardt(fun, jac, x0, lo, hi, state: LMState, *, f_scale: float, max_nfev: int,
                                ftol: float = FTOL) -> LMSolution:
    """Minimise the soft-L1 cost of ``fun`` (residuals; ``jac`` their Jacobian) within the bounds [lo, hi]:
    the cost scipy ``least_squares`` with ``loss="soft_l1"``, ``f_scale`` minimises, in at most ``max_nfev``
    evaluations of ``fun``.

    Levenberg-Marquardt (Levenberg 1944; Marquardt 1963) on iteratively reweighted least squares: the
    soft-L1 loss weighs each residual by rho'(f^2) = 1 / sqrt(1 + f^2 / C^2) (Holland & Welsch 1977),
    the damping is scaled by the running maximum of the diagonal of J^T W J (More 1978, as scipy's
    ``x_scale="jac"``) and updated by the gain ratio (Nielsen 1999). Bounds: a step stops
    :data:`BOUND_STEP` of the way to a bound it would cross, and a parameter on its bound (within
    :data:`BOUND_TOL`) whose gradient points out of the box is put on it and held there. Converged (status 2) when even the undamped step would lower the
    cost by less than ``ftol`` of it. The fit has 9 parameters and a few thousand residuals; scipy's
    trust-region solver spent as much CPU time on its own bookkeeping (LSMR, reflective bounds, loss
    rescaling) as on the model and Jacobian (0.3 s of the finder's 0.9 s on the 2048^2 benchmark).

    Examples
    --------
    A straight line through points with one wild outlier (the soft-L1 loss keeps it from pulling the fit):

    >>> x = np.arange(10.0)
    >>> y = 2.0 * x + 1.0
    >>> y[7] += 50.0
    >>> sol = soft_l1_levenberg_marquardt(lambda p: p[0] * x + p[1] - y, lambda p: np.column_stack([x, np.ones_like(x)]),
    ...                                   np.zeros(2), np.full(2, -np.inf), np.full(2, np.inf), LMState(INITIAL_DAMPING),
    ...                                   f_scale=1.0, max_nfev=100)
    >>> sol.status, np.round(sol.x, 1)
    (2, array([2., 1.]))
    """
    x = np.clip(np.asarray(x0, float), lo, hi)
    f = fun(x)
    cost, nfev, njev, status = soft_l1_cost(f, f_scale), 1, 0, 0
    # A solve starts no more damped than a first one: a damping driven up by steps that could no longer
    # lower the cost of an earlier round would freeze this round's (new weights: new minimum).
    damping, nu = min(state.damping, INITIAL_DAMPING), 2.0
    snapped = np.zeros(x.shape, bool)
    while nfev < max_nfev:
        jmat = jac(x)
        njev += 1
        jw = jmat * (1.0 / _soft_root(f / f_scale))[:, None]
        hess, grad = jmat.T @ jw, jw.T @ f
        diag = np.diag(hess)
        state.scale = np.maximum(diag, state.scale) if state.scale is not None else np.maximum(diag, 1e-12 * diag.max())
        at_lo = np.isfinite(lo) & (x - lo <= BOUND_TOL * np.maximum(1.0, np.abs(lo)))
        at_hi = np.isfinite(hi) & (hi - x <= BOUND_TOL * np.maximum(1.0, np.abs(hi)))
        free = ~((at_lo & (grad > 0)) | (at_hi & (grad < 0)))
        snap = np.where(~free & ~snapped & at_lo, lo, np.where(~free & ~snapped & at_hi, hi, x))
        if np.any(snap != x) and nfev < max_nfev:  # a parameter held on its bound is put exactly on it (once)
            snapped |= snap != x
            f_snap = fun(snap)
            nfev += 1
            cost_snap = soft_l1_cost(f_snap, f_scale)
            if cost_snap <= cost:
                x, f, cost = snap, f_snap, cost_snap
                continue
        h_free = hess[np.ix_(free, free)]
        if njev > 1 and _newton_decrement(h_free, grad[free], state.scale[free]) < ftol * cost:
            status = 2
            break
        gain = 0.0
        while nfev < max_nfev and damping < 1e10:
            step = np.zeros_like(x)
            try:
                step[free] = -np.linalg.solve(h_free + damping * np.diag(state.scale[free]), grad[free])
            except np.linalg.LinAlgError:
                damping, nu = damping * nu, nu * 2.0
                continue
            # A step that would cross a bound stops short of it (0.995 of the way, as scipy's trust-region
            # solver does): on a bound such as q = 1 the angle has no hold and the fit stuck there.
            step = np.clip(step, BOUND_STEP * (lo - x), BOUND_STEP * (hi - x))
            x_new = x + step
            predicted = -(grad @ step + 0.5 * step @ hess @ step)
            f_new = fun(x_new)
            nfev += 1
            cost_new = soft_l1_cost(f_new, f_scale)
            if cost_new < cost:
                gain = cost - cost_new
                ratio = gain / predicted if predicted > 0 else 1.0
                x, f, cost = x_new, f_new, cost_new
                damping *= max(1.0 / 3.0, 1.0 - (2.0 * ratio - 1.0) ** 3)
                nu = 2.0
                break
            damping, nu = damping * nu, nu * 2.0
        if gain == 0.0:
            status = 3 if damping >= 1e10 else 0
            break
    state.damping = max(damping, 1e-6)
    return LMSolution(x, cost, status, nfev, njev)
