"""Several NFW halos fitted together to a shear catalogue, each centred on a mass peak.

The model shear at a position is the sum of the halos' complex shears and convergences
(Bartelmann & Schneider 2001, Phys. Rep. 340, 291; NFW lensing from Wright & Brainerd
2000, ApJ 534, 34), with c200 from a concentration-mass relation (Duffy et al. 2008 by
default) and the reduced shear g = beta gamma_inf / (1 - beta kappa_inf) for a source of
lensing efficiency beta = D_ls / D_s; the spread of beta in a cell enters to second order
(as in :func:`lensmass.core.shear_fit.cell_reduced_shear`).

The galaxies are summed in small square cells (weighted means of e1, e2, beta, beta^2 and
position), so the likelihood, Gaussian in the cell means with variance s^2 / W_cell
(s^2 the per-unit-weight shape variance per component, measured from the residuals), costs
one model evaluation per cell, not per galaxy. Cells nearer than ``inner_cut_arcsec`` to a
centre are left out (the strong-lensing core, where |g| approaches 1 and centring errors
dominate). The posterior in log10 M200 (flat prior) is approximated by a Gaussian at its
maximum (Laplace's method, Hessian by finite differences); the intervals come from draws of it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import optimize

from lensmass.core.cluster_simulation import halos_kappa_gamma
from lensmass.core.errors import LensInputError

_LOG10_M_RANGE = (12.0, 16.5)


@dataclass
class HaloFit:
    """Joint NFW fit: per-halo log10 M200 best values, covariance and posterior draws."""

    centres_arcsec: np.ndarray
    log10_m200_best: np.ndarray
    log10_m200_cov: np.ndarray
    draws_log10_m200: np.ndarray
    chi2: float
    dof: int
    shape_variance: float
    n_cells: int
    concentration: str
    halo_definition: str
    at_prior_edge: list[bool]

    def m200_quantiles(self, q=(0.025, 0.16, 0.5, 0.84, 0.975)) -> np.ndarray:
        """Quantiles of each halo's M200 (rows: halos) from the draws."""
        return np.quantile(10.0 ** self.draws_log10_m200, q, axis=0).T


def _cells(x, y, e, w, beta, extent_arcsec: float, n_cells: int):
    pix = extent_arcsec / n_cells
    ix = np.floor(x / pix + n_cells / 2).astype(np.int64)
    iy = np.floor(y / pix + n_cells / 2).astype(np.int64)
    on = (ix >= 0) & (ix < n_cells) & (iy >= 0) & (iy < n_cells) & (beta > 0)
    flat = iy[on] * n_cells + ix[on]
    size = n_cells * n_cells
    ww = w[on]

    def s(v):
        return np.bincount(flat, weights=v, minlength=size)

    W = s(ww)
    keep = W > 0
    Wk = W[keep]
    cells = {
        "W": Wk,
        "x": s(ww * x[on])[keep] / Wk,
        "y": s(ww * y[on])[keep] / Wk,
        "e": (s(ww * e.real[on]) + 1j * s(ww * e.imag[on]))[keep] / Wk,
        "beta": s(ww * beta[on])[keep] / Wk,
        "S2": s(ww * np.abs(e[on]) ** 2)[keep],
        "N": np.bincount(flat, minlength=size)[keep],
    }
    cells["beta_var"] = np.maximum(s(ww * beta[on] ** 2)[keep] / Wk - cells["beta"] ** 2, 0.0)
    return cells


def fit_nfw_halos(x_arcsec, y_arcsec, e1, e2, weight, beta, centres_arcsec, *, z_l: float, cosmo, d_l_mpc: float,
                  extent_arcsec: float, concentration: str = "duffy08", halo_definition: str = "200c",
                  inner_cut_arcsec: float = 60.0, n_cells: int = 96, n_draws: int = 4000,
                  seed: int | None = 0) -> HaloFit:
    """Fit NFW halos at fixed ``centres_arcsec`` (k x 2) to the galaxies' ellipticities jointly."""
    centres = np.atleast_2d(np.asarray(centres_arcsec, float))
    k = centres.shape[0]
    if k == 0:
        raise LensInputError("No mass peaks to centre halos on: lower the S/N threshold or give centres.")
    x = np.asarray(x_arcsec, float)
    y = np.asarray(y_arcsec, float)
    e = np.asarray(e1, float) + 1j * np.asarray(e2, float)
    w = np.asarray(weight, float)
    b = np.broadcast_to(np.asarray(beta, float), x.shape)
    cells = _cells(x, y, e, w, b, extent_arcsec, n_cells)
    near = np.zeros(cells["W"].size, bool)
    for cx, cy in centres:
        near |= np.hypot(cells["x"] - cx, cells["y"] - cy) < inner_cut_arcsec
    cells = {key: v[~near] for key, v in cells.items()}
    if cells["W"].size < 3 * k + 3:
        raise LensInputError("Too few galaxies outside the halo cores to fit the halos: use a wider catalogue "
                             "or a smaller inner cut.")
    W, eb, bb, bv = cells["W"], cells["e"], cells["beta"], cells["beta_var"]
    n_gal = float(cells["N"].sum())

    def model(logm):
        halos = [{"x_arcsec": cx, "y_arcsec": cy, "m200_msun": 10.0 ** lm} for (cx, cy), lm in zip(centres, logm)]
        kap, gam = halos_kappa_gamma(cells["x"], cells["y"], halos, 1.0, z_l, cosmo, d_l_mpc,
                                     concentration, halo_definition)
        den = 1.0 - bb * kap
        g = bb * gam / den + bv * gam * kap / den**3
        return g

    def resid2(logm):
        g = model(logm)
        return float(np.sum(W * np.abs(eb - g) ** 2)), g

    s2_0 = float(np.sum(cells["S2"])) / (2.0 * n_gal)

    def nll(logm):
        if np.any(np.asarray(logm) < _LOG10_M_RANGE[0]) or np.any(np.asarray(logm) > _LOG10_M_RANGE[1]):
            return 1e30
        return 0.5 * resid2(logm)[0] / s2_0

    best = optimize.minimize(nll, np.full(k, 14.5), method="L-BFGS-B", bounds=[_LOG10_M_RANGE] * k,
                             options={"eps": 1e-4})
    refined = optimize.minimize(nll, best.x, method="Nelder-Mead",
                                options={"xatol": 1e-3, "fatol": 1e-3, "initial_simplex": best.x + np.vstack(
                                    [np.zeros(k), 0.05 * np.eye(k)])})
    start = refined.x if refined.fun <= best.fun else best.x
    # shape variance per component per unit weight from the residuals about the best model
    g = model(start)
    s2 = float(np.sum(cells["S2"] - 2.0 * W * np.real(eb * np.conj(g)) + W * np.abs(g) ** 2)) / (2.0 * n_gal)
    f = lambda lm: 0.5 * resid2(lm)[0] / s2  # noqa: E731
    h = 0.02
    hess = np.zeros((k, k))
    f0 = f(start)
    for i in range(k):
        for j in range(i, k):
            ei, ej = np.eye(k)[i] * h, np.eye(k)[j] * h
            val = (f(start + ei + ej) - f(start + ei - ej) - f(start - ei + ej) + f(start - ei - ej)) / (4 * h * h)
            hess[i, j] = hess[j, i] = val
    try:
        cov = np.linalg.inv(hess)
        if np.any(np.linalg.eigvalsh(cov) <= 0):
            raise np.linalg.LinAlgError
    except np.linalg.LinAlgError:
        cov = np.eye(k) * 1.0
    rng = np.random.default_rng(seed)
    draws = rng.multivariate_normal(start, cov, int(n_draws))
    draws = np.clip(draws, *_LOG10_M_RANGE)
    edge = [bool(v <= _LOG10_M_RANGE[0] + 0.05 or v >= _LOG10_M_RANGE[1] - 0.05) for v in start]
    return HaloFit(centres, start, cov, draws, float(2.0 * f0), int(2 * W.size - k), s2, int(W.size),
                   concentration, halo_definition, edge)
