"""Singular isothermal sphere (SIS).

References
----------
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001, section 3.3:
theta_E = 4 pi (sigma_v / c)^2 D_ls / D_s; kappa = gamma = theta_E / (2 theta);
M_2D(<R) = pi sigma_v^2 R / G; M_3D(<r) = 2 sigma_v^2 r / G.
"""

from __future__ import annotations

import numpy as np

from lensmass.core.constants import ARCSEC_RAD, C_KMS, G_MPC_KMS2_PER_MSUN


def sis_theta_e_arcsec(sigma_v_kms, d_s_mpc, d_ls_mpc) -> np.ndarray:
    """Einstein radius of an SIS, 4 pi (sigma_v/c)^2 D_ls/D_s, in arcsec.

    Examples
    --------
    >>> round(float(sis_theta_e_arcsec(1000.0, 1.0, 1.0)), 1)
    28.8
    """
    s = np.asarray(sigma_v_kms, dtype=float)
    ratio = np.asarray(d_ls_mpc, dtype=float) / np.asarray(d_s_mpc, dtype=float)
    return 4 * np.pi * (s / C_KMS) ** 2 * ratio / ARCSEC_RAD


def sis_sigma_v_kms(theta_e_arcsec, d_s_mpc, d_ls_mpc) -> np.ndarray:
    """Velocity dispersion of the SIS that gives Einstein radius theta_E, in km/s."""
    theta = np.asarray(theta_e_arcsec, dtype=float) * ARCSEC_RAD
    ratio = np.asarray(d_s_mpc, dtype=float) / np.asarray(d_ls_mpc, dtype=float)
    return C_KMS * np.sqrt(theta * ratio / (4 * np.pi))


def sis_convergence(theta_arcsec, theta_e_arcsec) -> np.ndarray:
    """kappa(theta) = theta_E / (2 theta)."""
    return np.asarray(theta_e_arcsec, dtype=float) / (2 * np.asarray(theta_arcsec, dtype=float))


def sis_shear(theta_arcsec, theta_e_arcsec) -> np.ndarray:
    """Tangential shear gamma_t(theta) = theta_E / (2 theta)."""
    return sis_convergence(theta_arcsec, theta_e_arcsec)


def sis_reduced_shear(theta_arcsec, theta_e_arcsec) -> np.ndarray:
    """Reduced tangential shear g = gamma / (1 - kappa) = theta_E / (2 theta - theta_E)."""
    t = np.asarray(theta_arcsec, dtype=float)
    te = np.asarray(theta_e_arcsec, dtype=float)
    return te / (2 * t - te)


def sis_mass_2d_msun(radius_mpc, sigma_v_kms) -> np.ndarray:
    """Projected mass inside a cylinder of radius R: pi sigma_v^2 R / G."""
    return np.pi * np.asarray(sigma_v_kms, float) ** 2 * np.asarray(radius_mpc, float) / G_MPC_KMS2_PER_MSUN


def sis_mass_3d_msun(radius_mpc, sigma_v_kms) -> np.ndarray:
    """Mass inside a sphere of radius r: 2 sigma_v^2 r / G."""
    return 2 * np.asarray(sigma_v_kms, float) ** 2 * np.asarray(radius_mpc, float) / G_MPC_KMS2_PER_MSUN
