"""Text cells that a spreadsheet would run as a formula are written with a leading quote.

A cell beginning with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return is read by
common spreadsheet programs as a formula (CSV or formula injection); the usual advice,
followed here, is to prefix such text with a single quote, which spreadsheets show as
plain text (common practice, e.g. the OWASP note on CSV injection). Numbers are never
changed: a cell whose text is a number (``-1.5``, ``+3e4``) is left as it is.
"""

from __future__ import annotations

from typing import Any

#: First characters that make a spreadsheet evaluate a cell.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def spreadsheet_safe(value: Any) -> Any:
    """``value`` unchanged, or a text cell that would start a formula prefixed with ``'``.

    Examples
    --------
    >>> spreadsheet_safe("=HYPERLINK(\\"http://x\\")")
    '\\'=HYPERLINK("http://x")'
    >>> spreadsheet_safe("-1.5"), spreadsheet_safe(-1.5), spreadsheet_safe("ann")
    ('-1.5', -1.5, 'ann')
    """
    if not isinstance(value, str) or not value.startswith(FORMULA_STARTS):
        return value
    try:
        float(value)
        return value  # a number written as text: a spreadsheet reads it as that number
    except ValueError:
        return "'" + value


def safe_table_text(table) -> None:
    """Neutralise every text column of an astropy table in place (numeric columns untouched)."""
    import numpy as np

    for name in table.colnames:
        col = table[name]
        if getattr(col, "dtype", None) is not None and col.dtype.kind in "US" and len(col):
            cells = [spreadsheet_safe(str(v)) for v in col]
            if any(c != str(v) for c, v in zip(cells, col)):
                table[name] = np.array(cells, dtype=str)

