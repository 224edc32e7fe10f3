"""Painting marks, fitted curves and their labels on the canvas, in the look of
:mod:`lensmass.io.mark_palette` (the report draws from the same palette and glyphs).

Labels never sit on the data they describe: a curve's label is a tab outside the curve,
joined to it by a short leader, on the side with the fewest marks; an image's number sits
beyond it, away from the lens centre (arcs run across that direction, not along it).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QFontMetricsF, QIcon, QPainter, QPainterPath, QPen, QPixmap

from lensmass.io import mark_palette as P

if TYPE_CHECKING:
    from lensmass.gui.canvas import FitShape, ImageCanvas, Mark


#: Screen radius left open around each marked point (inside every glyph and its casing).
OPEN_RADIUS_PX = P.open_radius_px()


def _colour(hex_colour: str, alpha: float = 1.0) -> QColor:
    c = QColor(hex_colour)
    c.setAlphaF(max(0.0, min(1.0, alpha)))
    return c


def _pens(core: str, active: bool, dash=None) -> tuple[QPen, QPen]:
    """Casing and core pens (cosmetic: the same width at every zoom)."""
    alpha = 1.0 if active else P.INACTIVE_ALPHA
    width = P.CORE_WIDTH_PX if active else P.CORE_WIDTH_PX * 0.8
    casing = QPen(_colour(P.CASING_COLOUR, P.CASING_ALPHA * alpha), P.CASING_WIDTH_PX if active else P.CASING_WIDTH_PX * 0.8)
    top = QPen(_colour(core, alpha), width)
    for pen in (casing, top):
        pen.setCosmetic(True)
        pen.setCapStyle(Qt.RoundCap)
        pen.setJoinStyle(Qt.RoundJoin)
        if dash is not None:
            pen.setDashPattern([d * (P.CORE_WIDTH_PX / pen.widthF()) for d in dash])
    return casing, top


def glyph_path(kind: str, at: QPointF, radius: float) -> QPainterPath:
    """The glyph of mark ``kind`` around widget point ``at`` (screen y points down)."""
    path = QPainterPath()
    for line in P.GLYPHS[kind]:
        x0, y0 = line[0]
        path.moveTo(at.x() + x0 * radius, at.y() - y0 * radius)
        for x, y in line[1:]:
            path.lineTo(at.x() + x * radius, at.y() - y * radius)
    return path


def _stroke(painter: QPainter, path: QPainterPath, core: str, active: bool, dash=None) -> None:
    painter.setBrush(Qt.NoBrush)
    for pen in _pens(core, active, dash):
        painter.setPen(pen)
        painter.drawPath(path)


def paint_mark(painter: QPainter, canvas: ImageCanvas, mark: Mark) -> None:
    """One mark's glyph, two-tone, its marked pixel left uncovered."""
    at = canvas.image_to_widget(mark.x, mark.y)
    path = glyph_path(mark.kind, at, P.GLYPH_RADIUS_PX[mark.kind])
    _stroke(painter, path, P.mark_colour(mark.kind, mark.system), mark.active or mark.kind == "centre")


def _ellipse_point(c: QPointF, a: float, b: float, angle_deg: float, t: float) -> QPointF:
    """Point at parameter ``t`` of an ellipse in widget coordinates (``angle_deg`` as painted)."""
    ca, sa = math.cos(math.radians(angle_deg)), math.sin(math.radians(angle_deg))
    x, y = a * math.cos(t), b * math.sin(t)
    return QPointF(c.x() + x * ca - y * sa, c.y() + x * sa + y * ca)


def _widget_angle(canvas: ImageCanvas, shape: FitShape) -> float:
    return -shape.angle_deg if canvas.flip_rows else shape.angle_deg


def paint_fit(painter: QPainter, canvas: ImageCanvas, shape: FitShape, avoid: list[QPointF] = ()) -> None:
    """A fitted circle or ellipse: solid with outward ticks when selected, dotted otherwise.

    A tick that would touch a mark in ``avoid`` (widget points) is left out.
    """
    colour = P.system_colour(shape.system)
    c = canvas.image_to_widget(shape.x, shape.y)
    a, b = shape.a_px * canvas.zoom, shape.b_px * canvas.zoom
    angle = _widget_angle(canvas, shape)
    path = QPainterPath()
    n = max(48, int(a / 2))
    for k in range(n + 1):
        p = _ellipse_point(c, a, b, angle, 2 * math.pi * k / n)
        path.moveTo(p) if k == 0 else path.lineTo(p)
    if shape.active:
        for k in range(P.FIT_TICKS):
            t = 2 * math.pi * (k + 0.5) / P.FIT_TICKS
            p = _ellipse_point(c, a, b, angle, t)
            d = math.hypot(p.x() - c.x(), p.y() - c.y()) or 1.0
            clear = P.GLYPH_RADIUS_PX["image"] + P.FIT_TICK_PX
            if any(math.hypot(q.x() - p.x(), q.y() - p.y()) < clear for q in avoid):
                continue
            path.moveTo(p)
            path.lineTo(QPointF(p.x() + (p.x() - c.x()) / d * P.FIT_TICK_PX, p.y() + (p.y() - c.y()) / d * P.FIT_TICK_PX))
    _stroke(painter, path, colour, shape.active, None if shape.active else P.INACTIVE_DASH)


def _label_font(painter: QPainter) -> QFont:
    font = QFont(painter.font())
    font.setPointSizeF(max(9.0, font.pointSizeF()))
    return font


def fit_label_rect(canvas: ImageCanvas, shape: FitShape, name: str, text: str, font: QFont,
                   avoid: list[QPointF], taken: list[QRectF] = ()) -> tuple[QRectF, QPointF, QPointF]:
    """Where a fit's label goes: (label rectangle, leader start on the curve, leader end).

    The label sits outside the curve, beyond a gap, in the direction (of eight, upper right
    first) that keeps it inside the canvas, off the labels already placed (``taken``) and farthest
    from the marks in ``avoid``.
    """
    fm = QFontMetricsF(font)
    w = fm.horizontalAdvance(name) + 8 + 6 + fm.horizontalAdvance(text)
    h = fm.height() + 4
    c = canvas.image_to_widget(shape.x, shape.y)
    a, b = shape.a_px * canvas.zoom, shape.b_px * canvas.zoom
    angle = _widget_angle(canvas, shape)
    bounds = QRectF(canvas.rect()).adjusted(4, 4, -4, -4)
    best = None
    for k, direction in enumerate((-45, -135, 45, 135, -90, 90, 0, 180)):
        t_dir = math.radians(direction)
        # the curve point in that screen direction, then the label beyond it
        t = math.atan2(math.sin(t_dir - math.radians(angle)) * a, math.cos(t_dir - math.radians(angle)) * b)
        on = _ellipse_point(c, a, b, angle, t)
        ux, uy = math.cos(t_dir), math.sin(t_dir)
        end = QPointF(on.x() + ux * P.LABEL_GAP_PX, on.y() + uy * P.LABEL_GAP_PX)
        pad = 3.0  # between the leader's end and the label
        left = end.x() + pad if ux >= -1e-9 else end.x() - w - pad
        top = end.y() - h if uy < -1e-9 else end.y() if uy > 1e-9 else end.y() - h / 2
        if abs(ux) < 1e-9:
            left = end.x() - w / 2
        rect = QRectF(left, top, w, h)
        inside = bounds.contains(rect)
        near = min((math.hypot(p.x() - min(max(p.x(), rect.left()), rect.right()),
                               p.y() - min(max(p.y(), rect.top()), rect.bottom())) for p in avoid), default=1e9)
        free = not any(rect.intersects(other) for other in taken)
        score = (inside, free, min(near, 40.0), -k)
        if best is None or score > best[0]:
            best = (score, rect, on, end)
    return best[1], best[2], best[3]


def paint_fit_label(painter: QPainter, canvas: ImageCanvas, shape: FitShape, avoid: list[QPointF],
                    taken: list[QRectF] = ()) -> QRectF | None:
    """The fit's label: a tab with the system's name in its colour, then the value, with a leader."""
    if not shape.label:
        return None
    name, _, text = shape.label.partition(":")
    name, text = name.strip(), text.strip()
    if not text:
        name, text = "", shape.label
    font = _label_font(painter)
    rect, on, end = fit_label_rect(canvas, shape, name, text, font, avoid, taken)
    colour = P.system_colour(shape.system)
    alpha = 1.0 if shape.active else P.INACTIVE_ALPHA
    casing, core = _pens(colour, shape.active)
    for pen in (casing, core):
        painter.setPen(pen)
        painter.drawLine(on, end)
    fm = QFontMetricsF(font)
    painter.setFont(font)
    x = rect.left()
    if name:
        tab = QRectF(x, rect.top(), fm.horizontalAdvance(name) + 8, rect.height())
        painter.setPen(QPen(_colour(P.CASING_COLOUR, P.CASING_ALPHA * alpha), 1.0))
        painter.setBrush(_colour(colour, alpha))
        painter.drawRoundedRect(tab, 3, 3)
        painter.setPen(_colour(P.tab_ink(colour), alpha))
        painter.drawText(tab, Qt.AlignCenter, name)
        x = tab.right() + 6
    baseline = QPointF(x, rect.top() + (rect.height() + fm.ascent() - fm.descent()) / 2)
    path = QPainterPath()
    path.addText(baseline, font, text)
    painter.setBrush(Qt.NoBrush)
    painter.setPen(QPen(_colour(P.CASING_COLOUR, P.CASING_ALPHA * alpha), 3.0))
    painter.drawPath(path)
    painter.fillPath(path, _colour(colour, alpha))
    return rect


def paint_image_label(painter: QPainter, canvas: ImageCanvas, mark: Mark, name: str, centre: QPointF | None) -> None:
    """An image's name ("A1") beyond its hexagon, away from the lens centre."""
    at = canvas.image_to_widget(mark.x, mark.y)
    if centre is None:
        ux, uy = math.cos(math.radians(-45)), math.sin(math.radians(-45))
    else:
        dx, dy = at.x() - centre.x(), at.y() - centre.y()
        d = math.hypot(dx, dy)
        ux, uy = (dx / d, dy / d) if d > 1e-6 else (0.7071, -0.7071)
    font = _label_font(painter)
    fm = QFontMetricsF(font)
    w, h = fm.horizontalAdvance(name), fm.ascent() - fm.descent()
    r = P.GLYPH_RADIUS_PX["image"] + 4 + 0.5 * math.hypot(w * ux, h * uy)
    base = QPointF(at.x() + ux * r - w / 2, at.y() + uy * r + h / 2)
    path = QPainterPath()
    path.addText(base, font, name)
    alpha = 1.0 if mark.active else P.INACTIVE_ALPHA
    painter.setBrush(Qt.NoBrush)
    painter.setPen(QPen(_colour(P.CASING_COLOUR, P.CASING_ALPHA * alpha), 3.0))
    painter.drawPath(path)
    painter.fillPath(path, _colour(P.system_colour(mark.system), alpha))


def paint_overlay(painter: QPainter, canvas: ImageCanvas, system_names: dict[int, str] | None = None) -> None:
    """Everything marked on ``canvas``: fitted curves, then marks, then labels on top."""
    painter.setRenderHint(QPainter.Antialiasing, True)
    points = [canvas.image_to_widget(m.x, m.y) for m in canvas.marks]
    # Curves stop short of every marked point, as the glyphs do: the data there stays in view.
    painter.save()
    clip = QPainterPath()
    clip.addRect(QRectF(canvas.rect()))
    holes = QPainterPath()
    for p in points:
        holes.addEllipse(p, OPEN_RADIUS_PX, OPEN_RADIUS_PX)
    painter.setClipPath(clip.subtracted(holes))
    for shape in canvas.fits:
        paint_fit(painter, canvas, shape, points)
    painter.restore()
    for mark in sorted(canvas.marks, key=lambda m: (m.active, m.kind == "centre")):
        paint_mark(painter, canvas, mark)
    centre = next((canvas.image_to_widget(m.x, m.y) for m in canvas.marks if m.kind == "centre"), None)
    names = system_names or {}
    for mark in canvas.marks:
        if mark.kind == "image":
            paint_image_label(painter, canvas, mark, f"{names.get(mark.system, '')}{mark.index + 1}", centre)
    canvas.label_rects = {}
    for shape in sorted(canvas.fits, key=lambda s: not s.active):  # the selected system's label first
        rect = paint_fit_label(painter, canvas, shape, points, list(canvas.label_rects.values()))
        if rect is not None:
            canvas.label_rects[shape.system] = rect


def system_icon(index: int, size: int = 14) -> QIcon:
    """A small icon of arc system ``index``: its point glyph on a casing disc, for lists and legends."""
    pix = QPixmap(size, size)
    pix.fill(Qt.transparent)
    painter = QPainter(pix)
    painter.setRenderHint(QPainter.Antialiasing, True)
    painter.setPen(Qt.NoPen)
    painter.setBrush(_colour(P.CASING_COLOUR, 0.85))
    painter.drawEllipse(QRectF(0.5, 0.5, size - 1, size - 1))
    path = glyph_path("point", QPointF(size / 2, size / 2 + 0.5), size * 0.38)
    pen = QPen(QColor(P.system_colour(index)), 1.6)
    pen.setCapStyle(Qt.RoundCap)
    painter.setPen(pen)
    painter.drawPath(path)
    painter.end()
    return QIcon(pix)
