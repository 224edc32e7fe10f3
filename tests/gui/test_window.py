"""The window driven as a user would: open a demo field, click the ring, type redshifts, read the numbers.

Outside references for the numbers checked here:
- Einstein mass M(<theta_E) = (c^2 / 4G) (D_l D_s / D_ls) theta_E^2 (Narayan & Bartelmann 1996,
  arXiv:astro-ph/9606001, eq. 20), with D_l, D_s, D_ls from astropy's Planck18 (Hogg 1999).
- The true theta_E and the ring pixels come from the demo field's truth file (the generator's input).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import QPointF, Qt  # noqa: E402

from tests.gui.conftest import click_image, demo_field, label_float, type_into, wait_for_result, wait_idle  # noqa: E402


def astropy_einstein_mass_msun(theta_arcsec: float, z_l: float, z_s: float) -> float:
    """Narayan & Bartelmann (1996) eq. 20 with astropy Planck18 distances (independent of lensmass.core)."""
    import astropy.constants as const
    import astropy.units as u
    from astropy.cosmology import Planck18

    d_l = Planck18.angular_diameter_distance(z_l)
    d_s = Planck18.angular_diameter_distance(z_s)
    d_ls = Planck18.angular_diameter_distance(z_l, z_s)
    theta = (theta_arcsec * u.arcsec).to(u.rad).value
    return float((const.c**2 / (4 * const.G) * d_l * d_s / d_ls * theta**2).to(u.Msun).value)


def ring_points(truth, n: int | None = None) -> list:
    """Every few of the truth file's ring pixels (about 12 around the ring, as a user would click)."""
    points = truth["arc_points_xy"]
    step = max(1, len(points) // 12)
    chosen = points[::step]
    return chosen[:n] if n else chosen


def mark_ring(qtbot, window, truth, n: int | None = None) -> None:
    for x, y in ring_points(truth, n):
        click_image(qtbot, window, x, y)


def enter_redshifts(qtbot, window, z_l, z_s) -> None:
    type_into(qtbot, window, "z_l", str(z_l))
    type_into(qtbot, window, "z_s", str(z_s))


# --------------------------------------------------------------------------------------- opening
def test_open_demo_field_shows_the_image_and_its_name(ring_window):
    window, truth = ring_window
    assert window.canvas.has_image
    ny, nx = window.model.image.data.shape
    assert window.canvas.image_shape == (ny, nx)
    assert "tris_ring_a" in window.windowTitle()
    # The pixel scale is the WCS's (truth file: 0.2 arcsec per pixel for galaxy fields).
    assert window.model.image.pixel_scale_arcsec == pytest.approx(truth["pixel_scale_arcsec"], rel=1e-6)
    assert window.recent_files()[0].endswith("tris_ring_a.fits")


def test_status_bar_shows_pixel_radec_and_value_under_the_cursor(qtbot, ring_window):
    window, truth = ring_window
    cx, cy = truth["center_x"], truth["center_y"]
    pos = window.canvas.image_to_widget(cx, cy).toPoint()
    qtbot.mouseMove(window.canvas, pos)
    qtbot.waitUntil(lambda: "RA" in window.position_label.text(), timeout=3000)
    text = window.position_label.text()
    ra, dec = (float(v) for v in text.split("Dec")[1].split("(")[1].split()[:2])  # the degrees after h:m:s, d:m:s
    # Truth file: centre RA/Dec of the lens; a click is within a pixel (0.2" = 5.6e-5 deg).
    assert ra == pytest.approx(truth["center_ra"], abs=2e-4)
    assert dec == pytest.approx(truth["center_dec"], abs=2e-4)
    value = float(text.split("value")[1].split()[0])
    assert value == pytest.approx(float(window.model.image.data[round(cy), round(cx)]), rel=1e-3)


# ----------------------------------------------------------------------------------- the main job
def test_clicking_the_ring_and_typing_redshifts_gives_theta_e_and_mass(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    assert len(window.model.active_system.points) == len(ring_points(truth))
    enter_redshifts(qtbot, window, truth["z_l"], truth["z_s"])
    wait_for_result(qtbot, window)
    panel = window.results_panel
    theta = label_float(panel.values["theta_e_arcsec"])
    # Truth file theta_E; hand marks on a blurred ring are good to a few per cent.
    assert theta == pytest.approx(truth["theta_e_arcsec"], rel=0.05)
    mass = label_float(panel.values["mass_einstein_msun"])
    expected = astropy_einstein_mass_msun(truth["theta_e_arcsec"], truth["z_l"], truth["z_s"])
    assert mass == pytest.approx(expected, rel=0.10)  # M scales as theta^2: twice the theta tolerance
    # The same mass from our measured theta, to the last figure the display keeps (one formula, two routes;
    # the display keeps two figures of the interval's half-width, common practice).
    text = panel.values["mass_einstein_msun"].text()
    mantissa, _, power = text.partition("e")
    last_place = 10.0 ** (int(power or 0) - len(mantissa.partition(".")[2]))
    assert mass == pytest.approx(astropy_einstein_mass_msun(window.model.fit.theta_e_arcsec, truth["z_l"],
                                                            truth["z_s"]), abs=0.5 * last_place * 1.001)
    # The interval is shown and brackets the value.
    interval = panel.intervals["mass_einstein_msun"].text().strip("[]").split(",")
    lo, hi = (float(v) for v in interval)
    assert lo < mass < hi
    assert "Planck18" in panel.status.text()


def test_overlay_circle_is_drawn_through_the_points_with_theta_e(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    assert len(window.canvas.fits) == 1
    shape = window.canvas.fits[0]
    assert shape.a_px * truth["pixel_scale_arcsec"] == pytest.approx(truth["theta_e_arcsec"], rel=0.05)
    assert "θE" in shape.label
    # Common practice: the ring is centred on the lens; the circle centre lands within a pixel of it.
    assert shape.x == pytest.approx(truth["center_x"], abs=1.0)
    assert shape.y == pytest.approx(truth["center_y"], abs=1.0)


def test_undo_and_redo_every_edit(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth, n=5)
    fit_five = window.model.fit.theta_e_arcsec
    window.act_undo.trigger()
    assert len(window.model.active_system.points) == 4
    assert len(window.canvas.marks) == 4
    window.act_undo.trigger()
    window.act_undo.trigger()
    assert len(window.model.active_system.points) == 2
    assert window.model.fit is None  # two points make no circle: the overlay is gone
    assert not window.canvas.fits
    for _ in range(3):
        window.act_redo.trigger()
    assert len(window.model.active_system.points) == 5
    assert window.model.fit.theta_e_arcsec == pytest.approx(fit_five, rel=1e-12)


def test_dragging_a_point_moves_the_overlay_and_undo_puts_it_back(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    before = window.canvas.fits[0].a_px
    x, y = window.model.active_system.points[0]
    cx, cy = truth["center_x"], truth["center_y"]
    # Drag the first point 4 pixels further out along its radius.
    r = np.hypot(x - cx, y - cy)
    nx, ny = cx + (x - cx) * (r + 4) / r, cy + (y - cy) * (r + 4) / r
    start = window.canvas.image_to_widget(x, y).toPoint()
    end = window.canvas.image_to_widget(nx, ny).toPoint()
    qtbot.mousePress(window.canvas, Qt.LeftButton, pos=start)
    qtbot.mouseMove(window.canvas, QPointF((start.x() + end.x()) / 2, (start.y() + end.y()) / 2).toPoint())
    qtbot.mouseMove(window.canvas, end)
    qtbot.mouseRelease(window.canvas, Qt.LeftButton, pos=end)
    moved = window.model.active_system.points[0]
    assert moved[0] == pytest.approx(nx, abs=0.5) and moved[1] == pytest.approx(ny, abs=0.5)
    assert window.canvas.fits[0].a_px > before + 0.1
    window.act_undo.trigger()
    assert window.model.active_system.points[0] == pytest.approx((x, y))
    assert window.canvas.fits[0].a_px == pytest.approx(before)


def test_right_click_deletes_a_point(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth, n=4)
    x, y = ring_points(truth)[1]
    click_image(qtbot, window, x, y, Qt.RightButton)
    assert len(window.model.active_system.points) == 3
    window.act_undo.trigger()
    assert len(window.model.active_system.points) == 4


def test_the_lens_centre_tool_holds_the_fit_centre(qtbot, ring_window):
    window, truth = ring_window
    window.act_tools[2].trigger()  # "C": centre tool
    click_image(qtbot, window, truth["center_x"], truth["center_y"])
    assert window.model.centre == pytest.approx((truth["center_x"], truth["center_y"]), abs=0.3)
    window.act_tools[0].trigger()
    mark_ring(qtbot, window, truth, n=4)
    fit = window.model.fit
    assert (fit.center_x, fit.center_y) == pytest.approx(window.model.centre, abs=1e-6)
    assert "centre held" in fit.method


# ----------------------------------------------------------------------------------- bad input
def test_source_in_front_of_the_lens_gives_the_reason_and_no_numbers(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    enter_redshifts(qtbot, window, truth["z_s"], truth["z_l"])  # swapped
    wait_idle(qtbot, window)
    panel = window.results_panel
    assert "behind the lens" in panel.status.text()
    assert panel.values["mass_einstein_msun"].text() == "–"
    assert panel.values["nfw_m200_msun"].text() == "–"
    # The reason is also shown where z_s was typed.
    problem = window.inputs_panel.fields["z_s"].problem
    assert problem.isVisibleTo(window) and "behind the lens" in problem.text()


def test_text_that_is_not_a_number_is_marked_where_it_is_typed(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    type_into(qtbot, window, "z_l", "0.2x")
    field = window.inputs_panel.fields["z_l"]
    assert field.edit.property("invalid") is True
    assert "must be a number" in field.problem.text()
    assert "must be a number" in window.results_panel.status.text()
    type_into(qtbot, window, "z_l", str(truth["z_l"]))
    assert field.edit.property("invalid") is False


# -------------------------------------------------------------------------------------- sessions
def test_save_close_reopen_gives_the_same_state(qtbot, make_window, tmp_path):
    path, truth = demo_field("tris_ring_a")
    first = make_window()
    first.open_path(str(path))
    first.canvas.fit_to_window()
    mark_ring(qtbot, first, truth)
    enter_redshifts(qtbot, first, truth["z_l"], truth["z_s"])
    wait_for_result(qtbot, first)
    first.set_display(colormap="magma", stretch="square root")
    session_file = tmp_path / "ring.lensmass.json"
    assert first._save_to(str(session_file))
    assert not first.model.dirty
    theta = first.results_panel.values["theta_e_arcsec"].text()
    points = list(first.model.active_system.points)
    first.close()

    second = make_window()
    assert second.open_path(str(session_file))
    wait_for_result(qtbot, second)
    assert np.allclose(second.model.active_system.points, points)
    assert second.model.session.z_l == truth["z_l"]
    assert second.model.active_system.z_s == truth["z_s"]
    assert second.inputs_panel.fields["z_l"].edit.text() == f"{truth['z_l']:g}"
    assert second.results_panel.values["theta_e_arcsec"].text() == theta
    assert second.colormap_box.currentText() == "magma"
    # The image path is stored relative to the session file.
    saved = json.loads(session_file.read_text())
    assert not saved["image"]["path"].startswith("/")


def test_a_corrupt_session_shows_a_message_and_changes_nothing(qtbot, ring_window, tmp_path):
    window, truth = ring_window
    mark_ring(qtbot, window, truth, n=4)
    window.model.dirty = False  # nothing to ask about
    bad = tmp_path / "broken.lensmass.json"
    bad.write_text('{"format": "lensmass-session", "schema": 1, "arcs": [')
    before = bad.read_bytes()
    assert window.open_path(str(bad)) is False
    assert "half-written" in window.last_error or "not valid JSON" in window.last_error
    assert window.last_error.count(".") >= 1 and "\n" not in window.last_error
    assert bad.read_bytes() == before
    assert len(window.model.active_system.points) == 4
    assert window.canvas.has_image


def test_a_session_from_a_newer_lensmass_is_refused_untouched(qtbot, window, tmp_path):
    newer = tmp_path / "future.lensmass.json"
    newer.write_text(json.dumps({"format": "lensmass-session", "schema": 99}))
    before = newer.read_bytes()
    assert window.open_path(str(newer)) is False
    assert "newer lensmass" in window.last_error
    assert newer.read_bytes() == before


def test_autosave_then_recovery_restores_the_marks(qtbot, make_window):
    from lensmass.io.session import list_recoverable

    path, truth = demo_field("tris_ring_a")
    first = make_window()
    first.open_path(str(path))
    first.canvas.fit_to_window()
    mark_ring(qtbot, first, truth, n=5)
    written = first.autosave()
    assert written is not None and written.is_file()
    keys = [item.key for item in list_recoverable(include_running=True)]
    assert first._autosave_key in keys
    second = make_window()
    assert second.recover(first._autosave_key)
    assert np.allclose(second.model.active_system.points, first.model.active_system.points)
    assert second.model.dirty  # recovered work is unsaved until the user saves it


def test_closing_with_unsaved_changes_asks_first(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth, n=3)
    assert window.model.dirty
    window.ask_unsaved = lambda: "cancel"
    window.close()
    assert window.isVisible()
    window.ask_unsaved = lambda: "discard"
    window.close()
    assert not window.isVisible()


# ---------------------------------------------------------------------------------- display
def test_display_changes_recolour_only(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    fit = window.model.fit
    limits_before = dict(window.pipeline._limits)
    before = window.canvas.visible_colours().copy()
    window.colormap_box.setCurrentText("viridis")
    window.colormap_box.activated.emit(window.colormap_box.currentIndex())
    window.stretch_box.setCurrentText("logarithmic")
    window.stretch_box.activated.emit(window.stretch_box.currentIndex())
    window.invert_box.setChecked(True)
    assert window.model.fit is fit  # no refit
    assert window.pipeline._limits == limits_before  # no new limits: only the colour table changed
    assert not np.array_equal(before, window.canvas.visible_colours())


# ------------------------------------------------------------------------------ workers, export
def test_background_task_reports_progress_and_can_be_cancelled(qtbot, window):
    import time

    seen, outcome = [], []

    def slow(progress, should_stop):
        for i in range(400):
            if should_stop():
                from lensmass.gui.workers import TaskCancelled

                raise TaskCancelled()
            progress(i / 400, "counting")
            time.sleep(0.005)
        return "finished"

    window.tasks._thread = None
    window.tasks.start(slow, "Counting", outcome.append, outcome.append,
                       on_cancel=lambda: outcome.append("cancelled"))
    window.progress.valueChanged.connect(seen.append)
    qtbot.waitUntil(lambda: window.progress.value() > 5, timeout=5000)
    assert window.cancel_button.isVisibleTo(window)
    qtbot.mouseClick(window.cancel_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: outcome == ["cancelled"], timeout=5000)
    assert seen and max(seen) < 100
    assert not window.tasks.busy
    assert not window.cancel_button.isVisibleTo(window)


def test_export_results_and_report(qtbot, ring_window, tmp_path):
    from astropy.table import Table

    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    enter_redshifts(qtbot, window, truth["z_l"], truth["z_s"])
    result = wait_for_result(qtbot, window)
    js = window.export_results(str(tmp_path / "r.json"))
    doc = json.loads(js.read_text())
    assert doc["systems"][0]["result"]["mass_einstein_msun"] == pytest.approx(result["mass_einstein_msun"])
    ecsv = window.export_results(str(tmp_path / "r.ecsv"))
    table = Table.read(ecsv, format="ascii.ecsv")
    assert str(table["mass_einstein_msun"].unit) == "solMass"
    assert window.export_report(str(tmp_path / "report.pdf"), background=True) is None  # the menu's way
    qtbot.waitUntil(lambda: "Report written" in window.last_message, timeout=30000)
    assert (tmp_path / "report.pdf").read_bytes()[:4] == b"%PDF"
    text = window.copy_results()
    assert "M(<theta_E)" in text and "which model gives each number:" in text and "'models'" not in text
    # the exports carry the lens centre and which centre it is
    assert doc["systems"][0]["result"]["center_source"] == "centre of the circle fitted to the arc points"
    assert table["center_ra"][0] == pytest.approx(result["center_ra"]) and str(table["center_ra"].unit) == "deg"
    assert table["center_source"][0] == "centre of the circle fitted to the arc points"


def test_screenshot_is_not_blank(qtbot, ring_window, tmp_path):
    from PySide6.QtGui import QImage

    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    out = window.save_screenshot(str(tmp_path / "shot.png"))
    image = QImage(str(out))
    assert image.width() > 600 and image.height() > 400
    # Sample a grid of pixels over the canvas area: a real image has many distinct colours.
    canvas_rect = window.canvas.geometry()
    origin = window.canvas.mapTo(window, canvas_rect.topLeft() - canvas_rect.topLeft())
    colours = {image.pixel(origin.x() + i, origin.y() + j)
               for i in range(5, canvas_rect.width() - 5, 17) for j in range(5, canvas_rect.height() - 5, 17)}
    assert len(colours) > 20


def test_ring_finder_result_becomes_editable_marks(qtbot, ring_window):
    window, truth = ring_window
    window.act_ring.trigger()
    qtbot.waitUntil(lambda: len(window.model.active_system.points) >= 3, timeout=30000)
    fit = window.model.fit
    assert fit is not None
    # Truth file theta_E (the generator's input SIE): the finder's ridge points, fitted by a circle, within 2%.
    assert fit.theta_e_arcsec == pytest.approx(truth["theta_e_arcsec"], rel=0.02)
    assert "(confident)" in window.last_message
    n = len(window.model.active_system.points)
    window.act_undo.trigger()  # one undo removes the whole ring-finder result
    assert len(window.model.active_system.points) in (0,) or len(window.model.active_system.points) < n


def test_ring_finder_says_when_the_ring_is_barely_resolved(qtbot, window, tmp_path):
    # A field of our generator with theta_E = 1.0" under 0.8" seeing: the status bar must say the ring
    # is not confident and why, not just show marks.
    from astropy.io import fits

    from lensmass.core import raytrace as rt

    sim = rt.simulate_field(shape=(80, 80), pixel_scale_arcsec=0.2, center_x=39.8, center_y=39.8,
                            lenses=[rt.SIELens(1.0, 0.85, 30.0)], psf_fwhm_arcsec=0.8, seed=2,
                            sources=[rt.SersicSource(rt.flux_from_mag(24.0), 0.15, 1.0, 0.8, 10.0, 0.04, -0.03)],
                            foreground=[rt.SersicSource(rt.flux_from_mag(20.5), 1.2, 4.0, 0.8, 30.0)])
    header = fits.Header({"CTYPE1": "RA---TAN", "CTYPE2": "DEC--TAN", "CRPIX1": 40.0, "CRPIX2": 40.0,
                          "CRVAL1": 210.5, "CRVAL2": -3.25, "CDELT1": -0.2 / 3600, "CDELT2": 0.2 / 3600})
    path = tmp_path / "small_ring.fits"
    fits.PrimaryHDU(sim.image.astype(np.float32), header=header).writeto(path)
    assert window.open_path(str(path))
    window.act_ring.trigger()
    qtbot.waitUntil(lambda: len(window.model.active_system.points) >= 3, timeout=30000)
    assert "not confident" in window.last_message and "barely resolved" in window.last_message


def test_a_second_arc_system_has_its_own_source_redshift(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    enter_redshifts(qtbot, window, truth["z_l"], truth["z_s"])
    assert f"z_s {truth['z_s']:g}" in window.system_list.item(0).text()  # the list shows the typed z_s
    wait_for_result(qtbot, window)
    window.act_new_system.trigger()
    assert window.model.active_system.name == "B"
    cx, cy = truth["center_x"], truth["center_y"]
    for x, y in ring_points(truth)[::2]:  # a wider arc of a second source
        click_image(qtbot, window, cx + 1.6 * (x - cx), cy + 1.6 * (y - cy))
    type_into(qtbot, window, "z_s", "2.5")
    wait_idle(qtbot, window)
    a, b = window.model.derived
    assert a.result is not None and b.result is not None
    assert a.result["z_s"] == truth["z_s"] and b.result["z_s"] == 2.5
    assert b.result["theta_e_arcsec"] == pytest.approx(1.6 * a.result["theta_e_arcsec"], rel=0.03)
    # M(<theta_E) = pi Sigma_cr (D_l theta_E)^2 (Narayan & Bartelmann 1996): check the ratio of the two systems.
    ratio = (b.result["sigma_cr_msun_per_pc2"] / a.result["sigma_cr_msun_per_pc2"]
             * (b.result["theta_e_arcsec"] / a.result["theta_e_arcsec"]) ** 2)
    assert b.result["mass_einstein_msun"] / a.result["mass_einstein_msun"] == pytest.approx(ratio, rel=1e-9)
    window.system_list.setCurrentRow(0)
    assert window.inputs_panel.fields["z_s"].edit.text() == f"{truth['z_s']:g}"


def test_the_two_images_of_a_double_give_theta_e(qtbot, window):
    path, truth = demo_field("tris_double_b")
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    window.act_tools[1].trigger()  # "I": images of a multiple-image system
    for x, y in truth["image_points_xy"]:
        click_image(qtbot, window, x, y)
    assert len(window.model.active_system.images) == 2
    marks = [m for m in window.canvas.marks if m.kind == "image"]
    assert len(marks) == 2
    fit = window.model.fit
    # Narayan & Bartelmann (1996): for an SIS the two images lie at theta_E +- beta, so half their
    # separation is theta_E; truth file theta_E of this field (an SIS-like lens).
    assert "half the separation" in fit.method
    assert fit.theta_e_arcsec == pytest.approx(truth["theta_e_arcsec"], rel=0.1)
    enter_redshifts(qtbot, window, truth["z_l"], truth["z_s"])
    wait_for_result(qtbot, window)
    assert label_float(window.results_panel.values["theta_e_arcsec"]) == pytest.approx(fit.theta_e_arcsec, rel=1e-3)


def test_an_ellipse_fit_gives_the_equal_area_radius(qtbot, ring_window):
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    window.shape_box.setCurrentText("ellipse")
    window.shape_box.activated.emit(window.shape_box.currentIndex())
    fit = window.model.fit
    assert fit.shape == "ellipse" and fit.a_px >= fit.b_px
    # Truth file: an SIE with theta_E = 1.4"; its critical curve is an ellipse of the same area as the
    # circle of radius theta_E (Kormann, Schneider & Bartelmann 1994), so sqrt(a b) is theta_E.
    assert fit.theta_e_arcsec == pytest.approx(truth["theta_e_arcsec"], rel=0.05)
    assert np.sqrt(fit.a_px * fit.b_px) * truth["pixel_scale_arcsec"] == pytest.approx(fit.theta_e_arcsec, rel=1e-6)
    window.act_undo.trigger()
    assert window.model.fit.shape == "circle"
