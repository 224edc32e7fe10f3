"""Shape catalogues too large for memory: a file, several files, a glob or a partitioned Parquet folder,
read block by block with only the needed columns.

:class:`CatalogFiles` finds the files, matches the column roles once (as
:func:`lensmass.io.catalogs.resolve_columns` does for one file), and counts the rows of every
file from its metadata (Parquet footers, the FITS header) so each block knows the index of its
first row in the whole catalogue. ``total(fn)`` applies ``fn`` to every
:class:`lensmass.core.shear_sums.CatalogBlock` and adds the results: this is how the weak-lensing
engine streams in one process. :class:`CatalogPartition` is one file's share, the unit of work
that :mod:`lensmass.io.distributed` sends to a Dask worker.

Parquet is read with ``pyarrow.parquet.ParquetFile.iter_batches(columns=...)`` (no pandas);
FITS binary tables through a memory map, a slice of rows at a time (the columns found from the header alone,
:mod:`lensmass.io.fits_layout`, where they are plain numbers); CSV and ECSV files are read
whole (they are small by nature). Columns keep their stored types until the engine converts each
cache-sized piece, so memory is bounded by the block size, not the number of galaxies.
"""

from __future__ import annotations

import glob
import os
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.io.catalogs import catalog_format, parse_column_map, resolve_columns
from lensmass.io.fits_layout import FitsTableLayout, fits_table_layout

#: Rows per block read from a file (a block of 6 float64 columns is about 50 MB).
BLOCK_ROWS = 1 << 20
_PARQUET_SUFFIXES = (".parquet", ".pq")


@dataclass(frozen=True)
class CatalogPartition:
    """One file of a catalogue: where it is, how to read it, and the index of its first row."""

    path: str
    fmt: str
    n_rows: int
    first_row: int
    columns: tuple[tuple[str, str], ...]  # (role, column name)
    flips: tuple[str, ...] = ()
    fits_layout: FitsTableLayout | None = None  # where a FITS table's columns lie (read without astropy)


def expand_catalog_paths(specs) -> list[Path]:
    """Files named by one or several specs: a file, a glob pattern, or a folder of Parquet files
    (searched recursively, as partitioned writers lay them out, also when the folder is named
    ``x.parquet``; names starting with ``_`` or ``.`` are skipped)."""
    if isinstance(specs, (str, os.PathLike)):
        specs = [specs]
    files: list[Path] = []
    for spec in specs:
        text = str(spec)
        p = Path(text)
        if p.is_dir():
            found = sorted(f for f in p.rglob("*") if f.is_file() and f.suffix.lower() in _PARQUET_SUFFIXES
                           and not any(part.startswith(("_", ".")) for part in f.relative_to(p).parts))
            if not found:
                raise LensInputError(f"The folder '{p}' holds no .parquet files: point at a Parquet dataset "
                                     "folder, or name the catalogue files.")
            files.extend(found)
        elif glob.has_magic(text):
            found = sorted(Path(f) for f in glob.glob(text, recursive=True) if Path(f).is_file())
            if not found:
                raise LensInputError(f"No file matches '{text}': check the pattern (quote it so the shell "
                                     "passes it on).")
            files.extend(found)
        elif p.is_file():
            files.append(p)
        else:
            raise LensInputError(f"Catalogue '{p}' does not exist: check the path.")
    seen, unique = set(), []
    for f in files:
        key = f.resolve()
        if key not in seen:
            seen.add(key)
            unique.append(f)
    return unique


def _file_columns_and_rows(path: Path, fmt: str) -> tuple[list[str], int, FitsTableLayout | None]:
    """Column names, row count and (FITS) the table's layout from the file's metadata (the whole file only
    for CSV/ECSV)."""
    try:
        if fmt == "parquet":
            try:
                import pyarrow.parquet as pq
            except ImportError:
                raise LensInputError("Reading Parquet needs pyarrow: pip install pyarrow, or convert to FITS.") from None
            meta = pq.ParquetFile(path)
            return list(meta.schema_arrow.names), int(meta.metadata.num_rows), None
        if fmt == "fits":
            import warnings

            from astropy.io import fits

            if path.suffix.lower() != ".gz" and path.stat().st_size % 2880:  # FITS files come in 2880-byte records
                raise ValueError("truncated")
            layout = fits_table_layout(path)
            if layout is not None:
                return list(layout.names), layout.n_rows, layout
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                with fits.open(path, memmap=True) as hdul:
                    hdu = _table_hdu(hdul, path)
                    return list(hdu.columns.names), int(hdu.header["NAXIS2"]), None
        from astropy.table import Table

        table = Table.read(path, format=fmt)
        return list(table.colnames), len(table), None
    except LensInputError:
        raise
    except MemoryError:
        raise LensInputError(f"'{path.name}' does not fit in memory as a {fmt.upper()} table: convert it to "
                             "Parquet or FITS, which are read in blocks.") from None
    except Exception as exc:
        what = str(exc) if str(exc) == "truncated" else type(exc).__name__
        raise LensInputError(f"Cannot read catalogue '{path.name}' as {fmt.upper()} ({what}): "
                             "check that the file is complete and in that format.") from None


def _table_hdu(hdul, path: Path):
    for hdu in hdul:
        if getattr(hdu, "columns", None) is not None and hdu.header.get("XTENSION") in ("BINTABLE", "TABLE"):
            return hdu
    raise LensInputError(f"'{path.name}' has no table extension: a shape catalogue is a FITS binary table.")


class CatalogFiles:
    """A shape catalogue in one or more files, read a block of rows at a time.

    Parameters
    ----------
    specs : str, Path or list of them
        Files, glob patterns or Parquet folders (see :func:`expand_catalog_paths`).
    columns : dict or str, optional
        Role -> column name (``ra=RA,dec=DEC,...``); other roles are guessed as for one file.
    need_z : bool
        Require a redshift column.
    flip_e1, flip_e2 : bool
        Flip the sign of e1 or e2.
    block_rows : int
        Rows per block read.
    """

    def __init__(self, specs, columns=None, *, need_z: bool = False, flip_e1: bool = False, flip_e2: bool = False,
                 block_rows: int = BLOCK_ROWS):
        self.paths = expand_catalog_paths(specs)
        mapping = parse_column_map(columns) if isinstance(columns, str) or columns is None else dict(columns)
        self.block_rows = int(block_rows)
        self.flips = tuple(n for n, f in (("e1", flip_e1), ("e2", flip_e2)) if f)
        formats = [catalog_format(p) if p.suffix else "parquet" for p in self.paths]
        parts: list = []
        first = 0
        for path, fmt in zip(self.paths, formats):
            names, n, layout = _file_columns_and_rows(path, fmt)
            if not parts:
                self.columns = resolve_columns(names, mapping, need_z=need_z)
            missing = [name for name in self.columns.values() if name not in names]
            if missing:
                raise LensInputError(f"'{path.name}' has no column {', '.join(repr(m) for m in missing)} that the "
                                     f"first file '{self.paths[0].name}' has: all files of a catalogue need the "
                                     "same columns.")
            parts.append(CatalogPartition(str(path), fmt, n, first, tuple(self.columns.items()), self.flips, layout))
            first += n
        self.partitions = parts
        self.n_rows = first
        if self.n_rows == 0:
            raise LensInputError(f"Catalogue '{self.paths[0].name}' has no rows: it needs one row per galaxy.")

    @property
    def path(self) -> str:
        return str(self.paths[0]) if len(self.paths) == 1 else f"{len(self.paths)} files from {self.paths[0].parent}"

    def total(self, fn: Callable, progress: Callable[[float, str], None] | None = None):
        """``fn(block)`` for every block of every file, the results added (one process, in order)."""
        out = 0
        for part in self.partitions:
            out = out + partition_total(fn, part, self.block_rows)
            if progress is not None:
                progress((part.first_row + part.n_rows) / self.n_rows, f"read {Path(part.path).name}")
        return out


def partition_total(fn: Callable, part: CatalogPartition, block_rows: int = BLOCK_ROWS):
    """``fn`` of each block of one partition, added (the task a Dask worker runs)."""
    out = 0
    try:
        for block in read_partition(part, block_rows):
            out = out + fn(block)
    except MemoryError:
        raise LensInputError(
            f"Out of memory while reading '{Path(part.path).name}' ({part.n_rows:,} rows) in blocks of "
            f"{block_rows:,} rows: use fewer radial bins, or a smaller block size."
        ) from None
    if isinstance(out, int):  # a file with no rows
        out = fn(_empty_block(part))
    return out


def _empty_block(part: CatalogPartition):
    from lensmass.core.shear_sums import CatalogBlock

    roles = dict(part.columns)
    empty = np.zeros(0)
    return CatalogBlock(empty, empty, empty, empty, empty if "weight" in roles else None,
                        empty if "z" in roles else None, part.first_row)


def read_partition(part: CatalogPartition, block_rows: int = BLOCK_ROWS) -> Iterator:
    """The blocks of rows of one partition, as :class:`lensmass.core.shear_sums.CatalogBlock`."""
    from lensmass.core.shear_sums import CatalogBlock

    roles = dict(part.columns)
    names = list(dict.fromkeys(roles.values()))
    path = Path(part.path)
    first = part.first_row
    for arrays in _column_blocks(path, part.fmt, names, block_rows, part.fits_layout):
        data = {role: _numeric(arrays[name], name, role, path) for role, name in roles.items()}
        e1, e2 = data["e1"], data["e2"]
        if "e1" in part.flips:
            e1 = -e1
        if "e2" in part.flips:
            e2 = -e2
        n = int(e1.shape[0])
        yield CatalogBlock(data["ra"], data["dec"], e1, e2, data.get("weight"), data.get("z"), first)
        first += n


def _numeric(values, name: str, role: str, path: Path) -> np.ndarray:
    arr = np.asarray(values)
    if arr.ndim != 1:
        raise LensInputError(f"Column '{name}' ({role}) of '{path.name}' holds arrays per row; map a column of "
                             "single numbers.")
    if arr.dtype.kind not in "fiu":
        if arr.dtype.kind == "b":
            return arr.astype(np.float32)
        raise LensInputError(f"Column '{name}' ({role}) of '{path.name}' is not numeric: map a numeric column "
                             "(`columns`).")
    if not arr.dtype.isnative and arr.dtype.kind != "f":  # big-endian floats (FITS) stay in place: the engine
        arr = arr.astype(arr.dtype.newbyteorder("="))    # swaps their bytes as it reads them
    return arr


def _column_blocks(path: Path, fmt: str, names: list[str], block_rows: int,
                   layout: FitsTableLayout | None = None) -> Iterator[dict]:
    try:
        if fmt == "parquet":
            yield from _parquet_blocks(path, names, block_rows)
        elif fmt == "fits":
            yield from _fits_blocks(path, names, block_rows, layout)
        else:
            from astropy.table import Table

            table = Table.read(path, format=fmt)
            yield {n: np.ma.filled(np.ma.asarray(table[n], dtype=float), np.nan) if getattr(table[n], "mask", None)
                   is not None else np.asarray(table[n]) for n in names}
    except (LensInputError, MemoryError):
        raise
    except Exception as exc:
        raise LensInputError(f"Cannot read catalogue '{path.name}' as {fmt.upper()} ({type(exc).__name__}): "
                             "check that the file is complete and in that format.") from None


def _parquet_blocks(path: Path, names: list[str], block_rows: int) -> Iterator[dict]:
    import pyarrow.parquet as pq

    with pq.ParquetFile(path) as pf:
        for batch in pf.iter_batches(batch_size=block_rows, columns=names):
            out = {}
            for name in names:
                col = batch.column(name)
                if col.null_count:
                    col = col.cast("float64").fill_null(float("nan"))
                out[name] = col.to_numpy(zero_copy_only=False)
            yield out


def _fits_blocks(path: Path, names: list[str], block_rows: int, layout: FitsTableLayout | None) -> Iterator[dict]:
    columns = None if layout is None else layout.columns(path, names)
    if columns is not None:  # memory-mapped views found from the header alone
        for start in range(0, layout.n_rows, block_rows):
            yield {name: col[start:start + block_rows] for name, col in columns.items()}
        return
    from astropy.io import fits

    with fits.open(path, memmap=True) as hdul:
        hdu = _table_hdu(hdul, path)
        n = int(hdu.header["NAXIS2"])
        data = hdu.data
        columns = {name: data.field(name) for name in names}  # memory-mapped views, read as sliced
        for start in range(0, n, block_rows):
            yield {name: col[start:start + block_rows] for name, col in columns.items()}
        del data, columns
