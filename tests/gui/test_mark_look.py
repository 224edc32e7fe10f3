"""The marks as the user sees them: drawn in the palette's colours on light and dark displays, the
marked pixels left in view, labels clear of the marks and outside the fitted curve.

Driven as a user would: clicks on the image, the invert box, Ctrl+Z; checked on the canvas's pixels.
"""

import math

import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import QPointF, Qt  # noqa: E402

from lensmass.io import mark_palette as P  # noqa: E402
from tests.gui.conftest import click_image  # noqa: E402
from tests.gui.test_window import ring_points  # noqa: E402


def _rgb(colour) -> tuple[int, int, int]:
    return colour.red(), colour.green(), colour.blue()


def _hex_rgb(hex_colour: str) -> tuple[int, int, int]:
    h = hex_colour.lstrip("#")
    return tuple(int(h[i:i + 2], 16) for i in (0, 2, 4))


def _near(image, at: QPointF, radius: float, colour: str, tol: int = 40) -> int:
    """How many pixels within ``radius`` of ``at`` are close to ``colour``."""
    want = _hex_rgb(colour)
    n = 0
    for dx in range(-int(radius), int(radius) + 1):
        for dy in range(-int(radius), int(radius) + 1):
            x, y = int(round(at.x())) + dx, int(round(at.y())) + dy
            if 0 <= x < image.width() and 0 <= y < image.height():
                if max(abs(a - b) for a, b in zip(_rgb(image.pixelColor(x, y)), want)) <= tol:
                    n += 1
    return n


def _mark(qtbot, window, truth, n=6):
    window.act_tools[2].trigger()  # C: the centre tool
    click_image(qtbot, window, truth["center_x"], truth["center_y"])
    window.act_tools[0].trigger()  # A: arc points
    for x, y in ring_points(truth, n):
        click_image(qtbot, window, x, y)


@pytest.mark.parametrize("invert", [False, True], ids=["dark sky", "light sky"])
def test_marks_show_in_the_palette_and_leave_the_marked_pixels_in_view(qtbot, ring_window, invert):
    window, truth = ring_window
    window.canvas.zoom_to(12.0)
    window.canvas.centre_on_image(truth["center_x"], truth["center_y"])
    if invert:
        window.invert_box.click()
    bare = window.canvas.grab().toImage()
    _mark(qtbot, window, truth)
    assert window.canvas.fits, "the ring's points make a fitted circle"
    shown = window.canvas.grab().toImage()
    c = window.canvas
    for mark in c.marks:
        at = c.image_to_widget(mark.x, mark.y)
        colour = P.mark_colour(mark.kind, mark.system)
        # the glyph is drawn in its colour round the point ...
        assert _near(shown, at, P.GLYPH_RADIUS_PX[mark.kind] + 1, colour) >= 4, (mark.kind, colour)
        # ... and the pixel under the mark is shown as it was without marks (nothing painted on it)
        px, py = int(at.x()), int(at.y())
        assert _rgb(shown.pixelColor(px, py)) == _rgb(bare.pixelColor(px, py)), mark
    # undo every mark: the image looks as before
    for _ in range(len(c.marks)):
        qtbot.keyClick(c, Qt.Key_Z, Qt.ControlModifier)
    assert not c.marks


def test_labels_sit_outside_the_curve_clear_of_every_mark(qtbot, ring_window):
    window, truth = ring_window
    _mark(qtbot, window, truth, n=12)
    window.canvas.repaint()
    c = window.canvas
    rect = c.label_rects[0]
    shape = c.fits[0]
    centre = c.image_to_widget(shape.x, shape.y)
    radius = shape.a_px * c.zoom
    # every corner and edge midpoint of the label lies beyond the fitted circle (the arc's data)
    for x in (rect.left(), rect.center().x(), rect.right()):
        for y in (rect.top(), rect.center().y(), rect.bottom()):
            assert math.hypot(x - centre.x(), y - centre.y()) > radius
    for mark in c.marks:
        at = c.image_to_widget(mark.x, mark.y)
        r = P.GLYPH_RADIUS_PX[mark.kind]
        glyph = rect.adjusted(-r, -r, r, r)
        assert not glyph.contains(at), mark
    assert c.rect().contains(rect.toRect())


def test_system_list_shows_each_systems_glyph(qtbot, ring_window):
    window, _truth = ring_window
    window.add_system_button.click()
    items = [window.system_list.item(i) for i in range(window.system_list.count())]
    assert len(items) == 2 and all(not item.icon().isNull() for item in items)
    icon = items[1].icon().pixmap(14, 14).toImage()
    assert _near(icon, QPointF(7, 7), 7, P.system_colour(1)) >= 2
    assert "◆" not in items[0].text()


def test_labels_of_two_systems_do_not_cover_each_other(qtbot, ring_window):
    window, truth = ring_window
    _mark(qtbot, window, truth, n=8)
    window.add_system_button.click()  # a second system on a wider circle round the same centre
    cx, cy = truth["center_x"], truth["center_y"]
    for k in range(6):
        t = 2 * math.pi * k / 6 + 0.3
        click_image(qtbot, window, cx + 11 * math.cos(t), cy + 11 * math.sin(t))
    window.canvas.repaint()
    rects = window.canvas.label_rects
    assert set(rects) == {0, 1}
    assert not rects[0].intersects(rects[1])
