"""The position read-out: sexagesimal RA/Dec, copying the position, and the pixel numbering.

Outside checks: astropy.wcs reads the demo field's header independently of the window
(``all_pix2world`` with origin 0 for array pixels and origin 1 for FITS pixels, as the FITS
standard numbers them: Pence et al. 2010, A&A 524, A42, section 8.1); the sexagesimal
digits are worked by hand from the degrees (common practice: 1 h of RA = 15 deg, 60 min, 60 s).
"""


import numpy as np
import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402
from PySide6.QtGui import QGuiApplication  # noqa: E402

from tests.gui.conftest import demo_field  # noqa: E402


def _hand_sexagesimal(ra_deg: float, dec_deg: float) -> tuple[str, str]:
    """h:m:s and d:m:s worked by hand (no astropy), rounded as the window rounds (3 and 2 decimals)."""
    ms = round(ra_deg / 15 * 3600 * 1000)  # milliseconds of time
    h, rest = divmod(ms, 3600_000)
    m, rest = divmod(rest, 60_000)
    cas = round(abs(dec_deg) * 3600 * 100)  # hundredths of arcsec
    d, rest2 = divmod(cas, 3600_00)
    am, rest2 = divmod(rest2, 60_00)
    sign = "-" if dec_deg < 0 else "+"
    return f"{h:02d}:{m:02d}:{rest // 1000:02d}.{rest % 1000:03d}", f"{sign}{d:02d}:{am:02d}:{rest2 // 100:02d}.{rest2 % 100:02d}"


def _header_wcs(path):
    from astropy.io import fits
    from astropy.wcs import WCS

    with fits.open(path) as hdul:
        return WCS(hdul[0].header).celestial


def _hover(qtbot, window, x, y):
    pos = window.canvas.image_to_widget(x, y).toPoint()
    qtbot.mouseMove(window.canvas, pos)
    qtbot.waitUntil(lambda: window.readout.last is not None, timeout=3000)
    return window.readout.last


def _fields(text: str) -> dict:
    parts = text.split()
    return {"x": float(parts[parts.index("x") + 1]), "y": float(parts[parts.index("y") + 1]),
            "ra": parts[parts.index("RA") + 1], "dec": parts[parts.index("Dec") + 1],
            "deg": [float(v.strip("()")) for v in text.split("Dec")[1].split("(")[1].split()[:2]]}


def test_read_out_gives_sexagesimal_and_degrees_of_the_wcs(qtbot, ring_window):
    window, truth = ring_window
    x, y = _hover(qtbot, window, truth["center_x"] + 7, truth["center_y"] - 5)
    text = window.position_label.text()
    assert "(0-based)" in text  # the pixel numbering is named
    f = _fields(text)
    assert (f["x"], f["y"]) == pytest.approx((x, y), abs=0.006)
    ra, dec = _header_wcs(demo_field()[0]).all_pix2world(x, y, 0)  # astropy, array (0-based) pixels
    assert f["deg"] == pytest.approx([float(ra), float(dec)], abs=2e-6)
    assert (f["ra"], f["dec"]) == _hand_sexagesimal(float(ra), float(dec))


def test_fits_numbering_shifts_the_pixels_not_the_sky_and_is_remembered(qtbot, ring_window, make_window):
    window, truth = ring_window
    x0, y0 = _hover(qtbot, window, truth["center_x"], truth["center_y"])
    before = _fields(window.position_label.text())
    window.findChild(type(window.readout.origin_actions[1]), "pixel_origin_1").trigger()  # View > Pixel numbering
    text = window.position_label.text()
    assert "(FITS 1-based)" in text
    after = _fields(text)
    assert (after["x"], after["y"]) == pytest.approx((before["x"] + 1, before["y"] + 1), abs=1e-9)
    assert after["ra"] == before["ra"] and after["dec"] == before["dec"]
    # astropy with origin 1 (the FITS convention) at the shown pixel gives the same sky position
    ra, dec = _header_wcs(demo_field()[0]).all_pix2world(after["x"], after["y"], 1)
    assert after["deg"] == pytest.approx([float(ra), float(dec)], abs=2e-6)
    window.close()
    again = make_window()  # same settings file: the choice is kept
    assert again.readout.origin == 1
    assert again.readout.origin_actions[1].isChecked()


def test_p_and_the_read_out_menu_copy_the_position(qtbot, ring_window):
    window, truth = ring_window
    QGuiApplication.clipboard().clear()
    _hover(qtbot, window, truth["center_x"] + 3, truth["center_y"] + 2)
    shown = _fields(window.position_label.text())
    window.activateWindow()
    qtbot.keyClick(window.canvas, Qt.Key_P)
    assert QGuiApplication.clipboard().text() == f"{shown['ra']} {shown['dec']}"
    assert window.last_message.startswith("Copied")
    # leaving the image keeps the last position (dimmed) for the read-out's menu
    window.canvas.left_image.emit()
    assert window.position_label.text() and not window.position_label.isEnabled()
    from PySide6.QtWidgets import QMenu

    label = window.position_label
    label.customContextMenuRequested.emit(label.rect().center())
    menu = label.findChildren(QMenu)[-1]
    qtbot.waitUntil(menu.isVisible, timeout=2000)
    by_name = {a.objectName(): a for a in menu.actions()}
    by_name["copy_position_degrees"].trigger()
    menu.close()
    assert [float(v) for v in QGuiApplication.clipboard().text().split()] == pytest.approx(shown["deg"], abs=1e-9)
    by_name["copy_position_pixel"].trigger()
    assert [float(v) for v in QGuiApplication.clipboard().text().split()] == pytest.approx(
        [shown["x"], shown["y"]], abs=1e-9)


def test_without_a_wcs_p_copies_the_pixel_and_says_so(qtbot, window, tmp_path):
    from astropy.io import fits

    path = tmp_path / "no_sky.fits"
    fits.PrimaryHDU(np.random.default_rng(3).normal(size=(40, 50)).astype("f4")).writeto(path)
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    hx, hy = _hover(qtbot, window, 12.0, 30.0)
    assert "RA" not in window.position_label.text()
    window.activateWindow()
    qtbot.keyClick(window.canvas, Qt.Key_P)
    x, y = (float(v) for v in QGuiApplication.clipboard().text().split())
    assert abs(x - hx) <= 0.005 + 1e-9 and abs(y - hy) <= 0.005 + 1e-9  # the position shown, to 2 decimals
    assert "no sky coordinates" in window.last_message
