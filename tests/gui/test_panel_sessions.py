"""Panel inputs saved with the session: fill the light, shear and triage panels, save, close, reopen
(offscreen Qt, the real window as a user drives it).

What is checked is our own file round trip (no outside number is involved): the JSON written is read
back with the standard library's json module, and relative paths are checked with os.path.relpath
(Python standard library), the same rule as the session's image path.
"""

from __future__ import annotations

import json
import os
import shutil

import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import QTimer  # noqa: E402

from tests.gui.conftest import DEMO_DIR, demo_field  # noqa: E402


def _panels(window):
    from lensmass.gui.light_panel import LightPanel
    from lensmass.gui.shear_panel import ShearPanel
    from lensmass.gui.triage_panel import TriagePanel

    kinds = {LightPanel: "light", ShearPanel: "shear", TriagePanel: "triage"}
    return {kinds[type(p)]: p for p in window.panels if type(p) in kinds}


def _wait_panels(qtbot, window):
    qtbot.waitUntil(lambda: len(_panels(window)) == 3, timeout=10000)
    return _panels(window)


def _type(qtbot, edit, text):
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, text)


def _fill(qtbot, window, catalogue):
    p = _wait_panels(qtbot, window)
    light, shear, triage = p["light"], p["shear"], p["triage"]
    light.source.setCurrentIndex(light.source.findData("image"))
    light.band.setCurrentText("sdss_r")
    light.system.setCurrentIndex(light.system.findData("Vega"))
    for key, text in (("zeropoint", "27.5"), ("exptime", "300"), ("r_eff", "1.8"), ("sersic_n", "3.5"),
                      ("kcorr", "0.12"), ("extinction", "0.03"), ("stellar_value", "3.2"), ("stellar_err", "0.4")):
        _type(qtbot, light.edits[key], text)
    light.mask_bright.setChecked(True)
    dialog = shear.column_dialog(str(catalogue))
    dialog.flip_e2.setChecked(True)
    QTimer.singleShot(0, dialog.accept)
    assert shear.open_catalog(str(catalogue), dialog)
    _type(qtbot, shear.centre_edit, "150.1, 2.2")
    _type(qtbot, shear.zs_edit, "0.9")
    _type(qtbot, shear.rmax_edit, "12")
    _type(qtbot, shear.smooth_edit, "45")
    shear.bins_spin.setValue(11)
    shear.contour_box.setChecked(False)
    _type(qtbot, triage.grader_edit, "ines")
    return light, shear, triage


def test_panel_inputs_survive_save_close_reopen(make_window, qtbot, tmp_path):
    (tmp_path / "cats").mkdir()
    catalogue = tmp_path / "cats" / "shapes.fits"
    shutil.copy(DEMO_DIR / "tris_cluster_d_shear.fits", catalogue)
    image, _truth = demo_field("tris_ring_a")
    w = make_window(load_panels=True)
    assert w.open_path(str(image))
    light, shear, _triage = _fill(qtbot, w, catalogue)
    typed = light.panel_state(None)
    columns, flips = dict(shear.columns), shear.flips
    session_path = tmp_path / "ring.lensmass.json"
    assert w._save_to(str(session_path)), w.last_error
    w.close()

    stored = json.loads(session_path.read_text())["panels"]
    assert stored["shear"]["catalogue"]["path"] == os.path.relpath(catalogue, tmp_path).replace(os.sep, "/")
    assert stored["triage"]["grader"] == "ines" and "store" not in stored["triage"]

    # The session is moved with its catalogue: the relative path still finds it.
    moved = tmp_path / "moved"
    moved.mkdir()
    shutil.move(str(tmp_path / "cats"), moved / "cats")
    shutil.move(str(session_path), moved / session_path.name)
    data = json.loads((moved / session_path.name).read_text())
    data["image"]["path"] = data["image"]["absolute_path"]  # the image stays where it is
    (moved / session_path.name).write_text(json.dumps(data))

    # Reopened in a new window whose panels are built after the first paint (the command line's way).
    w2 = make_window(load_panels="deferred")
    assert w2.open_path(str(moved / session_path.name)), w2.last_error
    p = _wait_panels(qtbot, w2)
    assert p["light"].panel_state(None) == typed
    assert p["light"].edits["sersic_n"].text() == "3.5" and p["light"].band.currentText() == "sdss_r"
    assert p["light"].image_box.isVisibleTo(p["light"])  # photometry on the image, as chosen
    s2 = p["shear"]
    assert s2.catalog_path == str(moved / "cats" / "shapes.fits")
    assert s2.columns == columns and s2.flips == flips == (False, True)
    assert (s2.centre_edit.text(), s2.zs_edit.text(), s2.rmax_edit.text(), s2.smooth_edit.text()) == (
        "150.1, 2.2", "0.9", "12", "45")
    assert s2.bins_spin.value() == 11 and not s2.contour_box.isChecked()
    assert "shapes.fits" in s2.catalog_label.text()
    assert p["triage"].grader_name() == "ines"


def test_autosave_keeps_panel_inputs_and_an_old_session_still_opens(make_window, qtbot, tmp_path):
    from lensmass.io.session import load_autosave

    catalogue = tmp_path / "shapes.fits"
    shutil.copy(DEMO_DIR / "tris_cluster_d_shear.fits", catalogue)
    image, truth = demo_field("tris_ring_a")
    w = make_window(load_panels=True)
    assert w.open_path(str(image))
    light, shear, _ = _fill(qtbot, w, catalogue)
    w.model.set_texts({"z_l": "0.3"})  # an edit: the autosave only writes unsaved work
    written = w.autosave()
    assert written is not None
    recovered = load_autosave(written.name.split(".")[0])
    assert recovered.panels["shear"]["catalogue"]["path"] == str(catalogue)  # absolute in an autosave
    assert recovered.panels["light"]["texts"]["kcorr"] == "0.12"

    # A session written before panels were saved (no "panels" entry) opens and leaves the panels alone.
    old = tmp_path / "old.lensmass.json"
    old.write_text(json.dumps({"format": "lensmass-session", "schema": 1,
                               "image": {"path": str(image)}, "z_l": 0.3,
                               "arcs": [{"name": "A", "z_s": 1.2, "points": truth["arc_points_xy"][:5]}]}))
    assert w.open_path(str(old)), w.last_error
    assert len(w.model.active_system.points) == 5
    assert light.edits["kcorr"].text() == "0.12" and shear.bins_spin.value() == 11


def test_typing_in_a_panel_is_an_unsaved_change(make_window, qtbot, tmp_path):
    image, _truth = demo_field("tris_ring_a")
    w = make_window(load_panels=True)
    assert w.open_path(str(image))
    p = _wait_panels(qtbot, w)
    assert not w.model.dirty
    qtbot.keyClicks(p["light"].edits["mag"], "18.2")
    assert w.model.dirty and "*" in w.windowTitle()
    assert w._save_to(str(tmp_path / "s.lensmass.json"))
    assert not w.model.dirty
    qtbot.keyClicks(p["shear"].smooth_edit, "5")
    assert w.model.dirty
    # restoring a session's inputs is not an edit (the window asks about the unsaved one: "discard")
    assert w.open_path(str(tmp_path / "s.lensmass.json"))
    p = _panels(w)
    assert not w.model.dirty and p["light"].edits["mag"].text() == "18.2"
