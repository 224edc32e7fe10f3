"""Likelihood fits of SIS and NFW haloes to a binned reduced-shear profile.

The model of each bin is the weighted mean, over the bin's galaxies (grouped in
cells of radius and D_ls/D_s, see :class:`lensmass.core.shear_profile.ModelCells`),
of the expected ellipticity: g for |g| <= 1 and 1/g otherwise (Seitz & Schneider
1997, A&A 318, 687), with the reduced shear g = gamma / (1 - kappa) of the model:
  SIS: kappa = gamma = theta_E / (2 theta), theta_E = 4 pi (sigma_v / c)^2 D_ls / D_s
       (Narayan & Bartelmann 1996, arXiv:astro-ph/9606001);
  NFW: Wright & Brainerd (2000, ApJ 534, 34) via :mod:`lensmass.core.nfw`, with
       c from a concentration-mass relation (default Duffy et al. 2008, as in
       ``estimate``) or free.
The likelihood is Gaussian in the bin means with their shape-noise errors; the
posterior is evaluated on a grid that is refined around its peak, giving medians and
68% / 95% intervals. Priors are uniform in the signal amplitude: in sigma_v^2 for the
SIS (its shear is proportional to sigma_v^2) and in M200 for NFW (log c uniform when c
is free), over :data:`SIS_SIGMA_RANGE_KMS` and :data:`NFW_LOG10_MASS_RANGE`. A prior
uniform in log M piles the posterior up at its lower edge when the data do not detect
the halo (the interval then depends on that edge, not on the data); a uniform one gives
a one-sided 95% upper limit that the data set.

Each fit also gives a detection significance: the likelihood ratio of the best fit
against no lens (zero shear), Delta chi^2 = chi^2_0 - chi^2_min, turned into Gaussian
sigma with the fit's number of parameters (Wilks' theorem; for one parameter
sigma = sqrt(Delta chi^2)). Below :data:`DETECTION_SIGMA` the halo is not detected.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from scipy import stats

from lensmass.core.concentration import concentration_relation
from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.errors import LensInputError
from lensmass.core.lensing import sigma_crit_msun_per_mpc2
from lensmass.core.nfw import _halo_of_density, _surface_density_and_mean, overdensity_density_msun_per_mpc3
from lensmass.core.shear_profile import ModelCells, ShearProfile
from lensmass.core.sis import sis_convergence, sis_theta_e_arcsec

#: Quantiles reported: 95% interval, 68% interval and the median.
QUANTILES = (0.025, 0.16, 0.5, 0.84, 0.975)
SIS_SIGMA_RANGE_KMS = (10.0, 5000.0)
NFW_LOG10_MASS_RANGE = (10.0, 17.0)
NFW_CONCENTRATION_RANGE = (0.3, 40.0)
#: Detections below this significance are reported as upper limits (common practice: 3 sigma).
DETECTION_SIGMA = 3.0
#: One-sided level of the upper limits.
UPPER_LIMIT_LEVEL = 0.95
PRIORS = {"SIS": "uniform in sigma_v^2 (the SIS shear amplitude), 10-5000 km/s",
          "NFW": "uniform in M200, 1e10-1e17 Msun"}
_CHUNK_ELEMENTS = 4_000_000
_LNP_FLOOR = -40.0


def expected_ellipticity(g) -> np.ndarray:
    """Mean ellipticity of a randomly oriented population under reduced shear g (real, tangential).

    <e> = g for |g| <= 1 and 1 / g for |g| > 1 (Seitz & Schneider 1997).
    """
    g = np.array(g, float)
    _invert_beyond_one(g)
    return g


def _invert_beyond_one(g: np.ndarray) -> None:
    """g -> 1 / g in place where not |g| <= 1 (NaN stays NaN): :func:`expected_ellipticity` on its own array."""
    flip = ~(np.abs(g) <= 1.0)
    if flip.any():
        with np.errstate(divide="ignore", invalid="ignore"):
            g[flip] = 1.0 / g[flip]


def cell_reduced_shear(gamma_inf, kappa_inf, cells: ModelCells) -> np.ndarray:
    """Mean expected ellipticity of a cell from the shear and convergence for beta = D_ls/D_s = 1.

    g(beta) = beta gamma / (1 - beta kappa) is averaged over the cell's spread of beta to
    second order: g(<beta>) + Var(beta) gamma kappa / (1 - <beta> kappa)^3.
    """
    b, var = cells.beta, cells.beta_var
    denom = 1.0 - b * kappa_inf
    with np.errstate(divide="ignore", invalid="ignore"):
        g = b * gamma_inf / denom
        out = var * gamma_inf * kappa_inf / denom**3
        out += g  # the corrected g, kept where |g| < 1
    strong = ~(np.abs(g) < 1.0)
    if strong.any():
        out[strong] = g[strong]
    _invert_beyond_one(out)
    return out


def sis_model_cells(sigma_v_kms, cells: ModelCells) -> np.ndarray:
    """Expected tangential ellipticity on the cells for SIS dispersions (shape (..., n_cells))."""
    s = np.asarray(sigma_v_kms, float)[..., None]
    theta_e_inf = sis_theta_e_arcsec(s, 1.0, 1.0)  # for D_ls / D_s = 1
    kappa = sis_convergence(cells.theta_arcsec, theta_e_inf)  # = sis_shear: gamma = kappa for an SIS
    return cell_reduced_shear(kappa, kappa, cells)


def nfw_model_cells(m_delta_msun, concentration, cells: ModelCells, z_l: float, cosmo, d_l_mpc: float,
                    definition: str = "200c", rho_delta: float | None = None) -> np.ndarray:
    """Expected tangential ellipticity on the cells for NFW haloes (shape (..., n_cells)); ``rho_delta`` the
    density inside the halo boundary at z_l if already known (as ``nfw_halo`` computes it)."""
    m = np.asarray(m_delta_msun, float)[..., None]
    c = np.asarray(concentration, float)[..., None]
    density = overdensity_density_msun_per_mpc3(z_l, cosmo, definition) if rho_delta is None else rho_delta
    halo = _halo_of_density(m, c, density)
    radius_mpc = cells.theta_arcsec * ARCSEC_RAD * d_l_mpc
    sigma_cr_inf = sigma_crit_msun_per_mpc2(d_l_mpc, 1.0, 1.0)  # for D_ls / D_s = 1
    # gamma = (mean Sigma(<R) - Sigma(R)) / Sigma_cr and kappa = Sigma(R) / Sigma_cr from one
    # evaluation of F (nfw_shear and nfw_convergence would evaluate Sigma(R) twice)
    sigma, mean = _surface_density_and_mean(radius_mpc, halo)
    return cell_reduced_shear((mean - sigma) / sigma_cr_inf, sigma / sigma_cr_inf, cells)


def _chunked(fn: Callable, params: tuple[np.ndarray, ...], n_cells: int) -> np.ndarray:
    n = params[0].size
    step = max(1, _CHUNK_ELEMENTS // (max(n_cells, 1) * 17))
    return np.concatenate([fn(*(p[i:i + step] for p in params)) for i in range(0, n, step)])


def _grid_quantiles(x: np.ndarray, lnp: np.ndarray, levels=QUANTILES) -> np.ndarray:
    """Quantiles of a 1-D density tabulated on an increasing grid (trapezoid CDF)."""
    p = np.exp(lnp - np.max(lnp))
    cdf = np.concatenate([[0.0], np.cumsum(0.5 * (p[1:] + p[:-1]) * np.diff(x))])
    cdf /= cdf[-1]
    return np.interp(levels, cdf, x)


def detection_significance(chi2_null: float, chi2_min: float, n_par: int) -> float:
    """Gaussian-equivalent significance of a fit against no lens (Wilks' theorem).

    Examples
    --------
    >>> round(detection_significance(25.0, 16.0, 1), 6)  # sqrt(Delta chi^2) for one parameter
    3.0
    """
    delta = max(float(chi2_null) - float(chi2_min), 0.0)
    return float(stats.norm.isf(0.5 * stats.chi2.sf(delta, n_par)))


def _posterior_1d(chi2_of: Callable, lo: float, hi: float, prior_slope: float, n: int = 161):
    """Grid, chi^2 and log posterior in x = log10(parameter), prior density in x ~ 10^(prior_slope x).

    The likelihood grid of :func:`_refine_1d` is laid again over the region where the
    posterior (likelihood times prior) is above the floor, so a prior that cuts one side
    off still leaves ``n`` points across what remains.
    """
    x, c = _refine_1d(chi2_of, lo, hi)
    lnp = -0.5 * (c - np.min(c)) + prior_slope * np.log(10.0) * x
    inside = np.flatnonzero(lnp - np.max(lnp) > _LNP_FLOOR)
    step = x[1] - x[0]
    a, b = max(lo, x[inside[0]] - step), min(hi, x[inside[-1]] + step)
    x = np.linspace(a, b, n)
    c = chi2_of(x)
    lnp = -0.5 * (c - np.min(c)) + prior_slope * np.log(10.0) * x
    return x, c, lnp - np.max(lnp)


@dataclass
class FitResult:
    """A fitted model: best fit, posterior quantiles, goodness of fit and the grid.

    ``quantiles`` maps each parameter key to its (2.5, 16, 50, 84, 97.5) percentiles.
    """

    model: str
    best: dict[str, float]
    quantiles: dict[str, np.ndarray]
    chi2: float
    dof: int
    pvalue: float
    model_profile: np.ndarray
    grid: dict[str, np.ndarray] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    significance: float = float("nan")
    upper: dict[str, float] = field(default_factory=dict)

    @property
    def detected(self) -> bool:
        """True when the fit beats no lens at :data:`DETECTION_SIGMA` or more."""
        return bool(self.significance >= DETECTION_SIGMA)

    def interval(self, key: str, level: int = 68) -> list[float]:
        q = self.quantiles[key]
        return [float(q[1]), float(q[3])] if level == 68 else [float(q[0]), float(q[4])]

    def median(self, key: str) -> float:
        return float(self.quantiles[key][2])


def _data(profile: ShearProfile):
    use = profile.usable
    if np.count_nonzero(use) < 2:
        raise LensInputError(
            "Fewer than two radial bins hold galaxies: widen the radial range, use fewer bins, "
            "or check the centre and the catalogue coordinates."
        )
    return use, profile.g_t[use], profile.g_t_err[use]


def _chi2(model_cells: np.ndarray, profile: ShearProfile, use, data, err) -> np.ndarray:
    model = profile.cells.bin_average(model_cells)[..., use]
    with np.errstate(invalid="ignore"):
        chi2 = np.sum(((data - model) / err) ** 2, axis=-1)
    return np.where(np.isfinite(chi2), chi2, np.inf)


def _refine_1d(chi2_of: Callable, lo: float, hi: float, n: int = 81, rounds: int = 8, min_inside: int = 40):
    """Grid in one variable, zoomed until the region within the likelihood floor spans ``min_inside`` points."""
    a, b = lo, hi
    for _ in range(rounds):
        x = np.linspace(a, b, n)
        c = chi2_of(x)
        if not np.isfinite(np.min(c)):
            raise LensInputError("No model in the searched range fits the profile: check the centre and the radial range.")
        inside = np.flatnonzero(-0.5 * (c - np.min(c)) > _LNP_FLOOR)
        step = x[1] - x[0]
        new_a = max(lo, x[inside[0]] - step)
        new_b = min(hi, x[inside[-1]] + step)
        if inside.size >= min_inside or (new_a <= a and new_b >= b):
            break
        a, b = new_a, new_b
    return x, c


def _grid_minimum(x: np.ndarray, chi2: np.ndarray) -> float:
    """The minimum of chi^2 on a grid, refined by the parabola through its three lowest neighbours."""
    i = int(np.argmin(chi2))
    if 0 < i < x.size - 1:
        c0, c1, c2 = chi2[i - 1], chi2[i], chi2[i + 1]
        curvature = c0 - 2 * c1 + c2
        if np.isfinite(curvature) and curvature > 0:
            return float(x[i] + 0.5 * (x[1] - x[0]) * (c0 - c2) / curvature)
    return float(x[i])


def _finish(model: str, best: dict, quantiles: dict, chi2_min: float, n_data: int, n_par: int,
            model_profile: np.ndarray, grid: dict, at_edge: bool, chi2_null: float,
            upper: dict[str, float]) -> FitResult:
    dof = n_data - n_par
    pvalue = float(stats.chi2.sf(chi2_min, dof)) if dof > 0 else float("nan")
    significance = detection_significance(chi2_null, chi2_min, n_par)
    notes = []
    if at_edge and significance >= DETECTION_SIGMA:
        notes.append(f"The {model} posterior reaches the edge of the searched range: the data barely "
                     "constrain this model; treat its interval as a bound.")
    return FitResult(model, best, quantiles, float(chi2_min), int(dof), pvalue, model_profile, grid, notes,
                     significance, upper)


def _chi2_null(profile: ShearProfile, use, data, err) -> float:
    """chi^2 of the profile against zero shear (no lens)."""
    return float(np.sum((data / err) ** 2))


def fit_sis(profile: ShearProfile, *, sigma_v_range_kms: tuple[float, float] = SIS_SIGMA_RANGE_KMS) -> FitResult:
    """Fit a singular isothermal sphere to the tangential reduced-shear profile.

    Returns quantiles of ``sis_sigma_v_kms`` and of ``sis_theta_e_arcsec``, the
    Einstein radius for a source with the profile's mean D_ls / D_s.

    Examples
    --------
    See :func:`lensmass.core.shear_analysis.analyse_shear_catalog` for the full chain.
    """
    use, data, err = _data(profile)
    cells = profile.cells

    def chi2_of(log_s):
        return _chunked(lambda ls: _chi2(sis_model_cells(10.0**ls, cells), profile, use, data, err),
                        (np.asarray(log_s),), cells.weight.size)

    lo, hi = np.log10(sigma_v_range_kms)
    x, c, lnp = _posterior_1d(chi2_of, lo, hi, prior_slope=2.0)  # uniform in sigma_v^2
    q_log = _grid_quantiles(x, lnp)
    s_up = float(10.0 ** _grid_quantiles(x, lnp, [UPPER_LIMIT_LEVEL])[0])
    s_best = 10.0 ** _grid_minimum(x, c)
    sigma_q = 10.0**q_log
    theta_q = sis_theta_e_arcsec(sigma_q, 1.0, profile.beta_mean)
    best = {"sis_sigma_v_kms": float(s_best),
            "sis_theta_e_arcsec": float(sis_theta_e_arcsec(s_best, 1.0, profile.beta_mean))}
    model_profile = profile.cells.bin_average(sis_model_cells(s_best, cells))
    at_edge = bool(lnp[0] > -10 and x[0] <= lo + 1e-12) or bool(lnp[-1] > -10 and x[-1] >= hi - 1e-12)
    upper = {"sis_sigma_v_kms": s_up, "sis_theta_e_arcsec": float(sis_theta_e_arcsec(s_up, 1.0, profile.beta_mean))}
    return _finish("SIS", best, {"sis_sigma_v_kms": sigma_q, "sis_theta_e_arcsec": theta_q},
                   float(np.min(c)), int(use.sum()), 1, model_profile,
                   {"sis_sigma_v_kms": 10.0**x, "posterior": np.exp(lnp)}, at_edge,
                   _chi2_null(profile, use, data, err), upper)


def fit_nfw(
    profile: ShearProfile,
    z_l: float,
    cosmo,
    *,
    concentration: str | float = "duffy08",
    halo_definition: str = "200c",
    free_concentration: bool = False,
) -> FitResult:
    """Fit an NFW halo (M200 with c from a relation, or M200 and c both free).

    Returns quantiles of ``nfw_m200_msun``, ``nfw_c200`` and ``nfw_r200_kpc``
    (for the chosen ``halo_definition``; the keys keep the 200 name).
    """
    from lensmass.core.cosmology import little_h

    if profile.d_l_mpc is None:
        raise LensInputError("The NFW fit needs the lens distance: build the profile with d_l_mpc.")
    use, data, err = _data(profile)
    cells = profile.cells
    d_l = profile.d_l_mpc
    h = little_h(cosmo)
    rho_delta = float(overdensity_density_msun_per_mpc3(z_l, cosmo, halo_definition))

    def r200_kpc(m):
        return np.cbrt(3 * np.asarray(m) / (4 * np.pi * rho_delta)) * 1e3

    def chi2_mc(log_m, log_c):
        def one(lm, lc):
            return _chi2(nfw_model_cells(10.0**lm, 10.0**lc, cells, z_l, cosmo, d_l, halo_definition, rho_delta),
                         profile, use, data, err)
        return _chunked(one, (np.asarray(log_m, float), np.asarray(log_c, float)), cells.weight.size)

    lo, hi = NFW_LOG10_MASS_RANGE
    if not free_concentration:
        c_of_m, c_label = concentration_relation(concentration, halo_definition)

        def chi2_of(log_m):
            return chi2_mc(log_m, np.log10(c_of_m(10.0**np.asarray(log_m), z_l, h)))

        x, c, lnp = _posterior_1d(chi2_of, lo, hi, prior_slope=1.0)  # uniform in M200
        m_q = 10.0 ** _grid_quantiles(x, lnp)
        m_up = float(10.0 ** _grid_quantiles(x, lnp, [UPPER_LIMIT_LEVEL])[0])
        c_q = np.sort(c_of_m(m_q, z_l, h))
        m_best = 10.0 ** _grid_minimum(x, c)
        c_best = float(c_of_m(m_best, z_l, h))
        grid = {"nfw_m200_msun": 10.0**x, "posterior": np.exp(lnp)}
        n_par = 1
        at_edge = bool(lnp[0] > -10 and x[0] <= lo + 1e-12) or bool(lnp[-1] > -10 and x[-1] >= hi - 1e-12)
    else:
        m_q, c_q, m_best, c_best, grid, c_min, at_edge, m_up = _fit_nfw_2d(chi2_mc)
        c = np.array([c_min])
        n_par = 2
    quantiles = {"nfw_m200_msun": m_q, "nfw_c200": c_q, "nfw_r200_kpc": r200_kpc(m_q)}
    best = {"nfw_m200_msun": float(m_best), "nfw_c200": float(c_best), "nfw_r200_kpc": float(r200_kpc(m_best))}
    model_profile = cells.bin_average(nfw_model_cells(m_best, c_best, cells, z_l, cosmo, d_l, halo_definition,
                                                      rho_delta))
    return _finish("NFW", best, quantiles, float(np.min(c)), int(use.sum()), n_par, model_profile, grid, at_edge,
                   _chi2_null(profile, use, data, err), {"nfw_m200_msun": m_up, "nfw_r200_kpc": float(r200_kpc(m_up))})


def _fit_nfw_2d(chi2_mc: Callable, n_m: int = 81, n_c: int = 61, rounds: int = 4):
    """Grid posterior in (log M, log c), zoomed on the region within the likelihood floor."""
    box = [*NFW_LOG10_MASS_RANGE, *np.log10(NFW_CONCENTRATION_RANGE)]
    full = tuple(box)
    for _ in range(rounds):
        lm = np.linspace(box[0], box[1], n_m)
        lc = np.linspace(box[2], box[3], n_c)
        mm, cc = np.meshgrid(lm, lc, indexing="ij")
        chi2 = chi2_mc(mm.ravel(), cc.ravel()).reshape(mm.shape)
        lnp = -0.5 * (chi2 - np.min(chi2))
        im, ic = np.nonzero(lnp > _LNP_FLOOR)
        dm, dc = lm[1] - lm[0], lc[1] - lc[0]
        new = [max(full[0], lm[im.min()] - 2 * dm), min(full[1], lm[im.max()] + 2 * dm),
               max(full[2], lc[ic.min()] - 2 * dc), min(full[3], lc[ic.max()] + 2 * dc)]
        resolved = (im.max() - im.min() >= 30) and (ic.max() - ic.min() >= 20)
        if resolved or np.allclose(new, box):
            break
        box = new
    # prior uniform in M200 (density in log10 M ~ M) and uniform in log c
    p = np.exp(lnp) * 10.0 ** (lm - lm.max())[:, None]
    m_marginal = np.log(np.maximum(p.sum(axis=1), 1e-300))
    m_q = 10.0 ** _grid_quantiles(lm, m_marginal)
    m_up = float(10.0 ** _grid_quantiles(lm, m_marginal, [UPPER_LIMIT_LEVEL])[0])
    c_q = 10.0 ** _grid_quantiles(lc, np.log(np.maximum(p.sum(axis=0), 1e-300)))
    i, j = np.unravel_index(int(np.argmin(chi2)), chi2.shape)
    edge = lnp[[0, -1], :].max() > -10 or lnp[:, [0, -1]].max() > -10
    at_edge = bool(edge and (np.isclose(lm[0], full[0]) or np.isclose(lm[-1], full[1])
                             or np.isclose(lc[0], full[2]) or np.isclose(lc[-1], full[3])))
    grid = {"nfw_m200_msun": 10.0**lm, "nfw_c200": 10.0**lc, "posterior": p}
    return m_q, c_q, 10.0 ** lm[i], 10.0 ** lc[j], grid, float(np.min(chi2)), at_edge, m_up


def cross_shear_test(profile: ShearProfile) -> tuple[float, int, float]:
    """chi^2 of the cross shear against zero, its degrees of freedom and p-value.

    Gravitational lensing makes no cross shear about the centre of an axisymmetric
    lens (Bartelmann & Schneider 2001, sec. 5.3): a small p-value flags systematics
    (PSF residuals, a wrong centre or an e1/e2 sign convention).
    """
    use = profile.usable & np.isfinite(profile.g_x)
    chi2 = float(np.sum((profile.g_x[use] / profile.g_x_err[use]) ** 2))
    dof = int(use.sum())
    return chi2, dof, float(stats.chi2.sf(chi2, dof)) if dof > 0 else float("nan")
