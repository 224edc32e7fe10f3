"""lensmass grade: a crafted class, the report columns, verdicts, diagnoses and the HTML summary."""

import csv

import numpy as np
import pytest
import astropy.units as u
from astropy.constants import G, c
from astropy.cosmology import FlatLambdaCDM

from lensmass.cli import main

COSMO = FlatLambdaCDM(H0=70, Om0=0.3)
THETA, ZL, ZS = 1.5, 0.35, 1.4


def right():
    # Narayan & Bartelmann (1996) formulas with astropy distances (Hogg 1999) and constants.
    d_l = COSMO.angular_diameter_distance(ZL)
    d_s = COSMO.angular_diameter_distance(ZS)
    d_ls = COSMO.angular_diameter_distance(ZL, ZS)
    theta = np.deg2rad(THETA / 3600)
    mass = (c**2 / (4 * G) * d_l * d_s / d_ls * theta**2).to_value(u.Msun)
    r_e = (d_l * theta).to_value(u.kpc)
    sigma = (c * np.sqrt(theta * d_s / (4 * np.pi * d_ls))).to_value(u.km / u.s)
    return mass, r_e, sigma, d_s.to_value(u.Mpc)


def write_class(path):
    mass, r_e, sigma, d_s = right()
    rows = [
        "student,theta_e_arcsec,z_l,z_s,mass_einstein_msun,r_e_kpc,sis_sigma_v_kms,d_ls_mpc",
        f"ada,{THETA},{ZL},{ZS},{mass:.6g},{r_e:.6g},{sigma:.6g},",
        f"bo,{THETA},{ZL},{ZS},{4 * mass:.6g},{2 * r_e:.6g},,",  # used the ring's diameter
        f"cy,{THETA},{ZL},{ZS},,,,{d_s:.6g}",  # D_s for D_ls
        f"dee,{THETA},{ZS},{ZL},{mass:.6g},,,",  # lens inputs swapped: cannot be graded
        f"eli,{THETA},{ZL},{ZS},lots,,,",  # not a number
    ]
    path.write_text("\n".join(rows) + "\n")


def test_grade_class_report_and_summary(tmp_path, capsys):
    write_class(tmp_path / "answers.csv")
    out = tmp_path / "report.csv"
    status = main(["grade", str(tmp_path / "answers.csv"), "--out", str(out), "--h0", "70", "--om0", "0.3"])
    assert status == 0
    with open(out, newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert list(rows[0]) == ["student", "quantity", "submitted", "expected", "relative_error", "verdict", "diagnosis"]
    by = {(r["student"], r["quantity"]): r for r in rows}
    for q in ("mass_einstein_msun", "r_e_kpc", "sis_sigma_v_kms"):
        assert by[("ada", q)]["verdict"] == "pass" and by[("ada", q)]["diagnosis"] == ""
    assert float(by[("ada", "mass_einstein_msun")]["expected"]) == pytest.approx(right()[0], rel=1e-6)
    assert by[("bo", "r_e_kpc")]["verdict"] == "fail" and "diameter" in by[("bo", "r_e_kpc")]["diagnosis"]
    assert "D_s where D_ls" in by[("cy", "d_ls_mpc")]["diagnosis"]
    assert by[("dee", "mass_einstein_msun")]["verdict"] == "fail"
    assert "behind the lens" in by[("dee", "mass_einstein_msun")]["diagnosis"]
    assert by[("eli", "mass_einstein_msun")]["submitted"] == "lots"
    assert "not a number" in by[("eli", "mass_einstein_msun")]["diagnosis"]
    page = (tmp_path / "report.html").read_text()
    assert "used the ring&#x27;s diameter as the Einstein radius" in page and "5 students" in page
    # mistakes are counted by students: bo's two answers with the diameter make one student (issue 16)
    out = capsys.readouterr().out
    # answers: ada 3, bo 2, cy 1, dee 1, eli 1; blank cells: 4 quantities x 5 students - 8 = 12
    assert "5 students, 8 answers: 3 pass, 5 fail, 12 missing" in out
    assert "most common mistakes (1 student each): used D_s where D_ls belongs; used the ring's diameter" in out


def test_missing_columns_is_one_sentence(tmp_path, capsys):
    (tmp_path / "a.csv").write_text("student,theta_e_arcsec\nada,1.0\n")
    assert main(["grade", str(tmp_path / "a.csv"), "--out", str(tmp_path / "r.csv")]) == 2
    err = capsys.readouterr().err.strip()
    assert "lacks column(s) z_l, z_s" in err and "\n" not in err
    assert not (tmp_path / "r.csv").exists()
