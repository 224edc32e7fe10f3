"""Export: results tables and report pages, copy to clipboard, help and about boxes, screenshots.

A mixin of :class:`lensmass.gui.mainwindow.MainWindow`; it uses the widgets and
the model that the window builds (see ``MainWindow.__init__``).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QApplication,
    QDialog,
    QDialogButtonBox,
    QFileDialog,
    QMessageBox,
    QTextBrowser,
    QVBoxLayout,
)

from lensmass.core.errors import LensInputError


class WindowExportMixin:
    """Export part of the main window."""

    # ================================================================ export
    def _named_results(self) -> list[tuple[str, dict]]:
        return [(s.name, d.result) for s, d in zip(self.model.systems, self.model.derived) if d.result is not None]

    def _check_results_ready(self) -> bool:
        if self.tasks.busy and self._estimating:
            self.tasks.wait(10000)
            QApplication.processEvents()
        if not any(d.result is not None for d in self.model.derived):  # every system with a result is exported
            self.show_error(self.model.result_problem or "There is no result to export yet: mark the arc and "
                            "enter the redshifts first.")
            return False
        return True

    def _ask_save_path(self, title: str, name: str, filters: str) -> str:
        from lensmass.gui.file_dialogs import remember_folder, start_path

        path, _ = QFileDialog.getSaveFileName(self, title, start_path(self.model, self.settings, name), filters)
        remember_folder(self.settings, path)
        return path

    def export_results_dialog(self) -> None:
        path = self._ask_save_path("Export results", "results.json", "JSON (*.json);;ECSV (*.ecsv)")
        if path:
            self.export_results(path)

    def export_results(self, path: str) -> Path | None:
        from lensmass.io.export import write_results
        from lensmass.io.report import inputs_from_session

        if not self._check_results_ready():
            return None
        session = self.model.to_session()
        inputs = {}
        for i, (s, d) in enumerate(zip(self.model.systems, self.model.derived)):
            if d.result is not None and d.fit is not None:
                inputs[s.name] = {**inputs_from_session(session, i, d.fit.theta_e_arcsec, d.fit.theta_e_err_arcsec,
                                                        theta_e_bounds=d.fit.bounds_arcsec),
                                  "theta_E fit": d.fit.method}
        try:
            written = write_results(path, self._named_results(), inputs)
        except LensInputError as exc:
            self.show_error(str(exc))
            return None
        self.show_message(f"Results written to {written.name}.")
        return written

    def export_report_dialog(self) -> None:
        stem = Path(self.model.image.path).stem if self.model.image else "lens"
        path = self._ask_save_path("Export report", f"{stem}_report.pdf", "PDF (*.pdf);;PNG (*.png)")
        if path:
            self.export_report(path, background=True)

    def export_report(self, path: str, background: bool = False) -> Path | None:
        """The report: a page for every arc system with a result and, when one was fitted, the lens
        model's page (PDF; a PNG gets one file per page).

        With ``background`` the pages are rendered off the GUI thread (the menu's way)
        and None is returned at once; otherwise the (first) path written is returned.
        """
        from lensmass.io.report import inputs_from_session
        from lensmass.io.report_pages import SystemPage, render_report_pages

        if not self._check_results_ready():
            return None
        m = self.model
        session = m.to_session()
        pages, left_out = [], []
        for i, (system, d) in enumerate(zip(m.systems, m.derived)):
            if d.result is None or d.fit is None:
                if system.points or system.images:
                    reason = d.result_problem or d.fit_problem or "it has no result yet"
                    left_out.append(f"Arc system {system.name} is not in this report: {reason.rstrip('.')}.")
                continue
            cut, overlay = self._report_cutout(d.fit, system)
            inputs = inputs_from_session(session, i, d.fit.theta_e_arcsec, d.fit.theta_e_err_arcsec,
                                         Path(m.image.path).name, theta_e_bounds=d.fit.bounds_arcsec)
            pages.append(SystemPage(system.name, cut, overlay, inputs, d.result))
        if left_out and pages:  # said on the first page, so a missing system is never silent
            first = pages[0]
            first.result = dict(first.result, notes=left_out + list(first.result.get("notes") or []))
        lens_model = self._report_lens_model()
        cosmo, definition = m.session.cosmology.resolve(), m.session.halo_definition
        title = f"Lens mass report: {Path(m.image.path).name}"

        def render(progress=None, should_stop=None):
            return render_report_pages(path, pages, lens_model, title=title, cosmo=cosmo,
                                       halo_definition=definition)

        def done(written):
            more = f" and {len(written) - 1} more page files" if len(written) > 1 else ""
            n_pages = len(pages) + (lens_model is not None)
            self.show_message(f"Report written to {written[0].name}{more} ({n_pages} page"
                              f"{'s' if n_pages != 1 else ''}: {len(pages)} arc system"
                              f"{'s' if len(pages) != 1 else ''}{', the lens model' if lens_model else ''}).")

        if background:
            self.run_task(render, "Writing the report", done)
            return None
        try:
            written = render()
        except LensInputError as exc:
            self.show_error(str(exc))
            return None
        done(written)
        return written[0]

    def _report_cutout(self, fit, system=None):
        """The cutout around a fit (the residual when that is shown) and the marks drawn over it."""
        from lensmass.io.report import Overlay, cutout

        m = self.model
        centre = m.centre or (fit.center_x, fit.center_y)
        half = int(max(24, math.ceil(2.2 * max(fit.a_px, fit.b_px))))
        data = m.image.residual if m.display.layer == "residual" and m.image.residual is not None else m.image.data
        cut, origin = cutout(data, centre, half)
        overlay = Overlay(
            pixel_scale_arcsec=float(m.image.pixel_scale_arcsec), centre_px=m.centre,
            points_px=list(system.points) if system is not None else [],
            images_px=[xy for s in ([system] if system is not None else m.systems) for xy in s.images],
            circle_px=(fit.center_x, fit.center_y, fit.a_px) if fit.shape != "ellipse" else None,
            ellipse_px=(fit.center_x, fit.center_y, fit.a_px, fit.b_px, fit.angle_deg) if fit.shape == "ellipse" else None,
            origin_px=tuple(float(v) for v in origin),
            label=f"system {system.name}, {fit.shape} fit" if system is not None else "",
            system=m.systems.index(system) if system in m.systems else 0)  # its colour, as in the window
        return cut, overlay

    def _report_lens_model(self):
        """(result, cutout, overlay) of the lens model the Lens model dock holds, or None."""
        from lensmass.io.report import Overlay, cutout

        for panel in getattr(self, "panels", []):
            result = getattr(panel, "model_result", None)
            if result is None or "lens_model" not in result:
                continue
            m = self.model
            images = [xy for s in m.systems for xy in s.images]
            points = [xy for s in m.systems for xy in s.points]
            lm = result["lens_model"]
            cx, cy = result.get("center_x"), result.get("center_y")
            if cx is None:
                cx, cy = np.mean(np.asarray(images + points, float).reshape(-1, 2), axis=0)
            far = max([np.hypot(x - cx, y - cy) for x, y in images + points] or [10.0])
            half = int(max(24, math.ceil(1.5 * far)))
            data = m.image.residual if m.display.layer == "residual" and m.image.residual is not None else m.image.data
            cut, origin = cutout(data, (float(cx), float(cy)), half)
            overlay = Overlay(pixel_scale_arcsec=float(m.image.pixel_scale_arcsec), centre_px=m.centre,
                              points_px=points, images_px=images, origin_px=tuple(float(v) for v in origin),
                              label=f"{lm['model']}")
            return result, cut, overlay
        return None

    def copy_results(self) -> str:
        return self.results_panel.copy_text()

    # ================================================================ help
    def show_help(self) -> None:
        from lensmass.gui.help_text import help_html

        dlg = QDialog(self)
        dlg.setWindowTitle("lensmass: methods and keys")
        v = QVBoxLayout(dlg)
        browser = QTextBrowser()
        browser.setObjectName("help_browser")
        browser.setHtml(help_html())
        browser.setOpenExternalLinks(True)
        v.addWidget(browser)
        buttons = QDialogButtonBox(QDialogButtonBox.Close)
        buttons.rejected.connect(dlg.reject)
        v.addWidget(buttons)
        dlg.resize(640, 620)
        dlg.setAttribute(Qt.WA_DeleteOnClose)
        self.help_dialog = dlg
        dlg.show()

    def show_about(self) -> None:
        from lensmass import __version__

        QMessageBox.about(self, "About lensmass",
                          f"lensmass {__version__}: from a lensing image to a defensible, model-labelled mass.")

    # ================================================================ screenshot
    def save_screenshot(self, path: str) -> Path:
        """Render the window into a PNG (works offscreen)."""
        from lensmass.io.atomic import atomic_path

        QApplication.processEvents()
        pixmap = self.grab()
        target = Path(path).absolute()
        with atomic_path(target) as tmp:
            if not pixmap.save(str(tmp), "PNG"):
                raise LensInputError(f"Could not write the screenshot '{target}': choose a writable .png path.")
        return target
