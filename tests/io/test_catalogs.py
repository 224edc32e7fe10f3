"""Reading shape catalogues (lensmass.io.catalogs)."""

import numpy as np
import pytest
from astropy.table import Table

from lensmass.core.errors import LensInputError
from lensmass.io.catalogs import (
    guess_columns,
    parse_column_map,
    preview_catalog,
    read_shear_catalog,
    write_profile_ecsv,
)


def _table(n=20):
    rng = np.random.default_rng(0)
    return Table({"RA": rng.uniform(10, 11, n), "DEC": rng.uniform(5, 6, n), "G1": rng.normal(0, 0.2, n),
                  "G2": rng.normal(0, 0.2, n), "W": np.ones(n), "ZPHOT": rng.uniform(0.5, 2, n)})


@pytest.mark.parametrize("suffix,fmt", [(".fits", "fits"), (".csv", "ascii.csv"), (".ecsv", "ascii.ecsv"),
                                        (".parquet", "parquet")])
def test_read_each_format(tmp_path, suffix, fmt):
    t = _table()
    path = tmp_path / f"cat{suffix}"
    t.write(path, format=fmt)
    cat = read_shear_catalog(path, "ra=RA,dec=DEC,e1=G1,e2=G2,weight=W,z=ZPHOT")
    np.testing.assert_allclose(cat.e1, t["G1"])
    np.testing.assert_allclose(cat.z, t["ZPHOT"])
    assert cat.n_rows == 20


def test_usual_names_are_guessed_and_flips_applied(tmp_path):
    t = _table()
    path = tmp_path / "cat.fits"
    t.write(path)
    cat = read_shear_catalog(path, flip_e2=True)
    assert cat.columns == {"ra": "RA", "dec": "DEC", "e1": "G1", "e2": "G2", "weight": "W", "z": "ZPHOT"}
    np.testing.assert_allclose(cat.e2, -np.asarray(t["G2"]))
    assert cat.flips == ("e2",)
    assert guess_columns(["ra", "Dec", "e1"]) == {"ra": "ra", "dec": "Dec", "e1": "e1"}


def test_missing_column_names_it_and_lists_present(tmp_path):
    t = _table()
    path = tmp_path / "cat.csv"
    t.write(path)
    with pytest.raises(LensInputError) as info:
        read_shear_catalog(path, "e1=E1")
    msg = str(info.value)
    assert "'E1'" in msg and "RA, DEC, G1, G2, W, ZPHOT" in msg
    t.remove_column("G2")
    t.write(path, overwrite=True)
    with pytest.raises(LensInputError, match="no column for e2: map one .`columns`, role e2."):
        read_shear_catalog(path)


def test_bad_files_give_one_sentence(tmp_path):
    broken = tmp_path / "broken.fits"
    broken.write_bytes(b"SIMPLE  =                    T" + b" " * 50)
    with pytest.raises(LensInputError, match="Cannot read catalogue 'broken.fits'"):
        read_shear_catalog(broken)
    with pytest.raises(LensInputError, match="does not exist"):
        read_shear_catalog(tmp_path / "nothing.fits")
    with pytest.raises(LensInputError, match="Cannot tell the format"):
        read_shear_catalog(tmp_path / "cat.xyz")
    text = tmp_path / "words.csv"
    text.write_text("ra,dec,e1,e2\n1,2,abc,0.1\n3,4,def,0.2\n")
    with pytest.raises(LensInputError, match="not numeric"):
        read_shear_catalog(text)
    empty = tmp_path / "empty.csv"
    empty.write_text("ra,dec,e1,e2\n")
    with pytest.raises(LensInputError, match="no rows"):
        read_shear_catalog(empty)


def test_masked_and_nan_values_become_nan(tmp_path):
    path = tmp_path / "gaps.csv"
    path.write_text("ra,dec,e1,e2\n1,2,,0.1\n3,4,nan,0.2\n5,6,0.1,0.1\n")
    cat = read_shear_catalog(path)
    assert np.isnan(cat.e1[:2]).all() and cat.e1[2] == pytest.approx(0.1)
    assert cat.z is None and np.all(cat.weight == 1)


def test_column_map_parsing_messages():
    assert parse_column_map("ra=RA, dec = DEC") == {"ra": "RA", "dec": "DEC"}
    with pytest.raises(LensInputError, match="ROLE=COLUMN"):
        parse_column_map("ra")
    with pytest.raises(LensInputError, match="Unknown column role 'mag'"):
        parse_column_map("mag=R")


def test_preview_and_profile_writer(tmp_path):
    path = tmp_path / "cat.ecsv"
    _table().write(path)
    names, rows = preview_catalog(path, 3)
    assert names[:2] == ["RA", "DEC"] and len(rows) == 3 and len(rows[0]) == 6
    out = tmp_path / "p.ecsv"
    write_profile_ecsv(out, {"profile": [{"r_mean_arcsec": 1.0, "g_t": 0.1}, {"r_mean_arcsec": 2.0, "g_t": 0.05}],
                             "cosmology": "Planck18", "models": {"g_t": "x"}})
    t = Table.read(out)
    assert t["r_mean_arcsec"].unit == "arcsec" and t.meta["cosmology"] == "Planck18"
