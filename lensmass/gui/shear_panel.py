"""The "Weak-lensing shear" dock: a shape catalogue to a shear profile, SIS/NFW fits and a kappa map.

The user loads a catalogue (FITS, CSV, ECSV or Parquet), maps its columns in a dialog
that previews the first rows, sets the centre by clicking the image or typing RA, Dec,
and runs the analysis in the background. The numbers come from
:func:`lensmass.core.shear_analysis.analyse_shear_catalog` and the map from
:func:`lensmass.core.shear_analysis.mass_map_for_result`, the same functions as
``lensmass shear``. The panel shows the profile (tangential and cross shear with error
bars, best-fit SIS and NFW), the fit results with 68% intervals, and draws contours of
the convergence signal-to-noise over the image.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path
from typing import Any

import numpy as np
from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
from matplotlib.figure import Figure
from PySide6.QtCore import Qt
from PySide6.QtGui import QColor, QPen, QPolygonF
from PySide6.QtWidgets import (QCheckBox, QComboBox, QDialog, QDialogButtonBox, QFileDialog, QFormLayout,
                               QGridLayout, QHBoxLayout, QLabel, QLineEdit, QPushButton, QSpinBox,
                               QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget)

from lensmass.gui.file_dialogs import start_path, window_of
from lensmass.core.result_text import format_number, round_measured
from lensmass.core.errors import LensInputError
from lensmass.gui.workers import TaskCancelled
from lensmass.gui.words import window_words

LAYER = "shear_kappa_contours"
CLICK_OWNER = "shear_panel"
TANGENTIAL_COLOUR, CROSS_COLOUR = "#3d5a80", "#b0b7c3"
SIS_COLOUR, NFW_COLOUR = "#2a9d8f", "#c77d2e"
#: Contour colours by signal-to-noise level (light to strong).
CONTOUR_COLOURS = ("#b8f2e6", "#5ee0c1", "#19b394", "#0b7a62")
SNR_LEVELS = (1.0, 2.0, 3.0, 4.0)
MAP_PIXELS = 96
MAP_NOISE_REALISATIONS = 8
ROLE_LABELS = {"ra": "RA (deg)", "dec": "Dec (deg)", "e1": "e1", "e2": "e2", "weight": "weight", "z": "redshift"}
NONE_CHOICE = "(none)"


class ColumnMapDialog(QDialog):
    """Map catalogue columns to roles, with the first rows shown for reference."""

    def __init__(self, path: str, parent: QWidget | None = None, preview_rows: int = 6):
        from lensmass.io.catalogs import REQUIRED_ROLES, ROLES, guess_columns, preview_catalog

        super().__init__(parent)
        self.setWindowTitle(f"Columns of {Path(path).name}")
        names, rows = preview_catalog(path, preview_rows)
        self.column_names = names
        table = QTableWidget(len(rows), len(names), self)
        table.setHorizontalHeaderLabels(names)
        for i, row in enumerate(rows):
            for j, text in enumerate(row):
                table.setItem(i, j, QTableWidgetItem(text))
        table.setEditTriggers(QTableWidget.NoEditTriggers)
        self.preview = table
        guesses = guess_columns(names)
        form = QFormLayout()
        self.combos: dict[str, QComboBox] = {}
        for role in ROLES:
            combo = QComboBox(self)
            if role not in REQUIRED_ROLES:
                combo.addItem(NONE_CHOICE)
            combo.addItems(names)
            if role in guesses:
                combo.setCurrentText(guesses[role])
            form.addRow(ROLE_LABELS[role], combo)
            self.combos[role] = combo
        self.flip_e1 = QCheckBox("flip the sign of e1", self)
        self.flip_e2 = QCheckBox("flip the sign of e2", self)
        form.addRow(self.flip_e1)
        form.addRow(self.flip_e2)
        note = QLabel("Convention: e1 > 0 is elongated east-west; flip a sign for catalogues in another one.")
        note.setWordWrap(True)
        buttons = QDialogButtonBox(QDialogButtonBox.Ok | QDialogButtonBox.Cancel, parent=self)
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        layout = QVBoxLayout(self)
        layout.addWidget(QLabel("First rows of the catalogue:"))
        layout.addWidget(table)
        layout.addLayout(form)
        layout.addWidget(note)
        layout.addWidget(buttons)

    def mapping(self) -> dict[str, str]:
        """Role -> column for every role that is mapped."""
        return {role: c.currentText() for role, c in self.combos.items() if c.currentText() != NONE_CHOICE}

    def flips(self) -> tuple[bool, bool]:
        return self.flip_e1.isChecked(), self.flip_e2.isChecked()


def _number(text: str, label: str, *, positive: bool = False, default=None):
    text = (text or "").strip()
    if not text:
        if default is not None or not positive:
            return default
        raise LensInputError(f"Enter the {label}.")
    try:
        value = float(text.replace(",", "."))
    except ValueError:
        raise LensInputError(f"The {label} must be a number, got '{text}'.") from None
    if not math.isfinite(value) or (positive and value <= 0):
        raise LensInputError(f"The {label} must be a number above 0, got '{text}'.")
    return value


def parse_centre(text: str) -> tuple[float, float]:
    """``"RA, Dec"`` in degrees to two floats (one sentence on bad input)."""
    parts = [p for p in text.replace(";", ",").replace(" ", ",").split(",") if p]
    try:
        ra, dec = (float(p) for p in parts)
    except ValueError:
        raise LensInputError(f"The centre must be RA, Dec in degrees (for example 141.372, 18.2705), got '{text}'.") from None
    if not (-90 <= dec <= 90):
        raise LensInputError(f"The centre Dec must lie between -90 and 90 degrees, got {dec:g}.")
    return ra % 360.0, dec


def kappa_contours(mass, result: dict, wcs, levels=SNR_LEVELS) -> list[tuple[int, list[np.ndarray]]]:
    """Signal-to-noise contours of the E map as polylines in image pixels (via the image WCS)."""
    import contourpy

    from lensmass.core.shear_profile import tangent_plane_to_sky

    snr = mass.signal_to_noise if mass.noise is not None else mass.kappa_e / max(np.nanstd(mass.kappa_e), 1e-12)
    snr = np.nan_to_num(snr, nan=0.0, posinf=0.0, neginf=0.0)
    gen = contourpy.contour_generator(mass.x_centers_arcsec, mass.y_centers_arcsec, snr)
    out = []
    for i, level in enumerate(levels):
        lines = []
        for line in gen.lines(level):
            ra, dec = tangent_plane_to_sky(line[:, 0], line[:, 1], result["center_ra"], result["center_dec"])
            px, py = wcs.world_to_pixel_values(ra, dec)
            lines.append(np.column_stack([px, py]))
        out.append((i, lines))
    return out


def shear_task(request: dict, wcs=None):
    """The background job: read, analyse, map and contour. Returns a dict for the panel."""
    from lensmass.core.shear_analysis import analyse_shear_catalog, mass_map_for_result
    from lensmass.io.catalogs import read_shear_catalog

    def task(progress, should_stop):
        def step(fraction, message):
            if should_stop():
                raise TaskCancelled()
            progress(0.1 + 0.7 * fraction, message)

        progress(0.02, "reading the catalogue")
        cat = read_shear_catalog(request["path"], request["columns"], need_z=request["z_s"] is None,
                                 flip_e1=request["flips"][0], flip_e2=request["flips"][1])
        z = cat.z if request["z_s"] is None else None
        result = analyse_shear_catalog(
            cat.ra_deg, cat.dec_deg, cat.e1, cat.e2, cat.weight, z, z_l=request["z_l"], z_s=request["z_s"],
            center_ra=request["center"][0], center_dec=request["center"][1], r_min=request["r_min"],
            r_max=request["r_max"], n_bins=request["n_bins"], unit="arcmin", cosmology=request["cosmology"],
            concentration=request["concentration"], halo_definition=request["halo_definition"],
            n_bootstrap=request["n_bootstrap"], progress=step)
        if should_stop():
            raise TaskCancelled()
        progress(0.85, "mass map")
        mass = mass_map_for_result(result, n_pixels=MAP_PIXELS, smoothing_arcsec=request["smoothing_arcsec"],
                                   n_noise=MAP_NOISE_REALISATIONS)
        contours = kappa_contours(mass, result, wcs) if wcs is not None else []
        progress(1.0, "done")
        return {"result": result, "map": mass, "contours": contours}

    return task


class ShearPanel(QWidget):
    """Dock panel (see :mod:`lensmass.gui.panel_registry`)."""

    PANEL_TITLE = "Weak-lensing shear"
    DOCK_AREA = "right"

    def __init__(self, app_model, canvas, window):
        super().__init__()
        self.model, self.canvas, self.window = app_model, canvas, window
        self.catalog_path: str | None = None
        self.columns: dict[str, str] = {}
        self.flips = (False, False)
        self.output: dict | None = None
        self._build()
        # user edits of the settings are unsaved changes of the measurement (they are saved with it)
        for name in self._TEXTS:
            getattr(self, name).textEdited.connect(self._edited)
        self.bins_spin.valueChanged.connect(self._edited)
        self.contour_box.clicked.connect(self._edited)
        self.model.subscribe(self._on_model)
        self._on_model("inputs")

    # ------------------------------------------------------------- layout
    def _build(self) -> None:
        self.load_button = QPushButton("Load catalogue...")
        self.load_button.clicked.connect(self.choose_catalog)
        self.catalog_label = QLabel("no catalogue")
        self.catalog_label.setWordWrap(True)
        self.centre_edit = QLineEdit()
        self.centre_edit.setPlaceholderText("RA, Dec in degrees")
        self.pick_button = QPushButton("Pick on image")
        self.pick_button.setCheckable(True)
        self.pick_button.toggled.connect(self._toggle_pick)
        self.zl_edit = QLineEdit()
        self.zl_edit.setPlaceholderText("lens redshift")
        self.zs_edit = QLineEdit()
        self.zs_edit.setPlaceholderText("empty: per-galaxy column")
        self.bins_spin = QSpinBox()
        self.bins_spin.setRange(2, 40)
        self.bins_spin.setValue(8)
        self.rmin_edit = QLineEdit()
        self.rmin_edit.setPlaceholderText("5% of rmax")
        self.rmax_edit = QLineEdit()
        self.rmax_edit.setPlaceholderText("farthest galaxy")
        self.smooth_edit = QLineEdit("60")
        self.run_button = QPushButton("Measure shear")
        self.run_button.clicked.connect(self.run)
        self.contour_box = QCheckBox("kappa S/N contours on the image")
        self.contour_box.setChecked(True)
        self.contour_box.toggled.connect(lambda _: self.canvas.update())
        self.status = QLabel("")
        self.status.setWordWrap(True)
        self.results = QLabel("")
        self.results.setWordWrap(True)
        self.results.setTextInteractionFlags(Qt.TextSelectableByMouse)
        self.figure = Figure(figsize=(4.2, 2.4), tight_layout=True)  # preferred height: fits a 768-pixel screen
        self.plot = FigureCanvasQTAgg(self.figure)
        self.plot.setMinimumHeight(180)  # the plot and its numbers fit one dock on a 1366 x 768 screen

        grid = QGridLayout()
        grid.addWidget(self.load_button, 0, 0)
        grid.addWidget(self.catalog_label, 0, 1, 1, 3)
        grid.addWidget(QLabel("centre"), 1, 0)
        grid.addWidget(self.centre_edit, 1, 1, 1, 2)
        grid.addWidget(self.pick_button, 1, 3)
        grid.addWidget(QLabel("z_l"), 2, 0)
        grid.addWidget(self.zl_edit, 2, 1)
        grid.addWidget(QLabel("z_s"), 2, 2)
        grid.addWidget(self.zs_edit, 2, 3)
        grid.addWidget(QLabel("bins"), 3, 0)
        grid.addWidget(self.bins_spin, 3, 1)
        grid.addWidget(QLabel("smoothing (\")"), 3, 2)
        grid.addWidget(self.smooth_edit, 3, 3)
        grid.addWidget(QLabel("rmin (')"), 4, 0)
        grid.addWidget(self.rmin_edit, 4, 1)
        grid.addWidget(QLabel("rmax (')"), 4, 2)
        grid.addWidget(self.rmax_edit, 4, 3)
        row = QHBoxLayout()
        row.addWidget(self.run_button)
        row.addWidget(self.contour_box)
        layout = QVBoxLayout(self)
        layout.addLayout(grid)
        layout.addLayout(row)
        layout.addWidget(self.status)
        layout.addWidget(self.plot, 1)
        layout.addWidget(self.results)

    # ------------------------------------------------------------- model
    def _on_model(self, topic: str) -> None:
        if topic == "inputs" and not self.zl_edit.text().strip():
            z_l = getattr(self.model.session, "z_l", None)
            if z_l is not None:
                self.zl_edit.setText(f"{z_l:g}")
        if topic == "image":
            self.canvas.update()

    def _say(self, text: str) -> None:
        text = window_words(text)
        self.status.setText(text)

    # ------------------------------------------------------------- catalogue
    def choose_catalog(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Shape catalogue", start_path(*window_of(self)),
                                              "Catalogues (*.fits *.fit *.fits.gz *.csv *.ecsv *.parquet)")
        if path:
            self.open_catalog(path)

    def column_dialog(self, path: str) -> ColumnMapDialog:
        return ColumnMapDialog(path, self)

    def open_catalog(self, path: str, dialog: ColumnMapDialog | None = None) -> bool:
        """Preview ``path`` in the column dialog; keep the mapping if the user accepts."""
        try:
            dialog = dialog or self.column_dialog(path)
        except LensInputError as exc:
            self._say(str(exc))
            return False
        if dialog.exec() != QDialog.Accepted:
            return False
        self.catalog_path, self.columns, self.flips = str(Path(path).absolute()), dialog.mapping(), dialog.flips()
        mapped = ", ".join(f"{k}={v}" for k, v in self.columns.items())
        self.catalog_label.setText(f"{Path(path).name} ({mapped})")
        self._say("Catalogue ready: set the centre and press 'Measure shear'.")
        self._edited()
        return True

    # ------------------------------------------------------------- saved in sessions (panel_registry)
    PANEL_KEY = "shear"
    _TEXTS = ("centre_edit", "zl_edit", "zs_edit", "rmin_edit", "rmax_edit", "smooth_edit")

    def panel_state(self, session_dir=None) -> dict:
        """The catalogue (path relative to the session file), its column mapping and flips, and the settings."""
        from lensmass.gui.panel_registry import stored_path

        return {"catalogue": stored_path(self.catalog_path, session_dir), "columns": dict(self.columns),
                "flips": [bool(f) for f in self.flips], "bins": int(self.bins_spin.value()),
                "contours": self.contour_box.isChecked(),
                "texts": {name: getattr(self, name).text() for name in self._TEXTS}}

    def _edited(self, *_args) -> None:
        from lensmass.gui.panel_registry import mark_unsaved

        mark_unsaved(self.window)

    def restore_panel_state(self, state: dict, session_dir=None) -> None:
        from lensmass.gui.panel_registry import resolved_path

        texts = state.get("texts") if isinstance(state.get("texts"), dict) else {}
        for name in self._TEXTS:
            if isinstance(texts.get(name), str):
                getattr(self, name).setText(texts[name])
        if isinstance(state.get("bins"), int):
            self.bins_spin.blockSignals(True)  # restoring is not an edit
            self.bins_spin.setValue(state["bins"])
            self.bins_spin.blockSignals(False)
        self.contour_box.setChecked(bool(state.get("contours", True)))
        flips = state.get("flips")
        self.flips = (bool(flips[0]), bool(flips[1])) if isinstance(flips, list) and len(flips) == 2 else (False, False)
        columns = state.get("columns")
        self.columns = {str(k): str(v) for k, v in columns.items()} if isinstance(columns, dict) else {}
        self.catalog_path = resolved_path(state.get("catalogue"), session_dir)
        self.output = None
        if not self.catalog_path:
            self.catalog_label.setText("no catalogue")
            return
        mapped = ", ".join(f"{k}={v}" for k, v in self.columns.items())
        self.catalog_label.setText(f"{Path(self.catalog_path).name} ({mapped})")
        if Path(self.catalog_path).is_file():
            self._say("Catalogue and settings restored from the session: press 'Measure shear'.")
        else:
            self._say(f"The session's catalogue '{self.catalog_path}' is missing: put it back beside the "
                      "session file or load it again.")

    # ------------------------------------------------------------- centre
    def _toggle_pick(self, on: bool) -> None:
        if on:
            self.canvas.claim_clicks(CLICK_OWNER, self.pick_centre_at, hint="Click the lens centre for the shear profile.")
        else:
            self.canvas.release_clicks(CLICK_OWNER)

    def pick_centre_at(self, x: float, y: float) -> None:
        image = self.model.image
        self.pick_button.setChecked(False)
        if image is None or image.wcs is None:
            self._say("This image has no sky coordinates (WCS): type the centre as RA, Dec instead.")
            return
        ra, dec = image.loaded.pixel_to_sky(x, y)
        self.centre_edit.setText(f"{float(ra):.6f}, {float(dec):.6f}")
        self._edited()
        self._say(f"Centre set from pixel ({x:.1f}, {y:.1f}).")

    # ------------------------------------------------------------- run
    def request(self) -> dict[str, Any]:
        """The analysis inputs from the panel and the window's session (one sentence on bad input)."""
        if not self.catalog_path:
            raise LensInputError("Load a shape catalogue first.")
        if not self.centre_edit.text().strip():
            raise LensInputError("Set the lens centre: click 'Pick on image' or type RA, Dec.")
        session = self.model.session
        return {
            "path": self.catalog_path, "columns": self.columns, "flips": self.flips,
            "center": parse_centre(self.centre_edit.text()),
            "z_l": _number(self.zl_edit.text(), "lens redshift z_l", positive=True),
            "z_s": _number(self.zs_edit.text(), "source redshift z_s", default=None),
            "n_bins": int(self.bins_spin.value()),
            "r_min": _number(self.rmin_edit.text(), "inner radius"),
            "r_max": _number(self.rmax_edit.text(), "outer radius"),
            "smoothing_arcsec": _number(self.smooth_edit.text(), "map smoothing", positive=True, default=60.0),
            "cosmology": session.cosmology.resolve(),
            "concentration": session.concentration,
            "halo_definition": session.halo_definition,
            "n_bootstrap": 100,
        }

    def run(self) -> None:
        try:
            request = self.request()
        except LensInputError as exc:
            self._say(str(exc))
            return
        image = self.model.image
        # the worker gets its own copy: astropy WCS objects are not safe to share between threads
        wcs = copy.deepcopy(image.wcs) if image is not None and image.wcs is not None else None
        self._request = request
        self._say("Measuring the shear...")
        self.window.run_task(shear_task(request, wcs), "Shear profile", self._on_result, self._on_error)

    def _on_error(self, message: str) -> None:
        self._say(message)

    def _on_result(self, output: dict) -> None:
        self.output = output
        result = output["result"]
        self.results.setText(result_summary(result))
        self._say(f"{result['n_used']} galaxies used; " + (result["notes"][0] if result["notes"] else ""))
        self._draw_profile(result)
        self.canvas.set_layer(LAYER, self._paint_contours)

    # ------------------------------------------------------------- drawing
    def _draw_profile(self, result: dict) -> None:
        from lensmass.core.shear_analysis import model_curves

        self.figure.clear()
        ax = self.figure.add_subplot(111)
        rows = result["profile"]
        r = np.array([row["r_mean_arcsec"] for row in rows]) / 60.0
        ax.errorbar(r, [row["g_t"] for row in rows], yerr=[row["g_t_err"] for row in rows], fmt="o",
                    color=TANGENTIAL_COLOUR, ms=4, label="tangential")
        ax.errorbar(r * 1.03, [row["g_x"] for row in rows], yerr=[row["g_x_err"] for row in rows], fmt="s",
                    color=CROSS_COLOUR, ms=3, label="cross")
        fine = np.geomspace(rows[0]["r_lo_arcsec"], rows[-1]["r_hi_arcsec"], 120)
        curves = model_curves(result, fine, self._request["cosmology"])
        ax.plot(fine / 60.0, curves["sis"], color=SIS_COLOUR, lw=1.5, label="SIS")
        ax.plot(fine / 60.0, curves["nfw"], color=NFW_COLOUR, lw=1.5, ls="--", label="NFW")
        ax.axhline(0.0, color="#888888", lw=0.6)
        ax.set_xscale("log")
        ax.set_xlabel("radius (arcmin)")
        ax.set_ylabel("reduced shear")
        ax.legend(fontsize=7, frameon=False)
        self.plot.draw_idle()

    def _paint_contours(self, painter, canvas) -> None:
        if not self.contour_box.isChecked() or not self.output:
            return
        for level, lines in self.output["contours"]:
            pen = QPen(QColor(CONTOUR_COLOURS[level % len(CONTOUR_COLOURS)]))
            pen.setWidthF(1.4)
            painter.setPen(pen)
            for line in lines:
                poly = QPolygonF([canvas.image_to_widget(float(x), float(y)) for x, y in line])
                painter.drawPolyline(poly)

    def closeEvent(self, event) -> None:  # noqa: N802
        self.model.unsubscribe(self._on_model)
        self.canvas.release_clicks(CLICK_OWNER)
        self.canvas.remove_layer(LAYER)
        super().closeEvent(event)


def result_summary(result: dict) -> str:
    """Plain-text fit results with 68% intervals and the model behind them."""
    i68 = result["intervals68"]

    def line(label, key, unit=""):
        shown = round_measured(result[key], None, i68.get(key))  # the program's one rounding rule
        interval = f" {shown.interval()}" if shown.low else ""
        return f"{label}: {shown.value_text}{interval} {unit}".rstrip()

    detected = result.get("detected", True)

    def limit(label, key, unit):
        return f"{label} < {format_number(result[key])} {unit} (95% upper limit)"

    sis = [line("SIS sigma_v", "sis_sigma_v_kms", "km/s"),
           line("SIS theta_E", "sis_theta_e_arcsec", f"arcsec (z_s = {format_number(result['z_s_effective'])})")]
    nfw = [line("NFW M200", "nfw_m200_msun", "Msun"), line("NFW c200", "nfw_c200")]
    if not detected:
        sis = [limit("SIS sigma_v", "sis_sigma_v_upper95_kms", "km/s")]
        nfw = [limit("NFW M200", "nfw_m200_upper95_msun", "Msun")]
    significance = format_number(result.get("detection_significance"))
    parts = [
        *([] if detected else [f"NOT detected: {significance} sigma (NFW against no lens)"]),
        *sis,
        f"SIS chi^2 {format_number(result['chi2_sis'])} for {result['dof_sis']} dof",
        *nfw,
        f"NFW chi^2 {format_number(result['chi2_nfw'])} for {result['dof_nfw']} dof",
        f"cross shear: chi^2 {format_number(result['cross_shear_chi2'])}, p = {format_number(result['cross_shear_pvalue'])}",
        f"zeta mass >= {format_number(result['zeta_mass_msun'])} +- {format_number(result['zeta_mass_err_msun'])} Msun "
        f"inside {format_number(result['zeta_radius_kpc'])} kpc",
        f"({result['cosmology']}; NFW c from {result['concentration']}; posterior medians; "
        f"detected at {significance} sigma)" if detected else
        f"({result['cosmology']}; NFW c from {result['concentration']}; priors uniform in M200 and sigma_v^2)",
    ]
    return "\n".join(parts)
