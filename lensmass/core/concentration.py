"""Concentration-mass relations for NFW haloes.

References
----------
Duffy, Schaye, Kay & Dalla Vecchia (2008), MNRAS 390, L64, Table 1, "full" sample,
  z = 0-2: c = A (M / M_pivot)^B (1 + z)^C with M_pivot = 2e12 h^-1 Msun;
  Delta = 200 critical: A = 5.71, B = -0.084, C = -0.47;
  virial: A = 7.85, B = -0.081, C = -0.71; 200 mean: A = 10.14, B = -0.081, C = -1.01
  (the virial and mean rows are quoted from memory; the 200c row is in shared/REFERENCES.md).
Dutton & Maccio (2014), MNRAS 441, 3359, eqs. (7)-(8), Delta = 200 critical:
  log10 c = a + b log10(M / 1e12 h^-1 Msun), a = 0.520 + 0.385 exp(-0.617 z^1.21),
  b = -0.101 + 0.026 z; and their virial fit, eqs. (9)-(10) (from memory):
  a = 0.537 + 0.488 exp(-0.718 z^1.08), b = -0.097 + 0.024 z.

Calibration ranges (from memory; shared/REFERENCES.md quotes the Duffy one): Duffy et al. (2008)
fit haloes of 1e11-1e15 h^-1 Msun at 0 <= z <= 2; Dutton & Maccio (2014) fit 1e10-1e15 h^-1 Msun
at 0 <= z <= 5. A relation used outside them is an extrapolation and the output says so.
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from lensmass.core.errors import LensInputError

_DUFFY08 = {
    "200c": (5.71, -0.084, -0.47),
    "vir": (7.85, -0.081, -0.71),
    "200m": (10.14, -0.081, -1.01),
}

#: (z_max, M_min, M_max in h^-1 Msun) over which each relation was fitted (from memory, see above).
CALIBRATION_RANGES = {"duffy08": (2.0, 1e11, 1e15), "dutton14": (5.0, 1e10, 1e15)}

#: Human descriptions used in the output's assumption notes.
RELATION_LABELS = {
    "duffy08": "Duffy et al. (2008) c(M, z), full sample",
    "dutton14": "Dutton & Maccio (2014) c(M, z)",
}


def duffy08_concentration(m_msun, z, h: float, definition: str = "200c") -> np.ndarray:
    """Duffy et al. (2008) concentration for mass ``m_msun`` (Msun, not h^-1) at redshift z.

    Examples
    --------
    >>> round(float(duffy08_concentration(2e12 / 0.7, 0.0, 0.7)), 2)
    5.71
    """
    a, b, c = _DUFFY08[definition]
    m_pivot = 2e12 / h
    return a * (np.asarray(m_msun, float) / m_pivot) ** b * (1 + np.asarray(z, float)) ** c


def dutton14_concentration(m_msun, z, h: float, definition: str = "200c") -> np.ndarray:
    """Dutton & Maccio (2014) concentration (Planck cosmology fit) for 200c or virial haloes."""
    z = np.asarray(z, float)
    if definition == "200c":
        a = 0.520 + (0.905 - 0.520) * np.exp(-0.617 * z**1.21)
        b = -0.101 + 0.026 * z
    elif definition == "vir":
        a = 0.537 + (1.025 - 0.537) * np.exp(-0.718 * z**1.08)
        b = -0.097 + 0.024 * z
    else:
        raise LensInputError(
            "Dutton & Maccio (2014) give no 200-mean relation: use the concentration relation (`concentration`) "
            "duffy08 or a fixed value with the 200m halo definition (`halo_definition`)."
        )
    return 10 ** (a + b * np.log10(np.asarray(m_msun, float) * h / 1e12))


class PowerLawConcentration:
    """A c(M, z) relation of the form c = A(z, h) M^B(z), as every relation here is.

    Calling it gives c for (mass in Msun, z, h) exactly as the relation's own function does;
    :meth:`log_form` gives (ln A, B) per redshift, so ln c = ln A + B ln M, which the NFW
    inversion (:func:`lensmass.core.nfw.nfw_mass_for_einstein_radius`) uses for its Newton steps.

    Examples
    --------
    >>> c_of_m, _ = concentration_relation("duffy08")
    >>> ln_a, slope = c_of_m.log_form(0.3, 0.7)
    >>> bool(np.isclose(np.exp(ln_a + slope * np.log(1e13)), c_of_m(1e13, 0.3, 0.7)))
    True
    """

    def __init__(self, function: Callable, log_form: Callable):
        self._function = function
        self._log_form = log_form

    def __call__(self, m_msun, z, h: float) -> np.ndarray:
        return self._function(m_msun, z, h)

    def log_form(self, z, h: float) -> tuple[np.ndarray, np.ndarray]:
        """(ln A, B) of c = A M^B at redshift(s) ``z`` for the Hubble parameter ``h``."""
        return self._log_form(np.asarray(z, float), float(h))


def _duffy08_log_form(definition: str) -> Callable:
    a, b, c = _DUFFY08[definition]
    return lambda z, h: (np.log(a) - b * np.log(2e12 / h) + c * np.log1p(z), np.full(np.shape(z), b))


def _dutton14_log_form(definition: str) -> Callable:
    def form(z, h):
        if definition == "200c":
            a = 0.520 + (0.905 - 0.520) * np.exp(-0.617 * z**1.21)
            b = -0.101 + 0.026 * z
        else:
            a = 0.537 + (1.025 - 0.537) * np.exp(-0.718 * z**1.08)
            b = -0.097 + 0.024 * z
        return np.log(10.0) * (a + b * np.log10(h / 1e12)), b

    return form


def concentration_relation(spec, definition: str = "200c") -> tuple[PowerLawConcentration, str]:
    """Return ``(c(m_msun, z, h), label)`` for ``"duffy08"``, ``"dutton14"`` or a number.

    Examples
    --------
    >>> c_of_m, label = concentration_relation(5)
    >>> float(c_of_m(1e14, 0.3, 0.7)), label
    (5.0, 'fixed c = 5')
    """
    if isinstance(spec, str):
        key = spec.strip().lower()
        if key == "duffy08":
            return PowerLawConcentration(lambda m, z, h: duffy08_concentration(m, z, h, definition),
                                         _duffy08_log_form(definition)), RELATION_LABELS[key]
        if key == "dutton14":
            if definition == "200m":
                dutton14_concentration(1e12, 0.0, 0.7, definition)  # raises the clear message
            return PowerLawConcentration(lambda m, z, h: dutton14_concentration(m, z, h, definition),
                                         _dutton14_log_form(definition)), RELATION_LABELS[key]
        try:
            spec = float(key)
        except ValueError:
            raise LensInputError(
                f"Unknown concentration '{spec}': use duffy08, dutton14 or a number such as 5."
            ) from None
    value = float(spec)
    if not (np.isfinite(value) and value > 0):
        raise LensInputError(f"A fixed concentration must be a positive number, got {spec}.")
    from lensmass.core.limits import CONCENTRATION_RANGE

    lo, hi = CONCENTRATION_RANGE
    if not lo <= value <= hi:
        raise LensInputError(f"A fixed concentration of {value:g} is outside {lo:g} to {hi:g}, where simulated and "
                             "observed halos lie; check the concentration (`concentration`).")
    return PowerLawConcentration(lambda m, z, h: np.full(np.broadcast(np.asarray(m), np.asarray(z)).shape, value),
                                 lambda z, h: (np.full(np.shape(z), np.log(value)), np.zeros(np.shape(z)))
                                 ), f"fixed c = {value:g}"


def calibration_note(spec, m_msun, z, h: float) -> str | None:
    """A sentence when a c(M, z) relation is used outside its calibration, else None.

    ``m_msun`` and ``z`` may be arrays (one entry per lens): the sentence counts the
    lenses outside. Fixed concentrations have no calibration and give None.

    Examples
    --------
    >>> calibration_note("duffy08", 1e15, 2.5, 0.7)[:60]
    'Duffy et al. (2008) c(M, z), full sample is calibrated for 0'
    """
    key = spec.strip().lower() if isinstance(spec, str) else None
    if key not in CALIBRATION_RANGES:
        return None
    z_max, m_lo, m_hi = CALIBRATION_RANGES[key]
    m_h = np.atleast_1d(np.asarray(m_msun, float)) * h
    z_arr = np.broadcast_to(np.atleast_1d(np.asarray(z, float)), m_h.shape)
    finite = np.isfinite(m_h)
    bad_z = finite & (z_arr > z_max)
    bad_m = finite & ((m_h < m_lo) | (m_h > m_hi))
    if not np.any(bad_z | bad_m):
        return None
    reasons = []
    if np.any(bad_z):
        reasons.append(f"z_l = {float(np.max(z_arr[bad_z])):.3g}")
    if np.any(bad_m):
        reasons.append(f"M = {float(m_h[bad_m][0]):.3g} h^-1 Msun")
    count = "" if m_h.size == 1 else f" for {int(np.count_nonzero(bad_z | bad_m))} of {m_h.size} lenses"
    span = f"{m_lo:.0e}-{m_hi:.0e}".replace("e+", "e")
    return (f"{RELATION_LABELS[key]} is calibrated for 0 <= z <= {z_max:g} and {span} h^-1 Msun; "
            f"here it is extrapolated{count} ({', '.join(reasons)}): the concentration, and the NFW mass that "
            "depends on it, rest on an extrapolation.")
