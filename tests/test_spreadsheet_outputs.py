"""Files meant for spreadsheets carry no live formulas, and no input file's contents leak (issue 15).

The rule checked is the usual advice on CSV (formula) injection (OWASP; common practice): a text
cell beginning with = + - @ tab or CR is prefixed with a single quote; numbers are untouched.
"""

from __future__ import annotations

import csv

import numpy as np
from astropy.table import Table

from lensmass.cli import main

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def _is_number(text) -> bool:
    try:
        float(text)
        return True
    except (TypeError, ValueError):
        return False


def _texts(table) -> list[str]:
    """Text cells of an astropy table (masked cells, which astropy shows as '--', read as empty)."""
    out = []
    for name in table.colnames:
        col = table[name]
        if col.dtype.kind in "US":
            out.extend(str(v) for v in (col.filled("") if hasattr(col, "filled") else col))
    return out


def _no_live_formula(cells) -> bool:
    return all(not (isinstance(c, str) and c.startswith(FORMULA_STARTS) and not _is_number(c)) for c in cells)


def test_grade_report_neutralises_names_and_answers(tmp_path, capsys):
    sub = tmp_path / "class.csv"
    sub.write_text('student,theta_e_arcsec,z_l,z_s,mass_einstein_msun,sis_sigma_v_kms\n'
                   '"=HYPERLINK(""http://x"",""y"")",1.5,0.35,1.4,+SUM(1),-250\n'
                   '@cmd,1.5,0.35,1.4,1e11,250\n')
    assert main(["grade", str(sub), "--out", str(tmp_path / "r.csv")]) == 0
    rows = list(csv.DictReader((tmp_path / "r.csv").open()))
    assert _no_live_formula(c for r in rows for c in r.values())
    assert {r["student"] for r in rows} == {"'=HYPERLINK(\"http://x\",\"y\")", "'@cmd"}
    assert any(_is_number(r["submitted"]) and float(r["submitted"]) == -250 for r in rows)  # stays a number
    assert any(r["submitted"] == "'+SUM(1)" for r in rows)


def test_batch_ids_and_errors_are_neutralised_and_resume_still_matches(tmp_path, capsys):
    m = tmp_path / "m.csv"
    m.write_text("id,theta_e_arcsec,z_l,z_s\n=1+2,1.2,0.3,1.1\n@bad,abc,0.3,1.1\n")
    out = tmp_path / "r.ecsv"
    assert main(["batch", str(m), "--out", str(out), "--no-progress", "--samples", "200"]) == 3
    t = Table.read(out)
    assert list(t["id"]) == ["'=1+2", "'@bad"]
    assert _no_live_formula(_texts(t))
    capsys.readouterr()
    assert main(["batch", str(m), "--out", str(out), "--no-progress", "--samples", "200", "--resume"]) == 3
    assert "1 rows already measured" in capsys.readouterr().err  # the quoted id still matches its row


def test_manifest_pointing_at_a_system_file_does_not_echo_it(tmp_path, capsys):
    m = tmp_path / "m.csv"
    m.write_text("id,points,pixel_scale_arcsec,z_l,z_s\nP,/etc/passwd,0.2,0.3,1.1\n")
    out = tmp_path / "r.ecsv"
    assert main(["batch", str(m), "--out", str(out), "--no-progress", "--samples", "200"]) == 3
    err = Table.read(out)["error"][0]
    with open("/etc/passwd") as fh:
        first_line = fh.readline().strip()
    assert err and first_line not in err and "root:" not in err


def test_triage_consensus_export_neutralises_text(tmp_path):
    from lensmass.io.store import SqliteStore, export_consensus, export_measurements

    store = SqliteStore(tmp_path / "g.sqlite", "q", grader="=evil()")
    store.add_grade("-cand", 2, note="@SUM(A1)", flagged=True)
    store.add_grade("ok", 1, note="fine", grader="+tess")
    store.add_measurement("-cand", {"theta_e_arcsec": 1.2, "notes": ["=note"]})
    for name, writer in (("c.csv", export_consensus), ("c.ecsv", export_consensus), ("m.csv", export_measurements)):
        writer(store, tmp_path / name)
        t = Table.read(tmp_path / name, format="ascii.ecsv" if name.endswith(".ecsv") else "ascii.csv")
        texts = _texts(t)
        assert texts and _no_live_formula(texts)
    c = Table.read(tmp_path / "c.csv", format="ascii.csv")
    assert "'-cand" in list(c["candidate"])
    assert sorted(np.asarray(c["mean_grade"], float)) == [1.0, 2.0]  # numeric columns untouched
    m = Table.read(tmp_path / "m.csv", format="ascii.csv")
    assert float(m["theta_e_arcsec"][0]) == 1.2
