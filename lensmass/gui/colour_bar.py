"""The colour bar under the canvas: the stretch drawn from the low to the high display limit,
with both limits in fields the user can type into.

The bar samples the same 65536-colour table the canvas uses (:func:`lensmass.gui.display.colour_table`),
so what it shows is what the image shows: a value at a fraction f of the way from low to high is
painted at f of the bar's width. Typing a limit and pressing Enter emits :attr:`ColourBar.limits_typed`;
a bad entry is one sentence (:func:`lensmass.gui.display.parse_limits`) given to ``show_message``.
"""

from __future__ import annotations

from typing import Callable

import numpy as np
from PySide6.QtCore import QRectF, Qt, Signal
from PySide6.QtGui import QColor, QImage, QPainter, QPen
from PySide6.QtWidgets import QHBoxLayout, QLabel, QLineEdit, QSizePolicy, QWidget

from lensmass.core.errors import LensInputError
from lensmass.gui.display import LEVELS, MANUAL, DisplayChoice, parse_limits

#: Samples of the colour table drawn across the bar.
BAR_SAMPLES = 512


def limit_text(value: float) -> str:
    """A display limit as typed back to the user: 4 significant figures."""
    return f"{value:.4g}"


class _Gradient(QWidget):
    """The painted strip: colours from low to high, with the stretch and choice written on it."""

    def __init__(self) -> None:
        super().__init__()
        self.setMinimumSize(120, 16)
        self.setSizePolicy(QSizePolicy.Expanding, QSizePolicy.Fixed)
        self.setFixedHeight(18)
        self._image: QImage | None = None
        self._buffer: np.ndarray | None = None
        self.caption = ""

    def set_table(self, table: np.ndarray | None, caption: str) -> None:
        if table is None:
            self._image, self._buffer = None, None
        else:
            idx = np.linspace(0, LEVELS - 1, BAR_SAMPLES).round().astype(np.intp)
            self._buffer = np.ascontiguousarray(np.take(table, idx)[None, :])
            self._image = QImage(self._buffer.data, BAR_SAMPLES, 1, BAR_SAMPLES * 4, QImage.Format_RGB32)
        self.caption = caption
        self.update()

    def paintEvent(self, event) -> None:  # noqa: N802 (Qt name)
        painter = QPainter(self)
        r = QRectF(self.rect()).adjusted(0.5, 0.5, -0.5, -0.5)
        if self._image is not None:
            painter.drawImage(r, self._image)
            # the caption on a dark plate, readable on every colour map and palette
            text = self.caption
            width = painter.fontMetrics().horizontalAdvance(text) + 10
            plate = QRectF(r.center().x() - width / 2, r.top() + 1, width, r.height() - 2)
            painter.fillRect(plate, QColor(0, 0, 0, 150))
            painter.setPen(QColor("#f1f4f7"))
            painter.drawText(plate, Qt.AlignCenter, text)
        painter.setPen(QPen(self.palette().color(self.palette().ColorRole.Mid), 1))
        painter.drawRect(r)
        painter.end()


class ColourBar(QWidget):
    """Low field, the colour strip, high field: one row under the canvas."""

    limits_typed = Signal(float, float)

    def __init__(self, show_message: Callable[[str], None] | None = None) -> None:
        super().__init__()
        self.setObjectName("colour_bar")
        self._show = show_message or (lambda text: None)
        row = QHBoxLayout(self)
        row.setContentsMargins(8, 2, 8, 0)
        row.setSpacing(6)
        self.low = self._field("colour_bar_low", "Value shown darkest (or first colour); type and press Enter.")
        self.high = self._field("colour_bar_high", "Value shown brightest (or last colour); type and press Enter.")
        self.gradient = _Gradient()
        self.gradient.setObjectName("colour_bar_strip")
        self.gradient.setToolTip("The stretch from the low to the high limit. Drag on the image with the right "
                                 "button to change them: sideways for brightness, up and down for contrast.")
        row.addWidget(QLabel("low"))
        row.addWidget(self.low)
        row.addWidget(self.gradient, 1)
        row.addWidget(self.high)
        row.addWidget(QLabel("high"))
        self.limits: tuple[float, float] | None = None
        self.show_scale(None, None, None)

    def _field(self, name: str, tip: str) -> QLineEdit:
        edit = QLineEdit()
        edit.setObjectName(name)
        edit.setToolTip(tip)
        edit.setFixedWidth(76)
        edit.setAlignment(Qt.AlignRight)
        edit.returnPressed.connect(self._typed)
        return edit

    def _typed(self) -> None:
        try:
            lo, hi = parse_limits(self.low.text(), self.high.text())
        except LensInputError as exc:
            self._show(str(exc))
            return
        self.limits_typed.emit(lo, hi)

    def show_scale(self, limits: tuple[float, float] | None, table: np.ndarray | None,
                   choice: DisplayChoice | None) -> None:
        """Show the limits in the fields and the stretch on the strip (None: no image)."""
        self.limits = None if limits is None else (float(limits[0]), float(limits[1]))
        enabled = limits is not None
        for edit, value in ((self.low, 0), (self.high, 1)):
            edit.setEnabled(enabled)
            if not edit.hasFocus() or not enabled:
                edit.setText(limit_text(limits[value]) if enabled else "")
        caption = ""
        if choice is not None:
            which = "manual limits" if choice.limits == MANUAL else f"{choice.limits} limits"
            caption = f"{choice.layer}: {choice.stretch}, {which}"
        self.gradient.set_table(table, caption)
