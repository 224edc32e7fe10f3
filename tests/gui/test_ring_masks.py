"""The window's ring finder and lens-light fit on a survey-like cutout: same answer as the command
line, whatever was clicked before; masks shown and painted by hand."""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt
import pytest

from lensmass.core.realistic_fields import make_cutout
from lensmass.io.cutout_files import write_cutout_fits
from tests.gui.conftest import click_find_ring, click_image, wait_idle


@pytest.fixture
def star_field(tmp_path):
    """A ring with a Moffat star beside it (the project's generator), as FITS with a rotated WCS."""
    cutout = make_cutout(3021, "ring+star")
    path = write_cutout_fits(tmp_path / "tris_cutout.fits", cutout, rotation_deg=33.0)
    return path, cutout


def _find_ring(qtbot, window):
    return click_find_ring(qtbot, window)


def test_window_ring_is_the_command_lines_after_fit_lens_light(qtbot, make_window, star_field):
    from lensmass.core.einstein import measure_theta_e_auto_ring
    from lensmass.io.images import load_image

    path, cutout = star_field
    window = make_window(load_panels=True)
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    qtbot.mouseClick(window.light_button, Qt.LeftButton)  # "Fit lens light" first: it must not change the ring
    wait_idle(qtbot, window, 120000)
    assert "Sersic n" in window.statusBar().currentMessage()
    ring = _find_ring(qtbot, window)
    cli, cli_ring = measure_theta_e_auto_ring(load_image(path), require_confident=False)
    # One code path: the same function with the same inputs gives the same radius and error.
    assert ring.radius_pix == pytest.approx(cli_ring.radius_pix, abs=1e-9)
    assert ring.radius_err_pix == pytest.approx(cli_ring.radius_err_pix, abs=1e-9)
    assert ring.radius_pix == pytest.approx(cutout.truth["radius_pix"], abs=2 * ring.radius_err_pix)
    message = window.statusBar().currentMessage()
    assert "lens centre" in message
    # The star's automatic mask is on the image (shown by the Masks dock).
    sx, sy = next((x, y) for k, x, y in cutout.truth["extras"] if k == "star")
    assert window.model.image.auto_mask[int(round(sy)), int(round(sx))]


def test_painting_a_mask_by_hand_reaches_the_ring_finder(qtbot, make_window, star_field):
    from lensmass.gui.mask_panel import MaskPanel

    path, cutout = star_field
    window = make_window(load_panels=True)
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    panel = next(p for p in window.panels if isinstance(p, MaskPanel))
    panel.radius.setValue(3)
    qtbot.mouseClick(panel.paint_button, Qt.LeftButton)
    click_image(qtbot, window, 10.0, 12.0)
    hand = window.model.image.hand_mask
    assert hand is not None and hand[12, 10] and hand.sum() == pytest.approx(np.pi * 9, rel=0.35)
    assert "painted by hand" in panel.status.text()
    qtbot.mouseClick(panel.erase_button, Qt.LeftButton)
    click_image(qtbot, window, 10.0, 12.0)
    assert window.model.image.hand_mask is None
    qtbot.mouseClick(panel.paint_button, Qt.LeftButton)
    click_image(qtbot, window, 10.0, 12.0)
    ring = _find_ring(qtbot, window)
    assert ring.masks.mask[12, 10]  # the painted pixels were left out of the search


def test_window_ring_on_a_colour_png_is_the_command_lines(qtbot, make_window, tmp_path):
    # A three-band 8-bit asinh-stretched picture (Lupton et al. 2004 stretch: common practice for survey
    # cutouts) of a generated ring (the project's generator, seed from the colour tuning range).
    from lensmass.core.einstein import measure_theta_e_auto_ring
    from lensmass.io.cutout_files import write_cutout_picture
    from lensmass.io.images import load_image

    cutout = make_cutout(510000, "ring")
    path = write_cutout_picture(tmp_path / "tris_cutout.png", cutout)
    window = make_window(load_panels=True)
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    ring = _find_ring(qtbot, window)
    cli, cli_ring = measure_theta_e_auto_ring(load_image(path), require_confident=False,
                                             pixel_scale_arcsec=cutout.pixel_scale_arcsec)
    assert ring.radius_pix == pytest.approx(cli_ring.radius_pix, abs=1e-9)
    assert ring.radius_err_pix == pytest.approx(cli_ring.radius_err_pix, abs=1e-9)
    assert any("told from the lens light by colour" in w for w in ring.warnings)  # the colour route ran
    assert ring.radius_pix == pytest.approx(cutout.truth["radius_pix"], abs=2 * ring.radius_err_pix)
    assert not ring.confident  # an 8-bit stretched picture never gives a confident ring


def test_window_and_command_line_state_a_lone_arcs_asymmetric_interval(qtbot, make_window, tmp_path, capsys):
    # a lone arc of the project's generator (seed 520007, a tuning seed of the interval): its interval is the
    # calibrated lone-arc spread, wider above than below; the window's message and the command line's line are
    # written by one function (lensmass.core.ring_interval.interval_text) from the same bounds
    from lensmass.core.einstein import BOUND_KEYS
    from lensmass.core.ring_interval import interval_bounds, interval_text

    path = write_cutout_fits(tmp_path / "tris_arc.fits", make_cutout(520007, "arc"))
    window = make_window(load_panels=True)
    assert window.open_path(str(path))
    ring = _find_ring(qtbot, window)
    assert np.isfinite(ring.lone_arc_radius_pix)
    lo2, lo1, hi1, hi2 = interval_bounds(ring)
    assert hi1 - ring.radius_pix > 1.5 * (ring.radius_pix - lo1)
    assert interval_text(ring.radius_pix, (lo2, lo1, hi1, hi2), "px") in window.statusBar().currentMessage()
    from lensmass.cli import main
    from lensmass.core.einstein import measure_theta_e_auto_ring
    from lensmass.io.images import load_image

    m, _ = measure_theta_e_auto_ring(load_image(path), require_confident=False)
    assert main(["measure", str(path), "--auto-ring", "--accept-weak", "--zl", "0.4", "--zs", "1.5"]) == 0
    shown = capsys.readouterr().out
    assert "theta_E from the ring finder: " + interval_text(m.theta_e_arcsec, m.theta_e_bounds_arcsec, "arcsec", 3) \
        in shown
    assert m.asymmetric and m.theta_e_bounds_arcsec[2] - m.theta_e_arcsec > 1.5 * (m.theta_e_arcsec
                                                                                   - m.theta_e_bounds_arcsec[1])
    assert set(BOUND_KEYS) <= set(m.keys())


def test_numbers_of_a_found_lone_arc_are_the_command_lines_until_its_marks_change(qtbot, make_window, tmp_path,
                                                                                    capsys):
    # The same lone arc (seed 520007): the Numbers panel must show the finder's theta_E and interval, not a circle
    # through the arc's ridge (which lies outside the critical curve: a circle through a lone arc overstates
    # theta_E, Narayan & Bartelmann 1996, common practice), and its masses must be the command line's: theta_E
    # drawn from the same asymmetric interval, with the same words of where it came from. A mark the user adds
    # makes the marks their own: the circle fit again.
    import json

    from lensmass.cli import main
    from tests.gui.conftest import type_into, wait_for_result

    path = write_cutout_fits(tmp_path / "tris_arc.fits", make_cutout(520007, "arc"))
    assert main(["measure", str(path), "--auto-ring", "--accept-weak", "--zl", "0.4", "--zs", "1.5", "--json"]) == 0
    cli = json.loads(capsys.readouterr().out)
    window = make_window(load_panels=True)
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    type_into(qtbot, window, "z_l", "0.4")
    type_into(qtbot, window, "z_s", "1.5")
    ring = _find_ring(qtbot, window)
    result = wait_for_result(qtbot, window, 60000)
    panel = window.results_panel
    assert "theta_E from the ring finder" in panel.status.text()
    assert result["theta_e_arcsec"] == pytest.approx(cli["theta_e_arcsec"], rel=1e-9)
    assert result["models"]["theta_e_arcsec"] == cli["models"]["theta_e_arcsec"]
    assert result["intervals68"]["theta_e_arcsec"] == pytest.approx(cli["intervals68"]["theta_e_arcsec"], rel=0.03)
    assert result["theta_e_high1_arcsec"] == pytest.approx(cli["theta_e_high1_arcsec"], rel=1e-9)
    shown = float(panel.values["theta_e_arcsec"].text())
    assert shown == pytest.approx(cli["theta_e_arcsec"], abs=0.06)
    fit = window.model.fit
    assert fit.a_px * cli["pixel_scale_arcsec"] == pytest.approx(cli["theta_e_arcsec"])  # the circle drawn at theta_E
    marks = np.asarray(window.model.active_system.points, float)
    arc_radius = np.median(np.hypot(marks[:, 0] - fit.center_x, marks[:, 1] - fit.center_y))
    assert arc_radius * cli["pixel_scale_arcsec"] > 1.15 * cli["theta_e_arcsec"]  # a circle through them: too large
    x, y = ring.points_x[0], ring.points_y[0]
    click_image(qtbot, window, float(x) + 0.7, float(y) + 0.7)  # one more mark of the user's own
    wait_idle(qtbot, window, 60000)
    assert "theta_E from the circle fit" in panel.status.text()
    assert window.model.result["theta_e_arcsec"] == pytest.approx(window.model.fit.theta_e_arcsec)


def test_a_found_rings_answer_is_saved_with_the_session(tmp_path):
    # The finder's measurement travels with the session file (Session.ring) and applies again on reopening while
    # the marks are the finder's; plain JSON (RFC 8259) after numpy scalars are made Python ones.
    from types import SimpleNamespace

    from lensmass.core.einstein import ThetaEMeasurement
    from lensmass.gui.model import WindowModel
    from lensmass.io.session import load_session, save_session

    model = WindowModel()
    model.session.arcs[0].points = [(10.0, 12.0), (14.0, 9.5), (18.0, 12.0)]
    found = ThetaEMeasurement(1.2, 0.1, 14.0, 14.0, None, None, "automatic ring finder (arcs)", 0.05, 3, 0.2,
                              np.float64(9.5), np.bool_(False), None, None, [[10.0, 12.0]], ["a note"], "found",
                              (0.8, 1.0, 1.6, 2.0), True)
    model.set_ring_answer(0, found)
    path = save_session(tmp_path / "s.json", model.to_session())
    again = WindowModel()
    again.load_session(load_session(path))
    again.image = SimpleNamespace()  # ring_measurement_for needs an open image
    back = again.ring_measurement_for(0)
    assert back == ThetaEMeasurement(**{**vars(found), "ring_score": 9.5, "ring_confident": False})
    again.session.arcs[0].points[1] = (14.0, 9.0)  # a moved mark: the user's marks now
    assert again.ring_measurement_for(0) is None
