"""The Sersic light profile: b_n, enclosed light, total flux, and the elliptical surface brightness
used by both the lens-light fit and the demo simulator.

I(R) = I_e exp(-b_n [(R / R_e)^(1/n) - 1]), with b_n fixed so that R_e encloses half
the light (Sersic 1968; Graham & Driver 2005, PASA 22, 118, eqs. 1-4).

References
----------
Graham & Driver (2005), eq. 2: L(<R) / L = P(2n, x), x = b_n (R / R_e)^(1/n), with P the
  regularised lower incomplete gamma function, and b_n solving P(2n, b_n) = 1/2;
  eq. 4: L = 2 pi n q R_e^2 I_e e^(b_n) b_n^(-2n) Gamma(2n) for axis ratio q.
Ciotti & Bertin (1999), A&A 352, 447, eq. 18: the asymptotic series
  b_n = 2n - 1/3 + 4/(405 n) + 46/(25515 n^2) + 131/(1148175 n^3) - 2194697/(30690717750 n^4)
  (terms beyond the first three from memory; checked against the exact root in the tests).
"""

from __future__ import annotations

import numpy as np
from scipy import special
from scipy.special import gamma as gamma_function

from lensmass.core.errors import LensInputError

#: Range of Sersic indices accepted (common practice: 0.5 for discs-like to ~10 for cD galaxies).
SERSIC_N_RANGE = (0.2, 20.0)


def check_sersic_index(n) -> np.ndarray:
    """Return ``n`` as an array, or raise one clear sentence if it is outside 0.2-20."""
    arr = np.asarray(n, float)
    lo, hi = SERSIC_N_RANGE
    if not np.all(np.isfinite(arr) & (arr >= lo) & (arr <= hi)):
        raise LensInputError(f"The Sersic index must lie between {lo:g} and {hi:g}, got {n}; check the Sersic index (`sersic_n`).")
    return arr


def sersic_b(n) -> np.ndarray:
    """Exact b_n: the root of P(2n, b) = 1/2, via the inverse incomplete gamma function.

    Examples
    --------
    >>> round(float(sersic_b(4.0)), 3)
    7.669
    """
    n = check_sersic_index(n)
    return special.gammaincinv(2.0 * n, 0.5)


def sersic_b_series(n) -> np.ndarray:
    """Ciotti & Bertin (1999) asymptotic series for b_n (eq. 18); off by <5e-5 for n >= 1 and <1e-6 for n >= 4."""
    n = np.asarray(n, float)
    return (2 * n - 1.0 / 3.0 + 4.0 / (405 * n) + 46.0 / (25515 * n**2)
            + 131.0 / (1148175 * n**3) - 2194697.0 / (30690717750 * n**4))


def sersic_enclosed_fraction(radius, r_eff, n) -> np.ndarray:
    """Fraction of the total light inside ``radius`` (same unit as ``r_eff``).

    For an elliptical profile use the same axis ratio for the aperture and read
    ``radius`` and ``r_eff`` along the major axis.

    Examples
    --------
    >>> round(float(sersic_enclosed_fraction(2.0, 2.0, 4.0)), 12)
    0.5
    """
    n = check_sersic_index(n)
    x = sersic_b(n) * (np.asarray(radius, float) / np.asarray(r_eff, float)) ** (1.0 / n)
    return special.gammainc(2.0 * n, x)


def sersic_total_flux(i_eff, r_eff, n, axis_ratio=1.0) -> np.ndarray:
    """Total flux of a Sersic profile of surface brightness ``i_eff`` at R_e (Graham & Driver eq. 4)."""
    n = check_sersic_index(n)
    b = sersic_b(n)
    log_part = b - 2.0 * n * np.log(b) + special.gammaln(2.0 * n)
    return 2.0 * np.pi * n * np.asarray(axis_ratio, float) * np.asarray(r_eff, float) ** 2 * np.asarray(i_eff, float) * np.exp(log_part)


def _profile(radius, i_eff, r_eff, n, b) -> np.ndarray:
    """The one Sersic formula: I(R) = I_e exp(-b_n [(R/R_e)^(1/n) - 1]) (Graham & Driver 2005, eq. 1)."""
    return i_eff * np.exp(-b * ((radius / r_eff) ** (1.0 / n) - 1.0))


def sersic_profile(radius, i_eff, r_eff, n) -> np.ndarray:
    """I(R) = I_e exp(-b_n [(R/R_e)^(1/n) - 1]) along a radius (same unit as ``r_eff``)."""
    n = check_sersic_index(n)
    return _profile(np.asarray(radius, float), np.asarray(i_eff, float), r_eff, n, sersic_b(n))


def sersic_intensity_at_re(total_flux: float, r_eff_arcsec: float, n: float) -> float:
    """I_e = L / [2 pi n R_e^2 e^b b^-2n Gamma(2n)] (Graham & Driver 2005, eq. 4); per arcsec^2."""
    return _intensity_at_re(total_flux, r_eff_arcsec, n, float(sersic_b(n)))


def _intensity_at_re(total_flux, r_eff, n, b) -> float:
    return total_flux / (2 * np.pi * n * r_eff**2 * np.exp(b) * b ** (-2 * n) * gamma_function(2 * n))


def sersic_surface_brightness(x, y, *, total_flux: float, r_eff_arcsec: float, n: float,
                              axis_ratio: float = 1.0, angle_deg: float = 0.0, x0: float = 0.0,
                              y0: float = 0.0) -> np.ndarray:
    """Elliptical Sersic surface brightness (flux per arcsec^2) at (x, y) arcsec.

    The elliptical radius is the circularised sqrt(q x'^2 + y'^2 / q), so ``total_flux``
    is the integral over the plane for any axis ratio.

    Examples
    --------
    >>> g = np.linspace(-20, 20, 801)
    >>> xx, yy = np.meshgrid(g, g)
    >>> sb = sersic_surface_brightness(xx, yy, total_flux=1.0, r_eff_arcsec=1.0, n=1.0, axis_ratio=0.6)
    >>> round(float(sb.sum() * 0.05**2), 3)
    1.0
    """
    c, s = np.cos(np.radians(angle_deg)), np.sin(np.radians(angle_deg))
    dx, dy = np.asarray(x, float) - x0, np.asarray(y, float) - y0
    xp, yp = c * dx + s * dy, -s * dx + c * dy
    q = float(axis_ratio)
    r = np.sqrt(q * xp**2 + yp**2 / q)
    b = float(sersic_b(n))
    return _profile(r, _intensity_at_re(total_flux, r_eff_arcsec, n, b), r_eff_arcsec, n, b)
