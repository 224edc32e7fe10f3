"""How numbers are written on the report page: significant digits, powers of ten, intervals
that share their value's decimals, and text made safe for matplotlib's mathtext."""

from __future__ import annotations

import math


def _finite(value) -> bool:
    try:
        return math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def _decimals(ref: float, digits: int) -> int:
    """Decimals that give ``digits`` significant figures to a number of size ``ref``."""
    return max(0, digits - 1 - int(math.floor(math.log10(abs(ref))))) if ref else digits - 1


def _power(ref: float) -> int | None:
    """The power of ten to factor out of numbers of size ``ref`` (None: write them plainly)."""
    if ref != 0 and (abs(ref) >= 1e5 or abs(ref) < 1e-3):
        return int(math.floor(math.log10(abs(ref))))
    return None


def format_value(value, digits: int = 3) -> str:
    """A number in mathtext: 0.981, 263, 1051 or 2.63 x 10^11; '-' when missing.

    Examples
    --------
    >>> print(format_value(2.632e11), format_value(1051.3), format_value(1.2))
    $2.63\\times10^{11}$ 1051 1.20
    >>> format_value(float('nan'))
    '-'
    """
    if not _finite(value):
        return "-"
    v = float(value)
    exp = _power(v)
    if exp is not None:
        mant = v / 10**exp
        if round(abs(mant), digits - 1) >= 10:
            mant, exp = mant / 10, exp + 1
        return f"${mant:.{digits - 1}f}\\times10^{{{exp}}}$"
    return f"{v:.{_decimals(v, digits)}f}"


def format_interval(low, high, like, digits: int = 3) -> str:
    """An interval written with the power of ten and decimals of its value ``like``.

    Examples
    --------
    >>> print(format_interval(2.69e11, 3.21e11, 2.94e11))
    [2.69, 3.21]$\\times10^{11}$
    >>> format_interval(1033.2, 1069.9, 1051.0)
    '[1033, 1070]'
    """
    if not (_finite(low) and _finite(high)) or float(low) == float(high):
        return ""
    lo, hi = float(low), float(high)
    ref = float(like) if _finite(like) and float(like) != 0 else hi
    exp = _power(ref)
    if exp is not None:
        d = _decimals(ref / 10**exp, digits)
        return f"[{lo / 10**exp:.{d}f}, {hi / 10**exp:.{d}f}]$\\times10^{{{exp}}}$"
    d = _decimals(ref, digits)
    return f"[{lo:.{d}f}, {hi:.{d}f}]"


def _mathtext_safe(text: str) -> str:
    """Plain text for matplotlib: escape the '$' that would start mathtext."""
    return str(text).replace("$", r"\$")


# ------------------------------------------------------------------ drawings
