"""The fit to a stacked Delta Sigma profile: the mean NFW halo of the lenses, plus a central point mass
for their stars (fixed, or fitted with a prior), with the jackknife covariance.

The model of each bin averages the halo over the pairs' lens redshifts and radii (the sums of
:mod:`lensmass.core.stacking`) with the pairs' weights, as the data do; the likelihood is that of
Sellentin & Heavens (2016) for a covariance estimated from the jackknife patches.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from lensmass.core.errors import LensInputError

if TYPE_CHECKING:
    from lensmass.core.stacking import StackLayout, StackProfile, StackSums


def nfw_delta_sigma_model(m200_msun, sums: StackSums, layout: StackLayout, *, concentration="duffy08",
                          halo_definition: str = "200c", point_mass_msun: float = 0.0) -> np.ndarray:
    """Model Delta Sigma of each bin (Msun / Mpc^2) for halo masses ``m200_msun`` (any shape + (n_bins,)):
    NFW (Wright & Brainerd 2000) at each lens-redshift cell's weighted mean z_l and R, plus
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
        halo = nfw_halo(m, c_of_m(m, z_i, h), z_i, layout.cosmo, halo_definition)
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


#: Upper end of the flat prior of a fitted central point mass (Msun): above the stars of any galaxy.
POINT_MASS_MAX_MSUN = 1e13
#: Points of the point-mass grid (zoomed until the posterior spans at least a third of them).
_POINT_MASS_GRID = 121
#: Scale of the point-mass kernel evaluation (the model is linear in M_*).
_UNIT_POINT_MASS = 1e12


@dataclass
class StackFit:
    """Posterior of the mean halo mass of the stack (grid in log M200, flat prior in log M), and of the
    central point mass when it is fitted (``point_mass_quantiles``; else the fixed value)."""

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


def point_mass_log_prior(point_mass_msun, prior: tuple[float, float] | None) -> np.ndarray:
    """Log prior density of a central point mass M_* (per Msun, up to a constant).

    ``prior`` None: flat on [0, :data:`POINT_MASS_MAX_MSUN`]; ``(median_msun, sigma_dex)``: log-normal,
    a Gaussian in log10 M_* (e.g. from the lenses' photometry; common practice).
    """
    m = np.asarray(point_mass_msun, float)
    if prior is None:
        return np.where((m >= 0) & (m <= POINT_MASS_MAX_MSUN), 0.0, -np.inf)
    median, dex = prior
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(m > 0, -0.5 * ((np.log10(m) - np.log10(median)) / dex) ** 2 - np.log(m), -np.inf)


def check_point_mass_prior(prior) -> tuple[float, float] | None:
    """The prior as (median, dex) after checks (one sentence for a bad one), or None."""
    if prior is None:
        return None
    try:
        median, dex = (float(v) for v in prior)
    except (TypeError, ValueError):
        raise LensInputError("The stellar-mass prior (`point_mass_prior`) is a median in Msun and a width in dex, "
                             "e.g. (3e11, 0.2).") from None
    if not (np.isfinite(median) and median > 0 and np.isfinite(dex) and 0 < dex <= 3):
        raise LensInputError(f"The stellar-mass prior (`point_mass_prior`) needs a median > 0 Msun and a width of "
                             f"0-3 dex, got {median:g} Msun and {dex:g} dex.")
    return median, dex


def fit_stack_nfw(profile: StackProfile, sums: StackSums, layout: StackLayout, *, concentration="duffy08",
                  halo_definition: str = "200c", point_mass_msun: float = 0.0, fit_point_mass: bool = False,
                  point_mass_prior: tuple[float, float] | None = None,
                  r_fit_mpc: tuple[float, float] | None = None) -> StackFit:
    """Fit the mean NFW M200 (plus a central point mass, fixed or fitted) to the stacked Delta Sigma with the
    jackknife covariance: Sellentin & Heavens (2016) likelihood for a covariance estimated from the patches
    (chi^2 and its p-value with the Hartlap-debiased inverse); grid posterior, median and 68% / 95% intervals.

    With ``fit_point_mass`` the point mass M_* is a second parameter (prior :func:`point_mass_log_prior`):
    the posterior is tabulated on a (log M200, M_*) grid and each parameter's intervals come from its
    marginal (the model is linear in M_*, so its kernel is evaluated once per mass).
    """
    from scipy import stats

    from lensmass.core.shear_fit import (
        NFW_LOG10_MASS_RANGE,
        QUANTILES,
        _grid_minimum,
        _grid_quantiles,
        _refine_1d,
    )

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
    cov = profile.covariance[np.ix_(use, use)]
    try:
        icov = hartlap * np.linalg.inv(cov)
    except np.linalg.LinAlgError:
        raise LensInputError("The jackknife covariance is singular: use more patches or fewer bins.") from None
    data = profile.delta_sigma[use]

    def chi2_of(log_m):
        model = nfw_delta_sigma_model(10.0 ** np.asarray(log_m), sums, layout, concentration=concentration,
                                      halo_definition=halo_definition, point_mass_msun=point_mass_msun)[..., use]
        d = model - data
        return np.einsum("...i,ij,...j->...", d, icov, d)

    lo, hi = NFW_LOG10_MASS_RANGE
    if fit_point_mass:
        def kernels(log_m):
            m = 10.0 ** np.asarray(log_m)
            opts = {"concentration": concentration, "halo_definition": halo_definition}
            a = nfw_delta_sigma_model(m, sums, layout, point_mass_msun=0.0, **opts)[..., use]
            b = nfw_delta_sigma_model(m, sums, layout, point_mass_msun=_UNIT_POINT_MASS, **opts)[..., use]
            return a, (b - a) / _UNIT_POINT_MASS

        return _fit_with_point_mass(kernels, data, icov, hartlap, n_p, n_d, lo, hi,
                                    check_point_mass_prior(point_mass_prior), use, sums, layout, concentration,
                                    halo_definition)
    x, c = _refine_1d(chi2_of, lo, hi)
    # likelihood of data with a covariance estimated from n_p samples (Sellentin & Heavens 2016, MNRAS 456,
    # L132, eq. 12): (1 + chi2 / (n_p - 1))^(-n_p / 2) with chi2 from the sample covariance's inverse; wider
    # than the Gaussian, as the noise of the jackknife covariance requires
    chi2_raw = c / hartlap
    lnp = -0.5 * n_p * np.log1p(chi2_raw / (n_p - 1))
    lnp = lnp - np.max(lnp)
    q = 10.0 ** _grid_quantiles(x, lnp)
    best = 10.0 ** _grid_minimum(x, c)
    chi2 = float(chi2_of(np.log10(best)))
    dof = n_d - 1
    notes = []
    if (lnp[0] > -10 and x[0] <= lo + 1e-12) or (lnp[-1] > -10 and x[-1] >= hi - 1e-12):
        notes.append("The stacked NFW posterior reaches the edge of the searched mass range: treat the interval "
                     "as a bound.")
    model = nfw_delta_sigma_model(best, sums, layout, concentration=concentration, halo_definition=halo_definition,
                                  point_mass_msun=point_mass_msun)
    assert len(QUANTILES) == q.size
    return StackFit(float(q[2]), q, float(best), chi2, dof, float(stats.chi2.sf(chi2, dof)) if dof > 0 else np.nan,
                    model, float(hartlap), notes, float(point_mass_msun), None, float(point_mass_msun))


def _fit_with_point_mass(kernels, data, icov, hartlap, n_p, n_d, lo, hi, prior, use, sums, layout, concentration,
                         halo_definition) -> StackFit:
    """The (log M200, M_*) grid posterior of :func:`fit_stack_nfw` (Sellentin & Heavens likelihood times
    the point-mass prior; flat in log M200); the M_* range is zoomed onto the posterior."""
    from scipy import stats
    from scipy.special import logsumexp

    from lensmass.core.shear_fit import _LNP_FLOOR, _grid_quantiles, _refine_1d

    def chi2_grid(a, b, pm):
        d = a[:, None, :] + pm[None, :, None] * b[:, None, :] - data
        return np.einsum("...i,ij,...j->...", d, icov, d)

    if prior is None:
        s_lo, s_hi = 0.0, POINT_MASS_MAX_MSUN
    else:
        s_lo, s_hi = prior[0] * 10.0 ** (-6 * prior[1]), prior[0] * 10.0 ** (6 * prior[1])
    for _ in range(6):
        pm = np.linspace(s_lo, s_hi, _POINT_MASS_GRID)
        ln_prior = point_mass_log_prior(pm, prior)

        def profile_chi2(log_m, pm=pm, ln_prior=ln_prior):
            a, b = kernels(log_m)
            return np.min(chi2_grid(a, b, pm) - 2.0 * ln_prior, axis=-1)

        x, _ = _refine_1d(profile_chi2, lo, hi)
        a, b = kernels(x)
        chi2 = chi2_grid(a, b, pm)
        lnp = -0.5 * n_p * np.log1p(chi2 / hartlap / (n_p - 1)) + ln_prior
        lnp -= np.max(lnp)
        ln_pm = logsumexp(lnp, axis=0)
        inside = np.flatnonzero(ln_pm - np.max(ln_pm) > _LNP_FLOOR)
        step = pm[1] - pm[0]
        new_lo, new_hi = max(s_lo, pm[inside[0]] - step), min(s_hi, pm[inside[-1]] + step)
        if inside.size >= _POINT_MASS_GRID // 3 or (new_lo <= s_lo and new_hi >= s_hi):
            break
        s_lo, s_hi = new_lo, new_hi
    ln_m = logsumexp(lnp, axis=1)
    q = 10.0 ** _grid_quantiles(x, ln_m - np.max(ln_m))
    q_pm = _grid_quantiles(pm, ln_pm - np.max(ln_pm))
    i, j = np.unravel_index(int(np.argmin(chi2)), chi2.shape)
    best, best_pm = 10.0 ** float(x[i]), float(pm[j])
    chi2_best = float(chi2[i, j])
    dof = n_d - 2
    notes = []
    if (ln_m[0] - np.max(ln_m) > -10 and x[0] <= lo + 1e-12) or (ln_m[-1] - np.max(ln_m) > -10 and x[-1] >= hi - 1e-12):
        notes.append("The stacked NFW posterior reaches the edge of the searched mass range: treat the interval "
                     "as a bound.")
    if prior is None and ln_pm[-1] - np.max(ln_pm) > -10 and pm[-1] >= POINT_MASS_MAX_MSUN * (1 - 1e-12):
        notes.append(f"The fitted central point mass reaches the top of its prior ({POINT_MASS_MAX_MSUN:.0e} Msun): "
                     "the inner bins want more mass than stars give; check the centring and the inner radius.")
    model = nfw_delta_sigma_model(best, sums, layout, concentration=concentration, halo_definition=halo_definition,
                                  point_mass_msun=best_pm)
    return StackFit(float(q[2]), q, float(best), chi2_best, dof,
                    float(stats.chi2.sf(chi2_best, dof)) if dof > 0 else np.nan, model, float(hartlap), notes,
                    float(q_pm[2]), q_pm, best_pm)

