"""Window and dock sizes that fit the screen the window opens on (down to 1366 x 768).

A laptop screen of 1366 x 768 leaves about 1366 x 730 for a window. The window opens no larger than
the screen's free area and inside it; the left docks get the width their panels ask for (the triage
queue's grade buttons and columns), and on a short window the right-hand docks share one tab group,
so each (numbers, curves, shear plot and its numbers, light) gets the full height instead of a
third of it.
"""

from __future__ import annotations

from PySide6.QtCore import QRect, QSize, Qt
from PySide6.QtWidgets import QDockWidget, QMainWindow, QScrollArea

#: Below this window height the right-hand docks are stacked as tabs instead of split.
SHORT_WINDOW_PX = 900
#: The left docks never take more than this fraction of the window's width.
LEFT_SHARE_MAX = 0.3
#: ... and the right docks never more than this.
RIGHT_SHARE_MAX = 0.34
#: Room a dock's own frame and margins take around its panel.
DOCK_FRAME_PX = 12
#: Room the window frame and title bar take outside the window's own rectangle.
FRAME_PX = (16, 40)


def initial_window_rect(available: QRect, wanted: QSize) -> QRect:
    """A rectangle of at most ``wanted`` size, inside ``available`` (with room for the frame), centred."""
    width = min(wanted.width(), available.width() - FRAME_PX[0])
    height = min(wanted.height(), available.height() - FRAME_PX[1])
    x = available.x() + (available.width() - width) // 2
    y = available.y() + max(FRAME_PX[1] - 8, (available.height() - height) // 2)
    return QRect(x, y, width, height)


def _wanted_width(dock: QDockWidget) -> int:
    """The width a dock's panel needs to show all its controls (its minimum size hint)."""
    widget = dock.widget()
    if isinstance(widget, QScrollArea) and widget.widget() is not None:
        return (widget.widget().minimumSizeHint().width() + widget.verticalScrollBar().sizeHint().width()
                + DOCK_FRAME_PX)
    return widget.minimumSizeHint().width() if widget is not None else 0


def fit_docks(window: QMainWindow) -> None:
    """Size the left docks to their panels and, on a short window, tab the right docks together.

    The window's first dock of each side (``marks_dock``, ``numbers_dock``) is raised afterwards.
    """
    docks = [d for d in window.findChildren(QDockWidget) if not d.isFloating()]
    left = [d for d in docks if window.dockWidgetArea(d) == Qt.LeftDockWidgetArea]
    right = [d for d in docks if window.dockWidgetArea(d) == Qt.RightDockWidgetArea]
    sides = [(left, LEFT_SHARE_MAX), (right, RIGHT_SHARE_MAX)]
    docks_to_size = [group[0] for group, _share in sides if group]
    widths = [min(max(_wanted_width(d) for d in group), int(share * window.width())) for group, share in sides if group]
    if docks_to_size:
        window.resizeDocks(docks_to_size, widths, Qt.Horizontal)
    if len(right) > 1 and window.height() < SHORT_WINDOW_PX:
        first = right[0]
        for dock in right[1:]:
            if dock not in window.tabifiedDockWidgets(first):
                window.tabifyDockWidget(first, dock)
    for name in ("numbers_dock", "marks_dock"):
        dock = getattr(window, name, None)
        if dock is not None:
            dock.raise_()
