"""What the canvas shows: display choices and layers, and refreshing marks and arc systems when the model changes.

A mixin of :class:`lensmass.gui.mainwindow.MainWindow`; it uses the widgets and
the model that the window builds (see ``MainWindow.__init__``).
"""

from __future__ import annotations

from PySide6.QtWidgets import QListWidgetItem

from lensmass.core.result_text import round_measured
from lensmass.core.errors import LensInputError
from lensmass.gui import measuring
from lensmass.gui.canvas import SYSTEM_COLOURS, FitShape, Mark
from lensmass.gui.display import COLORMAPS, LIMITS, MANUAL, STRETCHES, DisplayChoice, colour_table
from lensmass.gui.mark_style import system_icon
from lensmass.gui.window_common import LAYERS


class WindowViewMixin:
    """What the canvas shows part of the main window."""

    # ================================================================ display
    def set_display(self, **changes) -> None:
        """Change how the image looks; recolours the cached levels only."""
        layer = changes.get("layer")
        if layer is not None and layer != "image" and (self.model.image is None or self.model.image.lens_light is None):
            self.show_message("Fit the lens light first (Measure > Fit lens light) to see the model or the residual.")
            self._sync_display_widgets()
            return
        self.model.set_display(**changes)

    # ------------------------------------------------------- display limits
    def shown_limits(self) -> tuple[float, float] | None:
        """The (low, high) display limits of what the canvas shows now (None without an image)."""
        if self.model.image is None:
            return None
        choice = self._display_choice()
        if not self.pipeline.has_layer(choice.layer):
            choice = DisplayChoice(**{**choice.__dict__, "layer": "image"})
        return self.pipeline.limits_for(choice)

    def set_manual_limits(self, lo: float, hi: float) -> None:
        """Show the image between typed (or dragged) limits; kept in the session."""
        if self.model.image is None:
            return
        self.set_display(limits=MANUAL, manual_limits=(float(lo), float(hi)))

    def choose_limits(self, name: str) -> None:
        """A choice of the limits list; "manual" starts from the limits shown now."""
        if name == MANUAL:
            d = self.model.display
            if d.manual_limits is None and self.shown_limits() is not None:
                self.set_manual_limits(*self.shown_limits())
                self.show_message("Manual limits: type low and high beside the colour bar, or drag on the image "
                                  "with the right button.")
                return
        self.set_display(limits=name)

    def _on_contrast_drag(self, dx: float, dy: float, done: bool) -> None:
        from lensmass.gui.display import dragged_limits

        if self.model.image is None or (done and dx == 0 and dy == 0 and self._contrast_start is None):
            return
        if self._contrast_start is None:
            self._contrast_start = self.shown_limits()
        lo, hi = dragged_limits(*self._contrast_start, dx, dy)
        self.set_manual_limits(lo, hi)
        if done:
            self._contrast_start = None
            self.show_message(f"Display limits {lo:.4g} to {hi:.4g} (manual): pick a preset in the limits list to "
                              "go back.")

    def cycle_layer(self) -> None:
        available = [LAYERS[0]] if self.model.image is None or self.model.image.lens_light is None else list(LAYERS)
        current = self.model.display.layer
        nxt = available[(available.index(current) + 1) % len(available)] if current in available else "image"
        self.set_display(layer=nxt)

    def _display_choice(self) -> DisplayChoice:
        d = self.model.display
        manual = tuple(d.manual_limits) if d.manual_limits is not None and d.manual_limits[1] > d.manual_limits[0] \
            else None
        limits = d.limits if d.limits in LIMITS or (d.limits == MANUAL and manual) else "99.5%"
        return DisplayChoice(layer=d.layer, limits=limits, stretch=d.stretch if d.stretch in STRETCHES else "asinh",
                             colormap=d.colormap if d.colormap in COLORMAPS else "gray", invert=bool(d.invert),
                             manual_limits=manual)

    def _push_layers(self) -> None:
        img = self.model.image
        if img is None:
            self.pipeline.clear()
            return
        self.pipeline.set_layer("image", img.data)
        self.pipeline.set_layer("lens light", img.lens_light)
        self.pipeline.set_layer("residual", img.residual)
        self.canvas.pixel_scale_arcsec = img.pixel_scale_arcsec

    def _recolour(self, keep_view: bool = True) -> None:
        img = self.model.image
        if img is None:
            self.canvas.clear_image()
            self.colour_bar.show_scale(None, None, None)
            return
        choice = self._display_choice()
        if not self.pipeline.has_layer(choice.layer):
            choice = DisplayChoice(**{**choice.__dict__, "layer": "image"})
        limits = self.pipeline.limits_for(choice)
        table = colour_table(choice.stretch, choice.colormap, bool(choice.invert))
        self.canvas.set_source(self.pipeline.data(choice.layer), limits, table, img.flip_rows, keep_view)
        self.colour_bar.show_scale(limits, table, choice)
        self._update_zoom_label()

    def _sync_display_widgets(self) -> None:
        d = self._display_choice()
        for box, value in ((self.stretch_box, d.stretch), (self.limits_box, d.limits),
                           (self.colormap_box, d.colormap)):
            box.blockSignals(True)
            box.setCurrentText(value)
            box.blockSignals(False)
        self.invert_box.blockSignals(True)
        self.invert_box.setChecked(d.invert)
        self.invert_box.blockSignals(False)
        has_light = self.model.image is not None and self.model.image.lens_light is not None
        for i, name in enumerate(LAYERS):
            b = self.layer_buttons.button(i)
            b.setEnabled(i == 0 or has_light)
            b.setChecked(name == d.layer)

    def _update_zoom_label(self) -> None:
        self.zoom_label.setText(f"zoom {self.canvas.zoom:.3g}x")

    # ================================================================ model
    def _on_model(self, topic: str) -> None:
        if topic == "image":
            self._push_layers()
        elif topic == "display":
            self._sync_display_widgets()
            if self.model.image is not None:
                self._recolour()
        elif topic == "marks":
            self._refit_all()
            self._refresh_marks()
            self._refresh_systems()
            self.request_estimate()
        elif topic == "inputs":
            self._refresh_systems()  # the list shows each system's z_s
            self.request_estimate()
        elif topic == "fit":
            self._refresh_marks()
        self._update_title()

    def _refit_all(self) -> None:
        """Fit every arc system's marks (a few points each: done on the GUI thread)."""
        m = self.model
        for i, system in enumerate(m.systems):
            fit, problem = None, None
            if m.image is not None:
                try:
                    fit = measuring.with_ring_answer(measuring.measure_system(system, m.centre, m.image),
                                                     m.ring_measurement_for(i))
                except LensInputError as exc:
                    problem = str(exc)
            else:
                problem = "Open an image to mark the arc."
            d = m.derived[i]
            d.fit, d.fit_problem = fit, problem
            system.fit = None if fit is None else fit.to_json()
        m.notify("fit")

    def _refresh_marks(self) -> None:
        m = self.model
        marks: list[Mark] = []
        fits: list[FitShape] = []
        for si, system in enumerate(m.systems):
            active = si == m.active
            marks += [Mark("point", si, i, x, y, active) for i, (x, y) in enumerate(system.points)]
            marks += [Mark("image", si, i, x, y, active) for i, (x, y) in enumerate(system.images)]
            fit = m.derived[si].fit if si < len(m.derived) else None
            if fit is not None:
                label = f"{system.name}: θE = {round_measured(fit.theta_e_arcsec, fit.theta_e_err_arcsec).value_text}″"
                fits.append(FitShape(fit.center_x, fit.center_y, fit.a_px, fit.b_px, fit.angle_deg, label, si, active))
        if m.centre is not None:
            marks.append(Mark("centre", -1, 0, m.centre[0], m.centre[1], True))
        self.canvas.marks, self.canvas.fits = marks, fits
        self.canvas.system_names = {i: s.name for i, s in enumerate(m.systems)}
        self.canvas.update()
        fit = m.fit
        if fit is not None and fit.bounds_arcsec is not None:  # the ring finder's interval, as it states it
            from lensmass.core.ring_interval import interval_text

            self.fit_label.setText(f"θE = {interval_text(fit.theta_e_arcsec, fit.bounds_arcsec, 'arcsec')}\n{fit.method}")
        elif fit is not None:
            shown = round_measured(fit.theta_e_arcsec, fit.theta_e_err_arcsec).plain("±")
            self.fit_label.setText(f"θE = {shown}″\n{fit.method}")
        else:
            self.fit_label.setText(m.derived[m.active].fit_problem or "")

    def _refresh_systems(self) -> None:
        m = self.model
        self.system_list.blockSignals(True)
        self.system_list.clear()
        for i, s in enumerate(m.systems):
            zs = f"z_s {s.z_s:g}" if s.z_s is not None else (
                f"z_s {s.z_s_range[0]:g}-{s.z_s_range[1]:g}" if s.z_s_range else "z_s ?")
            item = QListWidgetItem(system_icon(i), f"{s.name}   {len(s.points)} pts, {len(s.images)} img   {zs}")
            item.setToolTip(item.text())
            item.setForeground(self._colour(i))
            self.system_list.addItem(item)
        self.system_list.setCurrentRow(m.active)
        self.system_list.blockSignals(False)
        self.shape_box.setCurrentText(m.active_system.shape)
        self.remove_system_button.setEnabled(len(m.systems) > 1 or bool(m.active_system.points or m.active_system.images))

    def _colour(self, i: int):
        from PySide6.QtGui import QColor

        from lensmass.io.mark_palette import readable_on

        base = self.palette().color(self.palette().ColorRole.Base).name()
        return QColor(readable_on(SYSTEM_COLOURS[i % len(SYSTEM_COLOURS)], base))  # text contrast 4.5:1
