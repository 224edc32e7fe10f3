"""Names shared by the main window's parts: file filters, timings, layers, tools, small widget helpers."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLayout, QScrollArea, QWidget

from lensmass.io.images import IMAGE_SUFFIXES

APP_NAME = "lensmass"
IMAGE_FILTER = f"Images ({' '.join('*' + s for s in IMAGE_SUFFIXES)});;All files (*)"
SESSION_FILTER = "lensmass sessions (*.lensmass.json *.json);;All files (*)"
MAX_RECENT = 8
#: Milliseconds between an edit and the start of the background estimate.
ESTIMATE_DELAY_MS = 120
AUTOSAVE_INTERVAL_MS = 30_000
LAYERS = ("image", "lens light", "residual")
TOOLS = (("point", "Arc point", "A", "Click along the arc to add points (A)."),
         ("image", "Image", "I", "Click on each image of a multiple-image system (I)."),
         ("centre", "Centre", "C", "Click to set the lens centre; the fit then holds it (C)."))


def _scrolling(widget: QWidget) -> QScrollArea:
    """``widget`` in a frameless scroll area, so a tall panel never forces the window's size."""
    area = QScrollArea()
    if widget.layout() is not None:  # rows keep their height and the area scrolls, never squeezed together
        widget.layout().setSizeConstraint(QLayout.SetMinimumSize)
    area.setWidget(widget)
    area.setWidgetResizable(True)
    area.setFrameShape(QScrollArea.NoFrame)
    area.setHorizontalScrollBarPolicy(Qt.ScrollBarAlwaysOff)
    return area


def _is_session_path(path: str) -> bool:
    return str(path).lower().endswith(".json")
