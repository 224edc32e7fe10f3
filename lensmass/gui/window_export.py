"""Export: results tables and report pages, copy to clipboard, help and about boxes, screenshots.

A mixin of :class:`lensmass.gui.mainwindow.MainWindow`; it uses the widgets and
the model that the window builds (see ``MainWindow.__init__``).
"""

from __future__ import annotations

import math
from pathlib import Path

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
        if self.model.result is None:
            self.show_error(self.model.result_problem or "There is no result to export yet: mark the arc and "
                            "enter the redshifts first.")
            return False
        return True

    def _ask_save_path(self, title: str, name: str, filters: str) -> str:
        start = str(Path(self.settings.value("last_folder", str(Path.home()))) / name)
        path, _ = QFileDialog.getSaveFileName(self, title, start, filters)
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
                inputs[s.name] = {**inputs_from_session(session, i, d.fit.theta_e_arcsec, d.fit.theta_e_err_arcsec),
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
        """The one-page report of the selected arc system (PDF or PNG).

        With ``background`` the page is rendered off the GUI thread (the menu's way)
        and None is returned at once; otherwise the path written is returned.
        """
        from lensmass.io.report import Overlay, cutout, inputs_from_session, render_report

        if not self._check_results_ready():
            return None
        m = self.model
        fit, result, system = m.fit, m.result, m.active_system
        centre = m.centre or (fit.center_x, fit.center_y)
        half = int(max(24, math.ceil(2.2 * max(fit.a_px, fit.b_px))))
        data = m.image.residual if m.display.layer == "residual" and m.image.residual is not None else m.image.data
        cut, origin = cutout(data, centre, half)
        overlay = Overlay(
            pixel_scale_arcsec=float(m.image.pixel_scale_arcsec), centre_px=m.centre,
            points_px=list(system.points), images_px=list(system.images),
            circle_px=(fit.center_x, fit.center_y, fit.a_px) if fit.shape != "ellipse" else None,
            ellipse_px=(fit.center_x, fit.center_y, fit.a_px, fit.b_px, fit.angle_deg) if fit.shape == "ellipse" else None,
            origin_px=tuple(float(v) for v in origin), label=f"system {system.name}, {fit.shape} fit")
        inputs = inputs_from_session(m.to_session(), m.active, fit.theta_e_arcsec, fit.theta_e_err_arcsec,
                                     Path(m.image.path).name)
        cosmo, definition = m.session.cosmology.resolve(), m.session.halo_definition
        title = f"Lens mass report: {Path(m.image.path).name}"
        extra = [line for panel in getattr(self, "panels", []) for line in getattr(panel, "report_lines", list)()]
        if extra:  # e.g. the lens model's parameters and delays, as notes of the page
            result = dict(result, notes=list(result.get("notes") or []) + extra)

        def render(progress=None, should_stop=None):
            return render_report(path, cut, overlay, inputs, result, title=title,
                                 subtitle=f"arc system {system.name}", cosmo=cosmo, halo_definition=definition)

        def done(written):
            self.show_message(f"Report written to {written.name}.")

        if background:
            self.run_task(render, "Writing the report", done)
            return None
        try:
            written = render()
        except LensInputError as exc:
            self.show_error(str(exc))
            return None
        done(written)
        return written

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
