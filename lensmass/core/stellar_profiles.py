"""Projected stellar mass profiles for the lens galaxy: Hernquist and de Vaucouleurs.

Only the projected (cylinder) mass enters the lens equation, so each profile is
given as the fraction of its total mass inside a projected radius.

References
----------
Hernquist (1990), ApJ 356, 359: rho(r) = M a / [2 pi r (r + a)^3] (eq. 2); surface density
  Sigma(s) = M / [2 pi a^2 (1 - s^2)^2] [(2 + s^2) X(s) - 3] (eq. 32) and projected mass
  M_p(<s) = M s^2 (X(s) - 1) / (1 - s^2) (eq. 37), with s = R / a and
  X(s) = arcsech(s) / sqrt(1 - s^2) for s < 1, arcsec(s) / sqrt(s^2 - 1) for s > 1 (eqs. 33-34);
  the half-light radius is R_e = 1.8153 a (eq. 38). Equation numbers are from memory; every
  formula is checked against a numerical projection of eq. 2 in the tests.
de Vaucouleurs (1948): the Sersic profile with n = 4 (see :mod:`lensmass.core.sersic`).
"""

from __future__ import annotations

import numpy as np

# X(s) is the F(x) of the NFW lensing functions; (1 - X)/(s^2 - 1) is shared with nfw.py.
from lensmass.core.nfw import _f_function as _hernquist_x
from lensmass.core.nfw import _SERIES_LIMIT, _SERIES_TERMS, _one_minus_f_over_t
from lensmass.core.errors import LensInputError
from lensmass.core.sersic import sersic_enclosed_fraction

#: R_e / a for the Hernquist profile (Hernquist 1990, eq. 38).
HERNQUIST_RE_OVER_A = 1.8153

#: Names accepted for the stellar light/mass profile.
STELLAR_PROFILES = ("devaucouleurs", "hernquist", "sersic")

PROFILE_LABELS = {
    "devaucouleurs": "de Vaucouleurs R^1/4 profile (Sersic n = 4)",
    "hernquist": "Hernquist (1990) profile, a = R_e / 1.8153",
    "sersic": "Sersic profile",
}


def hernquist_scale_radius(r_eff) -> np.ndarray:
    """Hernquist scale length a from the projected half-light radius."""
    return np.asarray(r_eff, float) / HERNQUIST_RE_OVER_A


def hernquist_projected_fraction(radius, a) -> np.ndarray:
    """M_2D(<R) / M_total of a Hernquist sphere: s^2 (1 - X) / (s^2 - 1) (Hernquist 1990, eq. 37).

    Examples
    --------
    >>> round(float(hernquist_projected_fraction(1.0, 1.0)), 6)  # 1/3 at R = a
    0.333333
    """
    s = np.asarray(radius, float) / np.asarray(a, float)
    return s**2 * _one_minus_f_over_t(s)


def hernquist_surface_density(radius, total_mass, a) -> np.ndarray:
    """Sigma(R) of a Hernquist sphere (Hernquist 1990, eq. 32), in mass per unit area of a^2.

    With t = s^2 - 1 and g = (1 - X)/t the bracket [(2 + s^2) X - 3] / (1 - s^2)^2 equals
    (X - 3 g) / t; near s = 1 its series in t is used (limit 4/15).
    """
    a = np.asarray(a, float)
    s = np.asarray(radius, float) / a
    t = s * s - 1.0
    near = np.abs(t) < _SERIES_LIMIT
    with np.errstate(divide="ignore", invalid="ignore"):
        direct = (_hernquist_x(s) - 3.0 * _one_minus_f_over_t(s)) / t
    k = np.arange(_SERIES_TERMS)
    tn = np.where(near, t, 0.0)[..., None]
    series = np.sum((-tn) ** k * (3.0 / (2 * k + 5) - 1.0 / (2 * k + 3)), axis=-1)
    bracket = np.where(near, series, direct)
    return np.asarray(total_mass, float) / (2.0 * np.pi * a**2) * bracket


def projected_mass_fraction(profile: str, radius, r_eff, sersic_n=None) -> np.ndarray:
    """Fraction of a stellar profile's total light (or mass) inside projected ``radius``.

    ``profile`` is ``"devaucouleurs"``, ``"hernquist"`` or ``"sersic"`` (needs ``sersic_n``);
    ``radius`` and ``r_eff`` share a unit.

    Examples
    --------
    >>> round(float(projected_mass_fraction("devaucouleurs", 1.5, 1.5)), 12)
    0.5
    """
    key = str(profile).strip().lower().replace(" ", "").replace("-", "")
    if key in ("devaucouleurs", "dev", "r14"):
        return sersic_enclosed_fraction(radius, r_eff, 4.0)
    if key == "hernquist":
        return hernquist_projected_fraction(radius, hernquist_scale_radius(r_eff))
    if key == "sersic":
        if sersic_n is None:
            raise LensInputError("The Sersic light profile needs an index: give the Sersic index (`sersic_n`).")
        return sersic_enclosed_fraction(radius, r_eff, sersic_n)
    raise LensInputError(f"Unknown stellar profile '{profile}': use one of {', '.join(STELLAR_PROFILES)}.")
