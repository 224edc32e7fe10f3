"""The FITS binary-table layout (lensmass.io.fits_layout) finds the same column values astropy reads.

Reference: astropy.io.fits (``HDUList[...].data.field``) on tables with every TFORM type of the FITS
Standard 4.0 (section 7.3.1, table 18: L, X, B, I, J, K, A, E, D, C, M, P), scaled columns (TZEROn), vector
columns, an image before the table; streamed analyses of such files equal the in-memory route.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.io import fits

from lensmass.io.catalog_stream import CatalogFiles, read_partition
from lensmass.io.fits_layout import fits_table_layout

N = 257


def _mixed_table(path, *, image_first=False, rows=N):
    rng = np.random.default_rng(4)
    cols = [
        fits.Column("FLAG", "L", array=rng.random(rows) > 0.5),
        fits.Column("BITS", "11X", array=rng.random((rows, 11)) > 0.5),
        fits.Column("NAME", "7A", array=np.array([f"g{i}" for i in range(rows)])),
        fits.Column("RA", "D", array=rng.uniform(140, 142, rows)),
        fits.Column("BYTE", "B", array=rng.integers(0, 255, rows).astype(np.uint8)),
        fits.Column("SHORT", "I", array=rng.integers(-300, 300, rows).astype(np.int16)),
        fits.Column("USHORT", "I", bzero=32768, array=rng.integers(0, 60000, rows).astype(np.uint16)),
        fits.Column("VEC", "3E", array=rng.random((rows, 3)).astype(np.float32)),
        fits.Column("DEC", "D", array=rng.uniform(17, 19, rows)),
        fits.Column("CPLX", "C", array=rng.random(rows) + 1j),
        fits.Column("DCPLX", "M", array=rng.random(rows) + 2j),
        fits.Column("VAR", "PE()", array=[rng.random(i % 4).astype(np.float32) for i in range(rows)]),
        fits.Column("E1", "E", array=rng.uniform(-0.3, 0.3, rows).astype(np.float32)),
        fits.Column("E2", "E", array=rng.uniform(-0.3, 0.3, rows).astype(np.float32)),
        fits.Column("ID", "K", array=np.arange(rows, dtype=np.int64)),
        fits.Column("COUNT", "J", array=rng.integers(0, 9, rows).astype(np.int32)),
    ]
    table = fits.BinTableHDU.from_columns(cols)
    first = fits.PrimaryHDU(np.ones((3, 5), np.float32)) if image_first else fits.PrimaryHDU()
    hdus = [first, fits.ImageHDU(np.zeros((4, 6), np.int16))] if image_first else [first]
    fits.HDUList([*hdus, table]).writeto(path)


@pytest.mark.parametrize("image_first", [False, True])
def test_plain_columns_equal_astropy_and_others_are_left_to_it(tmp_path, image_first):
    path = tmp_path / "mixed.fits"
    _mixed_table(path, image_first=image_first)
    layout = fits_table_layout(path)
    with fits.open(path) as hdul:
        data = hdul[-1].data
        assert list(layout.names) == list(hdul[-1].columns.names)
        plain = [name for name, _, _ in layout.plain]
        assert plain == ["RA", "BYTE", "SHORT", "DEC", "E1", "E2", "ID", "COUNT"]  # single, unscaled numbers
        views = layout.columns(path, plain)
        for name in plain:
            assert views[name].dtype == data.field(name).dtype
            np.testing.assert_array_equal(views[name], data.field(name))
    for other in ("USHORT", "VEC", "FLAG", "NAME", "CPLX"):  # astropy reads these (scaled, vectors, ...)
        assert layout.columns(path, ["RA", other]) is None


def test_no_layout_for_compressed_truncated_or_ascii_tables(tmp_path):
    path = tmp_path / "mixed.fits"
    _mixed_table(path)
    cut = tmp_path / "cut.fits"
    cut.write_bytes(path.read_bytes()[:5760 + 2880])  # the header and a part of the rows
    ascii_table = tmp_path / "ascii.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.TableHDU.from_columns(
        [fits.Column("RA", "E15.7", ascii="E15.7", array=np.arange(3.0))])]).writeto(ascii_table)
    image_only = tmp_path / "image.fits"
    fits.PrimaryHDU(np.zeros((2, 2))).writeto(image_only)
    for p in (tmp_path / "x.fits.gz", cut, ascii_table, image_only, tmp_path / "absent.fits"):
        assert fits_table_layout(p) is None


def test_streamed_blocks_from_the_layout_equal_astropy_blocks(tmp_path):
    path = tmp_path / "mixed.fits"
    _mixed_table(path, image_first=True, rows=5000)
    files = CatalogFiles(path, "ra=RA,dec=DEC,e1=E1,e2=E2,weight=COUNT,z=SHORT")
    part = files.partitions[0]
    assert part.fits_layout is not None
    fast = list(read_partition(part, block_rows=1024))
    slow = list(read_partition(type(part)(**{**part.__dict__, "fits_layout": None}), block_rows=1024))
    assert len(fast) == len(slow) == 5
    for a, b in zip(fast, slow):
        assert a.first_row == b.first_row
        for key in ("ra_deg", "dec_deg", "e1", "e2", "weight", "z"):
            np.testing.assert_array_equal(getattr(a, key), getattr(b, key))


def test_empty_table(tmp_path):
    path = tmp_path / "empty.fits"
    _mixed_table(path, rows=0)
    layout = fits_table_layout(path)
    assert layout.n_rows == 0 and layout.columns(path, ["RA"])["RA"].size == 0
