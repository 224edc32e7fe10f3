"""Background work: the debounced estimate, the task runner, and the ring finder, pixel scale and lens-light fit actions.

A mixin of :class:`lensmass.gui.mainwindow.MainWindow`; it uses the widgets and
the model that the window builds (see ``MainWindow.__init__``).
"""

from __future__ import annotations

import numpy as np
from PySide6.QtWidgets import QApplication

from lensmass.core.errors import LensInputError
from lensmass.gui.window_common import LAYERS
from lensmass.gui.words import window_words
from lensmass.gui.undo import AddMark, AddSystem, SetCentre


class WindowTasksMixin:
    """Background work part of the main window."""

    # ============================================================ estimating
    def request_estimate(self) -> None:
        """Results are out of date: clear them now and estimate again shortly."""
        m = self.model
        m.invalidate()
        for i in range(len(m.systems)):
            problem = None
            try:
                m.estimate_request(i)
            except LensInputError as exc:
                problem = window_words(str(exc))
            m.derived[i].result, m.derived[i].result_problem = None, problem
        m.notify("result")
        self._estimate_wanted = True
        self._estimate_timer.start()

    def _start_estimate(self) -> None:
        if not self._estimate_wanted:
            return
        if self.tasks.busy:
            if self._estimating:
                self.tasks.cancel()
            return  # _after_task starts it again
        m = self.model
        jobs = []
        for i in range(len(m.systems)):
            try:
                theta, err, kwargs = m.estimate_request(i)
            except LensInputError:
                continue
            jobs.append((i, m.derived[i].generation, theta, err, kwargs))
        self._estimate_wanted = False
        if not jobs:
            return
        self._estimating = True

        def work(progress, should_stop):
            from lensmass.gui.measuring import masses_for_request

            out = []
            for n, (i, gen, theta, err, kwargs) in enumerate(jobs):
                if should_stop():
                    break
                progress(n / len(jobs), f"system {m.systems[i].name}" if i < len(m.systems) else "")
                try:
                    out.append((i, gen, masses_for_request(theta, err, kwargs), None))
                except LensInputError as exc:
                    out.append((i, gen, None, str(exc)))
            progress(1.0)
            return out

        self.tasks.start(work, "Estimating masses", self._estimate_done, self._estimate_failed,
                         on_cancel=lambda: setattr(self, "_estimate_wanted", True))

    def _estimate_done(self, out) -> None:
        m = self.model
        stale = False
        for i, gen, result, problem in out:
            if i >= len(m.derived) or m.derived[i].generation != gen:
                stale = True
                continue
            if result is not None:
                result = {**result, **m.measurement_keys(i)}  # the fit's error and the lens centre, as 'measure' gives
            m.derived[i].result, m.derived[i].result_problem = result, None if problem is None else window_words(problem)
        if stale:
            self._estimate_wanted = True
        m.notify("result")

    def _estimate_failed(self, message: str) -> None:
        d = self.model.derived[self.model.active]
        d.result, d.result_problem = None, window_words(message)
        self.model.notify("result")

    def _after_task(self) -> None:
        self._estimating = False
        self._automatic_task = False
        queued, self._queued_task = getattr(self, "_queued_task", None), None
        if queued is not None:  # asked for while the automatic lens-light fit ran: its turn now
            self.run_task(*queued)
            return
        if self._estimate_wanted:
            self._estimate_timer.start()

    def run_task(self, fn, label: str, on_result, on_error=None, automatic: bool = False):
        """Run ``fn(progress, should_stop)`` in the background (panel API, see panel_registry).

        A task asked for while the automatic lens-light fit of an opened image runs waits for it
        (it is started when that fit ends) instead of being refused; it returns True then.
        """
        if self.tasks.busy and self._estimating:
            self.tasks.cancel()
            self.tasks.wait(5000)
            QApplication.processEvents()
        if self.tasks.busy and getattr(self, "_automatic_task", False) and not automatic:
            self._queued_task = (fn, label, on_result, on_error)
            self.show_message(f"{label} starts as soon as the lens light is fitted (a few seconds).")
            return True
        thread = self.tasks.start(fn, label, on_result, on_error or self.show_error)
        self._automatic_task = automatic and thread is not None
        return thread

    # ================================================================ helpers
    def _image_or_hint(self):
        """The open image's state, or None after telling the user to open one."""
        if self.model.image is None:
            self.show_message("Open an image first (File > Open, or drop a file on the window).")
        return self.model.image

    def find_ring(self) -> None:
        """Run the automatic ring finder; its ring becomes editable marks of a system."""
        image = self._image_or_hint()
        if image is None:
            return
        loaded, centre, hand = image.loaded, self.model.centre, image.hand_mask

        def work(progress, should_stop):
            # The command line's function with the command line's inputs: the image (not a residual
            # left by an earlier lens-light fit), the centre and the painted mask.
            from lensmass.core.einstein import find_ring_on_image

            return find_ring_on_image(loaded, center=centre, mask=hand, progress=progress, should_stop=should_stop)

        self.run_task(work, "Finding the ring", self._ring_found)

    def _ring_found(self, ring) -> None:
        m = self.model
        masks = getattr(ring, "masks", None)
        if m.image is not None and masks is not None:
            m.image.auto_mask = masks.mask
            for panel in getattr(self, "panels", []):
                if hasattr(panel, "set_auto_mask"):
                    panel.set_auto_mask(masks.mask)
        if not getattr(ring, "found", False):
            self.show_error(ring.message or "No ring or arc was found: mark the arc by hand.")
            return
        xs, ys = np.asarray(ring.points_x, float), np.asarray(ring.points_y, float)
        if xs.size > 32:
            keep = np.linspace(0, xs.size - 1, 32).round().astype(int)
            xs, ys = xs[keep], ys[keep]
        from lensmass.core.einstein import measurement_of_ring

        try:  # theta_E of these marks is the finder's answer, as on the command line, until they are edited
            found = measurement_of_ring(ring, m.image.loaded)
        except LensInputError:  # no pixel scale yet: the marks are measured as marks
            found = None
        self.undo_stack.beginMacro("ring finder result")
        if m.centre is None:
            self.undo_stack.push(SetCentre(m, (ring.center_x, ring.center_y), "found"))
        if m.active_system.points or m.active_system.images:
            self.undo_stack.push(AddSystem(m))
        if found is not None:  # kept before the marks land: the last mark's refit measures them as the finder's
            m.set_ring_answer(m.active, found, points=list(zip(xs.tolist(), ys.tolist())))
        if ring.lens_light is not None and m.image is not None and m.image.lens_light is None:
            m.set_lens_light(ring.lens_light.model, ring.lens_light.method)
            self._sync_display_widgets()
        for x, y in zip(xs, ys):
            self.undo_stack.push(AddMark(m, "point", m.active, (float(x), float(y))))
        self.undo_stack.endMacro()
        confidence = "confident" if ring.confident else "not confident: check the marks"
        hint = f" {ring.center_hint}" if getattr(ring, "center_hint", "") else ""
        about_ring = next((w for key in ("barely resolved", "single arc", "Two arcs", "Refitting")
                           for w in ring.warnings if key in w), "")
        hint = f" {about_ring}{hint}" if about_ring else hint
        from lensmass.core.ring_interval import interval_bounds, interval_text

        at = interval_text(ring.radius_pix, interval_bounds(ring), "px")
        self.show_message(f"{ring.kind.capitalize()} found at {at} "
                          f"({confidence}) about the lens centre ({ring.center_x:.1f}, {ring.center_y:.1f}), "
                          f"{ring.center_source}; its points are editable.{hint}")

    def fit_lens_light(self, then_layer: str = "residual", automatic: bool = False):
        """Fit the lens light in the background, then show ``then_layer``; the started task or None.

        ``automatic``: started by the window on open (see :mod:`lensmass.gui.light_on_open`), so a
        task the user asks for meanwhile waits for it instead of being refused.
        """
        if then_layer not in LAYERS:  # a button's clicked(bool) must never land here
            then_layer = "residual"
        image = self._image_or_hint()
        if image is None:
            return None
        loaded, centre, hand = image.loaded, self.model.centre, image.hand_mask

        def work(progress, should_stop):
            from lensmass.core.einstein import picture_options
            from lensmass.core.lenslight import fit_lens_light_masked

            cx, cy = centre if centre is not None else (None, None)
            return fit_lens_light_masked(loaded.data, cx, cy, mask=hand, progress=progress, should_stop=should_stop,
                                         **picture_options(loaded))

        def done(fit):
            if self.model.image is image:  # the same image is still open
                self._light_fitted(fit, then_layer, automatic)

        return self.run_task(work, "Fitting the lens light", done, automatic=automatic)

    def _light_fitted(self, fit, then_layer: str = "residual", automatic: bool = False) -> None:
        if self.model.image is None:
            return
        self.model.set_lens_light(fit.model, fit.method)
        self.set_display(layer=then_layer)
        note = f" {fit.notes[0]}" if getattr(fit, "notes", None) else ""
        how = " (L cycles image / lens light / residual)" if automatic else ""
        self.show_message(f"Lens light: Sersic n = {fit.sersic_n:.2f}, R_eff = {fit.r_eff_pix:.1f} px; "
                          f"showing the {then_layer}{how}.{note}")
