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


def time_delay_distance_draws_mpc(z_l: float, z_s: float, z_l_err: float, z_s_err: float, n: int, cosmo,
                                  rng: np.random.Generator) -> np.ndarray:
    """``n`` draws of D_dt (Mpc) with Gaussian redshift errors (draws with z_s <= z_l or z_l <= 0 are drawn
    again), so that a delay's interval carries the redshift uncertainty as well as the model's.

    Examples
    --------
    >>> from astropy.cosmology import Planck18
    >>> d = time_delay_distance_draws_mpc(0.5, 2.0, 0.0, 0.0, 3, Planck18, np.random.default_rng(0))
    >>> bool(np.allclose(d, time_delay_distance_mpc(0.5, 2.0, Planck18)))
    True
    """
    from lensmass.core.errors import LensInputError
    from lensmass.core.uncertainty import normal_samples

    zl = np.empty(0)
    zs = np.empty(0)
    for _ in range(20):  # rejection of unphysical pairs; 20 rounds leave none unless the errors are absurd
        a = normal_samples(z_l, z_l_err, n, rng)
        b = normal_samples(z_s, z_s_err, n, rng)
        ok = (a > 0) & (b > a)
        zl, zs = np.r_[zl, a[ok]], np.r_[zs, b[ok]]
        if zl.size >= n:
            break
    if zl.size < n:
        raise LensInputError("The redshift errors leave almost no draws with the source behind the lens: check "
                             "the errors of the lens redshift `z_l` and the source redshift `z_s`.")
    return time_delay_distance_mpc(zl[:n], zs[:n], cosmo)


def delay_draws_days(delta_tau_draws_arcsec2, z_l: float, z_s: float, cosmo, *, z_l_err: float = 0.0,
                     z_s_err: float = 0.0, n: int = 4000, seed: int | None = 0) -> np.ndarray:
    """Delays (days) from posterior draws of a Fermat-potential difference and the redshifts with their errors:
    each of ``n`` draws pairs a resampled Fermat difference with an independent D_dt draw (the model and the
    redshifts are independent). NaN Fermat draws (an image the model did not make) are skipped."""
    tau = np.asarray(delta_tau_draws_arcsec2, float)
    tau = tau[np.isfinite(tau)]
    if tau.size == 0:
        return np.full(0, np.nan)
    rng = np.random.default_rng(seed)
    if not (z_l_err or z_s_err):
        return delay_days_from_fermat(tau, time_delay_distance_mpc(z_l, z_s, cosmo))
    ddt = time_delay_distance_draws_mpc(z_l, z_s, z_l_err, z_s_err, n, cosmo, rng)
    return delay_days_from_fermat(tau[rng.integers(0, tau.size, n)], ddt)
