"""Physical constants in the units the core uses (from astropy.constants, CODATA)."""

from __future__ import annotations

import numpy as np
import astropy.constants as _const
import astropy.units as _u

#: Speed of light in km/s.
C_KMS: float = _const.c.to_value(_u.km / _u.s)
#: c^2 / (4 pi G) in Msun / Mpc (multiply by D_s / (D_l D_ls) in 1/Mpc for Sigma_cr).
C2_OVER_4PIG_MSUN_PER_MPC: float = (_const.c**2 / (4 * np.pi * _const.G)).to_value(_u.Msun / _u.Mpc)
#: Gravitational constant in Mpc (km/s)^2 / Msun.
G_MPC_KMS2_PER_MSUN: float = _const.G.to_value(_u.Mpc * (_u.km / _u.s) ** 2 / _u.Msun)
#: One arcsecond in radians.
ARCSEC_RAD: float = np.deg2rad(1.0 / 3600.0)
