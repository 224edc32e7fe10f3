"""Where the columns of a FITS binary table lie in the file, so that blocks of rows are read as memory-mapped
views without astropy building its column objects for every read (about 3 ms a file, more with many columns).

astropy finds the layout once (``fits.open`` with its header parsing, the table's record dtype
``BinTableHDU.columns.dtype`` with each field's byte offset, and ``HDUList.fileinfo`` for where the data
start); the blocks are then plain numpy views of the memory-mapped bytes (big-endian, as FITS stores them).
A table that is not read plainly (compressed file, ASCII table, a compressed image, a needed column scaled
by TSCALn / TZEROn, of several elements, logical or not numeric) gets no layout, and astropy reads it.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np


@dataclass(frozen=True)
class FitsTableLayout:
    """The first binary table of a file: ``names`` of all its columns, and ``plain`` (name, byte offset in
    the row, numpy dtype) of the columns that are single unscaled numbers."""

    data_offset: int
    row_bytes: int
    n_rows: int
    names: tuple[str, ...]
    plain: tuple[tuple[str, int, str], ...]

    def columns(self, path, names) -> dict[str, np.ndarray] | None:
        """Memory-mapped views of the named columns (None if one of them is not plain)."""
        where = {name: (offset, dtype) for name, offset, dtype in self.plain}
        if not all(name in where for name in names):
            return None
        if self.n_rows == 0:
            return {name: np.zeros(0, where[name][1]) for name in names}
        raw = np.memmap(path, dtype=np.uint8, mode="r", offset=self.data_offset, shape=(self.n_rows, self.row_bytes))
        out = {}
        for name in names:
            offset, dtype = where[name]
            out[name] = raw[:, offset:offset + np.dtype(dtype).itemsize].view(dtype)[:, 0]
        return out


def fits_table_layout(path: Path) -> FitsTableLayout | None:
    """The layout of the first binary table of an uncompressed FITS file, or None (astropy reads it)."""
    if path.suffix.lower() == ".gz":
        return None
    try:
        from astropy.io import fits

        with warnings.catch_warnings(), fits.open(path, memmap=True, lazy_load_hdus=True) as hdul:
            warnings.simplefilter("ignore")
            for index, hdu in enumerate(hdul):
                if type(hdu) is fits.BinTableHDU:
                    return _layout(hdu, int(hdul.fileinfo(index)["datLoc"]), path.stat().st_size)
                if not isinstance(hdu, (fits.PrimaryHDU, fits.ImageHDU)) or isinstance(hdu, fits.GroupsHDU):
                    return None
    except Exception:  # EOF, a damaged header: astropy reads the file and says what is wrong
        return None
    return None


def _layout(hdu, data_offset: int, file_bytes: int) -> FitsTableLayout | None:
    """Plain columns: one unscaled number (astropy's raw field dtype is numeric, not logical). astropy gives
    the fields' offsets and types in native byte order; the file's bytes are big-endian (FITS 4.0, 7.3.3)."""
    record = hdu.columns.dtype
    plain = []
    for col in hdu.columns:
        dtype, offset = record.fields[col.name][:2]
        if (dtype.kind in "uif" and dtype.shape == () and col.format.format != "L"
                and col.bscale in (None, 1) and col.bzero in (None, 0)):
            plain.append((col.name, int(offset), dtype.newbyteorder(">").str))  # FITS stores big-endian
    n_rows, row_bytes = int(hdu.header["NAXIS2"]), int(hdu.header["NAXIS1"])
    names = tuple(hdu.columns.names)
    if record.itemsize != row_bytes or len(set(names)) != len(names) or data_offset + row_bytes * n_rows > file_bytes:
        return None  # astropy says what is wrong (a truncated file, ...)
    return FitsTableLayout(data_offset, row_bytes, n_rows, names, tuple(plain))
