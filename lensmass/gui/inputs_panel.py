"""The "Lens & source" panel: redshifts with errors, cosmology, NFW choices.

Typed fields commit to the model shortly after typing stops (or on Enter / leaving
the field) through undoable commands; a field whose text is not valid is marked
where it is typed, with the reason under it.
"""

from __future__ import annotations

from PySide6.QtCore import Qt, QTimer
from PySide6.QtWidgets import (QComboBox, QFormLayout, QHBoxLayout, QLabel, QLineEdit, QSpinBox, QVBoxLayout,
                               QWidget)

from lensmass.gui.model import CUSTOM_COSMOLOGY, WindowModel
from lensmass.gui.undo import SetChoice, SetText

#: astropy's built-in realisations (astropy.cosmology.realizations.available; a test checks the list),
#: named here so the window opens without importing astropy.cosmology.
COSMOLOGY_PRESETS = ("Planck18", "Planck15", "Planck13", "WMAP9", "WMAP7", "WMAP5", "WMAP3", "WMAP1")

#: Seconds of quiet after typing before a field is committed.
COMMIT_DELAY_MS = 350

CONCENTRATIONS = (("duffy08", "Duffy et al. 2008 c(M, z)"), ("dutton14", "Dutton & Maccio 2014 c(M, z)"),
                  ("fixed", "fixed value"))
HALO_DEFINITIONS = (("200c", "200 x critical"), ("200m", "200 x mean matter"), ("vir", "virial (Bryan & Norman)"))

TOOLTIPS = {
    "z_l": "Lens redshift (spectroscopic or photometric).",
    "z_l_err": "1-sigma error of z_l; propagated by Monte Carlo (0 = exact).",
    "z_s": "Source redshift of the selected arc system, or a range such as 1.0-3.0 when it is unknown "
           "(every number is then marginalised over the range).",
    "z_s_err": "1-sigma error of z_s; propagated by Monte Carlo (0 = exact).",
    "h0": "Hubble constant in km/s/Mpc.",
    "om0": "Matter density today, Omega_m.",
    "ode0": "Dark-energy density today; empty for a flat universe.",
    "concentration_value": "Fixed NFW concentration c200 used instead of a c(M, z) relation.",
}


def _choice_box(name: str, items, tip: str) -> QComboBox:
    """A combo box of (value, label) items."""
    box = QComboBox()
    box.setObjectName(f"choice_{name}")
    for value, label in items:
        box.addItem(label, value)
    box.setToolTip(tip)
    return box


class ValidatedField(QWidget):
    """A line edit with its problem shown beneath it."""

    def __init__(self, key: str, placeholder: str, parent=None):
        super().__init__(parent)
        self.key = key
        self.edit = QLineEdit()
        self.edit.setObjectName(f"field_{key}")
        self.edit.setPlaceholderText(placeholder)
        self.edit.setToolTip(TOOLTIPS.get(key, ""))
        # the red border of a problem must not change the field's height (it would leave its row)
        self.edit.setFixedHeight(self.edit.sizeHint().height())
        self.problem = QLabel()
        self.problem.setObjectName(f"problem_{key}")
        self.problem.setWordWrap(True)
        self.problem.setStyleSheet("color: #d9534f; font-size: 90%;")
        self.problem.hide()
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(1)
        lay.addWidget(self.edit)
        lay.addWidget(self.problem)

    def show_problem(self, message: str | None) -> None:
        self.edit.setProperty("invalid", bool(message))
        self.edit.setStyleSheet("QLineEdit { border: 1px solid #d9534f; }" if message else "")
        self.problem.setText(message or "")
        self.problem.setVisible(bool(message))


class InputsPanel(QWidget):
    """Inputs of the estimate for the selected arc system."""

    PANEL_TITLE = "Lens & source"

    def __init__(self, model: WindowModel, undo_stack, parent=None):
        super().__init__(parent)
        self.model, self.undo_stack = model, undo_stack
        self.fields: dict[str, ValidatedField] = {}
        self._timers: dict[str, QTimer] = {}
        self._updating = False
        form = QFormLayout(self)
        form.setLabelAlignment(Qt.AlignRight | Qt.AlignTop)
        form.setFieldGrowthPolicy(QFormLayout.AllNonFixedFieldsGrow)

        def pair(a: str, b: str, pa: str, pb: str) -> QWidget:
            # A value and its error on one line; their problems beneath the whole line, at full
            # width (a problem under the narrow error field wrapped into a tall column and pushed
            # the row's fields apart and over the next row).
            w = QWidget()
            w.setObjectName(f"pair_{a}")
            v = QVBoxLayout(w)
            v.setContentsMargins(0, 0, 0, 0)
            v.setSpacing(1)
            h = QHBoxLayout()
            h.setContentsMargins(0, 0, 0, 0)
            fields = (self._field(a, pa), self._field(b, pb))
            h.addWidget(fields[0], 3)
            h.addWidget(QLabel("±"))
            h.addWidget(fields[1], 2)
            v.addLayout(h)
            for f in fields:
                f.layout().removeWidget(f.problem)
                v.addWidget(f.problem)
            return w

        form.addRow("z lens", pair("z_l", "z_l_err", "e.g. 0.35", "0"))
        self.zs_label = QLabel("z source")
        form.addRow(self.zs_label, pair("z_s", "z_s_err", "e.g. 1.2 or 1-3", "0"))

        self.cosmology = _choice_box("cosmology", [(n, n) for n in COSMOLOGY_PRESETS]
                                     + [(CUSTOM_COSMOLOGY, "custom Lambda-CDM")],
                                     "Cosmology of the distances: an astropy preset or your own H0, Omega_m, Omega_Lambda.")
        form.addRow("cosmology", self.cosmology)
        self.custom = QWidget()
        ch = QHBoxLayout(self.custom)
        ch.setContentsMargins(0, 0, 0, 0)
        for key, ph in (("h0", "H0"), ("om0", "Om"), ("ode0", "OL (flat)")):
            ch.addWidget(self._field(key, ph))
        form.addRow("", self.custom)

        self.concentration = _choice_box("concentration", CONCENTRATIONS,
                                         "NFW concentration: a c(M, z) relation or a fixed value.")
        form.addRow("NFW c", self.concentration)
        self.conc_value = self._field("concentration_value", "c200, e.g. 5")
        form.addRow("", self.conc_value)
        self.halo = _choice_box("halo", HALO_DEFINITIONS,
                                "Where the NFW halo ends: mean density 200 x critical, 200 x mean matter, or virial.")
        form.addRow("halo edge", self.halo)
        self.samples = QSpinBox()
        self.samples.setObjectName("choice_samples")
        self.samples.setRange(100, 200_000)
        self.samples.setSingleStep(1000)
        self.samples.setToolTip("Monte Carlo draws used for the intervals (fixed seed: reproducible).")
        form.addRow("draws", self.samples)

        self.cosmology.activated.connect(lambda _i: self._choice("cosmology", self.cosmology.currentData()))
        self.concentration.activated.connect(lambda _i: self._choice("concentration", self.concentration.currentData()))
        self.halo.activated.connect(lambda _i: self._choice("halo_definition", self.halo.currentData()))
        self.samples.editingFinished.connect(self._samples_changed)
        model.subscribe(self._on_model)
        self.refresh()

    def _field(self, key: str, placeholder: str) -> ValidatedField:
        f = ValidatedField(key, placeholder)
        self.fields[key] = f
        timer = QTimer(self)
        timer.setSingleShot(True)
        timer.setInterval(COMMIT_DELAY_MS)
        timer.timeout.connect(lambda k=key: self.commit(k))
        self._timers[key] = timer
        f.edit.textEdited.connect(lambda _t, k=key: self._timers[k].start())
        f.edit.editingFinished.connect(lambda k=key: self.commit(k))
        return f

    def commit(self, key: str) -> None:
        """Send field ``key``'s text to the model (one undoable edit)."""
        self._timers[key].stop()
        text = self.fields[key].edit.text()
        if text != self.model.texts.get(key, ""):
            self.undo_stack.push(SetText(self.model, key, text))

    def commit_all(self) -> None:
        for key in self.fields:
            self.commit(key)

    def _choice(self, key: str, value) -> None:
        if self._updating:
            return
        s = self.model.session
        if key == "cosmology":
            old = CUSTOM_COSMOLOGY if self.model.cosmology_is_custom else s.cosmology.preset
        elif key == "concentration":
            old = "fixed" if self.model.concentration_is_fixed else s.concentration
        else:
            old = s.halo_definition
        if value != old:
            self.undo_stack.push(SetChoice(self.model, key, value, old))

    def _samples_changed(self) -> None:
        if self.samples.value() != self.model.mc_samples:
            self.model.mc_samples = self.samples.value()
            self.model.invalidate()
            self.model.notify("inputs")

    def _on_model(self, topic: str) -> None:
        if topic in ("inputs", "validation", "marks"):
            self.refresh()

    def refresh(self) -> None:
        """Show the model's texts, choices and problems."""
        self._updating = True
        try:
            m = self.model
            for key, f in self.fields.items():
                if not f.edit.hasFocus() or not self._timers[key].isActive():
                    if f.edit.text() != m.texts.get(key, "") and not self._timers[key].isActive():
                        f.edit.setText(m.texts.get(key, ""))
                # An empty field is not an error where it is typed: the results say what is missing.
                typed = bool(m.texts.get(key, "").strip())
                f.show_problem(m.validation.get(key) if typed else None)
            self.zs_label.setText(f"z source ({m.active_system.name})")
            preset = CUSTOM_COSMOLOGY if m.cosmology_is_custom else m.session.cosmology.preset
            i = self.cosmology.findData(preset)
            self.cosmology.setCurrentIndex(max(i, 0))
            self.custom.setVisible(m.cosmology_is_custom)
            conc = "fixed" if m.concentration_is_fixed else m.session.concentration
            self.concentration.setCurrentIndex(max(self.concentration.findData(conc), 0))
            self.conc_value.setVisible(m.concentration_is_fixed)
            self.halo.setCurrentIndex(max(self.halo.findData(m.session.halo_definition), 0))
            self.samples.setValue(int(m.mc_samples))
        finally:
            self._updating = False
