"""The zeta statistic of a shear profile, with the reduced shear turned into shear by a halo's convergence.

Aperture densitometry (Fahlman et al. 1994): zeta and zeta_Sigma from the profile's sub-bins
when the annulus falls on their edges, else from the engine's annulus sums; gamma_t =
g_t (1 - kappa) with the convergence of a fitted NFW halo (first order in the shear).
"""

from __future__ import annotations

import numpy as np

from lensmass.core.aperture_mass import shear_from_reduced_shear, zeta_from_profile
from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.lensing import sigma_crit_msun_per_mpc2
from lensmass.core.nfw import nfw_surface_density_msun_per_mpc2
from lensmass.core.shear_sums import annulus_profile


def _zeta_subbins(fine_edges: np.ndarray, z_in: float, z_out: float) -> slice | None:
    """The profile's sub-bins that make up the zeta annulus, when it falls on their edges (the
    default annulus always does), else None."""
    k1 = int(np.argmin(np.abs(fine_edges - z_in)))
    k2 = int(np.argmin(np.abs(fine_edges - z_out)))
    if k2 - k1 >= 4 and np.isclose(fine_edges[k1], z_in, rtol=1e-9) and np.isclose(fine_edges[k2], z_out, rtol=1e-9):
        return slice(k1, k2)
    return None


def _convergence_inf(halo, radius_mpc, d_l):
    """Convergence of ``halo`` for a source with D_ls / D_s = 1."""
    return nfw_surface_density_msun_per_mpc2(radius_mpc, halo) / sigma_crit_msun_per_mpc2(d_l, 1.0, 1.0)


def _subbin_kappa(fine_edges, cells, halo, d_l):
    """Convergence of ``halo`` in each sub-bin, averaged as the two estimators weight their galaxies.

    With g = beta gamma_inf / (1 - beta kappa_inf) per galaxy, gamma_t = g_t (1 - kappa) in a bin of
    mean g_t (weights w) needs kappa_inf <beta^2>/<beta>; the Delta Sigma mean (weights w beta^2)
    needs kappa_inf <beta^3>/<beta^2> (moments over the bin's cells, first order in the shear).
    """
    n = fine_edges.size - 1
    k = np.searchsorted(fine_edges, cells.theta_arcsec, side="right") - 1
    ok = (k >= 0) & (k < n)
    w, b, v = cells.weight[ok], cells.beta[ok], cells.beta_var[ok]
    m = [np.bincount(k[ok], w * mom, n) for mom in (b, b * b + v, b**3 + 3 * b * v)]
    centre_mpc = np.sqrt(fine_edges[1:] * fine_edges[:-1]) * ARCSEC_RAD * d_l
    kappa_inf = _convergence_inf(halo, centre_mpc, d_l)
    with np.errstate(invalid="ignore", divide="ignore"):
        return kappa_inf * m[1] / m[0], kappa_inf * m[2] / m[1]


def _zeta_from_subbins(fine, sl: slice, z_in, z_out, halo=None, cells=None, d_l=None):
    """zeta and zeta_Sigma with errors from the profile's sub-bins ``sl``; with ``halo``, the
    reduced shear is first converted to shear with the halo's convergence."""
    e = fine.edges_arcsec[sl.start:sl.stop + 1]
    g_t, ds = fine.g_t[sl], fine.delta_sigma_msun_per_mpc2[sl]
    if halo is not None:
        kappa_g, kappa_ds = _subbin_kappa(e, cells, halo, d_l)
        g_t, ds = shear_from_reduced_shear(g_t, kappa_g), shear_from_reduced_shear(ds, kappa_ds)
    zeta = zeta_from_profile(e, g_t, fine.g_t_err[sl], z_in, z_out)
    zeta_s = zeta_from_profile(e, ds, fine.delta_sigma_err_msun_per_mpc2[sl], z_in, z_out)
    return (*zeta, *zeta_s)


def _zeta_from_annulus(sums, layout, zeta_edges, z_in, z_out, halo=None, beta_mean=None, d_l=None):
    """zeta and zeta_Sigma with errors from the engine's sums in the annulus bins (an annulus off the
    profile's sub-bin edges); with ``halo``, the reduced shear is converted to shear with the halo's
    convergence at the annulus bins' centres for the sample's mean D_ls / D_s (first order)."""
    g_t, g_err, ds, ds_err = annulus_profile(sums, layout)
    if halo is not None:
        centre_mpc = np.sqrt(zeta_edges[1:] * zeta_edges[:-1]) * ARCSEC_RAD * d_l
        kappa = _convergence_inf(halo, centre_mpc, d_l) * beta_mean
        g_t, ds = shear_from_reduced_shear(g_t, kappa), shear_from_reduced_shear(ds, kappa)
    zeta = zeta_from_profile(zeta_edges, g_t, g_err, z_in, z_out)
    zeta_s = zeta_from_profile(zeta_edges, ds, ds_err, z_in, z_out)
    return (*zeta, *zeta_s)
