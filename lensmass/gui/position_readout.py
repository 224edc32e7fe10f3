"""The position read-out of the status bar: pixel (numbering named), RA/Dec in sexagesimal and
degrees, the value under the cursor; copying the position; choosing the pixel numbering.

The read-out keeps the last position over the image when the cursor leaves it (dimmed), so it
can be copied from the label's menu. The key P copies the position under the cursor.
"""

from __future__ import annotations

from PySide6.QtCore import QObject, Qt
from PySide6.QtGui import QAction, QActionGroup, QGuiApplication, QKeySequence
from PySide6.QtWidgets import QLabel, QMenu, QWidget

from lensmass.io.sky_text import PIXEL_ORIGINS, degrees, pixel_numbers, pixel_text, sexagesimal

#: Where the chosen pixel numbering is remembered.
ORIGIN_SETTING = "view/pixel_origin"
#: What can be copied: kind -> menu text.
COPY_KINDS = {"sexagesimal": "Copy RA, Dec (h:m:s, d:m:s)", "degrees": "Copy RA, Dec (degrees)",
              "pixel": "Copy pixel x, y"}


class PositionReadout(QObject):
    """Shows and copies the position under the cursor; owns the pixel-numbering choice."""

    def __init__(self, window: QWidget, label: QLabel, settings):
        super().__init__(window)
        self.window, self.label, self.settings = window, label, settings
        try:
            origin = int(settings.value(ORIGIN_SETTING, 0))
        except (TypeError, ValueError):
            origin = 0
        self.origin = origin if origin in PIXEL_ORIGINS else 0
        self.image = None
        self.last: tuple[float, float] | None = None  # 0-based pixel last shown
        self._tail = ""
        label.setContextMenuPolicy(Qt.CustomContextMenu)
        label.customContextMenuRequested.connect(self._menu)
        label.setToolTip("Position under the cursor. Right-click to copy it; P copies it while pointing at "
                         "the image. View > Pixel numbering chooses 0-based or FITS 1-based pixels.")
        self.copy_actions: dict[str, QAction] = {}
        for kind, text in COPY_KINDS.items():
            a = QAction(text, window)
            a.setObjectName(f"copy_position_{kind}")
            a.triggered.connect(lambda _c=False, k=kind: self.copy(k))
            self.copy_actions[kind] = a
        self.copy_key = QAction(COPY_KINDS["sexagesimal"], window)  # the same copy, with its key
        self.copy_key.setObjectName("copy_position")
        self.copy_key.setShortcut(QKeySequence("P"))
        self.copy_key.setShortcutContext(Qt.WindowShortcut)
        self.copy_key.triggered.connect(lambda _c=False: self.copy("sexagesimal"))
        window.addAction(self.copy_key)
        self.origin_group = QActionGroup(window)
        self.origin_actions: dict[int, QAction] = {}
        for origin, name in PIXEL_ORIGINS.items():
            a = QAction(f"{name} ({'array column, row' if origin == 0 else 'first pixel is 1, 1'})", window)
            a.setObjectName(f"pixel_origin_{origin}")
            a.setCheckable(True)
            a.setChecked(origin == self.origin)
            a.triggered.connect(lambda _c=False, o=origin: self.set_origin(o))
            self.origin_group.addAction(a)
            self.origin_actions[origin] = a

    # ------------------------------------------------------------------ menus
    def add_to_menus(self, edit: QMenu, view: QMenu) -> None:
        """Copy entries in the Edit menu, the numbering choice in the View menu."""
        positions = edit.addMenu("Copy &position")
        positions.addAction(self.copy_key)
        for kind, a in self.copy_actions.items():
            if kind != "sexagesimal":
                positions.addAction(a)
        numbering = view.addMenu("Pixel &numbering")
        for a in self.origin_actions.values():
            numbering.addAction(a)

    def _menu(self, pos) -> None:
        menu = QMenu(self.label)
        for kind, a in self.copy_actions.items():
            a.setEnabled(self._can_copy(kind))
            menu.addAction(a)
        menu.addSeparator()
        for a in self.origin_actions.values():
            menu.addAction(a)
        menu.popup(self.label.mapToGlobal(pos))

    # --------------------------------------------------------------- read-out
    def set_origin(self, origin: int) -> None:
        """Number pixels from ``origin`` (0: as stored; 1: FITS) in the read-out and copies."""
        self.origin = int(origin)
        self.origin_actions[self.origin].setChecked(True)
        self.settings.setValue(ORIGIN_SETTING, self.origin)
        if self.last is not None:
            self._render(dim=False)

    def hover(self, image, x: float, y: float, tail: str = "") -> None:
        """Show image pixel ``(x, y)`` (0-based) of ``image`` (:class:`lensmass.io.images.LoadedImage`)."""
        self.image, self.last, self._tail = image, (float(x), float(y)), tail
        self._render(dim=False)

    def leave(self) -> None:
        """The cursor left the image: keep the last position, dimmed, for copying."""
        if self.last is not None:
            self._render(dim=True)

    def clear(self) -> None:
        self.image, self.last, self._tail = None, None, ""
        self.label.clear()

    def sky(self) -> tuple[float, float] | None:
        """RA, Dec in degrees of the last position (None without a WCS)."""
        if self.last is None or self.image is None or not self.image.has_sky:
            return None
        try:
            ra, dec = self.image.pixel_to_sky(*self.last)
        except Exception:
            return None
        return float(ra), float(dec)

    def _frame(self) -> str:
        wcs = getattr(self.image, "wcs", None)
        frame = str(getattr(getattr(wcs, "wcs", None), "radesys", "") or "").strip()
        return f" {frame}" if frame else ""

    def _render(self, dim: bool) -> None:
        x, y = self.last
        text = pixel_text(x, y, self.origin)
        sky = self.sky()
        if sky is not None:
            ra, dec = sexagesimal(*sky)
            ra_d, dec_d = degrees(*sky)
            text += f"   RA {ra}  Dec {dec}  ({ra_d} {dec_d}{self._frame()})"
        if self._tail:
            text += "   " + self._tail
        self.label.setText(text)
        self.label.setEnabled(not dim)

    # ------------------------------------------------------------------- copy
    def _can_copy(self, kind: str) -> bool:
        return self.last is not None and (kind == "pixel" or self.sky() is not None)

    def copy_text(self, kind: str) -> str | None:
        """What :meth:`copy` puts on the clipboard for ``kind`` (None when there is nothing to copy)."""
        if self.last is None:
            return None
        if kind == "pixel":
            return "{:.2f} {:.2f}".format(*pixel_numbers(*self.last, self.origin))
        sky = self.sky()
        if sky is None:
            return None
        return " ".join(sexagesimal(*sky) if kind == "sexagesimal" else degrees(*sky))

    def copy(self, kind: str) -> str | None:
        """Put the last position on the clipboard; says in the status bar what was copied or why not."""
        text = self.copy_text(kind)
        if text is None and kind != "pixel" and self.last is not None:
            kind, text = "pixel", self.copy_text("pixel")
            note = " (the image has no sky coordinates: copied its pixel position)"
        else:
            note = ""
        show = getattr(self.window, "show_message", None)
        if text is None:
            if show:
                show("Point at the image first: the position under the cursor is copied.")
            return None
        QGuiApplication.clipboard().setText(text)
        if show:
            named = f"pixel {PIXEL_ORIGINS[self.origin]}" if kind == "pixel" else kind
            show(f"Copied {text} ({named}){note}.", 5000)
        return text
