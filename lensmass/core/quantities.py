"""Inputs given as astropy Quantities: any angle unit for angles, dimensionless for redshifts.

Core functions take plain numbers in the units their names say (``theta_e_arcsec``); a notebook
user may pass ``1.2 * u.arcsec``, ``(5.8e-6 * u.rad)`` or ``0.02 * u.arcmin`` instead, and gets
the value converted. A quantity of the wrong kind (a length for an angle) is refused in one
sentence that names the quantity and the parameter.

Examples
--------
>>> import astropy.units as u
>>> round(float(to_arcsec(0.02 * u.arcmin, "The Einstein radius", "theta_e_arcsec")), 6)
1.2
>>> float(to_plain(0.5 * u.dimensionless_unscaled, "The lens redshift", "z_l"))
0.5
"""

from __future__ import annotations

from typing import Any

from lensmass.core.errors import LensInputError


def _is_quantity(value: Any) -> bool:
    return hasattr(value, "unit") and hasattr(value, "to_value")


def _convert(value: Any, kind: str, unit: str, refusal: str) -> Any:
    if not _is_quantity(value):
        return value
    import astropy.units as u

    if value.unit.physical_type != kind:
        raise LensInputError(refusal.format(unit=value.unit))
    return value.to_value(u.Unit(unit))


def to_arcsec(value: Any, what: str, name: str) -> Any:
    """``value`` in arcsec: plain numbers are taken as arcsec; angle quantities are converted."""
    return _convert(value, "angle", "arcsec", f"{what} (`{name}`) must be an angle, got a quantity in {{unit}}; "
                    "give arcsec or an astropy angle such as 1.2 * u.arcsec.")


def to_plain(value: Any, what: str, name: str) -> Any:
    """A dimensionless quantity (a redshift, a ratio) as a plain number; a dimensioned one is refused."""
    return _convert(value, "dimensionless", "", f"{what} (`{name}`) is a pure number, got a quantity in {{unit}}; "
                    "give a plain number.")
