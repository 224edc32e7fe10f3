"""Marking: tools, clicks and drags on the canvas become undoable commands; arc systems; hover read-out.

A mixin of :class:`lensmass.gui.mainwindow.MainWindow`; it uses the widgets and
the model that the window builds (see ``MainWindow.__init__``).
"""

from __future__ import annotations

import numpy as np
from PySide6.QtWidgets import QInputDialog

from lensmass.core.errors import LensInputError
from lensmass.gui import measuring
from lensmass.gui.canvas import Mark
from lensmass.gui.undo import AddMark, AddSystem, MoveMark, RemoveMark, RemoveSystem, SetCentre, SetSystemShape
from lensmass.gui.window_common import TOOLS


class WindowMarksMixin:
    """Marking part of the main window."""

    # ================================================================ marking
    def _set_tool(self, tool: str) -> None:
        self.tool = tool
        hints = {k: tip for k, _l, _h, tip in TOOLS}
        self.show_message(hints[tool], 4000)

    def _on_snap(self, on: bool) -> None:
        self.model.snap_to_ridge = bool(on)
        if on and self.model.centre is None:
            self.show_message("Snapping needs the lens centre: set it with the Centre tool (C).")

    def _on_canvas_click(self, x: float, y: float) -> None:
        m = self.model
        if m.image is None:
            return
        if self.tool == "centre":
            self.undo_stack.push(SetCentre(m, (x, y)))
            return
        if m.snap_to_ridge and self.tool == "point":
            try:
                (x, y), note = measuring.snap_to_ridge(m.image, x, y, m.centre)
            except LensInputError as exc:
                note = str(exc)
            if note:
                self.show_message(note)
        self.undo_stack.push(AddMark(m, self.tool, m.active, (x, y)))

    def _on_mark_dragged(self, mark: Mark, x: float, y: float) -> None:
        if self._drag_origin is None:
            self._drag_origin = (mark.x, mark.y)
        if mark.kind == "centre":
            self.model.session.centre.x, self.model.session.centre.y = x, y
            self.model.notify("marks")
        else:
            self.model.move_mark(mark.kind, mark.system, mark.index, (x, y), final=False)

    def _on_mark_released(self, mark: Mark, x: float, y: float) -> None:
        origin = self._drag_origin or (mark.x, mark.y)
        self._drag_origin = None
        self.undo_stack.push(MoveMark(self.model, mark.kind, mark.system, mark.index, origin, (x, y)))

    def _on_mark_delete(self, mark: Mark) -> None:
        self.undo_stack.push(RemoveMark(self.model, mark.kind, mark.system, mark.index))

    def delete_last_mark(self) -> None:
        s = self.model.active_system
        kind = "image" if self.tool == "image" and s.images else "point" if s.points else "image" if s.images else None
        if kind is None:
            self.show_message("The selected arc system has no marks to delete.")
            return
        self.undo_stack.push(RemoveMark(self.model, kind, self.model.active, len(self.model._marks(kind, self.model.active)) - 1))

    def add_system(self) -> None:
        self.inputs_panel.commit_all()
        self.undo_stack.push(AddSystem(self.model))
        self.show_message(f"Arc system {self.model.active_system.name}: click its arc and give its z_s.")

    def remove_system(self) -> None:
        self.undo_stack.push(RemoveSystem(self.model, self.model.active))

    def _on_system_selected(self, row: int) -> None:
        if 0 <= row < len(self.model.systems) and row != self.model.active:
            self.inputs_panel.commit_all()
            self.model.select_system(row)

    def _on_shape(self, _index: int) -> None:
        shape = self.shape_box.currentText()
        if shape != self.model.active_system.shape:
            self.undo_stack.push(SetSystemShape(self.model, self.model.active, shape))

    def _on_hover(self, x: float, y: float) -> None:
        img = self.model.image
        if img is None:
            return
        col, row = int(round(x)), int(round(y))
        ny, nx = img.data.shape
        if not (0 <= col < nx and 0 <= row < ny):
            return
        value = img.data[row, col]
        tail = "value " + ("masked" if not np.isfinite(value) else f"{value:.4g}")
        if self.model.display.layer != "image":
            layer = self.model.image.lens_light if self.model.display.layer == "lens light" else self.model.image.residual
            if layer is not None:
                tail += f"   {self.model.display.layer} {layer[row, col]:.4g}"
        self.readout.hover(img.loaded, x, y, tail)

    def set_pixel_scale_dialog(self) -> None:
        img = self._image_or_hint()
        if img is None:
            return
        value, ok = QInputDialog.getDouble(self, "Pixel scale", "arcsec per pixel:",
                                           float(img.pixel_scale_arcsec or 0.2), 1e-4, 1e3, 4)
        if ok:
            self.set_pixel_scale(value)

    def set_pixel_scale(self, arcsec: float) -> None:
        img = self.model.image
        img.loaded.pixel_scale_arcsec = float(arcsec)
        self.model.session.image.pixel_scale_arcsec = float(arcsec)
        self.canvas.pixel_scale_arcsec = float(arcsec)
        self.model.dirty = True
        self.model.notify("marks")
