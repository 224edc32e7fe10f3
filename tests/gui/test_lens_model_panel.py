"""The "Lens model" dock driven as a user would: open the demo double, mark its two images, the lens
centre and the host's arc, type the redshifts, press "Fit lens model", read the numbers, undo, save.

Outside references: the true theta_E, lens centre, image and arc pixels come from the demo field's
truth file (the ray tracer's input); the time-delay sign follows Fermat's principle (the image farther
from the lens, a minimum of the arrival time, leads: Narayan & Bartelmann 1996, sec. 2.5).
"""

from __future__ import annotations

import numpy as np
import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor

from tests.gui.conftest import click_image, demo_field, type_into, wait_idle


def _panel(qtbot, window):
    from lensmass.gui.lens_model_panel import LensModelPanel

    qtbot.waitUntil(lambda: any(isinstance(p, LensModelPanel) for p in window.panels), timeout=10000)
    return next(p for p in window.panels if isinstance(p, LensModelPanel))


def _mark_double(qtbot, w, truth):
    w.act_tools[1].trigger()  # "I": images of a multiple-image system
    for x, y in truth["image_points_xy"]:
        click_image(qtbot, w, x, y)
    w.act_tools[2].trigger()  # "C": the lens centre
    click_image(qtbot, w, truth["center_x"], truth["center_y"])
    type_into(qtbot, w, "z_l", str(truth["z_l"]))
    type_into(qtbot, w, "z_s", str(truth["z_s"]))


def _fit(qtbot, w, panel):
    panel.edits["click_err"].selectAll()
    qtbot.keyClicks(panel.edits["click_err"], "0.5")
    qtbot.mouseClick(panel.fit_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: panel.model_result is not None or "No lens" in panel.status.text()
                    or "fit" not in panel.status.text().lower(), timeout=120000)
    wait_idle(qtbot, w, timeout=120000)


def _has_colour(image, colour: str, tol: int = 40) -> bool:
    arr = image.convertToFormat(image.Format.Format_RGB32)
    ptr = arr.constBits()
    data = np.frombuffer(ptr, np.uint8).reshape(arr.height(), arr.bytesPerLine())[:, : 4 * arr.width()]
    bgr = data.reshape(arr.height(), arr.width(), 4)[..., :3].astype(int)
    c = QColor(colour)
    target = np.array([c.blue(), c.green(), c.red()])
    return bool(np.any(np.abs(bgr - target).sum(axis=2) < tol))


def test_fit_the_demo_double_undo_and_save(make_window, qtbot, tmp_path):
    from lensmass.gui.lens_model_panel import CRITICAL_COLOUR

    image, truth = demo_field("tris_double_b")
    w = make_window(load_panels=True)
    assert w.open_path(str(image))
    panel = _panel(qtbot, w)
    _mark_double(qtbot, w, truth)
    _fit(qtbot, w, panel)
    assert panel.model_result is not None, panel.status.text()
    lm = panel.model_result["lens_model"]
    te = lm["parameters"]["theta_e_arcsec"]
    # the demo's true theta_E (truth file) lies inside the 95% interval the window shows
    assert te["interval95"][0] <= truth["theta_e_arcsec"] <= te["interval95"][1]
    text = panel.table.text()
    assert 'theta_E ["]' in text and "A2-A1 [d]" in text and "M(<thE)" in text
    # a double cannot fix q and shear: the caveat is shown
    assert "priors decide" in panel.notes.text()
    # the leading image of a double is the one farther from the lens (a minimum of the arrival time)
    delay = lm["time_delays"][0]["delay_days"]["median"]
    d = [np.hypot(x - truth["center_x"], y - truth["center_y"]) for x, y in truth["image_points_xy"]]
    assert (delay > 0) == (d[0] > d[1])
    # the critical curve is drawn over the image
    assert _has_colour(w.canvas.grab().toImage(), CRITICAL_COLOUR)
    # the main Mass budget now uses the model's theta_E and its posterior, and says so; its numbers are the
    # model's own (one code path: lensmass.core.lens_model.masses_from_lens_model)
    from lensmass.gui.results_panel import rounded_key

    wait_idle(qtbot, w, timeout=120000)
    rp = w.results_panel
    qtbot.waitUntil(lambda: "lens model" in rp.status.text(), timeout=60000)
    shown = w.model.result
    for key in ("theta_e_arcsec", "mass_einstein_msun"):
        assert shown[key] == panel.model_result[key]  # the same number ...
        assert rp.values[key].text() == rounded_key(shown, key).value_text  # ... written by the one rounding rule
    assert "lens model" in rp.notes.text() and "SIE" in rp.values["theta_e_arcsec"].toolTip()
    assert "Fit the lens model for more" not in rp.notes.text()  # the circle fit's caveat no longer applies
    # the exported report carries the model on a page of its own: its parameters, masses and delays
    from lensmass.io import report_pages

    seen = {}
    original = report_pages.lens_model_figure

    def spy(model_result, *args, **kwargs):
        fig = original(model_result, *args, **kwargs)
        seen["text"] = " ".join(t.get_text() for ax in fig.axes for t in ax.texts)
        return fig

    report_pages.lens_model_figure = spy
    try:
        written = w.export_report(str(tmp_path / "page.png"))
    finally:
        report_pages.lens_model_figure = original
    assert written is not None and (tmp_path / "page-2.png").is_file()  # system A's page, then the model's
    assert "axis ratio q" in seen["text"] and "delay A2-A1" in seen["text"] and "SIE" in seen["text"]
    # undo removes the model, redo brings it back (one step each)
    qtbot.keyClick(w, Qt.Key_Z, Qt.ControlModifier)
    assert panel.model_result is None
    qtbot.waitUntil(lambda: "circle fit" in rp.status.text(), timeout=60000)  # back to the circle fit
    assert not _has_colour(w.canvas.grab().toImage(), CRITICAL_COLOUR)
    qtbot.keyClick(w, Qt.Key_Z, Qt.ControlModifier | Qt.ShiftModifier)
    assert panel.model_result is not None
    # saved with the session and shown again after reopening
    session_path = tmp_path / "double.lensmass.json"
    assert w._save_to(str(session_path)), w.last_error
    w.close()
    w2 = make_window(load_panels=True)
    assert w2.open_path(str(session_path))
    panel2 = _panel(qtbot, w2)
    qtbot.waitUntil(lambda: panel2.model_result is not None, timeout=10000)
    assert panel2.model_result["lens_model"]["parameters"]["theta_e_arcsec"]["median"] == pytest.approx(te["median"])
    assert 'theta_E ["]' in panel2.table.text()


def test_fit_with_nothing_marked_says_so(make_window, qtbot):
    image, _truth = demo_field("tris_double_b")
    w = make_window(load_panels=True)
    assert w.open_path(str(image))
    panel = _panel(qtbot, w)
    qtbot.mouseClick(panel.fit_button, Qt.LeftButton)
    assert "Nothing is marked" in panel.status.text()
    assert panel.model_result is None
