"""Catalogues of points (lenses, random points): RA, Dec, redshift and an optional weight per row, read
whole (they are small next to a shape catalogue) with only the needed columns.

Roles are matched as for shape catalogues (:func:`lensmass.io.catalogs.parse_column_map` and the
usual spellings of :data:`lensmass.io.catalogs.USUAL_NAMES`).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.io.catalogs import USUAL_NAMES, catalog_format, parse_column_map

POINT_ROLES = ("ra", "dec", "z", "weight")


def read_point_catalog(path, columns=None, *, what: str = "lens") -> dict[str, np.ndarray | None]:
    """``{"ra", "dec", "z", "weight"}`` float arrays of a FITS, CSV, ECSV or Parquet table (weight None
    when absent); ``what`` names the catalogue in messages ("lens", "random")."""
    path = Path(path)
    if not path.is_file():
        raise LensInputError(f"The {what} catalogue '{path}' does not exist: check the path.")
    fmt = catalog_format(path)
    mapping = parse_column_map(columns) if isinstance(columns, str) or columns is None else dict(columns)
    unknown = set(mapping) - set(POINT_ROLES)
    if unknown:
        raise LensInputError(f"Unknown role '{min(unknown)}' for the {what} catalogue: use ra, dec, z, weight.")
    try:
        names = _column_names(path, fmt)
        lower = {n.lower(): n for n in names}
        chosen: dict[str, str] = {}
        for role in POINT_ROLES:
            if role in mapping:
                name = mapping[role] if mapping[role] in names else lower.get(mapping[role].lower())
                if name is None:
                    raise LensInputError(f"The {what} catalogue has no column '{mapping[role]}' (mapped to {role}); "
                                         f"its columns are: {', '.join(names[:30])}.")
                chosen[role] = name
            else:
                for guess in USUAL_NAMES["z" if role == "z" else role] + (("z_l", "zl", "z_lens") if role == "z" else ()):
                    if guess in lower:
                        chosen[role] = lower[guess]
                        break
        for role in ("ra", "dec", "z"):
            if role not in chosen:
                raise LensInputError(f"The {what} catalogue has no column for {role}: map one with "
                                     f"--{what}-columns {role}=NAME (its columns are: {', '.join(names[:30])}).")
        data = _read_columns(path, fmt, list(dict.fromkeys(chosen.values())))
    except LensInputError:
        raise
    except MemoryError:
        raise LensInputError(f"The {what} catalogue '{path.name}' does not fit in memory: split it into parts "
                             "and stack each, or give fewer rows.") from None
    except Exception as exc:
        raise LensInputError(f"Cannot read the {what} catalogue '{path.name}' as {fmt.upper()} "
                             f"({type(exc).__name__}): check that the file is complete and in that format.") from None
    out: dict[str, np.ndarray | None] = {"weight": None}
    for role, name in chosen.items():
        try:
            out[role] = np.asarray(data[name], dtype=float)
        except (TypeError, ValueError):
            raise LensInputError(f"Column '{name}' ({role}) of the {what} catalogue is not numeric.") from None
    if out["ra"].size == 0:
        raise LensInputError(f"The {what} catalogue '{path.name}' has no rows.")
    return out


def _column_names(path: Path, fmt: str) -> list[str]:
    if fmt == "parquet":
        import pyarrow.parquet as pq

        return list(pq.ParquetFile(path).schema_arrow.names)
    from astropy.table import Table

    return list(Table.read(path, format=fmt).colnames) if fmt != "fits" else list(
        Table.read(path, format="fits", memmap=True).colnames)


def _read_columns(path: Path, fmt: str, names: list[str]) -> dict[str, np.ndarray]:
    if fmt == "parquet":
        import pyarrow.parquet as pq

        table = pq.read_table(path, columns=names)
        return {n: table.column(n).to_numpy(zero_copy_only=False) for n in names}
    from astropy.table import Table

    table = Table.read(path, format=fmt, **({"memmap": True} if fmt == "fits" else {}))
    return {n: np.ma.filled(np.ma.asarray(table[n], dtype=float), np.nan) for n in names}
