"""The "Light & dark matter" dock: the lens light set against the mass inside theta_E.

The user gives the lens brightness either as a catalogue magnitude (with R_e) or by
photometry on the open image inside the fitted circle or ellipse of the active arc
system; optionally a stellar M/L or stellar mass. "Weigh the light" runs the same core
functions as ``lensmass estimate/measure --lens-mag/--zeropoint`` in the background
(:func:`lensmass.core.photometry.lens_magnitude_inside` and
:func:`lensmass.core.light.add_light`), then shows luminosity, M/L, stellar mass, dark
fraction and the stars-plus-NFW halo with 68% intervals. On the image it draws the
photometry aperture, the sky annulus and the masked arc pixels.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QImage, QPen
from PySide6.QtWidgets import (QCheckBox, QComboBox, QFormLayout, QGridLayout, QGroupBox, QHBoxLayout, QLabel,
                               QLineEdit, QPushButton, QVBoxLayout, QWidget)

from lensmass.core.result_text import interval_text, value_text
from lensmass.core.einstein_photometry import light_inside_einstein, photometry_note
from lensmass.core.result_keys import fact, keys_in
from lensmass.core.errors import LensInputError
from lensmass.core.sun_magnitudes import known_bands
from lensmass.core.uncertainty import DEFAULT_SAMPLES
from lensmass.gui.words import window_words

LAYER = "light_photometry"
APERTURE_COLOUR = "#ffd27f"
ANNULUS_COLOUR = "#9fd3ff"
MASK_RGBA = (214, 77, 255, 110)

#: Text fields: key -> (label, placeholder, tooltip).
FIELDS = {
    "mag": ("magnitude", "e.g. 17.6", "Total apparent magnitude of the lens galaxy (catalogue photometry)."),
    "mag_err": ("error", "0", "1-sigma error of the magnitude; propagated by Monte Carlo."),
    "r_eff": ("R_e (arcsec)", "needed with a total magnitude", "Effective (half-light) radius of the lens light."),
    "sersic_n": ("Sersic n", "empty: profile below", "Sersic index of the light; empty uses the stellar profile chosen below."),
    "kcorr": ("k-correction", "0", "k-correction K in magnitudes (0 if left empty: the output says so)."),
    "extinction": ("extinction A", "0", "Galactic extinction in magnitudes (0 if left empty: the output says so)."),
    "stellar_value": ("value", "M/L or Msun", "Stellar mass-to-light ratio (solar units of the band) or total stellar mass in Msun."),
    "stellar_err": ("error", "0", "1-sigma error: of the M/L, or in dex for a stellar mass."),
    "imf": ("IMF", "e.g. Chabrier", "IMF behind the stellar M/L or mass (quoted in the notes)."),
    "zeropoint": ("zeropoint", "mag of 1 count/s", "Photometric zeropoint: magnitude of one count per second."),
    "zeropoint_key": ("or header key", "e.g. MAGZP", "FITS header keyword that holds the zeropoint."),
    "exptime": ("exposure (s)", "from the header, else 1", "Exposure time in seconds (1 for an image in counts per second)."),
    "annulus": ("sky annulus", "4,6", "Inner and outer radius of the sky annulus in units of theta_E."),
    "arc_width": ("arc band (px)", "3", "Width in pixels of the band masked around each marked arc point."),
}
SOURCES = (("catalogue", "catalogue magnitude"), ("image", "photometry on the image"))
STELLAR = (("none", "no stellar mass"), ("ml", "stellar M/L"), ("mass", "stellar mass (Msun)"))
PROFILES = (("devaucouleurs", "de Vaucouleurs"), ("hernquist", "Hernquist"))


def _number(texts: dict, key: str, *, default=None, positive=False, nonneg=False):
    text = (texts.get(key) or "").strip()
    label = FIELDS[key][0]
    if not text:
        return default
    try:
        value = float(text.replace(",", "."))
    except ValueError:
        raise LensInputError(f"The {label} must be a number, got '{text}'.") from None
    if not math.isfinite(value) or (positive and value <= 0) or (nonneg and value < 0):
        need = "above 0" if positive else "zero or more" if nonneg else "finite"
        raise LensInputError(f"The {label} must be {need}, got '{text}'.")
    return value


@dataclass
class LightRequest:
    """Everything one light computation needs, read from the panel (plain Python)."""

    source: str
    options: dict
    photometry: dict | None


def read_request(texts: dict, choices: dict) -> LightRequest:
    """Turn the panel's texts and choices into add_light options; one sentence on bad input."""
    source = choices.get("source", "catalogue")
    opts: dict[str, Any] = {
        "band": choices.get("band"), "mag_system": choices.get("system", "AB"),
        "r_eff_arcsec": _number(texts, "r_eff", positive=True), "sersic_n": _number(texts, "sersic_n", positive=True),
        "stellar_profile": choices.get("profile", "devaucouleurs"),
        "kcorr": _number(texts, "kcorr", default=0.0), "extinction": _number(texts, "extinction", default=0.0, nonneg=True),
        "imf": (texts.get("imf") or "").strip() or None,
    }
    kind = choices.get("stellar", "none")
    if kind != "none":
        value = _number(texts, "stellar_value", positive=True)
        if value is None:
            raise LensInputError("Enter the stellar M/L or stellar mass, or choose 'no stellar mass'.")
        err = _number(texts, "stellar_err", default=0.0, nonneg=True)
        if kind == "ml":
            opts.update(stellar_ml=value, stellar_ml_err=err)
        else:
            opts.update(stellar_mass_msun=value, stellar_mass_err_dex=err)
    photometry = None
    if source == "catalogue":
        mag = _number(texts, "mag")
        if mag is None and kind != "mass":
            raise LensInputError("Enter the lens magnitude, or switch to photometry on the image.")
        if mag is not None:
            opts.update(lens_mag=mag, lens_mag_err=_number(texts, "mag_err", default=0.0, nonneg=True))
    else:
        annulus_text = (texts.get("annulus") or "").strip() or "4,6"
        parts = annulus_text.replace(" ", "").split(",")
        try:
            annulus = (float(parts[0]), float(parts[1]))
        except (ValueError, IndexError):
            raise LensInputError(f"The sky annulus must be two numbers such as 4,6 (in units of theta_E), got '{annulus_text}'.") from None
        photometry = {
            "zeropoint": _number(texts, "zeropoint"), "zeropoint_key": (texts.get("zeropoint_key") or "").strip() or None,
            "exptime": _number(texts, "exptime", positive=True), "annulus": annulus,
            "arc_width_pix": _number(texts, "arc_width", default=3.0, positive=True),
            "mask_residuals": bool(choices.get("mask_bright", False)),
        }
        if photometry["zeropoint"] is None and photometry["zeropoint_key"] is None:
            raise LensInputError("Enter the photometric zeropoint, or the header keyword that holds it.")
        if photometry["zeropoint"] is not None and photometry["zeropoint_key"] is not None:
            raise LensInputError("Enter either the zeropoint or the header keyword that holds it, not both.")
    return LightRequest(source, opts, photometry)


def compute_light(result: dict, estimate_kwargs: dict, request: LightRequest, *, image=None, fit=None,
                  arc_points=()) -> dict:
    """Photometry (when asked) and :func:`lensmass.core.light.add_light` on a copy of ``result``."""
    from lensmass.core.light import add_light
    out = copy.deepcopy(result)
    extra: dict[str, Any] = {}
    if request.photometry is not None:
        if image is None or fit is None:
            raise LensInputError("Photometry on the image needs an open image and a fitted arc (mark the arc first).")
        p = request.photometry
        # The one aperture rule (core.einstein_photometry): the circle of radius theta_E = sqrt(a b).
        phot = light_inside_einstein(
            image.data, getattr(image.loaded, "header", None), center_x=fit.center_x, center_y=fit.center_y,
            theta_e_pix=math.sqrt(float(fit.a_px) * float(fit.b_px)), zeropoint=p["zeropoint"],
            zeropoint_key=p["zeropoint_key"], exptime=p["exptime"], annulus=p["annulus"], arc_points_xy=arc_points,
            arc_width_pix=p["arc_width_pix"], mask_residuals=p["mask_residuals"])
        out["light_photometry"] = phot
        extra = {"aperture_mag": phot["aperture_mag"], "aperture_mag_err": phot["aperture_mag_err"]}
    kw = estimate_kwargs
    return add_light(out, cosmology=kw.get("cosmology"), concentration=kw.get("concentration", "duffy08"),
                     halo_definition=kw.get("halo_definition", "200c"), samples=kw.get("samples"),
                     seed=kw.get("seed"), **request.options, **extra)


class LightPanel(QWidget):
    PANEL_TITLE = "Light & dark matter"
    DOCK_AREA = "right"

    def __init__(self, app_model, canvas, window):
        super().__init__()
        self.model, self.canvas, self.window = app_model, canvas, window
        self.light_result: dict | None = None
        self.edits: dict[str, QLineEdit] = {}
        outer = QVBoxLayout(self)

        self.source = self._combo("source", SOURCES)
        top = QFormLayout()
        top.addRow("brightness from", self.source)
        self.band = QComboBox()
        self.band.setObjectName("light_band")
        self.band.addItems(list(known_bands()))
        self.band.setCurrentText("V")
        self.system = self._combo("system", (("AB", "AB"), ("Vega", "Vega")))
        band_row = QHBoxLayout()
        band_row.addWidget(self.band)
        band_row.addWidget(self.system)
        top.addRow("band", band_row)
        outer.addLayout(top)

        self.catalogue_box = QGroupBox("Catalogue photometry")
        form = QFormLayout(self.catalogue_box)
        form.addRow(FIELDS["mag"][0], self._pair("mag", "mag_err"))
        outer.addWidget(self.catalogue_box)

        self.image_box = QGroupBox("Photometry inside theta_E")
        form = QFormLayout(self.image_box)
        form.addRow(FIELDS["zeropoint"][0], self._pair("zeropoint", "zeropoint_key"))
        for key in ("exptime", "annulus", "arc_width"):
            form.addRow(FIELDS[key][0], self._edit(key))
        self.mask_bright = QCheckBox("also mask pixels 3 sigma above the lens light of their ring")
        self.mask_bright.setObjectName("light_mask_bright")
        form.addRow(self.mask_bright)
        outer.addWidget(self.image_box)

        shape_box = QGroupBox("Light profile and corrections")
        form = QFormLayout(shape_box)
        form.addRow(FIELDS["r_eff"][0], self._edit("r_eff"))
        self.profile = self._combo("profile", PROFILES)
        prof = QHBoxLayout()
        prof.addWidget(self._edit("sersic_n"))
        prof.addWidget(self.profile)
        form.addRow(FIELDS["sersic_n"][0], prof)
        form.addRow("K, A (mag)", self._pair("kcorr", "extinction"))
        outer.addWidget(shape_box)

        stars_box = QGroupBox("Stars")
        form = QFormLayout(stars_box)
        self.stellar = self._combo("stellar", STELLAR)
        form.addRow("given as", self.stellar)
        form.addRow(FIELDS["stellar_value"][0], self._pair("stellar_value", "stellar_err"))
        form.addRow(FIELDS["imf"][0], self._edit("imf"))
        outer.addWidget(stars_box)

        buttons = QHBoxLayout()
        self.run_button = QPushButton("Weigh the light")
        self.run_button.setObjectName("light_run")
        self.run_button.setToolTip("Luminosity, M/L and stars versus dark matter inside theta_E of the selected arc system.")
        self.run_button.clicked.connect(self.run)
        self.show_overlay = QCheckBox("show aperture")
        self.show_overlay.setObjectName("light_show_overlay")
        self.show_overlay.setChecked(True)
        self.show_overlay.toggled.connect(lambda _: self.canvas.update())
        buttons.addWidget(self.run_button)
        buttons.addWidget(self.show_overlay)
        buttons.addStretch(1)
        outer.addLayout(buttons)

        self.status = QLabel("Measure theta_E, then give the lens brightness.")
        self.status.setObjectName("light_status")
        self.status.setWordWrap(True)
        outer.addWidget(self.status)
        grid = QGridLayout()
        grid.setVerticalSpacing(2)
        self.values: dict[str, QLabel] = {}
        self.intervals: dict[str, QLabel] = {}
        self.rows = [(key, fact(key).rich_label, fact(key).rich_unit) for key in keys_in("light", table_only=True)]
        for row, (key, label, unit) in enumerate(self.rows):
            value, interval = QLabel("–"), QLabel("")
            value.setObjectName(f"light_value_{key}")
            interval.setObjectName(f"light_interval_{key}")
            value.setAlignment(Qt.AlignRight | Qt.AlignVCenter)
            value.setStyleSheet("font-family: monospace;")
            interval.setStyleSheet("font-family: monospace; color: palette(mid);")
            grid.addWidget(QLabel(label), row, 0)
            grid.addWidget(value, row, 1)
            grid.addWidget(interval, row, 2)
            grid.addWidget(QLabel(unit), row, 3)
            self.values[key], self.intervals[key] = value, interval
        outer.addLayout(grid)
        self.notes = QLabel()
        self.notes.setObjectName("light_notes")
        self.notes.setWordWrap(True)
        self.notes.setStyleSheet("font-size: 88%;")
        self.notes.setTextInteractionFlags(Qt.TextSelectableByMouse)
        outer.addWidget(self.notes)
        outer.addStretch(1)

        self.source.currentIndexChanged.connect(self._source_changed)
        # user edits of the inputs are unsaved changes of the measurement (they are saved with it)
        for edit in self.edits.values():
            edit.textEdited.connect(self._edited)
        for combo in (self.source, self.band, self.system, self.profile, self.stellar):
            combo.activated.connect(self._edited)
        self.mask_bright.clicked.connect(self._edited)
        self._source_changed()
        canvas.set_layer(LAYER, self._draw)
        app_model.subscribe(self._on_model)

    # ------------------------------------------------------------ widgets
    def _edit(self, key: str) -> QLineEdit:
        label, placeholder, tip = FIELDS[key]
        edit = QLineEdit()
        edit.setObjectName(f"light_{key}")
        edit.setPlaceholderText(placeholder)
        edit.setToolTip(tip)
        self.edits[key] = edit
        return edit

    def _pair(self, first: str, second: str) -> QHBoxLayout:
        row = QHBoxLayout()
        row.addWidget(self._edit(first))
        row.addWidget(QLabel(FIELDS[second][0]))
        row.addWidget(self._edit(second))
        return row

    def _combo(self, name: str, items) -> QComboBox:
        combo = QComboBox()
        combo.setObjectName(f"light_{name}")
        for key, text in items:
            combo.addItem(text, key)
        return combo

    def _source_changed(self) -> None:
        on_image = self.source.currentData() == "image"
        self.image_box.setVisible(on_image)
        self.catalogue_box.setVisible(not on_image)

    # -------------------------------------------------------------- state
    def texts(self) -> dict[str, str]:
        return {key: edit.text() for key, edit in self.edits.items()}

    def choices(self) -> dict[str, Any]:
        return {"source": self.source.currentData(), "band": self.band.currentText(),
                "system": self.system.currentData(), "profile": self.profile.currentData(),
                "stellar": self.stellar.currentData(), "mask_bright": self.mask_bright.isChecked()}

    # ----------------------------------------------------- saved in sessions (panel_registry)
    PANEL_KEY = "light"

    def panel_state(self, session_dir=None) -> dict:
        """What the user typed and chose (the numbers are recomputed, never saved)."""
        return {"texts": self.texts(), "choices": self.choices()}

    def _edited(self, *_args) -> None:
        from lensmass.gui.panel_registry import mark_unsaved

        mark_unsaved(self.window)

    def restore_panel_state(self, state: dict, session_dir=None) -> None:
        texts = state.get("texts") if isinstance(state.get("texts"), dict) else {}
        for key, edit in self.edits.items():
            value = texts.get(key)
            edit.setText(value if isinstance(value, str) else "")
        choices = state.get("choices") if isinstance(state.get("choices"), dict) else {}
        for name, combo in (("source", self.source), ("system", self.system), ("profile", self.profile),
                            ("stellar", self.stellar)):
            index = combo.findData(choices.get(name))
            if index >= 0:
                combo.setCurrentIndex(index)
        if self.band.findText(str(choices.get("band", ""))) >= 0:
            self.band.setCurrentText(str(choices["band"]))
        self.mask_bright.setChecked(bool(choices.get("mask_bright", False)))
        self._source_changed()

    def _on_model(self, topic: str) -> None:
        if topic in ("result", "fit", "image") and self.light_result is not None:
            self.light_result = None
            self._show_result(None)
            self._say("The estimate changed: press 'Weigh the light' again.", problem=False)
            self.canvas.update()

    def _say(self, text: str, problem: bool = True) -> None:
        text = window_words(text)
        self.status.setText(text)
        self.status.setStyleSheet("color: #d9534f;" if problem else "")

    # ---------------------------------------------------------------- run
    def run(self) -> None:
        m = self.model
        result = m.result
        if result is None:
            self._say(m.result_problem or "Measure theta_E first: the light is set against the mass inside it.")
            return
        try:
            request = read_request(self.texts(), self.choices())
            kwargs = m.session.estimate_kwargs(m.active)
        except LensInputError as exc:
            self._say(str(exc))
            return
        kwargs["samples"] = int(getattr(m, "mc_samples", kwargs.get("samples") or DEFAULT_SAMPLES))
        image, fit = m.image, m.fit
        system = m.active_system
        arc_points = list(system.points) + list(system.images)

        def task(progress, should_stop):
            progress(0.1, "photometry" if request.photometry else "light")
            return compute_light(result, kwargs, request, image=image, fit=fit, arc_points=arc_points)

        self._say("Weighing the light...", problem=False)
        runner = getattr(self.window, "run_task", None)
        if runner is None:
            try:
                self._done(task(lambda *a: None, lambda: False))
            except LensInputError as exc:
                self._say(str(exc))
            return
        runner(task, "Weighing the light", self._done, self._failed)

    def _failed(self, message: str) -> None:
        self._say(message)

    def _done(self, light: dict) -> None:
        self.light_result = light
        self._show_result(light)
        n = light.get("mc_samples")
        band = light.get("light_band")
        head = f"{light.get('cosmology', '')}" + (f", band {band} ({light.get('light_mag_system')})" if band else "")
        self._say(head + (f", {n} Monte Carlo draws" if n else ", no uncertainties given"), problem=False)
        self.canvas.update()

    def _show_result(self, light: dict | None) -> None:
        models = (light or {}).get("models") or {}
        for key, _, _ in self.rows:
            value = None if light is None else light.get(key)
            self.values[key].setText("–" if value is None else value_text(light, key))
            self.values[key].setToolTip(models.get(key, ""))
            self.intervals[key].setText("" if value is None else interval_text(light, key))
        if light is None:
            self.notes.setText("")
            return
        notes = list(light.get("notes") or [])
        phot = light.get("light_photometry")
        if phot:
            notes.insert(0, photometry_note(phot))
        self.notes.setText("\n".join("• " + n for n in notes))

    # --------------------------------------------------------------- draw
    def _draw(self, painter, canvas) -> None:
        light = self.light_result
        if not light or not self.show_overlay.isChecked() or "light_photometry" not in light:
            return
        phot = light["light_photometry"]
        mask = phot.get("_mask")
        if mask is not None and mask.any():
            ny, nx = mask.shape
            shown = mask[::-1] if canvas.flip_rows else mask
            rgba = np.zeros((ny, nx, 4), np.uint8)
            rgba[shown] = MASK_RGBA
            qimg = QImage(rgba.data, nx, ny, nx * 4, QImage.Format_RGBA8888).copy()
            corner = canvas.image_to_widget(0.0, float(ny - 1) if canvas.flip_rows else 0.0)
            z = canvas.zoom
            painter.drawImage(QRectF(corner.x() - 0.5 * z, corner.y() - 0.5 * z, nx * z, ny * z), qimg)
        ap = phot["aperture"]
        centre = canvas.image_to_widget(ap["x_pix"], ap["y_pix"])
        angle = math.degrees(ap["theta_rad"])
        q = ap["b_pix"] / ap["a_pix"]
        painter.translate(centre)
        painter.rotate(-angle if canvas.flip_rows else angle)
        painter.setBrush(Qt.NoBrush)
        z = canvas.zoom
        painter.setPen(QPen(QColor(APERTURE_COLOUR), 1.6))
        painter.drawEllipse(QPointF(0, 0), ap["a_pix"] * z, ap["b_pix"] * z)
        pen = QPen(QColor(ANNULUS_COLOUR), 1.2, Qt.DotLine)
        painter.setPen(pen)
        for a in (ap["annulus_in_pix"], ap["annulus_out_pix"]):
            painter.drawEllipse(QPointF(0, 0), a * z, a * q * z)
