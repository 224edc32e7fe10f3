"""The "Masks" dock: what the ring finder and the lens-light fit leave out, shown and painted by hand.

"Find stars and neighbours" runs the same segmentation as the ring finder
(:func:`lensmass.core.cutout_masks.cutout_masks`) off the GUI thread and shows its mask
(orange); the ring finder's own automatic mask replaces it after each ring search. "Paint"
and "Erase" turn clicks on the image into discs of the chosen radius added to, or taken
from, the hand-painted mask (cyan), which the ring finder and the lens-light fit both use
(the command line takes the same pixels through the Python API's ``mask``).
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QRectF
from PySide6.QtGui import QImage
from PySide6.QtWidgets import QCheckBox, QHBoxLayout, QLabel, QPushButton, QSpinBox, QVBoxLayout, QWidget

LAYER = "cutout_masks"
AUTO_RGBA = (255, 150, 40, 105)
HAND_RGBA = (60, 220, 255, 120)
OWNER = "mask_panel"


def _overlay(mask: np.ndarray, rgba: tuple[int, int, int, int], flip: bool) -> QImage:
    ny, nx = mask.shape
    shown = mask[::-1] if flip else mask
    pix = np.zeros((ny, nx, 4), np.uint8)
    pix[shown] = rgba
    return QImage(pix.data, nx, ny, nx * 4, QImage.Format_RGBA8888).copy()


def paint_disc(mask: np.ndarray, x: float, y: float, radius_pix: float, value: bool) -> np.ndarray:
    """Set a disc of ``radius_pix`` about (x, y) (0-based column, row) to ``value``; returns the mask."""
    ny, nx = mask.shape
    r = float(radius_pix)
    x0, x1 = max(0, int(np.floor(x - r))), min(nx, int(np.ceil(x + r)) + 1)
    y0, y1 = max(0, int(np.floor(y - r))), min(ny, int(np.ceil(y + r)) + 1)
    if x1 > x0 and y1 > y0:
        yy, xx = np.ogrid[y0:y1, x0:x1]
        disc = (xx - x) ** 2 + (yy - y) ** 2 <= r * r
        mask[y0:y1, x0:x1][disc] = value
    return mask


class MaskPanel(QWidget):
    PANEL_TITLE = "Masks"
    DOCK_AREA = "right"

    def __init__(self, app_model, canvas, window):
        super().__init__()
        self.model, self.canvas, self.window = app_model, canvas, window
        self._overlays: dict[str, QImage] = {}
        lay = QVBoxLayout(self)
        self.show_masks = QCheckBox("Show masks")
        self.show_masks.setChecked(True)
        self.find_button = QPushButton("Find stars and neighbours")
        self.find_button.setToolTip("Segment the image (photutils) and mask stars and neighbouring galaxies, "
                                    "as the ring finder does.")
        row = QHBoxLayout()
        self.paint_button = QPushButton("Paint")
        self.paint_button.setCheckable(True)
        self.erase_button = QPushButton("Erase")
        self.erase_button.setCheckable(True)
        self.radius = QSpinBox()
        self.radius.setRange(1, 200)
        self.radius.setValue(4)
        self.radius.setSuffix(" px")
        self.radius.setToolTip("Radius of the disc each click paints or erases.")
        for w in (self.paint_button, self.erase_button, self.radius):
            row.addWidget(w)
        self.clear_button = QPushButton("Clear painted mask")
        self.status = QLabel("No mask yet.")
        self.status.setWordWrap(True)
        for w in (self.show_masks, self.find_button):
            lay.addWidget(w)
        lay.addLayout(row)
        lay.addWidget(self.clear_button)
        lay.addWidget(self.status)
        lay.addStretch(1)
        self.show_masks.toggled.connect(lambda _: self.canvas.update())
        self.find_button.clicked.connect(self.find_masks)
        self.paint_button.toggled.connect(lambda on: self._tool(on, True))
        self.erase_button.toggled.connect(lambda on: self._tool(on, False))
        self.clear_button.clicked.connect(self.clear_painted)
        canvas.set_layer(LAYER, self._draw)
        app_model.subscribe(self._changed)

    # ------------------------------------------------------------- actions
    def _changed(self, topic: str) -> None:
        if topic == "image":
            self._overlays.clear()
            self._update_status()
            self.canvas.update()

    def find_masks(self) -> None:
        image = self.model.image
        if image is None:
            self.window.show_message("Open an image first (File > Open).")
            return
        data, centre = image.data, self.model.centre
        rgb = getattr(image.loaded, "rgb", None)  # the loaded file's picture (the window's state has none)
        picture = rgb is not None or bool(getattr(image.loaded, "eight_bit", False))

        def work(progress, should_stop):
            from lensmass.core.ringfinder import field_masks

            return field_masks(data, centre, picture=picture, colour=rgb)  # as the ring finder sees the cutout

        self.window.run_task(work, "Finding stars and neighbours", self._masks_found)

    def _masks_found(self, masks) -> None:
        if self.model.image is None:
            return
        self.set_auto_mask(masks.mask)
        n_star = sum(o.kind == "star" for o in masks.objects)
        n_gal = sum(o.kind == "galaxy" for o in masks.objects)
        hint = f" {masks.center_hint}" if masks.center_hint else ""
        self.window.show_message(f"Masked {n_star} star(s) and {n_gal} neighbour(s); lens centre "
                                 f"({masks.center_x:.1f}, {masks.center_y:.1f}).{hint}")

    def set_auto_mask(self, mask) -> None:
        """Show an automatic mask (from the ring finder or "Find stars and neighbours")."""
        if self.model.image is None:
            return
        self.model.image.auto_mask = None if mask is None else np.asarray(mask, bool)
        self._overlays.pop("auto", None)
        self._update_status()
        self.canvas.update()

    def _tool(self, on: bool, paint: bool) -> None:
        other = self.erase_button if paint else self.paint_button
        if on:
            other.blockSignals(True)
            other.setChecked(False)
            other.blockSignals(False)
            hint = "Click to paint out pixels" if paint else "Click to erase painted pixels"
            self.canvas.claim_clicks(OWNER, lambda x, y: self.paint_at(x, y, paint), hint=hint)
        elif not other.isChecked():
            self.canvas.release_clicks(OWNER)

    def paint_at(self, x: float, y: float, value: bool = True) -> None:
        image = self.model.image
        if image is None:
            return
        if image.hand_mask is None:
            image.hand_mask = np.zeros(image.data.shape, bool)
        paint_disc(image.hand_mask, x, y, self.radius.value(), value)
        if not image.hand_mask.any():
            image.hand_mask = None
        self._overlays.pop("hand", None)
        self._update_status()
        mark = getattr(self.window, "mark_unsaved", None)
        if mark is not None:
            mark()
        self.canvas.update()

    def clear_painted(self) -> None:
        if self.model.image is not None:
            self.model.image.hand_mask = None
        self._overlays.pop("hand", None)
        self._update_status()
        self.canvas.update()

    def _update_status(self) -> None:
        image = self.model.image
        if image is None:
            self.status.setText("No image.")
            return
        n_auto = int(image.auto_mask.sum()) if image.auto_mask is not None else 0
        n_hand = int(image.hand_mask.sum()) if image.hand_mask is not None else 0
        self.status.setText(f"Automatic mask: {n_auto} pixels; painted by hand: {n_hand} pixels.")

    # --------------------------------------------------------------- draw
    def _draw(self, painter, canvas) -> None:
        image = self.model.image
        if image is None or not self.show_masks.isChecked():
            return
        for key, mask, rgba in (("auto", image.auto_mask, AUTO_RGBA), ("hand", image.hand_mask, HAND_RGBA)):
            if mask is None or not mask.any():
                continue
            if key not in self._overlays:
                self._overlays[key] = _overlay(mask, rgba, canvas.flip_rows)
            ny, nx = mask.shape
            corner = canvas.image_to_widget(0.0, float(ny - 1) if canvas.flip_rows else 0.0)
            z = canvas.zoom
            painter.drawImage(QRectF(corner.x() - 0.5 * z, corner.y() - 0.5 * z, nx * z, ny * z), self._overlays[key])
