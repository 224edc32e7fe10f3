"""The "Lens model" dock: an SIE + external shear fitted to every marked system of the image.

"Fit lens model" gathers the marks of all arc systems (their multiple images as ``image`` points,
their arc points as ``arc`` points, each system with its own z_s) and the lens centre (a prior on
the mass centre), and runs :func:`lensmass.core.lens_model.fit_lens_model` in the background with
progress and Cancel. The result shows theta_E, q, PA, shear, the masses from the theta_E posterior,
the predicted images with magnifications and residuals, and the time delays, all with intervals.
On the image it draws the critical curve and the model images (dotted circles joined to the marks
they explain); a small source-plane view shows the caustic, the cut and the fitted sources.
Every new fit or clearing is one undoable step; the inputs and the last fit are saved in sessions.
"""

from __future__ import annotations

import copy
from typing import Any

import numpy as np
from PySide6.QtCore import QPointF, QRectF, QSize, Qt
from PySide6.QtGui import QColor, QPainter, QPainterPath, QPen, QUndoCommand
from PySide6.QtWidgets import (
    QCheckBox,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QPushButton,
    QVBoxLayout,
    QWidget,
)

from lensmass.io.lens_model_text import PARAMETER_ROWS, delay_rows, image_lines, interval_columns
from lensmass.core.errors import LensInputError
from lensmass.gui.canvas import SYSTEM_COLOURS
from lensmass.core.lens_model import chi2_text
from lensmass.gui.panel_registry import mark_unsaved

LAYER = "lens_model"
CRITICAL_COLOUR = "#ffe14d"
MODEL_IMAGE_COLOUR = "#ff7b39"
CAUSTIC_COLOUR = "#ffe14d"
CUT_COLOUR = "#9fd3ff"
#: Text fields: key -> (label, default text, tooltip).
FIELDS = {
    "click_err": ("click error (px)", "0.5", "1-sigma error of each marked position, in pixels (stated in the results)."),
    "centre_err": ("centre error (px)", "", "1-sigma error of the lens-light centre as a prior on the mass centre; "
                   "empty: the click error. Without a centre mark the centre is free."),
    "light_q": ("light axis ratio", "", "Axis ratio of the lens light (0-1) as a prior on the mass shape; empty: none."),
    "light_pa": ("light PA (deg)", "", "Position angle of the lens light, degrees east of north (with the axis ratio)."),
}


def _number(texts: dict, key: str, *, positive=False, default=None):
    """A typed number of the panel (empty: ``default``), one sentence on bad input (the shear dock's parser)."""
    from lensmass.gui.shear_panel import _number as parse_number

    text = (texts.get(key) or "").strip()
    return default if not text else parse_number(text, FIELDS[key][0], positive=positive, default=default)


def gather_marks(session) -> tuple[list, list, list, list, dict]:
    """(x, y, system, kind, z_s by system) of every mark of every arc system of a session."""
    x, y, system, kind, z_s = [], [], [], [], {}
    for arc in session.arcs:
        for px, py in arc.images:
            x.append(px), y.append(py), system.append(arc.name), kind.append("image")
        for px, py in arc.points:
            x.append(px), y.append(py), system.append(arc.name), kind.append("arc")
        if (arc.images or arc.points) and arc.z_s is not None:
            z_s[arc.name] = float(arc.z_s)
    return x, y, system, kind, z_s


def fit_request(app_model, texts: dict) -> dict:
    """Everything the background fit needs, read on the GUI thread; one sentence on bad input."""
    if app_model.image is None:
        raise LensInputError("No image is open: open one (File > Open) and mark the images or arcs first.")
    session = app_model.session
    x, y, system, kind, z_s = gather_marks(session)
    if not x:
        raise LensInputError("Nothing is marked: mark the images (I) or arc points (A) of the lensed source first.")
    centre = session.centre
    light_q, light_pa = _number(texts, "light_q"), _number(texts, "light_pa")
    if (light_q is None) != (light_pa is None):
        raise LensInputError("Give both the light axis ratio and its position angle, or neither.")
    kwargs: dict[str, Any] = {}
    if session.z_l is not None and z_s:
        first = next(i for i, a in enumerate(session.arcs) if a.name in z_s)
        kwargs = session.estimate_kwargs(first)
        kwargs["samples"] = int(app_model.mc_samples)  # as the Mass budget's estimate (the same draws)
    return {
        "x": x, "y": y, "system": system, "kind": kind, "z_s": z_s or None, "z_l": session.z_l,
        "image": app_model.image.loaded, "point_err_pix": _number(texts, "click_err", positive=True, default=0.5),
        "center": None if centre is None else (centre.x, centre.y),
        "center_err_pix": _number(texts, "centre_err", positive=True),
        "light_axis_ratio": light_q, "light_position_angle_deg": light_pa,
        "estimate_options": {k: kwargs[k] for k in ("cosmology", "concentration", "halo_definition", "z_l_err",
                                                     "z_s_err", "samples", "seed") if k in kwargs},
    }


def run_fit(request: dict, progress=None, should_stop=None) -> dict:
    """The fit itself (any thread): :func:`lensmass.core.lens_model.fit_lens_model` on a request."""
    from lensmass.core.lens_model import fit_lens_model

    req = dict(request)
    z_s = req.pop("z_s")
    return fit_lens_model(req.pop("x"), req.pop("y"), req.pop("system"), req.pop("kind"), z_s=z_s,
                          progress=progress, should_stop=should_stop, **req)


def stored_result(result: dict) -> dict:
    """The JSON part of a fit result (what sessions keep and the panel shows)."""
    from lensmass.io.jsonout import to_jsonable

    keep = ("theta_e_arcsec", "theta_e_err_arcsec", "mass_einstein_msun", "sis_sigma_v_kms", "r_e_kpc",
            "medians", "intervals68", "intervals95", "center_x", "center_y", "method", "notes", "models",
            "lens_model", "cosmology", "z_l", "z_s", "points_xy")
    return to_jsonable({k: result[k] for k in keep if k in result})


class SetLensModel(QUndoCommand):
    """Replace the panel's lens model (a new fit, or None to clear it): one undoable step."""

    def __init__(self, panel: LensModelPanel, new: dict | None, text: str):
        super().__init__(text)
        self.panel, self.new, self.old = panel, new, panel.model_result

    def redo(self) -> None:
        self.panel.show_model(self.new)

    def undo(self) -> None:
        self.panel.show_model(self.old)


class SourcePlaneView(QWidget):
    """Caustic (solid), cut (dotted) and fitted sources (crosses with their 68% spread), arcsec."""

    def __init__(self):
        super().__init__()
        self.setObjectName("lens_model_source_plane")
        self.setMinimumSize(QSize(200, 230))
        self.curves: dict | None = None
        self.sources: list[tuple[str, float, float, float, float]] = []

    def set_model(self, curves: dict | None, sources) -> None:
        self.curves, self.sources = curves, list(sources)
        self.update()

    def paintEvent(self, _event) -> None:
        p = QPainter(self)
        p.setRenderHint(QPainter.Antialiasing)
        p.fillRect(self.rect(), QColor("#14181d"))
        p.setPen(QColor("#9aa4b1"))
        if self.curves is None:
            p.drawText(self.rect(), Qt.AlignCenter, "source plane\n(fit a lens model)")
            return
        xs = [self.curves["caustic_arcsec"][0], self.curves["cut_arcsec"][0]]
        ys = [self.curves["caustic_arcsec"][1], self.curves["cut_arcsec"][1]]
        allx = np.concatenate(xs + [np.array([s[1] for s in self.sources])])
        ally = np.concatenate(ys + [np.array([s[2] for s in self.sources])])
        cx, cy = 0.5 * (allx.max() + allx.min()), 0.5 * (ally.max() + ally.min())
        half = 0.55 * max(np.ptp(allx), np.ptp(ally), 1e-3)
        scale = min(self.width(), self.height()) / (2 * half)

        def to_w(x, y):  # east to the left, north up, as on the sky
            return QPointF(self.width() / 2 - (x - cx) * scale, self.height() / 2 - (y - cy) * scale)

        for key, colour, style in (("cut_arcsec", CUT_COLOUR, Qt.DotLine), ("caustic_arcsec", CAUSTIC_COLOUR, Qt.SolidLine)):
            path = QPainterPath()
            x, y = self.curves[key]
            path.moveTo(to_w(x[0], y[0]))
            for a, b in zip(x[1:], y[1:]):
                path.lineTo(to_w(a, b))
            pen = QPen(QColor(colour), 1.4, style)
            p.setPen(pen)
            p.drawPath(path)
        for k, (name, x, y, ex, ey) in enumerate(self.sources):
            colour = QColor(SYSTEM_COLOURS[k % len(SYSTEM_COLOURS)])
            p.setPen(QPen(colour, 1.6))
            c = to_w(x, y)
            p.drawLine(QPointF(c.x() - 5, c.y()), QPointF(c.x() + 5, c.y()))
            p.drawLine(QPointF(c.x(), c.y() - 5), QPointF(c.x(), c.y() + 5))
            p.setPen(QPen(colour, 1.0, Qt.DashLine))
            p.drawEllipse(c, max(ex * scale, 2.0), max(ey * scale, 2.0))
            p.drawText(QPointF(c.x() + 6, c.y() - 6), name)
        p.setPen(QColor("#9aa4b1"))
        p.drawText(QRectF(4, 2, self.width() - 8, 16), Qt.AlignLeft, "source plane: caustic, cut, sources (N up, E left)")


class LensModelPanel(QWidget):
    PANEL_TITLE = "Lens model"
    DOCK_AREA = "right"
    PANEL_KEY = "lens_model"

    def __init__(self, app_model, canvas, window):
        super().__init__()
        self.app_model, self.canvas, self.window = app_model, canvas, window
        self.model_result: dict | None = None
        self.curves: dict | None = None
        outer = QVBoxLayout(self)
        form = QFormLayout()
        self.edits: dict[str, QLineEdit] = {}
        for key, (label, default, tip) in FIELDS.items():
            edit = QLineEdit(default)
            edit.setObjectName(f"lens_model_{key}")
            edit.setToolTip(tip)
            edit.setPlaceholderText("none" if not default else "")
            edit.textEdited.connect(lambda *_: mark_unsaved(self.window))
            form.addRow(label, edit)
            self.edits[key] = edit
        outer.addLayout(form)
        buttons = QHBoxLayout()
        self.fit_button = QPushButton("Fit lens model")
        self.fit_button.setObjectName("lens_model_fit")
        self.fit_button.setToolTip("SIE + external shear through every marked image and arc point of all systems, "
                                   "with a posterior (runs in the background; Cancel stops it).")
        self.fit_button.clicked.connect(self.fit)
        self.clear_button = QPushButton("Clear")
        self.clear_button.setObjectName("lens_model_clear")
        self.clear_button.clicked.connect(self.clear)
        self.show_overlay = QCheckBox("show on image")
        self.show_overlay.setObjectName("lens_model_show")
        self.show_overlay.setChecked(True)
        self.show_overlay.toggled.connect(lambda _: self.canvas.update())
        for w in (self.fit_button, self.clear_button, self.show_overlay):
            buttons.addWidget(w)
        buttons.addStretch(1)
        outer.addLayout(buttons)
        self.status = QLabel("Mark the images (I) or arc points (A) of each source, then fit.")
        self.status.setObjectName("lens_model_status")
        self.status.setWordWrap(True)
        outer.addWidget(self.status)
        self.table = QLabel()
        self.table.setObjectName("lens_model_results")
        self.table.setStyleSheet("font-family: monospace; font-size: 85%;")
        self.table.setTextInteractionFlags(Qt.TextSelectableByMouse)
        self.table.setWordWrap(False)
        outer.addWidget(self.table)
        self.source_view = SourcePlaneView()
        outer.addWidget(self.source_view)
        self.notes = QLabel()
        self.notes.setObjectName("lens_model_notes")
        self.notes.setWordWrap(True)
        self.notes.setStyleSheet("font-size: 88%;")
        self.notes.setTextInteractionFlags(Qt.TextSelectableByMouse)
        outer.addWidget(self.notes)
        outer.addStretch(1)
        canvas.set_layer(LAYER, self._draw)

    # ------------------------------------------------------------------ inputs and state
    def texts(self) -> dict[str, str]:
        return {k: e.text() for k, e in self.edits.items()}

    def panel_state(self, session_dir=None) -> dict:
        return {"texts": self.texts(), "result": self.model_result}

    def restore_panel_state(self, state: dict, session_dir=None) -> None:
        for key, text in (state.get("texts") or {}).items():
            if key in self.edits:
                self.edits[key].setText(str(text))
        result = state.get("result")
        self.show_model(result if isinstance(result, dict) and "lens_model" in result else None)

    # ------------------------------------------------------------------ fitting
    def fit(self) -> None:
        try:
            request = fit_request(self.app_model, self.texts())
        except LensInputError as exc:
            self.status.setText(str(exc))
            return
        self.status.setText("Fitting the lens model...")

        def task(progress, should_stop):
            return run_fit(request, lambda f: progress(f, "lens model"), should_stop)

        self.window.run_task(task, "Fitting the lens model", self._done, self._failed)

    def _failed(self, message: str) -> None:
        self.status.setText(message)

    def _done(self, result: dict) -> None:
        self.window.undo_stack.push(SetLensModel(self, stored_result(result), "fit lens model"))
        mark_unsaved(self.window)

    def clear(self) -> None:
        if self.model_result is not None:
            self.window.undo_stack.push(SetLensModel(self, None, "clear lens model"))
            mark_unsaved(self.window)

    # ------------------------------------------------------------------ showing
    def show_model(self, result: dict | None) -> None:
        from lensmass.core.lens_model import model_curves

        self.model_result = copy.deepcopy(result)
        self.app_model.lens_model = self.model_result  # the Mass budget uses it while the marks are unchanged
        if hasattr(self.window, "request_estimate"):
            self.window.request_estimate()
        if result is None:
            self.curves = None
            self.table.setText("")
            self.notes.setText("")
            self.source_view.set_model(None, [])
            self.status.setText("No lens model: mark the images or arcs, then fit.")
            self.canvas.update()
            return
        lm = result["lens_model"]
        self.curves = model_curves(lm)
        sources = []
        for name, s in lm["sources"].items():
            ex = 0.5 * (s["x_arcsec"]["interval68"][1] - s["x_arcsec"]["interval68"][0])
            ey = 0.5 * (s["y_arcsec"]["interval68"][1] - s["y_arcsec"]["interval68"][0])
            sources.append((name, s["x_arcsec"]["median"], s["y_arcsec"]["median"], ex, ey))
        self.source_view.set_model(self.curves, sources)
        self.table.setText(result_table(result))
        self.notes.setText("\n".join(f"• {n}" for n in result.get("notes", [])))
        self.status.setText(f"{lm['model']} ({lm['sampler']} posterior, {lm['n_draws']} draws): {chi2_text(lm)}.")
        self.canvas.update()

    def _draw(self, painter, canvas) -> None:
        if self.model_result is None or self.curves is None or not self.show_overlay.isChecked():
            return
        x, y = self.curves["critical_curve_pix"]
        path = QPainterPath()
        path.moveTo(canvas.image_to_widget(float(x[0]), float(y[0])))
        for a, b in zip(x[1:], y[1:]):
            path.lineTo(canvas.image_to_widget(float(a), float(b)))
        for pen in (QPen(QColor(0, 0, 0, 140), 3.2), QPen(QColor(CRITICAL_COLOUR), 1.4, Qt.DashLine)):
            pen.setCosmetic(True)
            painter.setPen(pen)
            painter.setBrush(Qt.NoBrush)
            painter.drawPath(path)
        for e in self.model_result["lens_model"]["images"]:
            if e.get("model_x") is None:
                continue
            p = canvas.image_to_widget(e["model_x"], e["model_y"])
            if e.get("marked_x") is not None:
                q = canvas.image_to_widget(e["marked_x"], e["marked_y"])
                painter.setPen(QPen(QColor(MODEL_IMAGE_COLOUR), 1.0))
                painter.drawLine(p, q)
            for pen in (QPen(QColor(0, 0, 0, 150), 3.0), QPen(QColor(MODEL_IMAGE_COLOUR), 1.5, Qt.DotLine)):
                painter.setPen(pen)
                painter.drawEllipse(p, 6.5, 6.5)


def result_table(result: dict) -> str:
    """The model's numbers as the dock shows them: the command line's rows, short labels, narrow columns."""
    lm = result["lens_model"]
    p = lm["parameters"]
    rows = [(short, interval_columns(p[key], ".3g", 6)) for key, _label, short, _unit, _fmt in PARAMETER_ROWS]
    i68, i95 = result.get("intervals68") or {}, result.get("intervals95") or {}
    for key, label in (("mass_einstein_msun", "M(<thE) Msun"), ("sis_sigma_v_kms", "sigma_SIS")):
        if key in result and key in i68:
            block = {"median": result[key], "interval68": i68[key], "interval95": i95.get(key, i68[key])}
            rows.append((label, interval_columns(block, ".3g", 6)))
    rows += [(label[6:-4] + " [d]", interval_columns(block, ".3g", 6)) for label, block in delay_rows(lm)]
    lines = [f"{'':<13}{'median':>6} {'68% interval':^13} {'95% interval':^13}"]
    lines += [f"{a:<13}{b}" for a, b in rows]
    lines.append("images: marked -> model (px), residual, mu [68%]:")
    lines += [f" {line}" for line in image_lines(lm)]
    return "\n".join(lines)
