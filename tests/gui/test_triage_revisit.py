"""Revisiting a triage candidate shows the grader's stored marks again (offscreen Qt, keys and clicks).

The ring of the small invented fields is at 7 px around (24, 24) (see tests/gui/test_triage.py). What is
checked is our own round trip: the marks clicked, stored and shown again are the same positions; the
mass is checked against Narayan & Bartelmann (1996, arXiv:astro-ph/9606001, eq. 20) with astropy
Planck18 distances (tests.gui.test_window.astropy_einstein_mass_msun).
"""

from __future__ import annotations

import math

import pytest

pytest.importorskip("PySide6")

from tests.gui.conftest import click_image, type_into, wait_for_result, wait_idle  # noqa: E402
from tests.gui.test_triage import panel, queue  # noqa: E402,F401  (fixtures)
from tests.gui.test_window import astropy_einstein_mass_msun  # noqa: E402

RING = [(24 + 7 * math.cos(a), 24 + 7 * math.sin(a)) for a in [i * math.pi / 4 for i in range(8)]]


def test_revisited_candidate_gets_its_stored_marks_back(panel, queue, window, qtbot):  # noqa: F811
    assert panel.open_queue(queue)
    window.canvas.fit_to_window()
    for x, y in RING:
        click_image(qtbot, window, x, y)
    type_into(qtbot, window, "z_s", "1.35")  # the grader's own z_s, not the manifest's 1.20
    result = wait_for_result(qtbot, window)
    wait_idle(qtbot, window)
    clicked = list(window.model.active_system.points)
    assert len(clicked) == 8
    assert result["mass_einstein_msun"] == pytest.approx(
        astropy_einstein_mass_msun(result["theta_e_arcsec"], 0.31, 1.35), rel=2e-3)
    panel.tree.setFocus()
    qtbot.keyClick(panel.tree, "m")  # store the measurement (and the marks) now
    stored = panel.store.measurements("Q-00")
    assert len(stored) == 1 and stored[0]["session_state"]["arcs"][0]["points"] == [list(p) for p in clicked]
    assert "session_state" not in stored[0]["result"]  # the result stays the estimate mapping

    qtbot.keyClick(panel.tree, ".")
    assert panel.current_id == "Q-01" and window.model.active_system.points == []
    qtbot.keyClick(panel.tree, ",")
    assert panel.current_id == "Q-00" and window.model.image.path.endswith("q0.fits")
    assert window.model.active_system.points == clicked  # the same marks on the image again
    assert window.model.texts["z_s"] == "1.35" and window.model.texts["z_l"] == "0.31"
    assert window.undo_stack.count() == 0  # a fresh undo stack: the visit starts from the stored marks
    assert len(window.canvas.marks) == 8
    assert "stored marks are back" in panel.status.text()
    again = wait_for_result(qtbot, window)
    assert again["mass_einstein_msun"] == pytest.approx(result["mass_einstein_msun"], rel=1e-9)
    wait_idle(qtbot, window)
    qtbot.keyClick(panel.tree, ".")  # unchanged marks are not stored a second time on leaving
    assert len(panel.store.measurements("Q-00")) == 1

    # Another grader on the same queue starts from the bare image.
    panel.grader_edit.setText("uma")
    qtbot.keyClick(panel.tree, ",")
    assert panel.current_id == "Q-00" and window.model.active_system.points == []
    assert window.model.texts["z_s"] == "1.2"


def test_old_rows_without_marks_and_damaged_marks_open_the_bare_image(panel, queue, window, qtbot):  # noqa: F811
    from lensmass.core.estimate import estimate

    assert panel.open_queue(queue)
    r = estimate(1.4, 0.45, 1.6, samples=100)
    panel.store.add_measurement("Q-01", r, grader=panel.grader_name())  # stored before marks were kept
    panel.store.add_measurement("Q-02", r, grader=panel.grader_name(), session_state={"arcs": "not a list"})
    panel.tree.setFocus()
    qtbot.keyClick(panel.tree, ".")
    assert panel.current_id == "Q-01" and window.model.active_system.points == []
    assert window.model.texts["z_l"] == "0.45"
    qtbot.keyClick(panel.tree, ".")
    assert panel.current_id == "Q-02" and window.model.active_system.points == []
    assert window.model.texts["z_l"] == "0.22"  # the manifest's redshifts, as for a new candidate
    assert "stored marks could not be read" in panel.status.text()
