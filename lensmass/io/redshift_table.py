"""Read a source-redshift distribution table (columns z and weight)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from lensmass.core.errors import LensInputError


def read_redshift_table(path: str | Path) -> tuple[np.ndarray, np.ndarray]:
    """Read ``z`` and ``weight`` columns from a CSV/ECSV/FITS table.

    Returns float arrays; raises :class:`LensInputError` with one sentence on a
    missing file, unreadable table or missing columns.
    """
    from astropy.table import Table

    path = Path(path)
    if path.is_dir():
        raise LensInputError(f"'{path}' is a folder, not a redshift table: give the table file itself (`z_s_distribution`).")
    if path.is_file() and path.stat().st_size == 0:
        raise LensInputError(f"Redshift table '{path}' is empty: it needs a header 'z,weight' and one row per redshift.")
    if not path.is_file():
        raise LensInputError(f"Redshift table '{path}' does not exist: check the path of the source redshift table (`z_s_distribution`).")
    try:
        fmt = None
        if path.suffix.lower() in (".csv", ".txt", ".dat"):
            fmt = "ascii.csv" if path.suffix.lower() == ".csv" else "ascii"
        table = Table.read(path, format=fmt) if fmt else Table.read(path)
    except Exception as exc:  # astropy raises many kinds here
        raise LensInputError(f"Cannot read redshift table '{path}' ({type(exc).__name__}): it should be CSV or ECSV with columns z and weight.") from None
    names = {n.lower(): n for n in table.colnames}
    missing = [c for c in ("z", "weight") if c not in names]
    if missing:
        raise LensInputError(
            f"Redshift table '{path}' lacks column(s) {', '.join(missing)}; it has {len(table.colnames)} other "
            "column(s): name them z and weight."
        )
    try:
        z = np.asarray(table[names["z"]], dtype=float)
        w = np.asarray(table[names["weight"]], dtype=float)
    except (TypeError, ValueError):
        raise LensInputError(f"Redshift table '{path}' has non-numeric z or weight values: fix those rows.") from None
    return z, w
