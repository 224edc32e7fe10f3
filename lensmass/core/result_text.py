"""Results as readable text: numbers to four significant figures, 68% intervals, tables with units.

A number with an uncertainty is written by one rule everywhere (window, report, command line):
its uncertainty to two significant figures and the value to the same decimal place
(:func:`round_measured`); without an uncertainty, four significant figures (:func:`format_number`).

The command line prints these tables, the window shows and copies the same text and notebook
results (:mod:`lensmass.core.results`) show it; labels and units come from the key registry
(:mod:`lensmass.core.result_keys`). Pure text: no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

from lensmass.core.result_keys import table_rows

#: Rows of the estimate table (key, label, unit), read from the registry.
ESTIMATE_ROWS = table_rows("estimate")


def format_number(value: Any) -> str:
    """Four significant figures; scientific notation for large or small numbers.

    Examples
    --------
    >>> format_number(123456.0), format_number(0.25), format_number(float("nan"))
    ('1.235e+05', '0.25', '-')
    """
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return "-"
    if v != 0 and (abs(v) >= 1e5 or abs(v) < 1e-3):
        return f"{v:.4g}"
    return f"{v:.0f}" if abs(v) >= 1e4 else f"{v:.4g}"


#: Significant figures kept of an uncertainty (common practice for quoting a measurement; e.g.
#: Taylor J. R. 1997, "An Introduction to Error Analysis", 2nd ed., section 2.2: one or two figures).
ERROR_FIGURES = 2
#: A value never shows more significant figures than this, however small its uncertainty.
MAX_VALUE_FIGURES = 6


def _finite(value: Any) -> bool:
    try:
        return math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def _power(ref: float) -> int | None:
    """The power of ten factored out of numbers of size ``ref`` (None: written plainly)."""
    if ref != 0 and (abs(ref) >= 1e5 or abs(ref) < 1e-3):
        return int(math.floor(math.log10(abs(ref))))
    return None


def _fixed(x: float, decimals: int) -> str:
    if decimals >= 0:
        return f"{x:.{decimals}f}"
    return f"{round(x, decimals):.0f}"


@dataclass(frozen=True)
class Rounded:
    """A value and its uncertainty written with the same decimals.

    ``value``, ``error``, ``low`` and ``high`` are mantissas ('' when absent); ``power`` is the power
    of ten factored out of all of them (None: none). :meth:`plain` and :meth:`interval` give the
    command line's spelling; the window and the report put the same mantissas in their own markup.
    """

    value: str
    error: str = ""
    low: str = ""
    high: str = ""
    power: int | None = None
    decimals: int | None = None
    """Decimal places of the mantissas (None: the value was written without an uncertainty)."""

    def same(self, x: Any) -> str:
        """Another number (e.g. a 95% bound) as a mantissa with this one's power and decimals."""
        if self.decimals is None or not _finite(x):
            return format_number(x)
        return _fixed(float(x) / 10.0 ** (self.power or 0), self.decimals)

    def _with_power(self, mantissa: str) -> str:
        return mantissa if self.power is None else f"{mantissa}e{self.power:+03d}"

    def plain(self, plus_minus: str = "+-") -> str:
        """'1.535 +- 0.020' (or just the value when there is no error)."""
        if not self.error:
            return self._with_power(self.value)
        if self.power is None:
            return f"{self.value} {plus_minus} {self.error}"
        return f"({self.value} {plus_minus} {self.error})e{self.power:+03d}"

    @property
    def value_text(self) -> str:
        """The value alone, as the command line writes it ('2.63e+11')."""
        return self._with_power(self.value)

    def interval(self) -> str:
        """'[1.515, 1.555]' ('' when there is no interval)."""
        if not self.low:
            return ""
        return f"[{self._with_power(self.low)}, {self._with_power(self.high)}]"


def round_measured(value: Any, error: Any = None, interval: Sequence[Any] | None = None) -> Rounded:
    """Write ``value`` with its uncertainty by the one rule of the program.

    The uncertainty is ``error`` (a 1-sigma error) or, without one, half the width of the 68%
    ``interval`` ``[low, high]``. It keeps :data:`ERROR_FIGURES` significant figures and the value,
    its error and its interval are written to the same decimal place (never more than
    :data:`MAX_VALUE_FIGURES` significant figures of the value). Without a usable uncertainty the
    value is written as :func:`format_number` writes it. Quoting the error to two significant figures
    and the value to the same decimal is common practice (it is not the Particle Data Group's
    three-digit rule, which sometimes keeps one figure).

    Examples
    --------
    >>> round_measured(1.53531, 0.0204).plain()
    '1.535 +- 0.020'
    >>> r = round_measured(2.632e11, interval=(2.51e11, 2.78e11))
    >>> r.value_text, r.interval()
    ('2.63e+11', '[2.51e+11, 2.78e+11]')
    >>> round_measured(263.4, 12.3).plain()
    '263 +- 12'
    >>> round_measured(0.25).plain()
    '0.25'
    """
    if not _finite(value):
        return Rounded(format_number(value))
    v = float(value)
    lo = hi = None
    if interval is not None and len(interval) >= 2 and _finite(interval[0]) and _finite(interval[1]):
        lo, hi = float(interval[0]), float(interval[1])
        if lo == hi:
            lo = hi = None
    u = float(error) if _finite(error) and float(error) > 0 else None
    if u is None and lo is not None and hi is not None:
        u = abs(hi - lo) / 2.0
    if u is None or u == 0:
        return Rounded(format_number(v))
    power = _power(v if v != 0 else u)
    scale = 10.0 ** power if power is not None else 1.0
    vm, um = v / scale, u / scale
    decimals = ERROR_FIGURES - 1 - int(math.floor(math.log10(um)))
    if vm != 0:
        decimals = min(decimals, MAX_VALUE_FIGURES - 1 - int(math.floor(math.log10(abs(vm)))))
    return Rounded(
        _fixed(vm, decimals),
        _fixed(um, decimals) if _finite(error) and float(error) > 0 else "",
        "" if lo is None else _fixed(lo / scale, decimals),
        "" if hi is None else _fixed(hi / scale, decimals),
        power,
        decimals,
    )


def uncertainty_of(result: dict, key: str) -> float | None:
    """The 1-sigma error that sets the decimals of ``key``: the measured theta_E error for theta_E
    (when the result carries one), None otherwise (the 68% interval then sets them)."""
    if key == "theta_e_arcsec":
        err = result.get("theta_e_err_arcsec")
        if _finite(err) and float(err) > 0:
            return float(err)
    return None


#: Keys that are the 1-sigma error of another key: written to that key's decimals.
ERROR_KEYS = {"theta_e_err_arcsec": "theta_e_arcsec"}


def rounded_key(result: dict, key: str) -> Rounded:
    """``result[key]`` with its 68% interval, rounded by :func:`round_measured` (no error shown)."""
    if key in ERROR_KEYS and _finite(result.get(key)) and float(result[key]) > 0:
        return Rounded(round_measured(result[key], result[key]).error)
    interval = (result.get("intervals68") or {}).get(key)
    r = round_measured(result.get(key, float("nan")), uncertainty_of(result, key), interval)
    return Rounded(r.value, "", r.low, r.high, r.power, r.decimals)


def interval_text(result: dict, key: str) -> str:
    """``[low, high]`` of the 68% interval of ``key``, or '' when there is none."""
    return rounded_key(result, key).interval()


def value_text(result: dict, key: str) -> str:
    """``result[key]`` written by the one rule (decimals set by its uncertainty)."""
    return rounded_key(result, key).value_text


def format_table(result: dict, rows: Sequence[tuple[str, str, str]] = ESTIMATE_ROWS, extra_rows=()) -> str:
    """A readable table with units, intervals when present, then notes."""
    lines = [f"cosmology: {result.get('cosmology', '')}"]
    header = f"{'quantity':<14}{'value':>12}  {'68% interval':<26}unit"
    lines.append(header)
    lines.append("-" * len(header))
    for key, label, unit in list(rows) + list(extra_rows):
        if key not in result:
            continue
        shown = rounded_key(result, key)
        lines.append(f"{label:<14}{shown.value_text:>12}  {shown.interval():<26}{unit}")
    notes = result.get("notes") or []
    if notes:
        lines.append("")
        lines.extend(f"note: {n}" for n in notes)
    lines.extend(model_lines(result))
    return "\n".join(lines)


def model_lines(result: dict) -> list[str]:
    """'which model gives each number' block: one line per distinct model, naming its numbers by label."""
    from lensmass.core.result_keys import RESULT_KEYS

    models = result.get("models") or {}
    if not isinstance(models, dict) or not models:
        return []
    grouped: dict[str, list[str]] = {}
    for key, text in models.items():
        grouped.setdefault(str(text), []).append(RESULT_KEYS[key].label if key in RESULT_KEYS else str(key))
    return ["", "which model gives each number:"] + [f"  {', '.join(names)}: {text}" for text, names in grouped.items()]
