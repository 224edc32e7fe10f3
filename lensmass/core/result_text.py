"""Results as readable text: numbers to four significant figures, 68% intervals, tables with units.

The command line prints these tables, the window shows and copies the same text and notebook
results (:mod:`lensmass.core.results`) show it; labels and units come from the key registry
(:mod:`lensmass.core.result_keys`). Pure text: no I/O.
"""

from __future__ import annotations

import math
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


def interval_text(result: dict, key: str) -> str:
    """``[low, high]`` of the 68% interval of ``key``, or '' when there is none."""
    lo_hi = (result.get("intervals68") or {}).get(key)
    if not lo_hi:
        return ""
    lo, hi = lo_hi
    if lo is None or hi is None or not (math.isfinite(float(lo)) and math.isfinite(float(hi))) or lo == hi:
        return ""
    return f"[{format_number(lo)}, {format_number(hi)}]"


def format_table(result: dict, rows: Sequence[tuple[str, str, str]] = ESTIMATE_ROWS, extra_rows=()) -> str:
    """A readable table with units, intervals when present, then notes."""
    lines = [f"cosmology: {result.get('cosmology', '')}"]
    header = f"{'quantity':<14}{'value':>12}  {'68% interval':<26}unit"
    lines.append(header)
    lines.append("-" * len(header))
    for key, label, unit in list(rows) + list(extra_rows):
        if key not in result:
            continue
        lines.append(f"{label:<14}{format_number(result[key]):>12}  {interval_text(result, key):<26}{unit}")
    notes = result.get("notes") or []
    if notes:
        lines.append("")
        lines.extend(f"note: {n}" for n in notes)
    return "\n".join(lines)
