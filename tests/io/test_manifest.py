"""Manifest reading: per-row problems never stop the other rows (CSV and ECSV)."""

import pytest

from lensmass.core.errors import LensInputError
from lensmass.io.manifest import read_manifest


def test_csv_rows_paths_and_problems(tmp_path):
    (tmp_path / "img").mkdir()
    m = tmp_path / "field.csv"
    m.write_text(
        "# invented test field\n"
        "id,image,theta_e_arcsec,theta_e_err,z_l,z_s,RA,Dec,notes\n"
        "C1,img/c1.fits,1.25,0.05,0.31,1.2,150.1,2.2,bright ring\n"
        "C2,,abc,,0.4,1.0,,,\n"
        "C3,,,,,,,,\n"
    )
    rows = read_manifest(m).rows
    assert [r.id for r in rows] == ["C1", "C2", "C3"]
    assert rows[0].image == tmp_path / "img" / "c1.fits"  # relative to the manifest's folder
    assert rows[0].ra_deg == 150.1 and rows[0].theta_e_err == 0.05 and rows[0].notes == "bright ring"
    assert rows[0].problem is None
    assert "theta_e_arcsec" in rows[1].problem and rows[1].z_l == 0.4
    assert rows[2].theta_e_arcsec is None and rows[2].problem is None


def test_ecsv_manifest(tmp_path):
    from astropy.table import Table

    t = Table({"id": ["E1", "E2"], "theta_e_arcsec": [1.0, 2.0], "z_l": [0.2, 0.3], "z_s": [0.8, 1.5]})
    t.write(tmp_path / "m.ecsv")
    rows = read_manifest(tmp_path / "m.ecsv").rows
    assert [r.theta_e_arcsec for r in rows] == [1.0, 2.0] and rows[1].z_s == 1.5


def test_folder_of_images(tmp_path):
    for name in ("b.fits", "a.png", "notes.txt"):
        (tmp_path / name).write_bytes(b"x")
    m = read_manifest(tmp_path)
    assert [r.id for r in m.rows] == ["a.png", "b.fits"]


def test_bad_manifests_are_one_sentence(tmp_path):
    with pytest.raises(LensInputError, match="does not exist"):
        read_manifest(tmp_path / "missing.csv")
    dup = tmp_path / "dup.csv"
    dup.write_text("id,z_l\nA,0.1\nA,0.2\n")
    with pytest.raises(LensInputError, match="twice"):
        read_manifest(dup)
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(LensInputError, match="holds no images"):
        read_manifest(empty)
