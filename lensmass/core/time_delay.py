"""Time delays between the images of one source from the Fermat potential.

Delta t_i = (1 + z_l) / c * (D_l D_s / D_ls) * [tau(theta_i) - tau(theta_ref)], tau the Fermat
potential in rad^2 (Narayan & Bartelmann 1996, eq. 63; Refsdal 1964). The distances are angular-diameter
distances from the chosen cosmology (astropy, via :mod:`lensmass.core.cosmology`).
For an SIS this gives Delta t_AB = (1 + z_l) / (2c) (D_l D_s / D_ls) (theta_A^2 - theta_B^2).
"""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np

from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.cosmology import angular_diameter_distances_mpc

#: Seconds per day and metres per Mpc (astropy units).
_DAY_S = (1 * u.day).to_value(u.s)
_MPC_M = (1 * u.Mpc).to_value(u.m)
_C_M_S = const.c.to_value(u.m / u.s)


def time_delay_distance_mpc(z_l, z_s, cosmo) -> np.ndarray:
    """D_dt = (1 + z_l) D_l D_s / D_ls in Mpc."""
    d_l, d_s, d_ls = angular_diameter_distances_mpc(np.asarray(z_l, float), np.asarray(z_s, float), cosmo)
    return (1 + np.asarray(z_l, float)) * d_l * d_s / d_ls


def delay_days_from_fermat(delta_tau_arcsec2, time_delay_distance) -> np.ndarray:
    """Fermat-potential differences (arcsec^2) and D_dt (Mpc) to delays in days.

    Examples
    --------
    >>> round(float(delay_days_from_fermat(1.0, 1000.0)), 3)
    28.001
    """
    return np.asarray(delta_tau_arcsec2, float) * ARCSEC_RAD**2 * np.asarray(time_delay_distance) * _MPC_M \
        / _C_M_S / _DAY_S
