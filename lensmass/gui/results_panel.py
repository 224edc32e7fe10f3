"""The "Mass budget" panel: every number of the estimate with its interval and its model.

Values come straight from the result of :func:`lensmass.core.estimate.estimate`;
the tooltip of each row says which model and assumptions produced it. When there
is no result the panel says why, in one sentence.
"""

from __future__ import annotations


from PySide6.QtCore import Qt
from PySide6.QtGui import QGuiApplication
from PySide6.QtWidgets import QGridLayout, QHBoxLayout, QLabel, QPushButton, QVBoxLayout, QWidget

from lensmass.core.lens_centre import centre_text
from lensmass.core.result_keys import fact, keys_in
from lensmass.core.result_text import (  # noqa: F401 (interval_text, format_number: other panels)
    format_number,
    format_table,
    interval_text,
    round_measured,
    rounded_key,
)
from lensmass.gui.model import WindowModel
from lensmass.gui.words import window_note

#: Keys left out of the panel: the redshifts are inputs, shown in "Lens & source".
_INPUT_KEYS = ("z_l", "z_s")


def panel_rows() -> list[tuple[str, str, str]]:
    """Rows shown (key, HTML label, HTML unit): the estimate keys of the registry, in its order."""
    return [(key, fact(key).rich_label, fact(key).rich_unit)
            for key in keys_in("estimate", table_only=True) if key not in _INPUT_KEYS]


def result_text(model: WindowModel) -> str:
    """The results as plain text (the same table as the command line prints), with the fit."""
    result = model.result
    if result is None:
        return model.result_problem or "No result yet."
    fit = model.fit
    head = [f"lensmass estimate for arc system {model.active_system.name}"]
    if model.image is not None:
        head.append(f"image: {model.image.path}")
    if result.get("theta_e_from") == "lens model":
        shown = round_measured(result["theta_e_arcsec"], result["theta_e_err_arcsec"]).plain("+-")
        head.append(f"theta_E = {shown} arcsec from the lens model")
    elif fit is not None and fit.bounds_arcsec is not None:
        from lensmass.core.ring_interval import interval_text

        head.append(f"theta_E = {interval_text(fit.theta_e_arcsec, fit.bounds_arcsec, 'arcsec', 3)} from the {fit.method}")
    elif fit is not None:
        head.append(f"theta_E = {theta_e_text(fit, '+-')} arcsec from a {fit.method}")
    if centre_text(result):
        head.append(f"lens centre: {centre_text(result)}")
    return "\n".join(head + [""] + [format_table(result)])


def theta_e_text(fit, plus_minus: str = "±") -> str:
    """The fitted theta_E and its error by the program's one rounding rule ('1.535 ± 0.020')."""
    return round_measured(fit.theta_e_arcsec, fit.theta_e_err_arcsec).plain(plus_minus)


class ResultsPanel(QWidget):
    PANEL_TITLE = "Mass budget"

    def __init__(self, model: WindowModel, parent=None):
        super().__init__(parent)
        self.model = model
        outer = QVBoxLayout(self)
        self.status = QLabel()
        self.status.setObjectName("results_status")
        self.status.setWordWrap(True)
        outer.addWidget(self.status)
        grid = QGridLayout()
        grid.setHorizontalSpacing(10)
        grid.setVerticalSpacing(4)
        self.values: dict[str, QLabel] = {}
        self.intervals: dict[str, QLabel] = {}
        self.names: dict[str, QLabel] = {}
        for col, text in enumerate(("", "value", "68% interval", "")):
            h = QLabel(text)
            h.setStyleSheet("color: palette(mid); font-size: 85%;")
            grid.addWidget(h, 0, col)
        self.rows = panel_rows()
        for row, (key, label, unit) in enumerate(self.rows, start=1):
            name = QLabel(label)
            value = QLabel("–")
            value.setObjectName(f"value_{key}")
            value.setAlignment(Qt.AlignRight | Qt.AlignVCenter)
            value.setTextInteractionFlags(Qt.TextSelectableByMouse)
            value.setStyleSheet("font-family: monospace;")
            interval = QLabel("")
            interval.setObjectName(f"interval_{key}")
            interval.setStyleSheet("font-family: monospace; color: palette(mid);")
            row_height = int(self.fontMetrics().height() * 1.35)
            for w in (name, value, interval):
                w.setMinimumHeight(row_height)
            grid.addWidget(name, row, 0)
            grid.addWidget(value, row, 1)
            grid.addWidget(interval, row, 2)
            grid.addWidget(QLabel(unit), row, 3)
            self.values[key], self.intervals[key], self.names[key] = value, interval, name
        outer.addLayout(grid)
        self.centre = QLabel()
        self.centre.setObjectName("results_centre")
        self.centre.setWordWrap(True)
        self.centre.setTextInteractionFlags(Qt.TextSelectableByMouse)
        self.centre.setToolTip(fact("center_source").description)
        outer.addWidget(self.centre)
        self.notes = QLabel()
        self.notes.setObjectName("results_notes")
        self.notes.setWordWrap(True)
        self.notes.setStyleSheet("font-size: 88%;")
        self.notes.setTextInteractionFlags(Qt.TextSelectableByMouse)
        outer.addWidget(self.notes)
        buttons = QHBoxLayout()
        self.copy_button = QPushButton("Copy as text")
        self.copy_button.setToolTip("Copy the numbers, intervals, models and notes to the clipboard (Ctrl+Shift+C).")
        self.copy_button.clicked.connect(self.copy_text)
        buttons.addWidget(self.copy_button)
        buttons.addStretch(1)
        outer.addLayout(buttons)
        outer.addStretch(1)
        model.subscribe(self._on_model)
        self.refresh()

    def _on_model(self, topic: str) -> None:
        if topic in ("result", "fit", "marks", "inputs", "image"):
            self.refresh()

    def copy_text(self) -> str:
        text = result_text(self.model)
        QGuiApplication.clipboard().setText(text)
        return text

    def refresh(self) -> None:
        m = self.model
        result = m.result
        fit = m.fit
        if result is None:
            for key in self.values:
                self.values[key].setText("–")
                self.intervals[key].setText("")
            if fit is not None:
                shown = round_measured(fit.theta_e_arcsec, fit.theta_e_err_arcsec)
                self.values["theta_e_arcsec"].setText(shown.value_text)
                self.intervals["theta_e_arcsec"].setText(f"± {shown.error}")
            reason = m.result_problem or m.derived[m.active].fit_problem
            pending = reason is None and fit is not None
            self.status.setText("Working out the masses..." if pending else (reason or "Mark the arc to begin."))
            self.status.setStyleSheet("" if pending else "color: #d9534f;")
            self.notes.setText("")
            self.centre.setText("")
            self.copy_button.setEnabled(False)
            return
        models = result.get("models") or {}
        for key, _label, _unit in self.rows:
            shown = rounded_key(result, key)
            self.values[key].setText(shown.value_text)
            self.intervals[key].setText(shown.interval())
            tip = models.get(key, "")
            if key == "theta_e_arcsec" and fit is not None and result.get("theta_e_from") != "lens model":
                tip = f"{fit.method}; {fit.n_points} marks; pixel scale from the image"
                if fit.bounds_arcsec is not None:
                    tip = models.get(key, fit.method)
            self.names[key].setToolTip(tip)
            self.values[key].setToolTip(tip)
        n = result.get("mc_samples")
        self.status.setText(f"System {m.active_system.name}: {result.get('cosmology', '')}"
                            + (f", {n} Monte Carlo draws" if n else ", no uncertainties given")
                            + ("; theta_E from the lens model" if result.get("theta_e_from") == "lens model"
                               else "; theta_E from the ring finder" if fit is not None and fit.bounds_arcsec is not None
                               else "; theta_E from the circle fit"))
        self.status.setStyleSheet("")
        where = centre_text(result)
        self.centre.setText(f"Lens centre: {where}" if where else "")
        from_model = result.get("theta_e_from") == "lens model"
        warns = list(fit.warnings) if fit is not None and not from_model else []  # the circle's caveats
        self.notes.setText("\n".join("• " + window_note(t) for t in warns + list(result.get("notes") or [])))
        self.copy_button.setEnabled(True)
