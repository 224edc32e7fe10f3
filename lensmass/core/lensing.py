"""Model-independent strong-lensing quantities: Sigma_cr, Einstein radius and mass.

References
----------
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001,
eqs. (15)-(20): Sigma_cr = c^2 D_s / (4 pi G D_l D_ls); for any circularly symmetric
lens the mean convergence inside the Einstein radius is one, so
M(<theta_E) = pi Sigma_cr (D_l theta_E)^2.
"""

from __future__ import annotations

import numpy as np

from lensmass.core.constants import ARCSEC_RAD, C2_OVER_4PIG_MSUN_PER_MPC

MPC2_PER_PC2 = 1e-12


def sigma_crit_msun_per_mpc2(d_l_mpc, d_s_mpc, d_ls_mpc) -> np.ndarray:
    """Critical surface density c^2 D_s / (4 pi G D_l D_ls) in Msun / Mpc^2.

    Examples
    --------
    >>> s = sigma_crit_msun_per_mpc2(1000.0, 2000.0, 1000.0)  # D_l = D_ls = 1 Gpc, D_s = 2 Gpc
    >>> round(float(s) * 1e-12)  # Msun / pc^2
    3326

    The same number from astropy's constants and units:

    >>> import astropy.constants as const, astropy.units as u
    >>> sc = const.c**2 / (4 * np.pi * const.G) * (2000 * u.Mpc) / (1000 * u.Mpc * 1000 * u.Mpc)
    >>> round(float(sc.to_value(u.Msun / u.pc**2)))
    3326
    """
    d_l, d_s, d_ls = (np.asarray(v, dtype=float) for v in (d_l_mpc, d_s_mpc, d_ls_mpc))
    return C2_OVER_4PIG_MSUN_PER_MPC * d_s / (d_l * d_ls)


def sigma_crit_msun_per_pc2(d_l_mpc, d_s_mpc, d_ls_mpc) -> np.ndarray:
    """Critical surface density in Msun / pc^2 (see :func:`sigma_crit_msun_per_mpc2`)."""
    return sigma_crit_msun_per_mpc2(d_l_mpc, d_s_mpc, d_ls_mpc) * MPC2_PER_PC2


def arcsec_to_mpc(theta_arcsec, d_l_mpc) -> np.ndarray:
    """Physical projected radius in Mpc at the lens for an angle in arcsec."""
    return np.asarray(theta_arcsec, dtype=float) * ARCSEC_RAD * np.asarray(d_l_mpc, dtype=float)


def einstein_radius_kpc(theta_e_arcsec, d_l_mpc) -> np.ndarray:
    """Einstein radius in kpc: R_E = D_l theta_E."""
    return arcsec_to_mpc(theta_e_arcsec, d_l_mpc) * 1e3


def einstein_mass_msun(theta_e_arcsec, d_l_mpc, d_s_mpc, d_ls_mpc) -> np.ndarray:
    """Projected mass inside the Einstein radius, pi Sigma_cr (D_l theta_E)^2, in Msun.

    Model-independent for an axisymmetric lens (Narayan & Bartelmann 1996, eq. 20).
    """
    r_mpc = arcsec_to_mpc(theta_e_arcsec, d_l_mpc)
    return np.pi * sigma_crit_msun_per_mpc2(d_l_mpc, d_s_mpc, d_ls_mpc) * r_mpc**2


def point_mass_theta_e_arcsec(mass_msun, d_l_mpc, d_s_mpc, d_ls_mpc) -> np.ndarray:
    """Einstein radius of a point mass, sqrt(4 G M D_ls / (c^2 D_l D_s)), in arcsec."""
    sig = sigma_crit_msun_per_mpc2(d_l_mpc, d_s_mpc, d_ls_mpc)
    r_mpc = np.sqrt(np.asarray(mass_msun, dtype=float) / (np.pi * sig))
    return r_mpc / np.asarray(d_l_mpc, dtype=float) / ARCSEC_RAD
