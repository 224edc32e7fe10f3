"""The triage queue dock and the grading dialog, driven with keys and clicks (offscreen Qt)."""

import csv

import numpy as np
import pytest

pytest.importorskip("PySide6")
from astropy.io import fits  # noqa: E402
from PySide6.QtCore import Qt  # noqa: E402

from lensmass.core.estimate import estimate  # noqa: E402
from lensmass.gui.triage_panel import TriagePanel  # noqa: E402


def _fits(path, seed):
    # a small invented field: noise plus a ring, with a simple TAN WCS of 0.2"/px (FITS WCS standard)
    yy, xx = np.indices((48, 48))
    data = np.random.default_rng(seed).normal(0, 1, (48, 48)) + 20 * np.exp(-0.5 * ((np.hypot(xx - 24, yy - 24) - 7) / 1.2) ** 2)
    h = fits.Header({"CTYPE1": "RA---TAN", "CTYPE2": "DEC--TAN", "CRVAL1": 214.3, "CRVAL2": -12.6,
                     "CRPIX1": 24.5, "CRPIX2": 24.5, "CDELT1": -0.2 / 3600, "CDELT2": 0.2 / 3600})
    fits.PrimaryHDU(data.astype(np.float32), h).writeto(path)


@pytest.fixture
def queue(tmp_path):
    (tmp_path / "img").mkdir()
    for i in range(3):
        _fits(tmp_path / "img" / f"q{i}.fits", i)
    m = tmp_path / "night3.csv"
    m.write_text("id,image,z_l,z_s,notes\n"
                 "Q-00,img/q0.fits,0.31,1.20,bright ring\n"
                 "Q-01,img/q1.fits,0.45,1.60,\n"
                 "Q-02,img/q2.fits,0.22,0.95,edge of chip\n")
    return m


@pytest.fixture
def panel(window, qtbot, monkeypatch):
    monkeypatch.setenv("LENSMASS_GRADER", "tess")
    p = TriagePanel(window.model, window.canvas, window)
    qtbot.addWidget(p)
    p.show()
    return p


def test_keys_grade_flag_note_and_measurement_are_stored(panel, queue, window, qtbot):
    assert panel.open_queue(queue)
    assert panel.candidate_ids() == ["Q-00", "Q-01", "Q-02"]
    assert window.model.image.path.endswith("q0.fits") and window.model.texts["z_l"] == "0.31"
    tree = panel.tree
    tree.setFocus()
    qtbot.keyClick(tree, "2")
    qtbot.keyClick(tree, "f")
    qtbot.keyClick(tree, "n")
    assert panel.note_edit.hasFocus()
    qtbot.keyClicks(panel.note_edit, "arc to the north-east")
    qtbot.keyClick(panel.note_edit, Qt.Key_Return)
    # the window measured this candidate: its result is stored when the grader moves on
    window.model.set_result(0, estimate(1.4, 0.31, 1.2, samples=200, theta_e_err=0.05), None)
    qtbot.keyClick(tree, ".")
    assert panel.current_id == "Q-01" and window.model.image.path.endswith("q1.fits")
    qtbot.keyClick(tree, "0")
    qtbot.keyClick(tree, ",")
    assert panel.current_id == "Q-00"
    store = panel.store
    hist = store.history("Q-00")
    assert [(r["grade"], r["flagged"], r["note"]) for r in hist] == [
        (2, False, ""), (2, True, ""), (2, True, "arc to the north-east")]  # history kept, one row per action
    assert {r["grader"] for r in hist} == {"tess"}
    assert store.measurements("Q-00")[0]["result"]["mass_einstein_msun"] == pytest.approx(
        estimate(1.4, 0.31, 1.2)["mass_einstein_msun"])
    assert "stored by tess: M(<theta_E) = " in panel.status.text()  # revisiting shows the stored result
    cells = [tree.topLevelItem(0).text(c) for c in range(4)]
    assert cells[1] == "2 counter-imaged" and "measured" in cells[3] and "flagged" in cells[3]


def test_second_grader_consensus_disputed_filter_and_export(panel, queue, qtbot, tmp_path):
    panel.open_queue(queue)
    panel.tree.setFocus()
    qtbot.keyClick(panel.tree, "3")
    panel.store.add_grade("Q-00", 1, grader="uma")  # a colleague on another machine
    panel.store.add_grade("Q-01", 2, grader="uma")
    panel.refresh()
    assert panel.tree.topLevelItem(0).text(2) == "2.00 +- 1.00 (2)"  # mean of 3 and 1, population sd 1
    panel.filter_box.setCurrentIndex(list(panel.filter_box.itemData(i) for i in range(4)).index("disputed"))
    assert panel.candidate_ids() == ["Q-00"]
    panel.filter_box.setCurrentIndex(1)  # not graded by me
    assert panel.candidate_ids() == ["Q-01", "Q-02"]
    (tmp_path / "out").mkdir()  # exports make no folders (issue 15)
    cons, meas = panel.export(tmp_path / "out" / "consensus.ecsv")
    from astropy.table import Table

    t = Table.read(cons)
    assert list(t["candidate"]) == ["Q-00", "Q-01"] and t["n_graders"][0] == 2 and meas.exists()


def test_bad_queue_is_one_sentence_and_keeps_the_open_queue(panel, queue, tmp_path):
    panel.open_queue(queue)
    assert not panel.open_queue(tmp_path / "nothing.csv")
    assert "does not exist" in panel.status.text()
    assert panel.candidate_ids() == ["Q-00", "Q-01", "Q-02"]


def test_grading_dialog(panel, qtbot, tmp_path):
    from lensmass.core.grading import expected_quantities
    from lensmass.core.cosmology import resolve_cosmology

    good = expected_quantities(1.2, 0.3, 1.1, resolve_cosmology(h0=70, om0=0.3))
    r_e = float(good["r_e_kpc"])
    (tmp_path / "lab.csv").write_text("student,theta_e_arcsec,z_l,z_s,r_e_kpc\n"
                                      f"ana,1.2,0.3,1.1,{r_e:.5g}\nbo,1.2,0.3,1.1,{2 * r_e:.5g}\n")
    dlg = panel.open_grading_dialog()
    qtbot.addWidget(dlg)
    dlg.path_edit.setText(str(tmp_path / "lab.csv"))
    dlg.custom.setText("70, 0.3")
    qtbot.mouseClick(dlg.grade_button, Qt.LeftButton)
    assert dlg.table.rowCount() == 2
    verdicts = {dlg.table.item(i, 0).text(): dlg.table.item(i, 5).text() for i in range(2)}
    assert verdicts == {"ana": "pass", "bo": "fail"}
    assert "diameter" in dlg.table.item(1, 6).text() and "2 students" in dlg.summary.text()
    assert "most common mistake (1 student): used the ring's diameter" in dlg.summary.text()
    assert dlg.summary.height() >= dlg.summary.heightForWidth(dlg.summary.width())  # the whole sentence shows
    report, page = dlg.save(tmp_path / "lab-report.csv")
    with open(report, newline="") as fh:
        assert [r["verdict"] for r in csv.DictReader(fh)] == ["pass", "fail"]
    assert page.read_text().startswith("<!DOCTYPE html>")


def test_panel_is_registered_in_the_window(make_window, qtbot):
    w = make_window(load_panels=True)
    # the window may add its panels just after the first paint
    qtbot.waitUntil(lambda: any(isinstance(p, TriagePanel) for p in w.panels), timeout=10000)


def test_unreachable_team_server_keeps_grades_locally_and_says_so(panel, queue, qtbot):
    pytest.importorskip("psycopg")
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]  # closed again: nothing listens there
    assert panel.open_queue(queue, store=f"postgresql://tess@127.0.0.1:{port}/team")
    panel.tree.setFocus()
    qtbot.keyClick(panel.tree, "1")
    assert "cannot be reached" in panel.status.text() and "will be sent" in panel.status.text()
    assert panel.store.pending() == 1
    assert queue.with_name("night3.grades-spool.sqlite").exists()
