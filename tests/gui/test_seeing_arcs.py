"""Seeing the arcs: images open fitted, the lens light is fitted on open, the "Fit lens light" button.

Driven as a user would (clicks on the window's buttons, the menu's check box); asserts on what
the window then shows (zoom, view centre, the layer shown, the status line).
"""

from __future__ import annotations

import numpy as np
import pytest
from PySide6.QtCore import QSettings, Qt

from tests.gui.conftest import demo_field, wait_idle


def _fitted_zoom(canvas) -> float:
    ny, nx = canvas.image_shape
    return min(canvas.width() / nx, canvas.height() / ny) * 0.98


def test_an_image_opened_before_the_window_shows_is_fitted_and_centred(qtbot, tmp_path):
    # The command line opens the file before the window is shown (and sized): the view must follow.
    from lensmass.gui.mainwindow import MainWindow

    w = MainWindow(QSettings(str(tmp_path / "s.ini"), QSettings.IniFormat), offer_recovery=False,
                   interactive=False, load_panels=False)
    qtbot.addWidget(w)
    w.resize(1366, 768)
    path, _ = demo_field("tris_ring_a")
    assert w.open_path(str(path))
    w.show()
    qtbot.waitExposed(w)
    qtbot.waitUntil(lambda: abs(w.canvas.zoom - _fitted_zoom(w.canvas)) < 1e-6, timeout=3000)
    ny, nx = w.canvas.image_shape
    centre = w.canvas.image_to_widget((nx - 1) / 2, (ny - 1) / 2)
    assert abs(centre.x() - w.canvas.width() / 2) < 1.0 and abs(centre.y() - w.canvas.height() / 2) < 1.0
    # a resize keeps it fitted until the user zooms
    w.resize(1100, 700)
    qtbot.waitUntil(lambda: abs(w.canvas.zoom - _fitted_zoom(w.canvas)) < 1e-6, timeout=3000)
    w.act_zoom_in.trigger()  # View > Zoom in
    zoomed = w.canvas.zoom
    w.resize(1300, 760)
    qtbot.wait(50)
    assert w.canvas.zoom == pytest.approx(zoomed)
    wait_idle(qtbot, w, 30000)
    w.model.dirty = False


def test_the_fit_lens_light_button_fits_and_shows_the_residual(qtbot, make_window, tmp_path):
    window = make_window()
    window.settings.setValue("view/light_on_open", False)  # the button, not the automatic fit
    path, _ = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    assert window.model.display.layer == "image" and not window.tasks.busy
    qtbot.mouseClick(window.light_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: window.model.image.lens_light is not None, timeout=30000)
    assert window.model.display.layer == "residual"
    assert window.layer_buttons.button(2).isChecked()
    assert "False" not in window.last_message and "showing the residual" in window.last_message
    wait_idle(qtbot, window, 30000)


def test_a_bright_centre_gets_its_light_fitted_on_open_and_the_residual_shown(qtbot, window):
    path, _ = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    # once the image is painted the fit starts: the status line says what is done and how to turn it off
    assert "will be fitted" in window.last_message
    qtbot.waitUntil(lambda: window.tasks.busy, timeout=5000)
    assert "fitting the central galaxy's light" in window.last_message
    assert "turns this off" in window.last_message
    qtbot.waitUntil(lambda: window.model.display.layer == "residual", timeout=30000)
    assert "showing the residual" in window.last_message
    assert not window.model.dirty  # opening and looking is no unsaved work
    # the residual shown is image minus the fitted light: the lens is gone, the ring stays
    img = window.model.image
    ny, nx = img.data.shape
    core = (slice(ny // 2 - 2, ny // 2 + 3), slice(nx // 2 - 2, nx // 2 + 3))
    assert np.abs(img.residual[core]).max() < 0.2 * img.data[core].max()
    wait_idle(qtbot, window, 30000)


def test_the_user_can_turn_the_fit_on_open_off_from_the_menu(qtbot, window):
    action = window.act_light_on_open
    assert action.isChecked()
    action.trigger()  # Measure > Fit lens light on open: unticked
    assert window.settings.value("view/light_on_open") in (False, "false")
    path, _ = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    qtbot.wait(100)
    assert not window.tasks.busy and window.model.display.layer == "image"


def test_a_field_without_a_bright_centre_is_shown_as_stored(qtbot, window, tmp_path):
    from astropy.io import fits

    rng = np.random.default_rng(3)
    p = tmp_path / "sky.fits"
    fits.PrimaryHDU(rng.normal(10.0, 1.0, (80, 80)).astype(np.float32)).writeto(p)
    assert window.open_path(str(p))
    qtbot.wait(100)
    assert not window.tasks.busy and window.model.display.layer == "image"
    assert "no bright galaxy at the centre" in window.last_message


def test_a_large_survey_frame_is_not_fitted_on_open(qtbot, window, tmp_path):
    from astropy.io import fits

    from lensmass.gui.light_on_open import AUTO_MAX_PIXELS

    n = int(AUTO_MAX_PIXELS ** 0.5) + 8
    yy, xx = np.mgrid[:n, :n]
    data = (np.random.default_rng(4).normal(0, 1, (n, n)) + 500 * np.exp(-((xx - n / 2) ** 2 + (yy - n / 2) ** 2) / 50))
    p = tmp_path / "frame.fits"
    fits.PrimaryHDU(data.astype(np.float32)).writeto(p)
    assert window.open_path(str(p))
    qtbot.wait(100)
    assert not window.tasks.busy and "too large a field" in window.last_message


def test_finding_the_ring_while_the_light_is_fitted_waits_instead_of_being_refused(qtbot, window):
    path, _ = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    qtbot.waitUntil(lambda: window.tasks.busy, timeout=5000)
    qtbot.mouseClick(window.ring_button, Qt.LeftButton)
    assert "still running" not in window.last_message
    qtbot.waitUntil(lambda: len(window.model.active_system.points) > 0, timeout=60000)
    assert window.model.display.layer == "residual"
    wait_idle(qtbot, window, 30000)


def test_a_colour_picture_of_a_lens_gets_its_residual_and_one_of_blank_sky_does_not(qtbot, window, tmp_path):
    # 8-bit pictures as survey viewers make them (the project's generator): the stretch widens the sky
    from lensmass.core.realistic_fields import make_cutout
    from lensmass.io.cutout_files import write_cutout_picture

    lens = write_cutout_picture(tmp_path / "lens.png", make_cutout(3021, "ring+neighbour"))
    assert window.open_path(str(lens))
    qtbot.waitUntil(lambda: window.model.display.layer == "residual", timeout=60000)
    # the picture's stretch was undone for the fit, and the status line says so (the assumption behind it)
    assert "8-bit picture" in window.last_message and "stretch was undone" in window.last_message
    wait_idle(qtbot, window, 60000)
    blank = write_cutout_picture(tmp_path / "blank.png", make_cutout(6, "pure noise"))
    assert window.open_path(str(blank))
    qtbot.wait(100)
    assert not window.tasks.busy and window.model.display.layer == "image"


def test_a_window_closed_before_its_first_paint_starts_no_fit(qtbot, window):
    from lensmass.gui import workers

    path, _ = demo_field("tris_ring_a")
    window.hide()  # the fit waits for the window to show the image
    assert window.open_path(str(path))
    window.model.dirty = False
    window.close()
    qtbot.wait(300)
    assert not window.tasks.busy and not workers._RUNNING


def test_the_automatic_fit_never_overwrites_a_ring_found_first(qtbot, make_window):
    # On a slow machine the user can click "Find the ring" before the window's first paint starts the automatic
    # lens-light fit; the finder fits the light itself, so the late automatic fit must not run, switch the view and
    # replace the finder's message.
    from lensmass.gui.light_on_open import _start_after_first_paint

    window = make_window()
    window.settings.setValue("view/light_on_open", False)  # the late start is made by hand below
    path, _ = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    qtbot.mouseClick(window.ring_button, Qt.LeftButton)
    wait_idle(qtbot, window, 60000)
    said, layer = window.statusBar().currentMessage(), window.model.display.layer
    assert "found at" in said and window.model.image.lens_light is not None
    _start_after_first_paint(window, window.model.image, path.name, paints=-1, tries=0)  # the late automatic start
    assert not window.tasks.busy
    assert window.statusBar().currentMessage() == said and window.model.display.layer == layer
