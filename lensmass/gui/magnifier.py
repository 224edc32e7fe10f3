"""The loupe: a square over a corner of the canvas showing the pixels around the cursor enlarged,
with a cross-hair on the exact (sub-pixel) cursor position and that position written below it.

It shows the colours the canvas shows (same levels, limits and colour table), so a mark can be put
on an arc's ridge to a fraction of a pixel. The loupe never takes a click: clicks go to the canvas
under it. It sits in the top-right corner, or the top-left one when the cursor comes near.
"""

from __future__ import annotations

import math

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QImage, QPainter, QPen
from PySide6.QtWidgets import QWidget

from lensmass.gui.display import quantise

#: Image pixels shown across the loupe (odd: the cursor's pixel in the middle) and screen pixels per image pixel.
SPAN_PX = 15
ENLARGE = 12
MARGIN = 10
CROSS_COLOUR = "#ff5fd2"  # a magenta of our own: stands out on gray, viridis, magma, inferno and cividis


class Loupe(QWidget):
    """The enlarged view of the pixels under the cursor (a child of the canvas)."""

    def __init__(self, canvas) -> None:
        super().__init__(canvas)
        self.setObjectName("loupe")
        self.canvas = canvas
        self.setAttribute(Qt.WA_TransparentForMouseEvents, True)
        side = SPAN_PX * ENLARGE
        self.setFixedSize(side + 2, side + 22)
        self.position: tuple[float, float] | None = None  # image pixel (x, y) under the cursor
        self._image: QImage | None = None
        self._buffer: np.ndarray | None = None
        self.hide()
        canvas.hovered.connect(self.follow)
        canvas.left_image.connect(self._away)

    # -------------------------------------------------------------- state
    def set_on(self, on: bool) -> None:
        """Show the loupe (it appears when the cursor is over the image) or hide it."""
        self._on = bool(on)
        if not on:
            self.hide()
        elif self.position is not None:
            self.show()

    @property
    def on(self) -> bool:
        return getattr(self, "_on", False)

    def _away(self) -> None:
        self.position = None
        self.hide()

    def follow(self, x: float, y: float) -> None:
        """The cursor is over image pixel (x, y): show its neighbourhood."""
        self.position = (float(x), float(y))
        if not self.on:
            return
        self._place()
        self._build()
        self.show()
        self.raise_()
        self.update()

    def _place(self) -> None:
        c = self.canvas
        right = QPointF(c.width() - self.width() - MARGIN, MARGIN)
        cursor = c.image_to_widget(*self.position)
        near = QRectF(right.x() - 20, 0, self.width() + 40, self.height() + 40).contains(cursor)
        self.move(int(MARGIN if near else right.x()), MARGIN)

    # ------------------------------------------------------------- pixels
    def centre_pixel(self) -> tuple[int, int]:
        """Display column and row of the pixel under the cursor."""
        u, v = self.canvas._display_coords(*self.position)
        return int(math.floor(u + 0.5)), int(math.floor(v + 0.5))

    def _build(self) -> None:
        levels, limits, table = self.canvas.display_source()
        if levels is None or self.position is None:
            self._image = None
            return
        ny, nx = levels.shape
        cu, cv = self.centre_pixel()
        half = SPAN_PX // 2 + 1  # one pixel more each side: the view moves with the sub-pixel position
        block = np.full((2 * half + 1, 2 * half + 1), np.nan, np.float32)
        u0, v0 = cu - half, cv - half
        su0, sv0, su1, sv1 = max(u0, 0), max(v0, 0), min(cu + half + 1, nx), min(cv + half + 1, ny)
        if su1 > su0 and sv1 > sv0:
            block[sv0 - v0: sv1 - v0, su0 - u0: su1 - u0] = levels[sv0:sv1, su0:su1]
        self._buffer = np.ascontiguousarray(np.take(table, quantise(block, *limits)))
        outside = np.ones(block.shape, bool)
        outside[sv0 - v0: sv1 - v0, su0 - u0: su1 - u0] = False
        self._buffer[outside] = 0xFF101214  # beyond the image edge: near black, not the masked colour
        n = block.shape[0]
        self._image = QImage(self._buffer.data, n, n, n * 4, QImage.Format_RGB32)
        self._origin = (u0, v0)

    def colour_at_centre(self) -> int:
        """The colour (0xffRRGGBB) the loupe shows under its cross-hair."""
        half = SPAN_PX // 2 + 1
        return int(self._buffer[half, half])

    # --------------------------------------------------------------- paint
    def paintEvent(self, event) -> None:  # noqa: N802 (Qt name)
        if self._image is None or self.position is None:
            return
        painter = QPainter(self)
        side = SPAN_PX * ENLARGE
        view = QRectF(1, 1, side, side)
        painter.fillRect(self.rect(), QColor(0, 0, 0, 200))
        painter.setClipRect(view)
        u, v = self.canvas._display_coords(*self.position)
        u0, v0 = self._origin
        # the cursor's sub-pixel position sits at the loupe's centre; pixel (u0, v0) spans u0 - 0.5 .. u0 + 0.5
        left = view.center().x() - (u - (u0 - 0.5)) * ENLARGE
        top = view.center().y() - (v - (v0 - 0.5)) * ENLARGE
        n = self._image.width()
        painter.setRenderHint(QPainter.SmoothPixmapTransform, False)
        painter.drawImage(QRectF(left, top, n * ENLARGE, n * ENLARGE), self._image)
        grid = QPen(QColor(255, 255, 255, 38), 1)
        painter.setPen(grid)
        for i in range(n + 1):
            painter.drawLine(QPointF(left + i * ENLARGE, view.top()), QPointF(left + i * ENLARGE, view.bottom()))
            painter.drawLine(QPointF(view.left(), top + i * ENLARGE), QPointF(view.right(), top + i * ENLARGE))
        self._paint_marks(painter, view, u, v)
        c = view.center()
        for pen in (QPen(QColor(0, 0, 0, 170), 3), QPen(QColor(CROSS_COLOUR), 1)):
            painter.setPen(pen)
            for dx, dy in ((1, 0), (-1, 0), (0, 1), (0, -1)):
                painter.drawLine(QPointF(c.x() + dx * 4, c.y() + dy * 4), QPointF(c.x() + dx * side, c.y() + dy * side))
        painter.setClipping(False)
        painter.setPen(QPen(QColor(CROSS_COLOUR), 1))
        painter.drawRect(view.adjusted(-0.5, -0.5, 0.5, 0.5))
        font = QFont(painter.font())
        font.setStyleHint(QFont.Monospace)
        font.setFamily("monospace")
        painter.setFont(font)
        painter.setPen(QColor("#f1f4f7"))
        x, y = self.position
        painter.drawText(QRectF(0, side + 2, self.width(), 20), Qt.AlignCenter, f"x {x:.2f}   y {y:.2f}   x{ENLARGE}")
        painter.end()

    def _paint_marks(self, painter: QPainter, view: QRectF, u: float, v: float) -> None:
        c = view.center()
        for mark in list(self.canvas.marks):
            mu, mv = self.canvas._display_coords(mark.x, mark.y)
            p = QPointF(c.x() + (mu - u) * ENLARGE, c.y() + (mv - v) * ENLARGE)
            if not view.adjusted(-8, -8, 8, 8).contains(p):
                continue
            for pen in (QPen(QColor(0, 0, 0, 170), 3), QPen(QColor("#ffffff"), 1.4)):
                painter.setPen(pen)
                painter.setBrush(Qt.NoBrush)
                painter.drawEllipse(p, 4.0, 4.0)
                painter.drawPoint(p)
