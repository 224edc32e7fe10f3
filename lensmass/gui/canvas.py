"""The image canvas: a zoomable, pannable view of one image with marks drawn on top.

Coordinates: image pixels ``(x, y)`` are 0-based column and row as stored, pixel
centres on integers. FITS images are shown with row 0 at the bottom (the usual
sky orientation), other pictures with row 0 at the top. Everything drawn maps
positions through :meth:`ImageCanvas.image_to_widget`.

Mouse: wheel zooms around the cursor; dragging empty image pans; a click that
does not move adds a mark (or goes to the panel that claimed clicks); dragging a
mark moves it; right click on a mark deletes it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from PySide6.QtCore import QPointF, QRectF, QSize, Qt, Signal
from PySide6.QtGui import QColor, QImage, QPainter, QPen
from PySide6.QtWidgets import QSizePolicy, QWidget

from lensmass.gui import mark_style
from lensmass.gui.display import quantise
from lensmass.io.mark_palette import CENTRE_COLOUR, SYSTEM_COLOURS  # noqa: F401  (names other parts import)

# The look of marks lives in lensmass.io.mark_palette (shared with the report) and gui.mark_style.
MARK_HIT_PX = 9.0
CLICK_SLOP_PX = 4.0
MIN_ZOOM, MAX_ZOOM = 1 / 64, 64.0


@dataclass(frozen=True)
class Mark:
    """One thing drawn and draggable: kind is "point", "image" or "centre"."""

    kind: str
    system: int
    index: int
    x: float
    y: float
    active: bool = True


@dataclass(frozen=True)
class FitShape:
    """A fitted circle or ellipse to draw (image pixels; angle in degrees from +x toward +y)."""

    x: float
    y: float
    a_px: float
    b_px: float
    angle_deg: float
    label: str
    system: int
    active: bool = True


class ImageCanvas(QWidget):
    """Shows the display colours of :mod:`lensmass.gui.display` and the marks."""

    clicked = Signal(float, float)          # a still click on the image, not on a mark
    mark_dragged = Signal(object, float, float)       # live: Mark, new x, new y
    mark_released = Signal(object, float, float)      # end of a drag: Mark (old position), new x, new y
    mark_delete_requested = Signal(object)
    hovered = Signal(float, float)          # image position under the cursor
    left_image = Signal()
    view_changed = Signal()                 # zoom or pan changed
    click_hint = Signal(str)                # a panel claimed (hint) or released ("") the clicks
    contrast_dragged = Signal(float, float, bool)  # right-button drag: dx, dy in widget sizes; True at release

    def __init__(self, parent: QWidget | None = None):
        super().__init__(parent)
        self.setSizePolicy(QSizePolicy.Expanding, QSizePolicy.Expanding)
        self.setMouseTracking(True)
        self.setFocusPolicy(Qt.StrongFocus)
        self.setMinimumSize(320, 260)
        self._qimage = None
        self._levels: np.ndarray | None = None
        self._table: np.ndarray | None = None
        self._limits = (0.0, 1.0)
        self._tile: QImage | None = None
        self._tile_key = None
        self._tile_rect = QRectF()
        self._buffer: np.ndarray | None = None
        self._shape = (0, 0)  # ny, nx
        self.flip_rows = True
        self.paint_count = 0  # paints that showed an image (benchmarks read it)
        self.zoom = 1.0
        self._left = 0.0  # display-column coordinate at widget x = 0 (pixel edges at -0.5)
        self._top = 0.0   # display-row coordinate at widget y = 0
        self.marks: list[Mark] = []
        self.fits: list[FitShape] = []
        self.system_names: dict[int, str] = {}  # arc system index -> name, for the labels
        self.label_rects: dict[int, QRectF] = {}  # where each system's fit label was last painted
        self._layers: dict[str, Callable] = {}
        self._claim: tuple[str, Callable[[float, float], None], str] | None = None
        self._press: QPointF | None = None
        self._press_mark: Mark | None = None
        self._panning = False
        self._pan_origin = (0.0, 0.0)
        self._contrast_press: QPointF | None = None
        self._fitted_once = False
        self.follow_fit = True  # refit on resize until the user zooms or pans (images open fitted)
        self.hint = "Open an image: File > Open, drag a file here, or give it on the command line."

    # ---------------------------------------------------------------- image
    def set_source(self, data: np.ndarray, limits: tuple[float, float], table: np.ndarray, flip_rows: bool,
                   keep_view: bool = True) -> None:
        """Show float ``data`` (rows as stored) between ``limits`` through the colour ``table``.

        Only the visible part is quantised and coloured, at about one sample per
        screen pixel, when painting: a repaint costs the window's pixels, not the image's.
        """
        new_shape = data.shape != self._shape
        self._levels = data[::-1] if flip_rows else data  # a view in display row order
        self._limits = (float(limits[0]), float(limits[1]))
        self._table = table
        self._shape = data.shape
        self.flip_rows = flip_rows
        self._tile_key = None
        self._qimage = True  # an image is shown (the tile is built when painting)
        if new_shape or not keep_view or not self._fitted_once:
            self.fit_to_window()
        self.update()

    def clear_image(self) -> None:
        self._qimage, self._levels, self._table, self._shape = None, None, None, (0, 0)
        self._tile, self._buffer, self._tile_key = None, None, None
        self.marks, self.fits = [], []
        self._fitted_once = False
        self.update()

    def visible_colours(self) -> np.ndarray | None:
        """The colours last painted (uint32 0xffRRGGBB), building them if needed."""
        self._visible_tile()
        return self._buffer

    def display_source(self) -> tuple:
        """(levels in display row order, (lo, hi), colour table) of what is shown, for the loupe."""
        return self._levels, self._limits, self._table

    @property
    def has_image(self) -> bool:
        return self._qimage is not None and self._levels is not None

    @property
    def image_shape(self) -> tuple[int, int]:
        return self._shape

    # ------------------------------------------------------------- transform
    def _display_coords(self, x: float, y: float) -> tuple[float, float]:
        ny = self._shape[0]
        return x, (ny - 1 - y) if self.flip_rows else y

    def image_to_widget(self, x: float, y: float) -> QPointF:
        """Widget position of image pixel (x, y) (0-based column, row as stored)."""
        u, v = self._display_coords(x, y)
        return QPointF((u + 0.5 - self._left) * self.zoom, (v + 0.5 - self._top) * self.zoom)

    def widget_to_image(self, point: QPointF) -> tuple[float, float]:
        """Image pixel (x, y) under a widget position."""
        u = point.x() / self.zoom + self._left - 0.5
        v = point.y() / self.zoom + self._top - 0.5
        ny = self._shape[0]
        return u, (ny - 1 - v) if self.flip_rows else v

    def inside_image(self, x: float, y: float) -> bool:
        ny, nx = self._shape
        return -0.5 <= x < nx - 0.5 and -0.5 <= y < ny - 0.5

    # ----------------------------------------------------------------- view
    def fit_to_window(self) -> None:
        """Zoom so the whole image fits, centred."""
        ny, nx = self._shape
        if not nx or self.width() < 2:
            return
        self.zoom = min(self.width() / nx, self.height() / ny) * 0.98
        self._centre_on(nx / 2, ny / 2)
        self._fitted_once = True
        self.follow_fit = True
        self.update()
        self.view_changed.emit()

    def actual_size(self) -> None:
        """One image pixel per screen pixel, keeping the view centre."""
        self.zoom_to(1.0, QPointF(self.width() / 2, self.height() / 2))

    def zoom_by(self, factor: float, anchor: QPointF | None = None) -> None:
        self.zoom_to(self.zoom * factor, anchor)

    def zoom_to(self, zoom: float, anchor: QPointF | None = None) -> None:
        """Set the zoom keeping the image point under ``anchor`` (widget) fixed."""
        if anchor is None:
            anchor = QPointF(self.width() / 2, self.height() / 2)
        zoom = min(max(zoom, MIN_ZOOM), MAX_ZOOM)
        self.follow_fit = False
        u = anchor.x() / self.zoom + self._left
        v = anchor.y() / self.zoom + self._top
        self.zoom = zoom
        self._left = u - anchor.x() / zoom
        self._top = v - anchor.y() / zoom
        self.update()
        self.view_changed.emit()

    def centre_on_image(self, x: float, y: float) -> None:
        u, v = self._display_coords(x, y)
        self._centre_on(u + 0.5, v + 0.5)
        self.follow_fit = False
        self.update()
        self.view_changed.emit()

    def _centre_on(self, u_edge: float, v_edge: float) -> None:
        self._left = u_edge - self.width() / (2 * self.zoom)
        self._top = v_edge - self.height() / (2 * self.zoom)

    # --------------------------------------------------------- panel API
    def set_layer(self, name: str, draw: Callable) -> None:
        """Register ``draw(painter, canvas)``, called on every repaint (see panel_registry)."""
        self._layers[name] = draw
        self.update()

    def remove_layer(self, name: str) -> None:
        self._layers.pop(name, None)
        self.update()

    def claim_clicks(self, owner: str, handler: Callable[[float, float], None], hint: str = "") -> None:
        """Route still left clicks on the image to ``handler(x, y)`` until released."""
        self._claim = (owner, handler, hint)
        self.setCursor(Qt.PointingHandCursor)
        self.click_hint.emit(hint or f"Clicks on the image go to {owner} until it lets them go.")

    def release_clicks(self, owner: str) -> None:
        if self._claim is not None and self._claim[0] == owner:
            self._claim = None
            self.unsetCursor()
            self.click_hint.emit("")

    @property
    def click_owner(self) -> str | None:
        return None if self._claim is None else self._claim[0]

    # --------------------------------------------------------------- paint
    def sizeHint(self) -> QSize:  # noqa: N802 (Qt name)
        return QSize(760, 620)

    def resizeEvent(self, event) -> None:  # noqa: N802
        if self.has_image and (self.follow_fit or not self._fitted_once):
            self.fit_to_window()
        super().resizeEvent(event)

    def paintEvent(self, event) -> None:  # noqa: N802
        painter = QPainter(self)
        pal = self.palette()
        painter.fillRect(self.rect(), pal.color(pal.ColorRole.Dark).darker(140))
        if self._qimage is None:
            painter.setPen(QColor("#9aa4b1"))
            painter.drawText(self.rect().adjusted(24, 24, -24, -24), Qt.AlignCenter | Qt.TextWordWrap, self.hint)
            painter.end()
            return
        self._paint_image(painter)
        self.paint_count += 1
        painter.setRenderHint(QPainter.Antialiasing, True)
        for draw in list(self._layers.values()):
            painter.save()
            try:
                draw(painter, self)
            except Exception:  # a broken panel layer must not stop the window painting
                pass
            painter.restore()
        mark_style.paint_overlay(painter, self, self.system_names)
        self._paint_scale_bar(painter)
        painter.end()

    def _visible_tile(self) -> tuple[QImage, QRectF] | None:
        """The visible part of the image, decimated to about one sample per screen pixel."""
        if self._levels is None:
            return None
        ny, nx = self._shape
        k = max(1, int(1.0 / self.zoom)) if self.zoom < 1.0 else 1
        u0 = max(0, int(math.floor(self._left)))
        v0 = max(0, int(math.floor(self._top)))
        u1 = min(nx, int(math.ceil(self._left + self.width() / self.zoom)) + 1)
        v1 = min(ny, int(math.ceil(self._top + self.height() / self.zoom)) + 1)
        if u1 <= u0 or v1 <= v0:
            return None
        key = (u0, u1, v0, v1, k, id(self._levels), self._limits, id(self._table))
        if key != self._tile_key:
            sub = quantise(self._levels[v0:v1:k, u0:u1:k], *self._limits)
            self._buffer = np.take(self._table, sub)
            h, w = self._buffer.shape
            self._tile = QImage(self._buffer.data, w, h, w * 4, QImage.Format_RGB32)
            self._tile_rect = QRectF(u0, v0, w * k, h * k)
            self._tile_key = key
        return self._tile, self._tile_rect

    def _paint_image(self, painter: QPainter) -> None:
        tile = self._visible_tile()
        if tile is None:
            return
        image, r = tile
        target = QRectF((r.x() - self._left) * self.zoom, (r.y() - self._top) * self.zoom,
                        r.width() * self.zoom, r.height() * self.zoom)
        painter.setRenderHint(QPainter.SmoothPixmapTransform, False)
        painter.drawImage(target, image)

    def _paint_scale_bar(self, painter: QPainter) -> None:
        scale = getattr(self, "pixel_scale_arcsec", None)
        if not scale:
            return
        # A bar of a round number of arcsec near 90 screen pixels long.
        target_arcsec = 90 / self.zoom * scale
        nice = min((1, 2, 5, 10, 20, 50, 100, 200, 500), key=lambda v: abs(math.log(v / target_arcsec)))
        length = nice / scale * self.zoom
        x0, y0 = 16.0, self.height() - 18.0
        painter.setPen(QPen(QColor(0, 0, 0, 160), 4.0))
        painter.drawLine(QPointF(x0, y0), QPointF(x0 + length, y0))
        painter.setPen(QPen(QColor("#e8edf2"), 2.0))
        painter.drawLine(QPointF(x0, y0), QPointF(x0 + length, y0))
        painter.drawText(QPointF(x0, y0 - 6), f'{nice}"')

    # --------------------------------------------------------------- mouse
    def mark_at(self, pos: QPointF) -> Mark | None:
        """The mark of the selected system (or the centre) nearest ``pos``, within a few screen pixels."""
        best, best_d = None, MARK_HIT_PX
        for mark in self.marks:
            if not mark.active:
                continue
            p = self.image_to_widget(mark.x, mark.y)
            d = math.hypot(p.x() - pos.x(), p.y() - pos.y()) - (0.5 if mark.active else 0.0)
            if d < best_d:
                best, best_d = mark, d
        return best

    def mousePressEvent(self, event) -> None:  # noqa: N802
        if not self.has_image:
            return
        pos = event.position()
        if event.button() == Qt.RightButton:
            mark = self.mark_at(pos)
            if mark is not None:
                self.mark_delete_requested.emit(mark)
            else:
                self._contrast_press = pos  # a right drag on the image sets brightness and contrast
            return
        if event.button() in (Qt.LeftButton, Qt.MiddleButton):
            self._press = pos
            self._press_mark = self.mark_at(pos) if event.button() == Qt.LeftButton and self._claim is None else None
            self._panning = event.button() == Qt.MiddleButton
            self._pan_origin = (self._left, self._top)

    def mouseMoveEvent(self, event) -> None:  # noqa: N802
        pos = event.position()
        if self.has_image:
            x, y = self.widget_to_image(pos)
            if self.inside_image(x, y):
                self.hovered.emit(x, y)
            else:
                self.left_image.emit()
        if self._contrast_press is not None:
            self._emit_contrast(pos, False)
            return
        if self._press is None:
            return
        moved = math.hypot(pos.x() - self._press.x(), pos.y() - self._press.y())
        if self._press_mark is not None:
            if moved >= 1.0:
                x, y = self.widget_to_image(pos)
                self.mark_dragged.emit(self._press_mark, x, y)
            return
        if self._panning or moved > CLICK_SLOP_PX:
            self._panning = True
            self.follow_fit = False
            self._left = self._pan_origin[0] - (pos.x() - self._press.x()) / self.zoom
            self._top = self._pan_origin[1] - (pos.y() - self._press.y()) / self.zoom
            self.setCursor(Qt.ClosedHandCursor)
            self.update()
            self.view_changed.emit()

    def _emit_contrast(self, pos: QPointF, done: bool) -> None:
        p = self._contrast_press
        self.contrast_dragged.emit((pos.x() - p.x()) / max(self.width(), 1), (pos.y() - p.y()) / max(self.height(), 1),
                                   done)

    def mouseReleaseEvent(self, event) -> None:  # noqa: N802
        if self._contrast_press is not None and event.button() == Qt.RightButton:
            self._emit_contrast(event.position(), True)
            self._contrast_press = None
            return
        if self._press is None:
            return
        pos = event.position()
        press, mark, panning = self._press, self._press_mark, self._panning
        self._press, self._press_mark, self._panning = None, None, False
        if self._claim is None:
            self.unsetCursor()
        else:
            self.setCursor(Qt.PointingHandCursor)
        if mark is not None:
            if math.hypot(pos.x() - press.x(), pos.y() - press.y()) >= 1.0:
                x, y = self.widget_to_image(pos)
                self.mark_released.emit(mark, x, y)
            return
        if panning or event.button() != Qt.LeftButton:
            return
        x, y = self.widget_to_image(pos)
        if not self.inside_image(x, y):
            return
        if self._claim is not None:
            self._claim[1](x, y)
        else:
            self.clicked.emit(x, y)

    def wheelEvent(self, event) -> None:  # noqa: N802
        if not self.has_image:
            return
        steps = event.angleDelta().y() / 120.0
        if steps:
            self.zoom_by(1.25 ** steps, event.position())

    def leaveEvent(self, event) -> None:  # noqa: N802
        self.left_image.emit()
        super().leaveEvent(event)
