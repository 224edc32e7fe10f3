"""A new observer's journey at 1366 x 768: from a bare cutout to a mass with errors, counting actions.

The user drops the file on the window (1 action); the window fits it, sees a bright galaxy at the
centre, fits its light and shows the residual by itself; the user clicks "Find the ring" (1), clicks
into z lens and types it (2), clicks into z source and types it and presses Enter (3), and reads
M(<theta_E) with its 68% interval. Every control used and every number read must lie wholly inside the
1366 x 768 window (no scrolling, no clipping). The count is asserted below 10 and printed.

Outside references: the Einstein mass M = pi Sigma_cr (D_l theta_E)^2 with
Sigma_cr = c^2 D_s / (4 pi G D_l D_ls) (Schneider, Ehlers & Falco 1992, eqs. 5.7 and 8.3; common
practice), distances from astropy's Planck18; the demo truth file and the project's inject-and-recover
generator give theta_E.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from PySide6.QtCore import QMimeData, QPoint, QPointF, Qt, QUrl
from PySide6.QtGui import QDropEvent

from tests.gui.conftest import demo_field, wait_for_result, wait_idle
from tests.gui.test_small_screen import SCREEN, _shown_whole


class Journey:
    """Drives the window as a user would and counts each click, typed field and key."""

    def __init__(self, qtbot, window):
        self.qtbot, self.window, self.actions, self.used = qtbot, window, [], []

    def _count(self, what: str, widget=None) -> None:
        self.actions.append(what)
        if widget is not None:
            self.used.append(widget)

    def drop_file(self, path) -> None:
        mime = QMimeData()
        mime.setUrls([QUrl.fromLocalFile(str(path))])
        canvas = self.window.canvas
        at = QPointF(canvas.mapTo(self.window, QPoint(canvas.width() // 2, canvas.height() // 2)))
        event = QDropEvent(at, Qt.CopyAction, mime, Qt.LeftButton, Qt.NoModifier)
        self.window.dropEvent(event)
        self._count("drop the file on the window", canvas)

    def click(self, widget, what: str) -> None:
        assert _shown_whole(widget, self.window), f"{what} is not wholly in view at {SCREEN}"
        self.qtbot.mouseClick(widget, Qt.LeftButton)
        self._count(what, widget)

    def type(self, widget, text: str, what: str) -> None:
        self.qtbot.keyClicks(widget, text)
        self._count(what, widget)

    def key(self, widget, key, what: str) -> None:
        self.qtbot.keyClick(widget, key)
        self._count(what, widget)


def _window_at_small_screen(make_window, qtbot):
    window = make_window(load_panels=True)
    window.resize(*SCREEN)
    qtbot.waitUntil(lambda: len(window.panels) > 0, timeout=10000)
    qtbot.wait(100)  # the docks are sized once the window has its size
    assert window.width() <= SCREEN[0] and window.height() <= SCREEN[1]
    return window


def _einstein_mass_astropy(theta_e_arcsec: float, z_l: float, z_s: float) -> float:
    from astropy import constants as const
    from astropy import units as u
    from astropy.cosmology import Planck18

    d_l = Planck18.angular_diameter_distance(z_l)
    d_s = Planck18.angular_diameter_distance(z_s)
    d_ls = Planck18.angular_diameter_distance(z_l, z_s)  # between the two redshifts
    sigma_cr = (const.c ** 2 * d_s / (4 * math.pi * const.G * d_l * d_ls)).to(u.Msun / u.pc ** 2)
    r_e = (d_l * (theta_e_arcsec * u.arcsec).to(u.rad).value).to(u.pc)
    return float((math.pi * sigma_cr * r_e ** 2).to(u.Msun).value)


def _walk(qtbot, window, path, z_l: float, z_s: float) -> tuple[Journey, dict]:
    j = Journey(qtbot, window)
    j.drop_file(path)
    # the window fits the lens light and shows the residual by itself (no action)
    qtbot.waitUntil(lambda: window.model.display.layer == "residual", timeout=60000)
    j.click(window.ring_button, "click Find the ring")
    qtbot.waitUntil(lambda: len(window.model.active_system.points) > 0, timeout=120000)
    wait_idle(qtbot, window, 120000)
    z_lens = window.inputs_panel.fields["z_l"].edit
    z_source = window.inputs_panel.fields["z_s"].edit
    j.click(z_lens, "click into z lens")
    j.type(z_lens, f"{z_l:g}", "type z lens")
    j.click(z_source, "click into z source")
    j.type(z_source, f"{z_s:g}", "type z source")
    j.key(z_source, Qt.Key_Return, "press Enter")
    result = wait_for_result(qtbot, window, 60000)
    wait_idle(qtbot, window, 60000)
    # read the mass and its interval: both wholly in view
    panel = window.results_panel
    for label in (panel.values["mass_einstein_msun"], panel.intervals["mass_einstein_msun"],
                  panel.values["theta_e_arcsec"]):
        assert _shown_whole(label, window), "the mass is not in view at 1366 x 768"
    assert panel.values["mass_einstein_msun"].text() not in ("", "–")
    assert panel.intervals["mass_einstein_msun"].text().strip() != ""
    for widget in j.used:
        top_left = widget.mapTo(window, widget.rect().topLeft())
        assert window.rect().contains(top_left), f"{type(widget).__name__} lies outside the window"
    print(f"\nactions to a mass with errors ({len(j.actions)}): " + "; ".join(j.actions))
    return j, result


def test_a_new_observer_reaches_a_mass_on_the_demo_ring_in_under_ten_actions(qtbot, make_window):
    path, truth = demo_field("tris_ring_a")
    window = _window_at_small_screen(make_window, qtbot)
    journey, result = _walk(qtbot, window, path, truth["z_l"], truth["z_s"])
    assert len(journey.actions) < 10
    theta, lo, hi = result["theta_e_arcsec"], *result["intervals68"]["theta_e_arcsec"]
    # the demo's truth file: theta_E = 1.4" (SIE, intermediate-axis normalisation); 3 sigma of the stated error
    assert abs(theta - truth["theta_e_arcsec"]) < 3 * (hi - lo) / 2 + 0.01
    # the mass from theta_E with astropy's Planck18 (Schneider, Ehlers & Falco 1992, eq. 8.3)
    assert result["mass_einstein_msun"] == pytest.approx(_einstein_mass_astropy(theta, truth["z_l"], truth["z_s"]),
                                                         rel=2e-3)
    m_lo, m_hi = result["intervals68"]["mass_einstein_msun"]
    assert m_lo < result["mass_einstein_msun"] < m_hi


def test_the_same_journey_on_a_survey_like_cutout_with_a_star(qtbot, make_window, tmp_path):
    from lensmass.core.realistic_fields import make_cutout
    from lensmass.io.cutout_files import write_cutout_fits

    cutout = make_cutout(3021, "ring+star")  # the project's inject-and-recover generator: a star beside the ring
    path = write_cutout_fits(tmp_path / "tris_survey_cutout.fits", cutout, rotation_deg=33.0)
    window = _window_at_small_screen(make_window, qtbot)
    journey, result = _walk(qtbot, window, path, 0.3, 1.2)  # invented redshifts
    assert len(journey.actions) < 10
    truth_theta = cutout.truth["radius_pix"] * cutout.pixel_scale_arcsec
    lo, hi = result["intervals68"]["theta_e_arcsec"]
    assert abs(result["theta_e_arcsec"] - truth_theta) < 3 * (hi - lo) / 2
    assert result["mass_einstein_msun"] == pytest.approx(
        _einstein_mass_astropy(result["theta_e_arcsec"], 0.3, 1.2), rel=2e-3)
    assert np.isfinite(result["intervals68"]["mass_einstein_msun"]).all()
