"""The "Grade a class" dialog: the same grading as ``lensmass grade``, for TAs who prefer a window.

Choose the submissions table (student, theta_e_arcsec, z_l, z_s and answers), the
tolerance and the cosmology; "Grade" fills the table (one row per student and
quantity, verdict coloured, diagnosis of known mistakes) and a summary line; "Save
report..." writes the report CSV and the HTML class summary beside it. Every number
comes from :func:`lensmass.io.grading_report.grade_class` (the command's function).
"""

from __future__ import annotations

import math
from pathlib import Path

from PySide6.QtGui import QBrush, QColor
from PySide6.QtWidgets import (QComboBox, QDialog, QDoubleSpinBox, QFileDialog, QFormLayout, QHBoxLayout, QLabel,
                               QLineEdit, QPushButton, QTableWidget, QTableWidgetItem, QVBoxLayout)

from lensmass.gui.file_dialogs import start_path, window_of
from lensmass.core.errors import LensInputError

VERDICT_COLOURS = {"pass": "#1b7a3a", "fail": "#b3261e"}
TABLE_COLUMNS = ("student", "quantity", "submitted", "expected", "relative_error", "verdict", "diagnosis")


class GradingDialog(QDialog):
    """Grade a submissions table and save the report (see the module docstring)."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.setWindowTitle("Grade a class - lensmass")
        self.report: list[dict] = []
        self.cosmology_label = ""
        lay = QVBoxLayout(self)
        form = QFormLayout()
        pick = QHBoxLayout()
        self.path_edit = QLineEdit()
        self.path_edit.setPlaceholderText("submissions table (CSV/ECSV)")
        browse = QPushButton("Browse...")
        browse.clicked.connect(self._browse)
        pick.addWidget(self.path_edit, 1)
        pick.addWidget(browse)
        form.addRow("submissions", pick)
        self.tolerance = QDoubleSpinBox()
        self.tolerance.setRange(0.001, 0.5)
        self.tolerance.setDecimals(3)
        self.tolerance.setSingleStep(0.01)
        self.tolerance.setValue(0.05)
        self.tolerance.setToolTip("Largest relative error that passes.")
        form.addRow("tolerance", self.tolerance)
        self.cosmology = QComboBox()
        from lensmass.core.cosmology import DEFAULT_COSMOLOGY, preset_names

        names = list(preset_names())
        self.cosmology.addItems(names)
        self.cosmology.setCurrentIndex(names.index(DEFAULT_COSMOLOGY) if DEFAULT_COSMOLOGY in names else 0)
        self.custom = QLineEdit()
        self.custom.setPlaceholderText("or H0, Om0 (e.g. 70, 0.3) for a flat custom model")
        form.addRow("cosmology", self.cosmology)
        form.addRow("", self.custom)
        lay.addLayout(form)
        buttons = QHBoxLayout()
        self.grade_button = QPushButton("Grade")
        self.grade_button.setDefault(True)
        self.grade_button.clicked.connect(self.grade)
        self.save_button = QPushButton("Save report...")
        self.save_button.setEnabled(False)
        self.save_button.clicked.connect(self._save_dialog)
        buttons.addWidget(self.grade_button)
        buttons.addWidget(self.save_button)
        buttons.addStretch(1)
        lay.addLayout(buttons)
        self.summary = QLabel("Choose a submissions table with columns student, theta_e_arcsec, z_l, z_s "
                              "and the answers.")
        self.summary.setWordWrap(True)
        lay.addWidget(self.summary)
        self.table = QTableWidget(0, len(TABLE_COLUMNS))
        self.table.setHorizontalHeaderLabels(list(TABLE_COLUMNS))
        self.table.horizontalHeader().setStretchLastSection(True)
        lay.addWidget(self.table, 1)
        self.resize(900, 520)

    def _browse(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Submissions table", start_path(*window_of(self)),
                                              "Tables (*.csv *.ecsv)")
        if path:
            self.path_edit.setText(path)

    def _cosmology(self):
        from lensmass.core.cosmology import resolve_cosmology

        text = self.custom.text().strip()
        if text:
            parts = [p.strip() for p in text.replace(";", ",").split(",")]
            try:
                h0, om0 = (float(p) for p in parts)
            except ValueError:
                raise LensInputError(f"The custom cosmology must be two numbers, H0, Om0 (e.g. 70, 0.3); got '{text}'.") from None
            return resolve_cosmology(h0=h0, om0=om0)
        return resolve_cosmology(self.cosmology.currentText())

    def grade(self) -> bool:
        """Grade the chosen table; fills the table and the summary. True on success."""
        from lensmass.core.cosmology import cosmology_label
        from lensmass.io.grading_report import grade_class, summary_sentence

        path = self.path_edit.text().strip()
        if not path:
            self.summary.setText("Choose the submissions table first (Browse...).")
            return False
        try:
            cosmo = self._cosmology()
            report = grade_class(path, cosmo, self.tolerance.value())
        except LensInputError as exc:
            self.summary.setText(str(exc))
            return False
        self.report, self.cosmology_label = report, cosmology_label(cosmo)
        self._fill(report)
        self.summary.setText(f"{summary_sentence(report)} (cosmology {self.cosmology_label}).")
        # a wrapped label keeps its old height in the layout unless told how tall its new text is
        self.summary.setMinimumHeight(self.summary.heightForWidth(max(self.summary.width(), 200)))
        self.layout().activate()
        self.save_button.setEnabled(True)
        return True

    def _fill(self, report) -> None:
        self.table.setRowCount(len(report))
        for i, row in enumerate(report):
            for j, col in enumerate(TABLE_COLUMNS):
                value = row.get("submitted_text", row[col]) if col == "submitted" else row[col]
                if isinstance(value, float):
                    text = "" if not math.isfinite(value) else f"{value:.5g}"
                else:
                    text = str(value)
                item = QTableWidgetItem(text)
                if col == "verdict":
                    item.setForeground(QBrush(QColor(VERDICT_COLOURS.get(text, "#000000"))))
                self.table.setItem(i, j, item)
        self.table.resizeColumnsToContents()

    def _save_dialog(self) -> None:
        path, _ = QFileDialog.getSaveFileName(self, "Save the report", start_path(*window_of(self), "report.csv"),
                                              "CSV (*.csv)")
        if path:
            self.save(path)

    def save(self, path: str | Path) -> tuple[Path, Path] | None:
        """Write the report CSV and the HTML summary beside it."""
        from lensmass.io.grading_report import write_report_csv, write_summary_html

        p = Path(path)
        if p.suffix.lower() != ".csv":
            p = p.with_suffix(".csv")
        html_path = p.with_suffix(".html")
        try:
            write_report_csv(p, self.report)
            write_summary_html(html_path, self.report, title=f"Grading of {Path(self.path_edit.text()).name}",
                               cosmology=self.cosmology_label, tolerance=self.tolerance.value())
        except OSError as exc:
            self.summary.setText(f"Cannot write the report to {p} ({exc.strerror}): choose another folder.")
            return None
        self.summary.setText(f"Report saved to {p.name} and the class summary to {html_path.name}.")
        return p, html_path
