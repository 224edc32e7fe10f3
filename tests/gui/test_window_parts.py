"""The window's parts: the model without a window, the display pipeline against astropy and matplotlib,
the panel protocol, the canvas, helpers and the command line."""

from __future__ import annotations

import subprocess
import sys
import types

import numpy as np
import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import QPoint, QPointF, Qt  # noqa: E402

from tests.gui.conftest import REPO, click_image, demo_field, type_into, wait_for_result, wait_idle  # noqa: E402


# ------------------------------------------------------------------------------- model, no window
def test_the_model_validates_inputs_without_any_window():
    from lensmass.gui.model import WindowModel

    seen = []
    m = WindowModel()
    m.subscribe(seen.append)
    m.set_text("z_l", "abc")
    assert "must be a number" in m.validation["z_l"]
    assert "validation" in seen
    m.set_text("z_l", "0.4")
    m.set_text("z_s", "0.3")
    assert "behind the lens" in m.validation["z_s"]
    m.set_text("z_s", "1.0-3.0")  # an unknown source redshift, as a range
    assert "z_s" not in m.validation and m.active_system.z_s_range == (1.0, 3.0)
    m.set_text("z_l_err", "-0.1")
    assert "cannot be negative" in m.validation["z_l_err"]
    # Edits are recorded as unsaved changes.
    assert m.dirty


def test_cosmology_presets_offered_are_astropys():
    from astropy.cosmology import realizations

    from lensmass.gui.inputs_panel import COSMOLOGY_PRESETS

    assert set(COSMOLOGY_PRESETS) == set(realizations.available)  # reference: astropy's own list


# ---------------------------------------------------------------------------------- display
def test_colour_tables_follow_astropy_stretches_and_matplotlib_maps():
    import matplotlib
    from astropy.visualization import AsinhStretch, LogStretch, SqrtStretch

    from lensmass.gui.display import LEVELS, colour_table

    levels = np.array([0, 1000, 20000, 40000, LEVELS - 1])
    x = levels / (LEVELS - 1)
    for name, stretch in (("asinh", AsinhStretch(a=0.1)), ("square root", SqrtStretch()),
                          ("logarithmic", LogStretch(a=1000))):
        table = colour_table(name, "viridis", False)
        expected = np.round(matplotlib.colormaps["viridis"](stretch(x))[:, :3] * 255).astype(int)
        got = np.stack([(table[levels] >> s) & 255 for s in (16, 8, 0)], axis=1).astype(int)
        assert np.abs(got - expected).max() <= 1  # reference: astropy.visualization + matplotlib
    inverted = colour_table("linear", "gray", True)
    assert inverted[0] & 0xFFFFFF == 0xFFFFFF and inverted[LEVELS - 1] & 0xFFFFFF == 0


def test_display_limits_are_numpy_percentiles_and_astropy_zscale():
    from astropy.visualization import ZScaleInterval

    from lensmass.gui.display import image_limits, quantise

    rng = np.random.default_rng(3)
    data = rng.normal(10, 2, (200, 200)).astype(np.float32)
    data[5, 5] = np.nan
    finite = data[np.isfinite(data)]
    lo, hi = image_limits(data, "99%")
    assert (lo, hi) == pytest.approx(tuple(np.percentile(finite, [0.5, 99.5])), rel=1e-6)  # reference: numpy
    assert image_limits(data, "zscale") == pytest.approx(ZScaleInterval().get_limits(finite))  # astropy
    assert image_limits(data, "min-max") == (float(finite.min()), float(finite.max()))
    levels = quantise(data, lo, hi)
    assert levels[5, 5] == 65535 and levels[np.isfinite(data)].max() == 65534


# ------------------------------------------------------------------------------------ canvas
def test_wheel_zoom_keeps_the_point_under_the_cursor(qtbot, ring_window):
    from PySide6.QtGui import QWheelEvent

    window, truth = ring_window
    canvas = window.canvas
    anchor = QPointF(canvas.width() * 0.3, canvas.height() * 0.6)
    before = canvas.widget_to_image(anchor)
    zoom = canvas.zoom
    event = QWheelEvent(anchor, canvas.mapToGlobal(anchor), QPoint(0, 0), QPoint(0, 240), Qt.NoButton,
                        Qt.NoModifier, Qt.NoScrollPhase, False)
    canvas.wheelEvent(event)
    assert canvas.zoom == pytest.approx(zoom * 1.25**2)
    assert canvas.widget_to_image(anchor) == pytest.approx(before, abs=1e-9)
    window.act_fit.trigger()
    ny, nx = window.model.image.data.shape
    assert canvas.zoom == pytest.approx(0.98 * min(canvas.width() / nx, canvas.height() / ny))


def test_snapping_moves_a_click_onto_the_arc_ridge(qtbot, ring_window):
    window, truth = ring_window
    window.act_light.trigger()  # snapping searches the residual once the lens light is fitted
    qtbot.waitUntil(lambda: window.model.image.lens_light is not None, timeout=30000)
    cx, cy = truth["center_x"], truth["center_y"]
    window.act_tools[2].trigger()
    click_image(qtbot, window, cx, cy)
    window.act_tools[0].trigger()
    window.snap_box.setChecked(True)
    # Click 1.5 pixels outside a ring pixel of the truth file, along the radius.
    x, y = truth["arc_points_xy"][0]
    r = np.hypot(x - cx, y - cy)
    click_image(qtbot, window, cx + (x - cx) * (r + 1.5) / r, cy + (y - cy) * (r + 1.5) / r)
    px, py = window.model.active_system.points[-1]
    # The truth file's ring pixel is on the brightest part of the ring: the snapped point moved back
    # toward it (the PSF-blurred ridge lies a little outside the critical curve).
    assert abs(np.hypot(px - cx, py - cy) - r) < 1.0


def test_lens_light_fit_enables_the_model_and_residual_views(qtbot, ring_window):
    window, truth = ring_window
    assert not window.layer_buttons.button(2).isEnabled()
    window.act_light.trigger()
    qtbot.waitUntil(lambda: window.model.image.lens_light is not None, timeout=30000)
    wait_idle(qtbot, window)
    assert window.model.display.layer == "residual" and window.layer_buttons.button(2).isChecked()
    data, model = window.model.image.data, window.model.image.lens_light
    # image = lens light + residual, pixel by pixel
    assert np.allclose(window.model.image.residual + model, data, equal_nan=True)
    window.act_cycle_layer.trigger()
    assert window.model.display.layer == "image"


def test_custom_cosmology_distances_match_astropy(qtbot, ring_window):
    from astropy.cosmology import FlatLambdaCDM

    window, truth = ring_window
    for x, y in truth["arc_points_xy"][::6]:
        click_image(qtbot, window, x, y)
    box = window.inputs_panel.cosmology
    box.setCurrentIndex(box.findData("custom"))
    box.activated.emit(box.currentIndex())
    type_into(qtbot, window, "h0", "70")
    type_into(qtbot, window, "om0", "0.3")
    type_into(qtbot, window, "z_l", str(truth["z_l"]))
    type_into(qtbot, window, "z_s", str(truth["z_s"]))
    result = wait_for_result(qtbot, window)
    reference = FlatLambdaCDM(H0=70, Om0=0.3)  # reference: astropy (Hogg 1999)
    assert result["d_l_mpc"] == pytest.approx(reference.angular_diameter_distance(truth["z_l"]).value, rel=1e-6)
    assert "H0=70" in window.results_panel.status.text()


# ----------------------------------------------------------------------------------- bad input
def test_a_broken_fits_file_gives_one_sentence_and_keeps_the_open_image(qtbot, ring_window, tmp_path):
    window, truth = ring_window
    for x, y in truth["arc_points_xy"][::6][:4]:
        click_image(qtbot, window, x, y)
    window.model.dirty = False
    broken = tmp_path / "broken.fits"
    broken.write_bytes(b"SIMPLE  =                    T" + b"\x00" * 50)
    assert window.open_path(str(broken)) is False
    assert window.last_error and "\n" not in window.last_error and "broken.fits" in window.last_error
    assert len(window.model.active_system.points) == 4 and "tris_ring_a" in window.model.image.path


# ------------------------------------------------------------------------------------ panels
def test_a_registered_panel_docks_draws_and_claims_clicks(qtbot, make_window, monkeypatch):
    from PySide6.QtWidgets import QLabel

    from lensmass.gui import panel_registry

    calls = {"draw": 0, "clicks": [], "topics": []}

    class ProbePanel(QLabel):
        PANEL_TITLE = "Probe"
        DOCK_AREA = "bottom"

        def __init__(self, app_model, canvas, window):
            super().__init__("probe")
            app_model.subscribe(calls["topics"].append)
            canvas.set_layer("probe", lambda painter, c: calls.__setitem__("draw", calls["draw"] + 1))
            canvas.claim_clicks("probe", lambda x, y: calls["clicks"].append((x, y)), hint="pick a galaxy")
            self.window_ref = window

    module = types.ModuleType("lensmass_probe_panel")
    module.ProbePanel = ProbePanel
    monkeypatch.setitem(sys.modules, "lensmass_probe_panel", module)
    monkeypatch.setattr(panel_registry, "PANELS", [("lensmass_probe_panel", "ProbePanel"),
                                                   ("lensmass_no_such_panel", "Nothing")])
    window = make_window(load_panels=True)
    assert [type(p).__name__ for p in window.panels] == ["ProbePanel"]
    path, truth = demo_field("tris_ring_a")
    assert window.panels[0].window_ref.open_path(str(path))
    assert "image" in calls["topics"]
    window.canvas.grab()  # renders the canvas as a repaint would
    assert calls["draw"] >= 1
    click_image(qtbot, window, 40.0, 60.0)
    assert calls["clicks"] and calls["clicks"][0] == pytest.approx((40.0, 60.0), abs=0.5)
    assert not window.model.active_system.points  # the panel had the click, not the marking tool
    window.canvas.claim_clicks("probe", lambda x, y: calls["clicks"].append((x, y)), hint="pick a galaxy")
    assert window.last_message == "pick a galaxy"  # the panel's hint shows in the status bar
    window.canvas.release_clicks("probe")
    click_image(qtbot, window, 40.0, 60.0)
    assert len(window.model.active_system.points) == 1


# ---------------------------------------------------------------------------------- command line
def test_the_command_writes_a_screenshot_and_refuses_bad_input_in_one_line(tmp_path):
    from PySide6.QtGui import QImage

    path, _truth = demo_field("tris_ring_a")
    env = {"QT_QPA_PLATFORM": "offscreen", "LENSMASS_DATA_DIR": str(tmp_path / "data"), "PATH": "/usr/bin:/bin",
           "HOME": str(tmp_path)}
    out = tmp_path / "window.png"
    done = subprocess.run([sys.executable, "-m", "lensmass.cli", "gui", str(path), "--screenshot", str(out)],
                          cwd=REPO, env=env, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    image = QImage(str(out))
    assert image.width() >= 1000 and len({image.pixel(x, 300) for x in range(0, image.width(), 7)}) > 10
    bad = subprocess.run([sys.executable, "-m", "lensmass.cli", "gui", str(tmp_path / "missing.fits"),
                          "--screenshot", str(out)], cwd=REPO, env=env, capture_output=True, text=True, timeout=60)
    assert bad.returncode == 2
    assert bad.stderr.strip().count("\n") == 0 and "No such image" in bad.stderr


# ------------------------------------------------------------------------- opening, settings
def test_dropping_a_file_opens_it_and_it_joins_the_recent_list(qtbot, window):
    from PySide6.QtCore import QMimeData, QUrl
    from PySide6.QtGui import QDropEvent

    path, _truth = demo_field("tris_double_b")
    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(path))])
    event = QDropEvent(QPointF(200, 200), Qt.CopyAction, mime, Qt.LeftButton, Qt.NoModifier)
    window.dropEvent(event)
    assert "tris_double_b" in window.model.image.path
    actions = window.recent_menu.actions()
    assert actions and "tris_double_b" in actions[0].text()
    window.model.dirty = False
    window.new_measurement()
    assert window.model.image is None
    actions[0].trigger()  # File > Open recent > 1
    assert "tris_double_b" in window.model.image.path


def test_display_choices_and_last_folder_persist_between_runs(qtbot, make_window):
    path, _truth = demo_field("tris_ring_a")
    first = make_window()
    first.open_path(str(path))
    first.set_display(colormap="cividis", stretch="logarithmic", limits="zscale")
    first.model.dirty = False
    first.close()
    second = make_window()
    assert second.settings.value("last_folder") == str(path.parent)
    second.open_path(str(path))
    d = second.model.display
    assert (d.colormap, d.stretch, d.limits) == ("cividis", "logarithmic", "zscale")
    assert second.colormap_box.currentText() == "cividis"


def test_the_window_follows_a_dark_colour_scheme(qtbot, monkeypatch):
    from PySide6.QtWidgets import QApplication

    from lensmass.gui.app import follow_colour_scheme

    app = QApplication.instance()
    monkeypatch.setenv("LENSMASS_COLOUR_SCHEME", "dark")
    follow_colour_scheme(app)
    try:
        assert app.palette().color(app.palette().ColorRole.Window).lightness() < 60
        assert app.palette().color(app.palette().ColorRole.WindowText).lightness() > 180
    finally:
        monkeypatch.setenv("LENSMASS_COLOUR_SCHEME", "light")
        follow_colour_scheme(app)
    assert app.palette().color(app.palette().ColorRole.Window).lightness() > 128


def _crashed_autosave(qtbot, make_window, tmp_path, save_as: str | None = None):
    """A window that marks the demo ring (saved as a session first when ``save_as``), autosaves, then 'dies'."""
    import json as _json

    path, truth = demo_field("tris_ring_a")
    crashed = make_window()
    crashed.open_path(str(path))
    if save_as:
        assert crashed._save_to(str(tmp_path / save_as))
    for x, y in truth["arc_points_xy"][::8]:
        click_image(qtbot, crashed, x, y)
    written = crashed.autosave()
    # Pretend the writer died: an autosave whose process no longer runs.
    data = _json.loads(written.read_text())
    data["autosave"]["pid"] = 2**22 + 4321
    written.write_text(_json.dumps(data))
    return crashed, written


def _answer_prompt(qtbot, button_text: str, seen: list) -> None:
    """Click ``button_text`` on the recovery prompt once it is up (a real QMessageBox, shown modally)."""
    from PySide6.QtCore import QTimer
    from PySide6.QtWidgets import QApplication, QMessageBox, QPushButton

    def click():
        box = QApplication.activeModalWidget()
        if not isinstance(box, QMessageBox):
            QTimer.singleShot(20, click)
            return
        seen.append((box.text(), [b.text() for b in box.findChildren(QPushButton)]))
        button = next(b for b in box.findChildren(QPushButton) if b.text() == button_text)
        qtbot.mouseClick(button, Qt.LeftButton)

    QTimer.singleShot(0, click)


def _fresh_window(qtbot, tmp_path):
    from PySide6.QtCore import QSettings

    from lensmass.gui import mainwindow

    fresh = mainwindow.MainWindow(QSettings(str(tmp_path / "other.ini"), QSettings.IniFormat), offer_recovery=False,
                                  interactive=True, load_panels=False)
    qtbot.addWidget(fresh)
    return fresh


def _after_crash(qtbot, make_window, tmp_path, answer: str, save_as: str | None = None):
    """A crashed window's autosave, a fresh window, and its recovery prompt answered with ``answer``."""
    crashed, written = _crashed_autosave(qtbot, make_window, tmp_path, save_as=save_as)
    fresh = _fresh_window(qtbot, tmp_path)
    seen: list = []
    _answer_prompt(qtbot, answer, seen)
    fresh.offer_recovery()
    return crashed, written, fresh, seen


def test_after_a_crash_the_next_window_offers_the_autosave(qtbot, make_window, tmp_path):
    crashed, written, fresh, seen = _after_crash(qtbot, make_window, tmp_path, "Restore my work")
    text, buttons = seen[0]
    assert sorted(buttons) == ["Decide later", "Discard it", "Restore my work"]
    assert "did not close cleanly" in text and "tris_ring_a.fits" in text and "autosaved on" in text
    assert np.allclose(fresh.model.active_system.points, crashed.model.active_system.points)
    assert not written.exists()  # recovered, so the autosave is gone
    fresh.model.dirty = crashed.model.dirty = False


def test_restored_session_keeps_its_name_and_path(qtbot, make_window, tmp_path):
    crashed, written, fresh, seen = _after_crash(qtbot, make_window, tmp_path, "Restore my work",
                                                 save_as="night3.lensmass.json")
    assert "the session 'night3.lensmass.json'" in seen[0][0]
    assert fresh.model.session_path == str(tmp_path / "night3.lensmass.json")
    assert fresh.windowTitle().startswith("night3.lensmass.json *")  # its name, with unsaved changes
    assert np.allclose(fresh.model.active_system.points, crashed.model.active_system.points)
    assert fresh.save_session()  # Ctrl+S writes back to the same file, without asking where
    from lensmass.io.session import load_session

    assert len(load_session(tmp_path / "night3.lensmass.json").arcs[0].points) == len(crashed.model.active_system.points)
    crashed.model.dirty = False


def test_decide_later_keeps_the_autosave_and_discard_deletes_it(qtbot, make_window, tmp_path):
    crashed, written, fresh, seen = _after_crash(qtbot, make_window, tmp_path, "Decide later")
    assert written.exists() and fresh.model.image is None  # nothing restored, nothing lost
    _answer_prompt(qtbot, "Discard it", seen)
    fresh.offer_recovery()
    assert len(seen) == 2 and not written.exists()
    crashed.model.dirty = False


def test_a_picture_without_wcs_asks_for_the_pixel_scale_then_measures(qtbot, window, tmp_path):
    from PIL import Image

    path, truth = demo_field("tris_ring_a")
    from astropy.io import fits

    data = fits.getdata(path).astype(float)
    scaled = np.clip((data - np.nanmin(data)) / (np.nanpercentile(data, 99.5) - np.nanmin(data)), 0, 1)
    png = tmp_path / "ring.png"
    Image.fromarray((scaled[::-1] * 255).astype(np.uint8)).save(png)  # PNG rows run top to bottom
    assert window.open_path(str(png))
    assert window.model.image.pixel_scale_arcsec is None
    ny = data.shape[0]
    points = [(x, ny - 1 - y) for x, y in truth["arc_points_xy"][::6]]  # the same pixels, rows flipped
    for x, y in points:
        click_image(qtbot, window, x, y)
    assert "pixel scale" in window.fit_label.text()
    window.set_pixel_scale(truth["pixel_scale_arcsec"])
    assert window.model.fit.theta_e_arcsec == pytest.approx(truth["theta_e_arcsec"], rel=0.05)
    assert window.model.session.image.pixel_scale_arcsec == truth["pixel_scale_arcsec"]
