"""Typed display limits, the colour bar, the contrast drag (right button) and the loupe.

Driven as a user would (typed fields + Enter, a right-button drag on the image, the G key,
mouse moves) and checked against what the window then shows. Outside references: the colour
bar's shades are astropy.visualization's stretches (AsinhStretch, LinearStretch), and a pixel's
grey level under linear limits is the plain linear map 255 * (value - low) / (high - low) (common practice).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from PySide6.QtCore import QPoint, Qt

from tests.gui.conftest import demo_field


@pytest.fixture
def raw_ring(make_window):
    """The demo ring open as stored (no automatic lens-light fit), fitted to the window."""
    window = make_window()
    window.settings.setValue("view/light_on_open", False)
    path, truth = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    return window, path


def type_limits(qtbot, window, low: str, high: str) -> None:
    bar = window.colour_bar
    for edit, text in ((bar.low, low), (bar.high, high)):
        edit.setFocus()
        edit.selectAll()
        qtbot.keyClicks(edit, text)
    qtbot.keyClick(bar.high, Qt.Key_Return)


def grey_of(colour: int) -> int:
    return (int(colour) >> 8) & 0xFF  # the green channel of 0xffRRGGBB (equal to R and B for gray)


def test_typed_limits_show_the_image_between_them(qtbot, raw_ring):
    window, _ = raw_ring
    window.set_display(stretch="linear", colormap="gray")
    type_limits(qtbot, window, "0", "200")
    assert window.model.display.limits == "manual"
    assert window.model.display.manual_limits == (0.0, 200.0)
    assert window.limits_box.currentText() == "manual"
    data = window.model.image.data
    y, x = 50, 62
    expected = int(np.clip(255 * (data[y, x] - 0.0) / 200.0, 0, 255))  # linear map (common practice)
    colours = window.canvas.visible_colours()  # what the canvas painted (zoomed in: one sample per pixel)
    assert window.canvas.display_source()[1] == (0.0, 200.0)
    u0, v0 = int(window.canvas._tile_rect.x()), int(window.canvas._tile_rect.y())
    v = data.shape[0] - 1 - y  # FITS rows are shown bottom-up
    assert abs(grey_of(colours[v - v0, x - u0]) - expected) <= 1
    # a preset from the list goes back to automatic limits
    window.limits_box.setCurrentText("99.5%")
    window.limits_box.activated.emit(window.limits_box.currentIndex())
    assert window.model.display.limits == "99.5%"
    assert window.colour_bar.low.text() != "0"


def test_a_bad_typed_limit_is_one_sentence_and_changes_nothing(qtbot, raw_ring):
    window, _ = raw_ring
    before = window.model.display.limits
    type_limits(qtbot, window, "abc", "10")
    assert "low display limit must be a number" in window.last_message
    type_limits(qtbot, window, "50", "10")
    assert "must be below the high one" in window.last_message
    assert window.model.display.limits == before


def test_the_colour_bar_shows_the_stretch_between_the_limits(qtbot, raw_ring):
    from astropy.visualization import AsinhStretch

    from lensmass.gui.colour_bar import BAR_SAMPLES

    window, _ = raw_ring
    window.set_display(stretch="asinh", colormap="gray", limits="min-max")
    lo, hi = window.shown_limits()
    bar = window.colour_bar
    assert float(bar.low.text()) == pytest.approx(lo, rel=1e-3, abs=1e-3)
    assert float(bar.high.text()) == pytest.approx(hi, rel=1e-3)
    strip = bar.gradient._buffer[0]
    assert strip.size == BAR_SAMPLES
    mid = grey_of(strip[BAR_SAMPLES // 2])
    assert abs(mid - round(255 * float(AsinhStretch(a=0.1)(np.array([0.5]))[0]))) <= 2  # astropy's asinh stretch at the middle
    assert grey_of(strip[0]) == 0 and grey_of(strip[-1]) == 255
    assert "asinh" in bar.gradient.caption and "min-max" in bar.gradient.caption


def test_right_button_drag_changes_brightness_and_contrast(qtbot, raw_ring):
    window, _ = raw_ring
    canvas = window.canvas
    lo, hi = window.shown_limits()
    start = canvas.image_to_widget(20, 20).toPoint()
    qtbot.mousePress(canvas, Qt.RightButton, pos=start)
    qtbot.mouseMove(canvas, start + QPoint(canvas.width() // 10, 0))
    qtbot.mouseRelease(canvas, Qt.RightButton, pos=start + QPoint(canvas.width() // 10, 0))
    lo2, hi2 = window.model.display.manual_limits
    assert window.model.display.limits == "manual"
    assert hi2 - lo2 == pytest.approx(hi - lo, rel=1e-6)          # sideways: same contrast
    assert (lo2 + hi2) / 2 < (lo + hi) / 2                         # dragged right: brighter
    assert "Display limits" in window.last_message
    # up: more contrast (a narrower window); no mark was deleted, none added
    qtbot.mousePress(canvas, Qt.RightButton, pos=start)
    qtbot.mouseMove(canvas, start - QPoint(0, canvas.height() // 5))
    qtbot.mouseRelease(canvas, Qt.RightButton, pos=start - QPoint(0, canvas.height() // 5))
    lo3, hi3 = window.model.display.manual_limits
    assert hi3 - lo3 < 0.7 * (hi2 - lo2)
    assert not window.model.active_system.points


def test_manual_limits_are_saved_and_restored_with_the_session(qtbot, raw_ring, make_window, tmp_path):
    window, _ = raw_ring
    type_limits(qtbot, window, "-1", "40")
    session_file = tmp_path / "limits.lensmass.json"
    assert window._save_to(str(session_file))
    saved = json.loads(session_file.read_text())["display"]
    assert saved["limits"] == "manual" and saved["manual_limits"] == [-1.0, 40.0]
    other = make_window()
    assert other.open_path(str(session_file))
    assert other.model.display.manual_limits == (-1.0, 40.0)
    assert other.canvas.display_source()[1] == (-1.0, 40.0)
    assert other.colour_bar.low.text() == "-1" and other.colour_bar.high.text() == "40"
    assert other.limits_box.currentText() == "manual"


def test_the_loupe_shows_the_pixels_under_the_cursor_enlarged(qtbot, raw_ring):
    window, _ = raw_ring
    window.set_display(stretch="linear", colormap="gray")
    type_limits(qtbot, window, "0", "100")
    loupe = window.loupe
    assert not loupe.isVisible()
    qtbot.keyClick(window.canvas, Qt.Key_G)
    assert window.act_loupe.isChecked()
    x, y = 57.3, 50.6
    qtbot.mouseMove(window.canvas, window.canvas.image_to_widget(x, y).toPoint())
    qtbot.waitUntil(loupe.isVisible, timeout=2000)
    px, py = loupe.position
    assert abs(px - x) < 0.5 and abs(py - y) < 0.5  # to the screen pixel the mouse sits on
    value = window.model.image.data[int(round(py)), int(round(px))]
    expected = int(np.clip(255 * value / 100.0, 0, 255))  # linear map (common practice)
    assert abs(grey_of(loupe.colour_at_centre()) - expected) <= 1
    # it sits in a corner of the canvas, away from the cursor, and lets clicks through
    assert loupe.testAttribute(Qt.WA_TransparentForMouseEvents)
    cursor = window.canvas.image_to_widget(x, y)
    assert not loupe.geometry().contains(cursor.toPoint())
    qtbot.keyClick(window.canvas, Qt.Key_G)
    assert not loupe.isVisible()


@pytest.mark.parametrize("name, astropy_name, kwargs", [
    ("linear", "LinearStretch", {}), ("square root", "SqrtStretch", {}),
    ("logarithmic", "LogStretch", {"a": 1000}), ("asinh", "AsinhStretch", {"a": 0.1})])
def test_the_stretches_are_astropys(name, astropy_name, kwargs):
    # written out with numpy for a quick start; astropy.visualization is the reference
    from astropy import visualization

    from lensmass.gui.display import LEVELS, _stretch, colour_table

    x = np.linspace(0.0, 1.0, 1001)
    reference = getattr(visualization, astropy_name)(**kwargs)(x.copy(), clip=True)
    assert np.allclose(_stretch(name)(x), reference, rtol=1e-12, atol=1e-12)
    grey = (colour_table(name, "gray", False)[:LEVELS] >> 8) & 0xFF
    xs = np.linspace(0.0, 1.0, LEVELS)
    ref = np.round(255 * getattr(visualization, astropy_name)(**kwargs)(xs, clip=True))
    assert np.array_equal(grey, ref.astype(grey.dtype))


def test_a_mark_lands_where_the_loupe_cross_hair_is_to_a_fraction_of_a_pixel(qtbot, raw_ring):
    window, _ = raw_ring
    qtbot.keyClick(window.canvas, Qt.Key_G)
    window.act_zoom_in.trigger()
    window.act_zoom_in.trigger()  # a little closer, as one does to place a mark finely
    at = window.canvas.image_to_widget(57.3, 50.6).toPoint() + QPoint(1, 2)
    qtbot.mouseMove(window.canvas, at)
    qtbot.waitUntil(window.loupe.isVisible, timeout=2000)
    seen = window.loupe.position
    qtbot.mouseClick(window.canvas, Qt.LeftButton, pos=at)
    (x, y), = window.model.active_system.points
    assert (x, y) == pytest.approx(seen, abs=1e-9)        # the mark is where the cross-hair was
    assert abs(x - round(x)) > 1e-3 or abs(y - round(y)) > 1e-3  # not snapped to pixel centres
    assert not window.loupe.grab().isNull()
