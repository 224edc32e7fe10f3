"""Where the columns of a FITS binary table lie in the file, so that blocks of rows are read as memory-mapped
views without astropy building its column objects for every read (about 3 ms a file, more with many columns).

The layout follows the FITS Standard 4.0 (section 7.3, binary table extension): the table's data start right
after its header; each row is NAXIS1 bytes, the fields in TFORM order, each ``r`` elements of the type's
width (bits ``X`` take ``ceil(r / 8)`` bytes; ``P`` / ``Q`` descriptors 8 / 16 bytes); values are
big-endian. Headers are parsed by astropy (``Header.fromfile``); only the arithmetic of the offsets is here.
A table this module does not read plainly (compressed file, ASCII table, random groups, a needed column
scaled by TSCALn / TZEROn, of several elements, or not numeric) gets no layout, and astropy reads it.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

_WIDTH = {"L": 1, "B": 1, "I": 2, "J": 4, "K": 8, "A": 1, "E": 4, "D": 8, "C": 8, "M": 16, "P": 8, "Q": 16}
_PLAIN = {"B": "u1", "I": ">i2", "J": ">i4", "K": ">i8", "E": ">f4", "D": ">f8"}
_TFORM = re.compile(r"\s*(\d*)([LXBIJKAEDCMPQ])")
_BLOCK = 2880


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
        from astropy.io.fits import Header

        with warnings.catch_warnings(), open(path, "rb") as f:
            warnings.simplefilter("ignore")
            while True:
                header = Header.fromfile(f)
                start = f.tell()
                if header.get("XTENSION") == "BINTABLE":
                    return _layout(header, start, path.stat().st_size)
                if header.get("XTENSION") not in (None, "IMAGE") or header.get("GROUPS"):
                    return None
                f.seek(start + _padded(_data_bytes(header)))
    except Exception:  # EOF, a damaged header: astropy reads the file and says what is wrong
        return None


def _data_bytes(header) -> int:
    """Bytes of an HDU's data: |BITPIX| / 8 x GCOUNT x (PCOUNT + NAXIS1 x ... x NAXISn) (FITS 4.0, eq. 2)."""
    naxis = int(header.get("NAXIS", 0))
    if naxis == 0:
        return 0
    n = int(np.prod([int(header[f"NAXIS{k}"]) for k in range(1, naxis + 1)]))
    return abs(int(header["BITPIX"])) // 8 * int(header.get("GCOUNT", 1)) * (int(header.get("PCOUNT", 0)) + n)


def _padded(n: int) -> int:
    return -(-n // _BLOCK) * _BLOCK


def _layout(header, data_offset: int, file_bytes: int) -> FitsTableLayout | None:
    names, plain, offset = [], [], 0
    for k in range(1, int(header["TFIELDS"]) + 1):
        match = _TFORM.match(str(header.get(f"TFORM{k}", "")))
        name = header.get(f"TTYPE{k}")
        if match is None or not isinstance(name, str) or not name:
            return None
        repeat = int(match.group(1) or 1)
        code = match.group(2)
        scaled = f"TSCAL{k}" in header or f"TZERO{k}" in header
        if code in _PLAIN and repeat == 1 and not scaled:
            plain.append((name, offset, _PLAIN[code]))
        names.append(name)
        offset += -(-repeat // 8) if code == "X" else repeat * _WIDTH[code]
    n_rows = int(header["NAXIS2"])
    if offset != int(header["NAXIS1"]) or len(set(names)) != len(names) or data_offset + offset * n_rows > file_bytes:
        return None  # astropy says what is wrong (a truncated file, ...)
    return FitsTableLayout(data_offset, offset, n_rows, tuple(names), tuple(plain))
