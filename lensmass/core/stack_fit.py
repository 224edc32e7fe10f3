"""The fit to a stacked Delta Sigma profile: the mean NFW halo of the lenses (c200 from a c(M) relation,
or free under a prior), plus a central point mass for their stars (fixed, or fitted with a prior),
with the jackknife covariance.

The model of each bin averages the halo over the pairs' lens redshifts and radii (the sums of
:mod:`lensmass.core.stacking`) with the pairs' weights, as the data do. The covariance is estimated
from a few tens of patches, so its noise must widen the intervals: the likelihood is the
t-distribution of Sellentin & Heavens (2016, MNRAS 456, L132) with the power of Percival et al.
(2022, MNRAS 510, 3207), chosen so that the Bayesian intervals keep their frequentist coverage
(:func:`likelihood_power`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.stack_priors import (
    POINT_MASS_MAX_MSUN,
    ConcentrationPrior,
    check_point_mass_prior,
    point_mass_log_prior,
)

if TYPE_CHECKING:
    from lensmass.core.stacking import StackLayout, StackProfile, StackSums


def nfw_delta_sigma_model(m200_msun, sums: StackSums, layout: StackLayout, *, concentration="duffy08",
                          halo_definition: str = "200c", point_mass_msun: float = 0.0, c200=None) -> np.ndarray:
    """Model Delta Sigma of each bin (Msun / Mpc^2) for halo masses ``m200_msun`` (any shape + (n_bins,)):
    NFW (Wright & Brainerd 2000) at each lens-redshift cell's weighted mean z_l and R, with c from the
    ``concentration`` relation at that redshift, or ``c200`` (broadcast with the masses) for every cell; plus
    M_* / (pi R^2), divided by 1 - Sigma <Sigma_cr^-1> (the estimator measures Sigma_cr times the
    reduced shear), averaged over the cells with the pairs' weights."""
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.cosmology import little_h
    from lensmass.core.stacking import MODEL_SUBBINS
    from lensmass.core.nfw import (
        nfw_halo,
        nfw_mean_surface_density_msun_per_mpc2,
        nfw_surface_density_msun_per_mpc2,
    )

    c_of_m, _ = concentration_relation(concentration, halo_definition)
    h = little_h(layout.cosmo)
    w = sums.model["w"]
    use = w > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.where(use, sums.model["wr"] / w, 1.0)
        zc = np.where(use, sums.model["wz"] / w, np.nan)
        inv_sigma_cr = np.where(use, sums.model["wi"] / w, 0.0)
    m = np.asarray(m200_msun, float)[..., None]
    total = np.zeros(m.shape[:-1] + (w.shape[1],))
    for i in np.flatnonzero(use.any(axis=1)):
        z_i = float(np.nansum(zc[i] * w[i]) / w[i].sum())
        c_i = c_of_m(m, z_i, h) if c200 is None else np.asarray(c200, float)[..., None]
        halo = nfw_halo(m, c_i, z_i, layout.cosmo, halo_definition)
        r_i = r[i]
        sigma = nfw_surface_density_msun_per_mpc2(r_i, halo)
        ds = nfw_mean_surface_density_msun_per_mpc2(r_i, halo) - sigma + point_mass_msun / (np.pi * r_i**2)
        # the data estimate Sigma_cr g = Delta Sigma / (1 - Sigma <Sigma_cr^-1>): reduced shear, common practice
        total = total + w[i] * ds / (1.0 - sigma * inv_sigma_cr[i])
    # sub-bins to bins: weighted sums
    n_b = layout.n_bins
    total = total.reshape(total.shape[:-1] + (n_b, MODEL_SUBBINS)).sum(axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return total / w.sum(axis=0).reshape(n_b, MODEL_SUBBINS).sum(axis=-1)



#: Scale of the point-mass kernel evaluation (the model is linear in M_*).
_UNIT_POINT_MASS = 1e12
#: Grid points per fitted parameter (M200, c200, M_*), zoomed until the posterior spans a third of them.
_GRID_POINTS = {1: (121, 1, 1), 2: (61, 41, 61), 3: (49, 33, 41)}
#: Posterior floor (natural log below the peak) of the grid zoom: the t-likelihood's tails stay inside.
_ZOOM_FLOOR = -14.0
_QUANTILES = (0.025, 0.16, 0.5, 0.84, 0.975)


@dataclass
class StackFit:
    """Posterior of the mean halo of the stack on a grid (flat prior in log M200): M200, and c200 and
    the central point mass when they are fitted (``*_quantiles``; else None and the fixed value)."""

    m200_msun: float
    quantiles: np.ndarray  # 2.5, 16, 50, 84, 97.5 percentiles
    best_m200_msun: float
    chi2: float
    dof: int
    pvalue: float
    model: np.ndarray
    hartlap: float
    notes: list[str]
    point_mass_msun: float = 0.0
    point_mass_quantiles: np.ndarray | None = None
    best_point_mass_msun: float = 0.0
    c200_quantiles: np.ndarray | None = None
    best_c200: float = float("nan")
    likelihood_power: float = float("nan")
    effective_patches: float = float("nan")


def effective_patches(patch_weights) -> float:
    """Effective number of jackknife patches: Kish's (1965, Survey Sampling, sec. 11.7) effective sample
    size (sum W)^2 / sum W^2 of the patches' pair weights W, the smallest over the bins (unequal patches
    make the covariance estimate noisier than as many equal ones; common practice).

    Examples
    --------
    >>> effective_patches(np.ones((24, 6)))
    24.0
    >>> round(effective_patches(np.array([[1.0], [1.0], [2.0]])), 3)
    2.667
    """
    w = np.asarray(patch_weights, float)
    w = w[np.any(w > 0, axis=1)]
    with np.errstate(invalid="ignore", divide="ignore"):
        n = np.sum(w, axis=0) ** 2 / np.sum(w * w, axis=0)
    return float(np.min(n[np.isfinite(n)])) if np.any(np.isfinite(n)) else float(w.shape[0])


def likelihood_power(n_samples: float, n_data: int, n_params: int) -> float:
    """Power m of the likelihood (1 + chi^2 / (n_s - 1))^(-m/2) for a covariance estimated from ``n_samples``
    realisations (chi^2 with the estimate's plain inverse).

    Percival, Friedrich, Sellentin & Heavens (2022, MNRAS 510, 3207; the formula quoted from memory):
    m = n_theta + 2 + (n_s - 1 + B (n_d - n_theta)) / (1 + B (n_d - n_theta)),
    B = (n_s - n_d - 2) / ((n_s - n_d - 1)(n_s - n_d - 4)), so that the posterior intervals cover the truth
    as often as they claim (checked a second way by simulation in tests/core/test_stack_fit.py). Many
    samples give m ~ n_s, the likelihood of Sellentin & Heavens (2016), which is also used when
    n_s <= n_d + 4, where B is undefined (the fit then notes that its intervals are not calibrated).

    Examples
    --------
    >>> round(likelihood_power(24, 6, 1), 2)
    20.47
    >>> round(likelihood_power(10**6, 6, 1) / 10**6, 4)
    1.0
    """
    k = n_samples - n_data - 4
    if k <= 0:
        return float(n_samples)
    b = (n_samples - n_data - 2) / ((n_samples - n_data - 1) * k)
    bd = b * (n_data - n_params)
    return float(n_params + 2 + (n_samples - 1 + bd) / (1 + bd))


def fit_stack_nfw(profile: StackProfile, sums: StackSums, layout: StackLayout, *, concentration="duffy08",
                  halo_definition: str = "200c", point_mass_msun: float = 0.0, fit_point_mass: bool = False,
                  point_mass_prior: tuple[float, float] | None = None,
                  concentration_prior: ConcentrationPrior | None = None,
                  r_fit_mpc: tuple[float, float] | None = None) -> StackFit:
    """Fit the mean NFW M200 (plus c200 and a central point mass when asked) to the stacked Delta Sigma
    with the jackknife covariance; grid posterior, medians and 68% / 95% intervals of each marginal.

    The likelihood is (1 + chi^2 / (N - 1))^(-m/2), chi^2 with the jackknife covariance's inverse, N the
    effective number of patches (:func:`effective_patches`), m from :func:`likelihood_power`; the reported chi^2 and p-value use the inverse debiased by the
    Hartlap et al. (2007, A&A 464, 399) factor (n_p - n_d - 2) / (n_p - 1). Priors: flat in log M200;
    ``concentration_prior`` (a :class:`lensmass.core.stack_priors.ConcentrationPrior`) frees c200, one
    value for every lens, its log-normal centre the ``concentration`` relation at M200 and the pairs'
    mean lens redshift; with ``fit_point_mass`` the point mass M_* is a parameter under
    :func:`lensmass.core.stack_priors.point_mass_log_prior` (the model is linear in M_*).
    """
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.cosmology import little_h
    from lensmass.core.shear_fit import NFW_LOG10_MASS_RANGE

    use = np.isfinite(profile.delta_sigma) & (profile.n_pairs > 0) & np.all(np.isfinite(profile.covariance), axis=0)
    if r_fit_mpc is not None:
        use &= (profile.r_mean_mpc >= r_fit_mpc[0]) & (profile.r_mean_mpc <= r_fit_mpc[1])
    n_d = int(use.sum())
    n_p = profile.n_patches_used
    if n_d < 2:
        raise LensInputError("Fewer than two radial bins hold lens-source pairs: widen the radial range or check "
                             "that the sources lie behind and around the lenses.")
    hartlap = (n_p - n_d - 2) / (n_p - 1)
    if hartlap <= 0:
        raise LensInputError(f"{n_p} jackknife patches cannot give an invertible covariance of {n_d} bins: use at "
                             f"least {n_d + 3} patches (`n_patches`) or fewer bins.")
    try:
        icov = np.linalg.inv(profile.covariance[np.ix_(use, use)])
    except np.linalg.LinAlgError:
        raise LensInputError("The jackknife covariance is singular: use more patches or fewer bins.") from None
    data = profile.delta_sigma[use]
    free_c = concentration_prior is not None
    pm_prior = check_point_mass_prior(point_mass_prior)
    n_par = 1 + int(free_c) + int(fit_point_mass)
    n_eff = max(effective_patches(sums.lens["w"][:, use]), 2.0)
    power = likelihood_power(n_eff, n_d, n_par)
    c_of_m, _ = concentration_relation(concentration, halo_definition)
    h = little_h(layout.cosmo)
    w = sums.model["w"]
    z_pairs = float(np.sum(sums.model["wz"]) / np.sum(w)) if np.sum(w) > 0 else float(layout.z_cell_edges[0])
    opts = {"concentration": concentration, "halo_definition": halo_definition}

    def kernels(x, y):
        """Model without and per unit point mass on the (log M, log c) grid: shapes (nx, ny, n_d)."""
        m = np.broadcast_to(10.0 ** x[:, None], (x.size, 1 if y is None else y.size))
        c = None if y is None else np.broadcast_to(10.0 ** y[None, :], m.shape)
        a = nfw_delta_sigma_model(m, sums, layout, point_mass_msun=0.0 if fit_point_mass else point_mass_msun,
                                  c200=c, **opts)[..., use]
        if not fit_point_mass:
            return a, np.zeros_like(a)
        b = nfw_delta_sigma_model(m, sums, layout, point_mass_msun=_UNIT_POINT_MASS, c200=c, **opts)[..., use]
        return a, (b - a) / _UNIT_POINT_MASS

    def log10_c_relation(x):
        return np.log10(c_of_m(10.0 ** np.asarray(x), z_pairs, h))

    lo, hi = NFW_LOG10_MASS_RANGE
    bounds = [(lo, hi)]
    if free_c:
        rel = log10_c_relation(np.array([lo, hi]))
        bounds.append(concentration_prior.log10_range(float(rel.min()), float(rel.max())))
    if fit_point_mass:
        bounds.append((0.0, POINT_MASS_MAX_MSUN) if pm_prior is None else
                      (pm_prior[0] * 10.0 ** (-6 * pm_prior[1]), pm_prior[0] * 10.0 ** (6 * pm_prior[1])))
    sizes = [n for n, on in zip(_GRID_POINTS[n_par], (True, free_c, fit_point_mass)) if on]
    dims = [0] + [1] * free_c + [2] * fit_point_mass  # grid dimension of each fitted parameter

    def posterior(ranges):
        axes = [np.linspace(a, b, n) for (a, b), n in zip(ranges, sizes)]
        x = axes[0]
        y = axes[1] if free_c else None
        s = axes[-1] if fit_point_mass else np.zeros(1)
        a, b = kernels(x, y)
        d = a[:, :, None, :] + s[None, None, :, None] * b[:, :, None, :] - data
        chi2 = np.einsum("...i,ij,...j->...", d, icov, d)
        lnp = -0.5 * power * np.log1p(chi2 / (n_eff - 1))
        if free_c:
            lnp = lnp + concentration_prior.log_density(y[None, :], log10_c_relation(x)[:, None])[:, :, None]
        if fit_point_mass:
            lnp = lnp + point_mass_log_prior(s, pm_prior)[None, None, :]
        return axes, chi2, lnp - np.max(lnp)

    ranges = list(bounds)
    for _ in range(10):
        axes, chi2, lnp = posterior(ranges)
        inside = lnp > _ZOOM_FLOOR
        new, enough = [], True
        for dim, axis, (b_lo, b_hi) in zip(dims, axes, bounds):
            hit = np.flatnonzero(inside.any(axis=tuple(i for i in range(3) if i != dim)))
            step = axis[1] - axis[0] if axis.size > 1 else 0.0
            new.append((max(b_lo, axis[hit[0]] - step), min(b_hi, axis[hit[-1]] + step)))
            enough &= hit.size >= axis.size // 3
        if enough or all(n[0] <= r[0] and n[1] >= r[1] for n, r in zip(new, ranges)):
            break
        ranges = new
    fit = _summarise(axes, chi2, lnp, bounds, concentration_prior, pm_prior if fit_point_mass else False, power,
                     hartlap, n_d, sums, layout, point_mass_msun, opts)
    fit.effective_patches = n_eff
    if n_eff <= n_d + 4:
        fit.notes.append(f"The jackknife has {n_eff:.1f} effective patches for {n_d} bins: too few for calibrated "
                         f"intervals (at least {n_d + 5} are needed); use more patches (`n_patches`) or fewer bins.")
    return fit


def _summarise(axes, chi2, lnp, bounds, concentration_prior, pm_prior, power, hartlap, n_d, sums, layout,
               point_mass_msun, opts) -> StackFit:
    """Marginal quantiles, best fit, chi^2 and notes of the grid posterior of :func:`fit_stack_nfw`
    (``pm_prior`` False when the point mass is fixed)."""
    from scipy import stats
    from scipy.special import logsumexp

    from lensmass.core.shear_fit import _grid_minimum, _grid_quantiles

    free_c = concentration_prior is not None
    fit_point_mass = pm_prior is not False
    n_par = 1 + int(free_c) + int(fit_point_mass)

    x = axes[0]

    def marginal(k):
        ln = logsumexp(lnp, axis=tuple(i for i in range(3) if i != k))
        return ln - np.max(ln)

    ln_m = marginal(0)
    q = 10.0 ** _grid_quantiles(x, ln_m, _QUANTILES)
    i, j, k = np.unravel_index(int(np.argmax(lnp)), lnp.shape)
    best_x = _grid_minimum(x, chi2[:, 0, 0]) if n_par == 1 else float(x[i])
    best = 10.0 ** best_x
    notes = []
    if (ln_m[0] > -10 and x[0] <= bounds[0][0] + 1e-12) or (ln_m[-1] > -10 and x[-1] >= bounds[0][1] - 1e-12):
        notes.append("The stacked NFW posterior reaches the edge of the searched mass range: treat the interval "
                     "as a bound.")
    q_c = best_c = None
    if free_c:
        y = axes[1]
        ln_c = marginal(1)
        q_c = 10.0 ** _grid_quantiles(y, ln_c, _QUANTILES)
        best_c = 10.0 ** float(y[j])
        if concentration_prior.c_range is not None and (ln_c[0] > -3 or ln_c[-1] > -3):
            notes.append("The c200 posterior reaches the edge of its flat prior: the profile barely constrains the "
                         "concentration, and its interval (and the M200 interval marginalised over it) leans on "
                         "that range.")
    q_pm = None
    best_pm = float(point_mass_msun)
    if fit_point_mass:
        s = axes[-1]
        ln_s = marginal(2)
        q_pm = _grid_quantiles(s, ln_s, _QUANTILES)
        best_pm = float(s[k])
        if pm_prior is None and ln_s[-1] > -10 and s[-1] >= POINT_MASS_MAX_MSUN * (1 - 1e-12):
            notes.append(f"The fitted central point mass reaches the top of its prior ({POINT_MASS_MAX_MSUN:.0e} "
                         "Msun): the inner bins want more mass than stars give; check the centring and the inner "
                         "radius.")
    model = nfw_delta_sigma_model(best, sums, layout, point_mass_msun=best_pm, c200=best_c, **opts)
    chi2_best = float(hartlap * (chi2[:, 0, 0].min() if n_par == 1 else chi2[i, j, k]))
    dof = n_d - n_par
    return StackFit(float(q[2]), q, float(best), chi2_best, dof,
                    float(stats.chi2.sf(chi2_best, dof)) if dof > 0 else float("nan"), model, float(hartlap), notes,
                    float(q_pm[2]) if q_pm is not None else float(point_mass_msun), q_pm, best_pm, q_c,
                    float(best_c) if best_c is not None else float("nan"), float(power))


