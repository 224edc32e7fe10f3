"""The "Mass, gas and light" dock: where a cluster's mass, gas and galaxies are, offsets and budgets.

The user names a shear catalogue, optionally an X-ray counts image (with exposure), a member
catalogue and a gas mass map, types the cluster redshift, aperture and map settings, and
runs; the work runs off the GUI thread through the window's task runner with progress and
Cancel. The numbers come from :func:`lensmass.commands.components.run_components` (the same
call as ``lensmass components``); the picture from
:func:`lensmass.io.cluster_report.draw_components_map` (the same as the report page): mass
contours over the window's image when it has a WCS (in the dock's picture and as a layer on
the image itself), gas contours in a second colour, the peaks with their 95% regions. Below it the offsets table and the budget table; *Export*
writes JSON, ECSV or the report page.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
from matplotlib.figure import Figure
from PySide6.QtCore import QPointF
from PySide6.QtGui import QColor, QPen, QPolygonF
from PySide6.QtWidgets import (QCheckBox, QFileDialog, QFormLayout, QHBoxLayout, QLabel, QLineEdit, QPushButton,
                               QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget)

from lensmass.gui.file_dialogs import start_path, window_of
from lensmass.core.errors import LensInputError
from lensmass.gui.panel_registry import mark_unsaved, resolved_path, stored_path
from lensmass.gui.workers import TaskCancelled

#: (attribute, label, placeholder) of the file fields.
FILE_FIELDS = [
    ("shear_edit", "shear catalogue", "FITS/CSV/ECSV/Parquet with ra, dec, e1, e2 (weight, z)"),
    ("xray_edit", "X-ray counts", "optional FITS with WCS (EXPOSURE extension used)"),
    ("exposure_edit", "exposure map", "optional FITS on the X-ray image's pixels"),
    ("members_edit", "members", "optional table: ra, dec, mstar | log_mstar"),
    ("gas_map_edit", "gas mass map", "optional FITS, Msun per pixel, with WCS"),
]
LAYER = "cluster_components_overlay"
DEMO_FILES = {"shear_edit": "tris_collide_e_shear.fits", "xray_edit": "tris_collide_e_xray.fits",
              "members_edit": "tris_collide_e_members.ecsv", "gas_map_edit": "tris_collide_e_gas_mass.fits"}


class ClusterPanel(QWidget):
    PANEL_TITLE = "Mass, gas and light"
    DOCK_AREA = "right"
    PANEL_KEY = "cluster_components"

    def __init__(self, app_model, canvas, window):
        super().__init__()
        self.model, self.canvas, self.window = app_model, canvas, window
        self.output = None
        form = QFormLayout()
        for attr, label, hint in FILE_FIELDS:
            edit = QLineEdit(self)
            edit.setPlaceholderText(hint)
            edit.textEdited.connect(lambda _t: mark_unsaved(self.window))
            browse = QPushButton("...", self)
            browse.setFixedWidth(28)
            browse.clicked.connect(lambda _c=False, e=edit, lab=label: self._browse(e, lab))
            row = QHBoxLayout()
            row.addWidget(edit)
            row.addWidget(browse)
            form.addRow(label, row)
            setattr(self, attr, edit)
        self.gas_mass_edit = QLineEdit(self)
        self.gas_mass_edit.setPlaceholderText("or gas masses in the apertures: M1, M2, ... [Msun]")
        self.band_edit = QLineEdit(self)
        self.band_edit.setPlaceholderText("members with magnitudes only: band, e.g. sdss_r")
        self.ml_edit = QLineEdit(self)
        self.ml_edit.setPlaceholderText("and their stellar M/L [Msun/Lsun]")
        form.addRow("gas masses", self.gas_mass_edit)
        form.addRow("band, M/L", _side_by_side(self.band_edit, self.ml_edit))
        self.zl_edit = QLineEdit(self)
        self.zl_edit.setPlaceholderText("cluster redshift")
        self.aperture_edit = QLineEdit("250", self)
        self.smoothing_edit = QLineEdit("45", self)
        self.resamples_edit = QLineEdit("200", self)
        self.noise_edit = QLineEdit("32", self)
        form.addRow("z_l, aperture [kpc]", _side_by_side(self.zl_edit, self.aperture_edit))
        form.addRow("smoothing [\"]", self.smoothing_edit)
        form.addRow("resamplings, noise maps", _side_by_side(self.resamples_edit, self.noise_edit))
        self.smoothing_edit.setToolTip("Gaussian sigma of the E-mode mass map and of the light map")
        buttons = QHBoxLayout()
        self.demo_button = QPushButton("Demo field", self)
        self.demo_button.setToolTip("Fill in the invented TRIS colliding-cluster field E from demo_fields/")
        self.demo_button.clicked.connect(self.fill_demo)
        self.run_button = QPushButton("Locate", self)
        self.run_button.clicked.connect(self.run)
        self.export_button = QPushButton("Export...", self)
        self.export_button.setEnabled(False)
        self.export_button.clicked.connect(self._export_dialog)
        for b in (self.demo_button, self.run_button, self.export_button):
            buttons.addWidget(b)
        self.overlay_box = QCheckBox("mass and gas contours, peaks on the image", self)
        self.overlay_box.setChecked(True)
        self.overlay_box.toggled.connect(lambda _: self.canvas.update())
        self.status = QLabel("", self)
        self.status.setWordWrap(True)
        self.figure = Figure(figsize=(4.0, 4.0))
        self.figure_canvas = FigureCanvasQTAgg(self.figure)
        self.figure_canvas.setMinimumHeight(260)
        self.offsets_table = QTableWidget(0, 5, self)
        self.budget_table = QTableWidget(0, 1, self)
        for t in (self.offsets_table, self.budget_table):
            t.setEditTriggers(QTableWidget.NoEditTriggers)
            t.verticalHeader().setVisible(False)
        layout = QVBoxLayout(self)
        layout.addLayout(form)
        layout.addLayout(buttons)
        layout.addWidget(self.overlay_box)
        layout.addWidget(self.status)
        layout.addWidget(self.figure_canvas, 3)
        layout.addWidget(QLabel("Offsets from the mass peaks", self))
        layout.addWidget(self.offsets_table, 1)
        layout.addWidget(QLabel("Budgets in apertures: median [68%]", self))
        layout.addWidget(self.budget_table, 2)

    # ------------------------------------------------------------------ inputs
    def _browse(self, edit: QLineEdit, label: str) -> None:
        path, _ = QFileDialog.getOpenFileName(self, f"Choose the {label}", start_path(*window_of(self)))
        if path:
            edit.setText(path)
            mark_unsaved(self.window)

    def fill_demo(self) -> bool:
        """Put the demo colliding-cluster files (next to the package or in the working folder) in the fields."""
        for root in (Path(__file__).resolve().parents[2] / "demo_fields", Path.cwd() / "demo_fields"):
            if (root / DEMO_FILES["shear_edit"]).is_file():
                for attr, name in DEMO_FILES.items():
                    getattr(self, attr).setText(str(root / name))
                self.zl_edit.setText("0.29")
                mark_unsaved(self.window)
                return True
        self.status.setText("The demo files are not here: write them with 'lensmass demo demo_fields'.")
        return False

    def _number(self, edit: QLineEdit, what: str, kind=float):
        text = edit.text().strip()
        try:
            return kind(text)
        except ValueError:
            raise LensInputError(f"The {what} must be a number, got '{text}'.") from None

    def arguments(self) -> argparse.Namespace:
        """The inputs as the command line's options (one source for the numbers)."""
        if not self.shear_edit.text().strip():
            raise LensInputError("Name a shear catalogue first.")
        if not self.zl_edit.text().strip():
            raise LensInputError("Type the cluster redshift z_l.")
        if self.gas_mass_edit.text().strip() and self.gas_map_edit.text().strip():
            raise LensInputError("Give the gas as a map or as masses, not both: clear one of the two fields.")

        def path(edit):
            return edit.text().strip() or None

        return argparse.Namespace(
            catalog=self.shear_edit.text().strip(), zl=self._number(self.zl_edit, "cluster redshift"),
            center_sky=None, columns=None, zs=None, flip_e1=False, flip_e2=False, pixels=128,
            smoothing=self._number(self.smoothing_edit, "smoothing"), min_snr=3.5, max_peaks=4,
            resamples=self._number(self.resamples_edit, "number of resamplings", int),
            noise_maps=self._number(self.noise_edit, "number of noise maps", int), seed=20261202,
            xray=path(self.xray_edit), exposure=path(self.exposure_edit), gas_smoothing=10.0,
            gas_mass=self.gas_mass_edit.text().strip() or None, gas_mass_err=None,
            gas_map=path(self.gas_map_edit), gas_map_error=0.1, members=path(self.members_edit),
            member_columns=None, band=self.band_edit.text().strip() or None,
            mass_to_light=self._number(self.ml_edit, "mass-to-light ratio") if self.ml_edit.text().strip() else None,
            stellar_systematic=0.15, light_smoothing=None,
            aperture_kpc=self._number(self.aperture_edit, "aperture radius"), inner_cut=60.0, cosmology=None,
            h0=None, om0=None, ode0=None, concentration="duffy08", halo_definition="200c")

    # ------------------------------------------------------------------ running
    def run(self) -> None:
        try:
            args = self.arguments()
        except LensInputError as exc:
            self.status.setText(str(exc))
            return
        from lensmass.io.cluster_run import run_components

        def work(progress, should_stop):
            def tick(fraction, message):
                progress(fraction, message)

            def cancelled():
                if should_stop():
                    raise TaskCancelled()
                return False

            return run_components(args, progress=tick, cancelled=cancelled)

        self.status.setText("Locating the mass, gas and light peaks...")
        self.window.run_task(work, "Mass, gas and light", self._show, self._failed)

    def _failed(self, message: str) -> None:
        self.status.setText(message)

    def _image_wcs(self):
        image = getattr(self.model, "image", None)
        loaded = getattr(image, "loaded", None) if image is not None else None
        return getattr(loaded, "wcs", None) if loaded is not None else None

    def _paint_overlay(self, painter, canvas) -> None:
        from lensmass.io.cluster_export import GAS_INK, LIGHT_INK, MASS_INK

        overlay = (self.output or {}).get("overlay")
        if not overlay or not self.overlay_box.isChecked():
            return
        for key, ink, width in (("mass", MASS_INK, 1.6), ("gas", GAS_INK, 1.3), ("regions", MASS_INK, 1.0)):
            pen = QPen(QColor(ink))
            pen.setWidthF(width)
            if key == "regions":
                pen.setDashPattern([4.0, 3.0])
            painter.setPen(pen)
            for line in overlay[key]:
                painter.drawPolyline(QPolygonF([canvas.image_to_widget(float(x), float(y)) for x, y in line]))
        inks = {"mass": MASS_INK, "gas": GAS_INK, "light": LIGHT_INK}
        for kind, label, x, y in overlay["peaks"]:
            pen = QPen(QColor(inks[kind]))
            pen.setWidthF(2.0)
            painter.setPen(pen)
            c = canvas.image_to_widget(x, y)
            painter.drawLine(c + QPointF(-6, -6), c + QPointF(6, 6))
            painter.drawLine(c + QPointF(-6, 6), c + QPointF(6, -6))
            painter.drawText(c + QPointF(7, -7), label)

    def closeEvent(self, event) -> None:  # noqa: N802
        self.canvas.remove_layer(LAYER)
        super().closeEvent(event)

    def _background(self, result):
        image = getattr(self.model, "image", None)
        wcs = self._image_wcs()
        if wcs is None:
            return None
        from lensmass.io.cluster_inputs import SkyImage
        from lensmass.io.cluster_report import optical_on_grid

        try:
            return optical_on_grid(result, SkyImage(image.data, wcs, str(image.path)))
        except Exception:  # a WCS that does not overlap or cannot be inverted: draw without the image
            return None

    def _show(self, result) -> None:
        from lensmass.io.cluster_report import OFFSET_HEADER, budget_rows, draw_components_map, offset_rows

        self.output = {"result": result, "overlay": None}
        wcs = self._image_wcs()
        if wcs is not None:
            from lensmass.io.cluster_report import overlay_in_image_pixels

            try:
                self.output["overlay"] = overlay_in_image_pixels(result, wcs)
            except Exception:  # an image whose WCS cannot take these sky positions: no overlay
                self.output["overlay"] = None
        self.canvas.set_layer(LAYER, self._paint_overlay)
        self.canvas.update()
        self.figure.clear()
        ax = self.figure.add_subplot(111)
        draw_components_map(ax, result, background=self._background(result))
        ax.tick_params(labelsize=7)
        self.figure.tight_layout()
        self.figure_canvas.draw_idle()
        _fill(self.offsets_table, OFFSET_HEADER, offset_rows(result))
        header, rows = budget_rows(result)
        _fill(self.budget_table, header, rows)
        peaks = ", ".join(f"M{p['peak']} S/N {p['snr']:.1f}" for p in result["mass_peaks"])
        self.status.setText(f"{len(result['mass_peaks'])} mass peaks ({peaks}); model and caveats in the tooltip.")
        self.status.setToolTip("\n".join(result["notes"] + [f"{k}: {v}" for k, v in result["models"].items()]))
        self.export_button.setEnabled(True)

    # ------------------------------------------------------------------ export and sessions
    def _export_dialog(self) -> None:
        path, _ = QFileDialog.getSaveFileName(self, "Export", start_path(*window_of(self), "components.json"),
                                              "JSON (*.json);;ECSV (*.ecsv);;Report (*.png *.pdf)")
        if path:
            self.export(path)

    def export(self, path: str) -> bool:
        from lensmass.io.cluster_export import write_components

        if self.output is None:
            self.status.setText("Run Locate first: there is nothing to export yet.")
            return False
        try:
            write_components(path, self.output["result"])
        except (LensInputError, OSError) as exc:
            self.status.setText(str(exc) if isinstance(exc, LensInputError) else
                                f"Cannot write {path} ({exc.strerror}); choose another folder.")
            return False
        self.window.show_message(f"Written: {path}")
        return True

    def panel_state(self, session_dir) -> dict:
        state = {attr: stored_path(getattr(self, attr).text().strip() or None, session_dir) for attr, _, _ in FILE_FIELDS}
        state.update(gas_masses=self.gas_mass_edit.text(), band=self.band_edit.text(), mass_to_light=self.ml_edit.text(),
                     z_l=self.zl_edit.text(), aperture_kpc=self.aperture_edit.text(),
                     smoothing_arcsec=self.smoothing_edit.text(), resamples=self.resamples_edit.text(),
                     noise_maps=self.noise_edit.text())
        return state

    def restore_panel_state(self, state: dict, session_dir) -> None:
        for attr, _, _ in FILE_FIELDS:
            getattr(self, attr).setText(resolved_path(state.get(attr), session_dir) or "")
        for key, edit in (("gas_masses", self.gas_mass_edit), ("band", self.band_edit), ("mass_to_light", self.ml_edit),
                          ("z_l", self.zl_edit), ("aperture_kpc", self.aperture_edit),
                          ("smoothing_arcsec", self.smoothing_edit), ("resamples", self.resamples_edit),
                          ("noise_maps", self.noise_edit)):
            if key in state:
                edit.setText(str(state[key]))


def _side_by_side(*widgets) -> QHBoxLayout:
    row = QHBoxLayout()
    for w in widgets:
        row.addWidget(w)
    return row


def _fill(table: QTableWidget, header: list[str], rows: list[list[str]]) -> None:
    table.clear()
    table.setColumnCount(len(header))
    table.setRowCount(len(rows))
    table.setHorizontalHeaderLabels(header)
    for i, row in enumerate(rows):
        for j, cell in enumerate(row):
            table.setItem(i, j, QTableWidgetItem(cell))
    table.resizeColumnsToContents()
