"""The main window: canvas in the middle, "Marks" on the left, "Lens & source" and
"Mass budget" on the right, "Curves" below, a view strip under the canvas.

The window wires widgets to the :class:`WindowModel`: clicks become undoable
commands, model changes refit the marks (on the GUI thread: a few points) and
schedule an estimate in the background (Monte Carlo), display changes recolour
the cached image levels and nothing else.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Callable

import numpy as np
from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import QAction, QKeySequence, QUndoStack
from PySide6.QtWidgets import (QApplication, QButtonGroup, QCheckBox, QComboBox, QDialog, QDialogButtonBox,
                               QDockWidget, QFileDialog, QHBoxLayout, QInputDialog, QLabel, QListWidget,
                               QListWidgetItem, QMainWindow, QMessageBox, QProgressBar, QPushButton, QRadioButton,
                               QScrollArea, QTextBrowser, QToolButton, QVBoxLayout, QWidget)

from lensmass.core.errors import LensInputError
from lensmass.gui import measuring
from lensmass.gui.canvas import SYSTEM_COLOURS, FitShape, ImageCanvas, Mark
from lensmass.gui.display import COLORMAPS, LIMITS, STRETCHES, DisplayChoice, DisplayPipeline, colour_table
from lensmass.gui.inputs_panel import InputsPanel
from lensmass.gui.model import WindowModel
from lensmass.gui.plots_panel import PlotsPanel
from lensmass.gui.results_panel import ResultsPanel
from lensmass.gui.undo import AddMark, AddSystem, MoveMark, RemoveMark, RemoveSystem, SetCentre, SetSystemShape
from lensmass.gui.workers import TaskRunner

APP_NAME = "lensmass"
IMAGE_FILTER = "Images (*.fits *.fit *.fts *.fits.gz *.fz *.png *.jpg *.jpeg *.tif *.tiff);;All files (*)"
SESSION_FILTER = "lensmass sessions (*.lensmass.json *.json);;All files (*)"
MAX_RECENT = 8
#: Milliseconds between an edit and the start of the background estimate.
ESTIMATE_DELAY_MS = 120
AUTOSAVE_INTERVAL_MS = 30_000
LAYERS = ("image", "lens light", "residual")
TOOLS = (("point", "Arc point", "A", "Click along the arc to add points (A)."),
         ("image", "Image", "I", "Click on each image of a multiple-image system (I)."),
         ("centre", "Centre", "C", "Click to set the lens centre; the fit then holds it (C)."))


def _scrolling(widget: QWidget) -> QScrollArea:
    """``widget`` in a frameless scroll area, so a tall panel never forces the window's size."""
    area = QScrollArea()
    area.setWidget(widget)
    area.setWidgetResizable(True)
    area.setFrameShape(QScrollArea.NoFrame)
    area.setHorizontalScrollBarPolicy(Qt.ScrollBarAlwaysOff)
    return area


def _is_session_path(path: str) -> bool:
    return str(path).lower().endswith(".json")


class MainWindow(QMainWindow):
    """The lensmass window. ``settings`` defaults to the user's QSettings.

    ``offer_recovery`` looks for autosaves of a crashed run at start-up;
    ``interactive=False`` (tests, screenshots) never opens a blocking dialog.
    ``load_panels``: True builds the registered dock panels now, "deferred" just
    after the first paint (the command line's choice: the image shows sooner).
    """

    def __init__(self, settings: QSettings | None = None, *, offer_recovery: bool = True,
                 interactive: bool = True, load_panels: bool | str = True):
        super().__init__()
        self.settings = settings or QSettings(APP_NAME, APP_NAME)
        self.interactive = interactive
        self.model = WindowModel()
        self.undo_stack = QUndoStack(self)
        self.pipeline = DisplayPipeline()
        self.tool = "point"
        self.last_message = ""
        self.last_error = ""
        self.panels: list[QWidget] = []
        self._autosave_key: str | None = None
        self._estimate_wanted = False
        self._estimating = False
        self._drag_origin: tuple[float, float] | None = None
        self.setWindowTitle("lensmass")
        self.setAcceptDrops(True)
        self.setDockOptions(QMainWindow.AnimatedDocks | QMainWindow.AllowNestedDocks)

        self.canvas = ImageCanvas()
        self.canvas.setObjectName("canvas")
        self._build_central()
        self._build_status()
        self.tasks = TaskRunner(self, self.progress, self.cancel_button, self.show_message)
        self.tasks.finished.connect(self._after_task)
        self._build_docks()
        self._build_actions()
        self._build_menus()
        self._connect()
        self._estimate_timer = QTimer(self)
        self._estimate_timer.setSingleShot(True)
        self._estimate_timer.setInterval(ESTIMATE_DELAY_MS)
        self._estimate_timer.timeout.connect(self._start_estimate)
        self._autosave_timer = QTimer(self)
        self._autosave_timer.setInterval(AUTOSAVE_INTERVAL_MS)
        self._autosave_timer.timeout.connect(self.autosave)
        self._autosave_timer.start()
        self._restore_settings()
        if load_panels == "deferred":
            # After the first paint: the window shows the image before the extra panels import.
            QTimer.singleShot(0, self._load_panels)
        elif load_panels:
            self._load_panels()
        self._refresh_marks()
        self._refresh_systems()
        self._update_title()
        if offer_recovery:
            QTimer.singleShot(0, self.offer_recovery)

    # ================================================================ building
    def _build_central(self) -> None:
        central = QWidget()
        lay = QVBoxLayout(central)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(0)
        lay.addWidget(self.canvas, 1)
        strip = QWidget()
        strip.setObjectName("view_strip")
        h = QHBoxLayout(strip)
        h.setContentsMargins(8, 3, 8, 3)
        self.layer_buttons = QButtonGroup(self)
        for i, name in enumerate(LAYERS):
            b = QToolButton()
            b.setText(name)
            b.setCheckable(True)
            b.setObjectName(f"layer_{name.replace(' ', '_')}")
            b.setToolTip({"image": "The image as stored.",
                          "lens light": "The fitted lens-galaxy light (Measure > Fit lens light).",
                          "residual": "Image minus the lens light: arcs stand out."}[name])
            self.layer_buttons.addButton(b, i)
            h.addWidget(b)
        self.layer_buttons.button(0).setChecked(True)
        h.addSpacing(14)
        self.stretch_box = self._combo("stretch", STRETCHES, "How pixel values map to brightness.")
        self.limits_box = self._combo("limits", tuple(LIMITS), "Which values span black to white.")
        for i, key in enumerate(LIMITS):
            self.limits_box.setItemData(i, LIMITS[key], Qt.ToolTipRole)
        self.colormap_box = self._combo("colour map", COLORMAPS, "Perceptually uniform colour maps, or gray.")
        self.invert_box = QCheckBox("invert")
        self.invert_box.setObjectName("invert")
        self.invert_box.setToolTip("Swap dark and bright (V).")
        for w in (self.stretch_box, self.limits_box, self.colormap_box):
            h.addWidget(w)
        h.addWidget(self.invert_box)
        h.addStretch(1)
        self.zoom_label = QLabel()
        self.zoom_label.setObjectName("zoom_label")
        h.addWidget(self.zoom_label)
        for text, tip, slot in (("fit", "Fit the image to the window (F).", self.canvas.fit_to_window),
                                ("1:1", "One image pixel per screen pixel (1).", self.canvas.actual_size)):
            b = QToolButton()
            b.setText(text)
            b.setToolTip(tip)
            b.clicked.connect(slot)
            h.addWidget(b)
        lay.addWidget(strip)
        self.setCentralWidget(central)

    def _combo(self, name: str, items, tip: str) -> QComboBox:
        box = QComboBox()
        box.setObjectName(f"display_{name.replace(' ', '_')}")
        box.addItems(list(items))
        box.setToolTip(tip)
        return box

    def _build_status(self) -> None:
        bar = self.statusBar()
        self.position_label = QLabel("")
        self.position_label.setObjectName("position_label")
        self.position_label.setStyleSheet("font-family: monospace;")
        self.progress = QProgressBar()
        self.progress.setMaximumWidth(260)
        self.progress.setRange(0, 100)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setObjectName("cancel_task")
        self.cancel_button.setToolTip("Stop the running computation (Esc).")
        bar.addPermanentWidget(self.position_label)
        bar.addPermanentWidget(self.progress)
        bar.addPermanentWidget(self.cancel_button)

    def _build_docks(self) -> None:
        # Left: "Marks" -- tools, arc systems, helpers.
        marks = QWidget()
        v = QVBoxLayout(marks)
        v.addWidget(QLabel("<b>Click adds</b>"))
        self.tool_buttons = QButtonGroup(self)
        for i, (key, label, key_hint, tip) in enumerate(TOOLS):
            rb = QRadioButton(f"{label}  [{key_hint}]")
            rb.setObjectName(f"tool_{key}")
            rb.setToolTip(tip)
            self.tool_buttons.addButton(rb, i)
            v.addWidget(rb)
        self.tool_buttons.button(0).setChecked(True)
        self.snap_box = QCheckBox("snap onto arc ridge [R]")
        self.snap_box.setObjectName("snap")
        self.snap_box.setToolTip("Move each click along the radius from the lens centre to the brightest ridge "
                                 "(needs the lens centre).")
        v.addWidget(self.snap_box)
        v.addSpacing(8)
        v.addWidget(QLabel("<b>Arc systems</b>"))
        self.system_list = QListWidget()
        self.system_list.setObjectName("systems")
        self.system_list.setToolTip("Each lensed source with its own z_s; clicks go to the selected one.")
        self.system_list.setMaximumHeight(130)
        # a long entry is shortened in the middle (the z_s at its end stays) rather than scrolled
        self.system_list.setHorizontalScrollBarPolicy(Qt.ScrollBarAlwaysOff)
        self.system_list.setTextElideMode(Qt.ElideMiddle)
        v.addWidget(self.system_list)
        row = QHBoxLayout()
        self.add_system_button = QPushButton("new")
        self.add_system_button.setToolTip("Add an arc system (N).")
        self.remove_system_button = QPushButton("delete")
        self.remove_system_button.setToolTip("Delete the selected arc system and its marks (undoable).")
        row.addWidget(self.add_system_button)
        row.addWidget(self.remove_system_button)
        v.addLayout(row)
        self.shape_box = QComboBox()
        self.shape_box.setObjectName("shape")
        self.shape_box.addItems(["circle", "ellipse"])
        self.shape_box.setToolTip("Shape fitted through the marks of the selected system.")
        srow = QHBoxLayout()
        srow.addWidget(QLabel("fit"))
        srow.addWidget(self.shape_box, 1)
        v.addLayout(srow)
        self.fit_label = QLabel("")
        self.fit_label.setObjectName("fit_label")
        self.fit_label.setWordWrap(True)
        v.addWidget(self.fit_label)
        v.addSpacing(8)
        v.addWidget(QLabel("<b>Helpers</b>"))
        self.ring_button = QPushButton("Find the ring")
        self.ring_button.setObjectName("find_ring")
        self.ring_button.setToolTip("Search for a ring or arcs around the lens automatically (Ctrl+F); "
                                    "the result becomes editable marks.")
        self.light_button = QPushButton("Fit lens light")
        self.light_button.setObjectName("fit_light")
        self.light_button.setToolTip("Fit a Sersic model of the lens galaxy, for the residual view (Ctrl+L).")
        v.addWidget(self.ring_button)
        v.addWidget(self.light_button)
        v.addStretch(1)
        self.marks_dock = self._dock("Marks", marks, Qt.LeftDockWidgetArea)

        # Right: "Lens & source" above "Mass budget".
        self.inputs_panel = InputsPanel(self.model, self.undo_stack)
        self.results_panel = ResultsPanel(self.model)
        numbers = QWidget()
        nv = QVBoxLayout(numbers)
        nv.setContentsMargins(0, 0, 0, 0)
        nv.addWidget(self._titled("Lens & source", self.inputs_panel))
        nv.addWidget(self._titled("Mass budget", self.results_panel), 1)
        self.numbers_dock = self._dock("Numbers", _scrolling(numbers), Qt.RightDockWidgetArea)
        self.plots_panel = PlotsPanel(self.model)
        self.plots_dock = self._dock("Curves", self.plots_panel, Qt.RightDockWidgetArea)
        self.marks_dock.setWidget(_scrolling(marks))
        self.resizeDocks([self.marks_dock, self.numbers_dock], [230, 430], Qt.Horizontal)
        self.resizeDocks([self.numbers_dock, self.plots_dock], [560, 300], Qt.Vertical)

    def _titled(self, title: str, widget: QWidget) -> QWidget:
        box = QWidget()
        v = QVBoxLayout(box)
        v.setContentsMargins(4, 4, 4, 4)
        head = QLabel(title)
        head.setStyleSheet("font-weight: 600; letter-spacing: 0.5px; border-bottom: 1px solid palette(mid);")
        v.addWidget(head)
        v.addWidget(widget, 1)
        return box

    def _dock(self, title: str, widget: QWidget, area) -> QDockWidget:
        dock = QDockWidget(title.replace("&", "and"), self)  # '&' would become a mnemonic in dock tabs
        dock.setObjectName(f"dock_{title.lower().replace(' ', '_').replace('&', 'and')}")
        dock.setWidget(widget)
        dock.setFeatures(QDockWidget.DockWidgetMovable | QDockWidget.DockWidgetFloatable
                         | QDockWidget.DockWidgetClosable)
        self.addDockWidget(area, dock)
        return dock

    def _action(self, text: str, slot: Callable, shortcut=None, tip: str = "", checkable: bool = False) -> QAction:
        a = QAction(text, self)
        if shortcut is not None:
            a.setShortcut(QKeySequence(shortcut))
            a.setShortcutContext(Qt.WindowShortcut)
        if tip:
            a.setToolTip(tip)
            a.setStatusTip(tip)
        a.setCheckable(checkable)
        if checkable:
            a.toggled.connect(slot)
        else:
            a.triggered.connect(lambda _checked=False: slot())
        self.addAction(a)
        return a

    def _build_actions(self) -> None:
        A = self._action
        self.act_new = A("&New measurement", self.new_measurement, QKeySequence.New, "Start over with no image.")
        self.act_open = A("&Open image or session...", self.open_dialog, QKeySequence.Open,
                          "Open a FITS image, a picture, or a saved session.")
        self.act_save = A("&Save session", self.save_session, QKeySequence.Save, "Save the marks and inputs.")
        self.act_save_as = A("Save session &as...", self.save_session_as, QKeySequence("Ctrl+Shift+S"))
        self.act_report = A("Export &report (PDF/PNG)...", self.export_report_dialog, QKeySequence("Ctrl+E"),
                            "One page: cutout with the marks, inputs, results with intervals, mass plot, methods.")
        self.act_results = A("Export results (JSON/ECSV)...", self.export_results_dialog,
                             QKeySequence("Ctrl+Shift+E"), "Every number, interval and model of every arc system.")
        self.act_quit = A("&Quit", self.close, QKeySequence.Quit)
        self.act_undo = self.undo_stack.createUndoAction(self, "&Undo")
        self.act_undo.setShortcut(QKeySequence.Undo)
        self.act_redo = self.undo_stack.createRedoAction(self, "&Redo")
        self.act_redo.setShortcuts([QKeySequence.Redo, QKeySequence("Ctrl+Shift+Z")])
        self.addAction(self.act_undo)
        self.addAction(self.act_redo)
        self.act_delete_last = A("Delete last mark", self.delete_last_mark, QKeySequence(Qt.Key_Backspace),
                                 "Delete the most recent mark of the selected system.")
        self.act_copy = A("Copy results as text", self.copy_results, QKeySequence("Ctrl+Shift+C"))
        self.act_fit = A("&Fit to window", self.canvas.fit_to_window, QKeySequence("F"))
        self.act_actual = A("Actual size (1:1)", self.canvas.actual_size, QKeySequence("1"))
        self.act_zoom_in = A("Zoom in", lambda: self.canvas.zoom_by(1.25), QKeySequence("+"))
        self.act_zoom_in.setShortcuts([QKeySequence("+"), QKeySequence("="), QKeySequence.ZoomIn])
        self.act_zoom_out = A("Zoom out", lambda: self.canvas.zoom_by(0.8), QKeySequence("-"))
        self.act_zoom_out.setShortcuts([QKeySequence("-"), QKeySequence.ZoomOut])
        self.act_cycle_layer = A("Cycle image / lens light / residual", self.cycle_layer, QKeySequence("L"))
        self.act_invert = A("Invert", lambda: self.invert_box.toggle(), QKeySequence("V"))
        self.act_tools = []
        for i, (key, label, hint, tip) in enumerate(TOOLS):
            self.act_tools.append(A(f"Tool: {label.lower()}", lambda i=i: self.tool_buttons.button(i).setChecked(True),
                                    QKeySequence(hint), tip))
        self.act_new_system = A("&New arc system", self.add_system, QKeySequence("N"))
        self.act_snap = A("Snap onto the arc ridge", lambda: self.snap_box.toggle(), QKeySequence("R"))
        self.act_ring = A("&Find the ring", self.find_ring, QKeySequence("Ctrl+F"))
        self.act_light = A("Fit &lens light", self.fit_lens_light, QKeySequence("Ctrl+L"))
        self.act_scale = A("Set pixel &scale...", self.set_pixel_scale_dialog, None,
                           "Arcsec per pixel, for pictures without a WCS.")
        self.act_estimate = A("Estimate again", self.request_estimate, QKeySequence("Ctrl+R"))
        self.act_cancel = A("Cancel the running task", self.tasks.cancel, QKeySequence(Qt.Key_Escape))
        self.act_help = A("&Methods and keys", self.show_help, QKeySequence.HelpContents)
        self.act_about = A("About lensmass", self.show_about)

    def _build_menus(self) -> None:
        mb = self.menuBar()
        f = mb.addMenu("&File")
        for a in (self.act_new, self.act_open):
            f.addAction(a)
        self.recent_menu = f.addMenu("Open &recent")
        f.addSeparator()
        for a in (self.act_save, self.act_save_as):
            f.addAction(a)
        f.addSeparator()
        for a in (self.act_report, self.act_results):
            f.addAction(a)
        f.addSeparator()
        f.addAction(self.act_quit)
        e = mb.addMenu("&Edit")
        for a in (self.act_undo, self.act_redo, self.act_delete_last, self.act_copy):
            e.addAction(a)
        m = mb.addMenu("&Measure")
        for a in self.act_tools + [self.act_new_system, self.act_snap]:
            m.addAction(a)
        m.addSeparator()
        for a in (self.act_ring, self.act_light, self.act_estimate, self.act_scale, self.act_cancel):
            m.addAction(a)
        v = mb.addMenu("&View")
        for a in (self.act_fit, self.act_actual, self.act_zoom_in, self.act_zoom_out, self.act_cycle_layer,
                  self.act_invert):
            v.addAction(a)
        v.addSeparator()
        for dock in (self.marks_dock, self.numbers_dock, self.plots_dock):
            v.addAction(dock.toggleViewAction())
        self.view_menu = v
        h = mb.addMenu("&Help")
        h.addAction(self.act_help)
        h.addAction(self.act_about)
        tb = self.addToolBar("Quick")
        tb.setObjectName("quick_bar")
        tb.setMovable(False)
        tb.setToolButtonStyle(Qt.ToolButtonTextOnly)
        for a in (self.act_open, self.act_save, self.act_undo, self.act_redo, self.act_ring, self.act_report):
            tb.addAction(a)
        self._rebuild_recent_menu()

    def _connect(self) -> None:
        self.model.subscribe(self._on_model)
        c = self.canvas
        c.clicked.connect(self._on_canvas_click)
        c.mark_dragged.connect(self._on_mark_dragged)
        c.mark_released.connect(self._on_mark_released)
        c.mark_delete_requested.connect(self._on_mark_delete)
        c.hovered.connect(self._on_hover)
        c.left_image.connect(self.position_label.clear)
        c.view_changed.connect(self._update_zoom_label)
        c.click_hint.connect(lambda hint: self.show_message(hint or "Clicks on the image add marks again.", 0 if hint else 4000))
        self.tool_buttons.idClicked.connect(lambda i: self._set_tool(TOOLS[i][0]))
        self.tool_buttons.idToggled.connect(lambda i, on: on and self._set_tool(TOOLS[i][0]))
        self.snap_box.toggled.connect(self._on_snap)
        self.system_list.currentRowChanged.connect(self._on_system_selected)
        self.add_system_button.clicked.connect(self.add_system)
        self.remove_system_button.clicked.connect(self.remove_system)
        self.shape_box.activated.connect(self._on_shape)
        self.ring_button.clicked.connect(self.find_ring)
        self.light_button.clicked.connect(self.fit_lens_light)
        self.layer_buttons.idClicked.connect(lambda i: self.set_display(layer=LAYERS[i]))
        self.stretch_box.activated.connect(lambda _i: self.set_display(stretch=self.stretch_box.currentText()))
        self.limits_box.activated.connect(lambda _i: self.set_display(limits=self.limits_box.currentText()))
        self.colormap_box.activated.connect(lambda _i: self.set_display(colormap=self.colormap_box.currentText()))
        self.invert_box.toggled.connect(lambda on: self.set_display(invert=bool(on)))
        self.undo_stack.cleanChanged.connect(self._on_undo_change)
        self.undo_stack.indexChanged.connect(self._on_undo_change)

    def _load_panels(self) -> None:
        from lensmass.gui.panel_registry import DEFAULT_DOCK_AREA, load_panel_classes

        areas = {"left": Qt.LeftDockWidgetArea, "right": Qt.RightDockWidgetArea, "bottom": Qt.BottomDockWidgetArea}
        classes, problems = load_panel_classes()
        for cls in classes:
            try:
                panel = cls(self.model, self.canvas, self)
            except Exception as exc:  # a broken panel must not stop the window
                problems.append(f"Panel {cls.__name__} is left out: it failed to start ({type(exc).__name__}: {exc}).")
                continue
            title = getattr(cls, "PANEL_TITLE", cls.__name__)
            dock = self._dock(title, _scrolling(panel), areas.get(getattr(cls, "DOCK_AREA", DEFAULT_DOCK_AREA),
                                                      Qt.RightDockWidgetArea))
            area = getattr(cls, "DOCK_AREA", DEFAULT_DOCK_AREA)
            # Extra panels share a tab with ours, so the window keeps its size and calm.
            if area in ("right", "left"):
                self.tabifyDockWidget(self.plots_dock if area == "right" else self.marks_dock, dock)
            self.view_menu.addAction(dock.toggleViewAction())
            self.panels.append(panel)
            # A session opened before the panels were built (they load after the first paint).
            self._restore_panel(panel, self.model.session.panels, self._session_dir(self.model.session_path))
        from lensmass.gui.dock_layout import fit_docks

        # Every panel reachable down to a 1366 x 768 screen; sized once the window has its size.
        # A layout the user arranged and the window remembered is theirs: left as it is.
        if self.settings.value("window/state") is None:
            QTimer.singleShot(0, lambda: fit_docks(self))
        else:
            self.plots_dock.raise_()
            self.marks_dock.raise_()
        if problems:
            self.show_message(problems[0])

    # ============================================================ panel state
    @staticmethod
    def _session_dir(path: str | None) -> Path | None:
        return None if not path else Path(path).absolute().parent

    def session_for_saving(self, session_dir: Path | None):
        """The model's session plus each panel's saved state (see panel_registry: panel_state)."""
        from lensmass.gui.panel_registry import panel_key

        session = self.model.to_session()
        for panel in self.panels:
            hook = getattr(panel, "panel_state", None)
            if hook is None:
                continue
            try:
                session.panels[panel_key(panel)] = dict(hook(session_dir))
            except Exception as exc:  # a broken panel must not stop the save of the marks
                self.show_message(f"The {getattr(panel, 'PANEL_TITLE', panel_key(panel))} panel's inputs were "
                                  f"not saved ({type(exc).__name__}: {exc}); the marks were.")
        return session

    def mark_unsaved(self) -> None:
        """A panel's input changed: the measurement has unsaved changes (panel API, see panel_registry)."""
        self.model.dirty = True
        self._update_title()

    def _restore_panel(self, panel, states: dict, session_dir: Path | None) -> None:
        from lensmass.gui.panel_registry import panel_key

        hook = getattr(panel, "restore_panel_state", None)
        state = states.get(panel_key(panel))
        if hook is None or not isinstance(state, dict):
            return  # an older session without this panel's entry: the panel keeps what it shows
        try:
            hook(state, session_dir)
        except Exception as exc:  # a damaged entry must not stop the session from opening
            self.show_message(f"The {getattr(panel, 'PANEL_TITLE', panel_key(panel))} panel's saved inputs could "
                              f"not be restored ({type(exc).__name__}: {exc}); enter them again.")

    # =============================================================== messages
    def show_message(self, text: str, timeout_ms: int = 8000) -> None:
        """One sentence in the status bar (also kept in ``last_message``)."""
        self.last_message = text
        self.statusBar().showMessage(text, timeout_ms)

    def show_error(self, text: str) -> None:
        """A problem the user must see: status bar plus a window-modal box (non-blocking)."""
        self.last_error = text
        self.show_message(text, 15000)
        if self.interactive:
            box = QMessageBox(QMessageBox.Warning, "lensmass", text, QMessageBox.Ok, self)
            box.setAttribute(Qt.WA_DeleteOnClose)
            box.open()

    def ask_unsaved(self) -> str:
        """'save', 'discard' or 'cancel' for unsaved changes (tests replace this)."""
        if not self.interactive:
            return "discard"
        answer = QMessageBox.question(
            self, "Unsaved changes", "This measurement has unsaved changes. Save them first?",
            QMessageBox.Save | QMessageBox.Discard | QMessageBox.Cancel, QMessageBox.Save)
        return {QMessageBox.Save: "save", QMessageBox.Discard: "discard"}.get(answer, "cancel")

    def _on_undo_change(self, *_args) -> None:
        self._update_title()

    def _update_title(self) -> None:
        name = Path(self.model.session_path).name if self.model.session_path else (
            Path(self.model.image.path).name if self.model.image else "no image")
        self.setWindowTitle(f"{name}{' *' if self.model.dirty else ''} - lensmass")

    # ================================================================ files
    def dragEnterEvent(self, event) -> None:  # noqa: N802 (files dropped anywhere, the canvas included)
        if event.mimeData().hasUrls():
            event.acceptProposedAction()

    def dropEvent(self, event) -> None:  # noqa: N802
        paths = [u.toLocalFile() for u in event.mimeData().urls() if u.isLocalFile()]
        if paths:
            event.acceptProposedAction()
            self.open_path(paths[0])

    def open_dialog(self) -> None:
        start = self.settings.value("last_folder", str(Path.home()))
        path, _ = QFileDialog.getOpenFileName(self, "Open image or session", start,
                                              IMAGE_FILTER.replace("Images (", "Images and sessions (*.json ", 1))
        if path:
            self.open_path(path)

    def open_path(self, path: str) -> bool:
        """Open an image or a session (asks before dropping unsaved work). True if it opened."""
        path = str(path)
        if not self._settle_unsaved():
            return False
        try:
            if _is_session_path(path):
                self._open_session(path)
            else:
                self._open_image(path)
        except LensInputError as exc:
            self.show_error(str(exc))
            return False
        self.settings.setValue("last_folder", str(Path(path).absolute().parent))
        self._add_recent(path)
        return True

    def _load_image(self, path: str, hdu=None, plane=None, pixel_scale=None):
        from lensmass.io.images import load_image

        return load_image(path, hdu=hdu, plane=plane, pixel_scale_arcsec=pixel_scale)

    def _open_image(self, path: str) -> None:
        loaded = self._load_image(path)
        self.undo_stack.clear()
        self.tasks.cancel()
        self.model.reset()
        from lensmass.io.session import ImageRef

        self.model.set_image(loaded, ImageRef(path=str(Path(path).absolute())))
        self.model.session.display.__dict__.update(self._remembered_display())
        self.model.dirty = False
        self._new_autosave_key()
        self._after_open()
        notes = getattr(loaded, "notes", None)
        self.show_message(f"Opened {Path(path).name}" + (f" ({notes[0]})" if notes else "."))

    def _open_session(self, path: str) -> None:
        from lensmass.io.session import load_session

        session = load_session(path)
        self._apply_session(session, path)
        self.show_message(f"Opened session {Path(path).name}.")

    def _apply_session(self, session, path: str | None) -> None:
        loaded = None
        if session.image.path:
            if not Path(session.image.path).is_file():
                raise LensInputError(f"The session's image '{session.image.path}' is missing: put it back beside the "
                                     "session (its path is stored relative to the session file) and open it again.")
            loaded = self._load_image(session.image.path, session.image.hdu, session.image.plane,
                                      session.image.pixel_scale_arcsec)
        self.undo_stack.clear()
        self.tasks.cancel()
        self.model.load_session(session, loaded, path)
        for panel in self.panels:
            self._restore_panel(panel, session.panels, self._session_dir(path))
        self._new_autosave_key()
        self._after_open()
        wanted_layer = session.display.layer
        if loaded is not None and wanted_layer in LAYERS[1:]:
            # The lens-light model is not stored in sessions: fit it again to restore that view.
            self.fit_lens_light(then_layer=wanted_layer)

    def restore_marks(self, state: dict, what: str = "The stored measurement") -> bool:
        """Put the marks, redshifts and arc systems of a session dict back over the open image
        (panel API, see panel_registry). The image, its display and the panels stay as they are.
        True if restored; a damaged dict is one sentence in the status bar and changes nothing."""
        from lensmass.io.session import Session

        if self.model.image is None:
            self.show_message("Open the candidate's image first: the stored marks belong on it.")
            return False
        try:
            session = Session.from_dict(state, None, source=what)
        except LensInputError as exc:
            self.show_message(str(exc))
            return False
        session.image = self.model.session.image  # the image as opened now (its folder may have moved)
        session.display = self.model.session.display
        session.panels = self.model.session.panels
        loaded, path = self.model.image.loaded, self.model.session_path
        # A fresh undo stack, as when a session opens: the restored marks are where this visit starts;
        # undoing them one by one would walk back through edits made in an earlier visit, and one
        # undo step back to a bare image is what "open the image again" already gives.
        try:
            from lensmass.gui.model import marks_on_image

            marks_on_image(session, loaded.data.shape)  # marks stored for another image are refused
        except LensInputError as exc:
            self.show_message(str(exc))
            return False
        self.undo_stack.clear()
        self.tasks.cancel()
        self.model.load_session(session, loaded, path)
        self._after_open()
        return True

    def _after_open(self) -> None:
        self._sync_display_widgets()
        self._recolour(keep_view=False)  # layers and limits are already cached by the "image" notice
        self._refit_all()
        self._refresh_systems()
        self._refresh_marks()
        self.request_estimate()
        self._update_title()

    def _settle_unsaved(self) -> bool:
        if not self.model.dirty:
            return True
        answer = self.ask_unsaved()
        if answer == "save":
            return self.save_session()
        return answer == "discard"

    def new_measurement(self) -> None:
        if not self._settle_unsaved():
            return
        self.undo_stack.clear()
        self.model.reset()
        self.pipeline.clear()
        self.canvas.clear_image()
        self._refresh_systems()
        self._update_title()

    def save_session(self) -> bool:
        if not self.model.session_path:
            return self.save_session_as()
        return self._save_to(self.model.session_path)

    def save_session_as(self) -> bool:
        from lensmass.io.session import SESSION_SUFFIX

        start = self.model.session_path or str(Path(self.settings.value("last_folder", str(Path.home())))
                                               / (Path(self.model.image.path).stem + SESSION_SUFFIX
                                                  if self.model.image else "measurement" + SESSION_SUFFIX))
        path, _ = QFileDialog.getSaveFileName(self, "Save session", start, SESSION_FILTER)
        return bool(path) and self._save_to(path)

    def _save_to(self, path: str) -> bool:
        from lensmass.io.session import save_session

        self.inputs_panel.commit_all()
        try:
            written = save_session(path, self.session_for_saving(self._session_dir(path)))
        except LensInputError as exc:
            self.show_error(str(exc))
            return False
        self.model.session_path = str(written)
        self.model.dirty = False
        self.undo_stack.setClean()
        self._add_recent(str(written))
        self._update_title()
        self.show_message(f"Saved {written.name}.")
        return True

    # --------------------------------------------------------------- autosave
    def _new_autosave_key(self) -> None:
        from lensmass.io.session import discard_autosave, new_autosave_key

        if self._autosave_key:
            try:
                discard_autosave(self._autosave_key)
            except LensInputError:
                pass
        self._autosave_key = new_autosave_key()

    def autosave(self) -> Path | None:
        """Write the autosave if there are unsaved changes (every 30 s)."""
        from lensmass.io.session import write_autosave

        if not self.model.dirty or self.model.image is None:
            return None
        if self._autosave_key is None:
            self._new_autosave_key()
        try:
            # session_dir None: an autosave stores the panels' file paths absolute, as it does the image's
            return write_autosave(self.session_for_saving(None), self._autosave_key, self.model.session_path)
        except LensInputError as exc:
            self.show_message(str(exc))
            return None

    def offer_recovery(self) -> None:
        """Offer the newest autosave of a run that did not close cleanly."""
        from lensmass.io.session import discard_autosave, list_recoverable, load_autosave

        try:
            found = list_recoverable()
        except Exception:
            return
        if not found or not self.interactive:
            return
        item = found[0]
        what = item.image_name or "an image"
        answer = QMessageBox.question(
            self, "Recover unsaved work?",
            f"lensmass did not close cleanly while measuring {what} (autosaved "
            f"{item.saved_at:%Y-%m-%d %H:%M}). Recover that work?",
            QMessageBox.Yes | QMessageBox.No | QMessageBox.Discard, QMessageBox.Yes)
        if answer == QMessageBox.Yes:
            self.recover(item.key)
        elif answer == QMessageBox.Discard:
            discard_autosave(item.key)

    def recover(self, key: str) -> bool:
        from lensmass.io.session import discard_autosave, load_autosave

        try:
            session = load_autosave(key)
            self._apply_session(session, None)
        except LensInputError as exc:
            self.show_error(str(exc))
            return False
        discard_autosave(key)
        self.model.dirty = True
        self._update_title()
        self.show_message("Recovered the autosaved measurement: save it to keep it.")
        return True

    # ---------------------------------------------------------------- recent
    def recent_files(self) -> list[str]:
        value = self.settings.value("recent", [])
        if isinstance(value, str):
            value = [value]
        return [str(v) for v in (value or [])]

    def _add_recent(self, path: str) -> None:
        path = str(Path(path).absolute())
        items = [p for p in self.recent_files() if p != path]
        self.settings.setValue("recent", [path] + items[: MAX_RECENT - 1])
        self._rebuild_recent_menu()

    def _rebuild_recent_menu(self) -> None:
        self.recent_menu.clear()
        items = self.recent_files()
        for i, p in enumerate(items):
            a = self.recent_menu.addAction(f"&{i + 1} {Path(p).name}")
            a.setToolTip(p)
            a.triggered.connect(lambda _c=False, p=p: self.open_path(p))
        self.recent_menu.setEnabled(bool(items))

    # --------------------------------------------------------------- settings
    def _remembered_display(self) -> dict:
        out = {}
        for key, allowed in (("stretch", STRETCHES), ("limits", tuple(LIMITS)), ("colormap", COLORMAPS)):
            value = self.settings.value(f"display/{key}")
            if value in allowed:
                out[key] = value
        inv = self.settings.value("display/invert")
        if inv is not None:
            out["invert"] = str(inv).lower() in ("true", "1")
        return out

    def _restore_settings(self) -> None:
        geometry = self.settings.value("window/geometry")
        if geometry is not None:
            self.restoreGeometry(geometry)
        else:
            from PySide6.QtCore import QSize

            from lensmass.gui.dock_layout import initial_window_rect

            screen = self.screen()
            if screen is not None:  # never larger than the screen, and on it
                self.setGeometry(initial_window_rect(screen.availableGeometry(), QSize(1360, 860)))
            else:
                self.resize(1360, 860)
        state = self.settings.value("window/state")
        if state is not None:
            self.restoreState(state)
        self.model.session.display.__dict__.update(self._remembered_display())
        self._sync_display_widgets()

    def _save_settings(self) -> None:
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/state", self.saveState())
        d = self.model.display
        for key in ("stretch", "limits", "colormap"):
            self.settings.setValue(f"display/{key}", getattr(d, key))
        self.settings.setValue("display/invert", bool(d.invert))
        self.settings.sync()

    def closeEvent(self, event) -> None:  # noqa: N802
        self.inputs_panel.commit_all()
        if not self._settle_unsaved():
            event.ignore()
            return
        self.tasks.cancel()
        self.tasks.wait(3000)
        self._save_settings()
        if self._autosave_key:
            from lensmass.io.session import discard_autosave

            try:
                discard_autosave(self._autosave_key)
            except LensInputError:
                pass
        for panel in self.panels:
            try:
                panel.close()
            except Exception:
                pass
        event.accept()

    # ================================================================ display
    def set_display(self, **changes) -> None:
        """Change how the image looks; recolours the cached levels only."""
        layer = changes.get("layer")
        if layer is not None and layer != "image" and (self.model.image is None or self.model.image.lens_light is None):
            self.show_message("Fit the lens light first (Measure > Fit lens light) to see the model or the residual.")
            self._sync_display_widgets()
            return
        self.model.set_display(**changes)

    def cycle_layer(self) -> None:
        available = [LAYERS[0]] if self.model.image is None or self.model.image.lens_light is None else list(LAYERS)
        current = self.model.display.layer
        nxt = available[(available.index(current) + 1) % len(available)] if current in available else "image"
        self.set_display(layer=nxt)

    def _display_choice(self) -> DisplayChoice:
        d = self.model.display
        return DisplayChoice(layer=d.layer, limits=d.limits if d.limits in LIMITS else "99.5%",
                             stretch=d.stretch if d.stretch in STRETCHES else "asinh",
                             colormap=d.colormap if d.colormap in COLORMAPS else "gray", invert=bool(d.invert))

    def _push_layers(self) -> None:
        img = self.model.image
        if img is None:
            self.pipeline.clear()
            return
        self.pipeline.set_layer("image", img.data)
        self.pipeline.set_layer("lens light", img.lens_light)
        self.pipeline.set_layer("residual", img.residual)
        self.canvas.pixel_scale_arcsec = img.pixel_scale_arcsec

    def _recolour(self, keep_view: bool = True) -> None:
        img = self.model.image
        if img is None:
            self.canvas.clear_image()
            return
        choice = self._display_choice()
        if not self.pipeline.has_layer(choice.layer):
            choice = DisplayChoice(**{**choice.__dict__, "layer": "image"})
        limits = self.pipeline.limits(choice.layer, choice.limits)
        table = colour_table(choice.stretch, choice.colormap, bool(choice.invert))
        self.canvas.set_source(self.pipeline.data(choice.layer), limits, table, img.flip_rows, keep_view)
        self._update_zoom_label()

    def _sync_display_widgets(self) -> None:
        d = self._display_choice()
        for box, value in ((self.stretch_box, d.stretch), (self.limits_box, d.limits),
                           (self.colormap_box, d.colormap)):
            box.blockSignals(True)
            box.setCurrentText(value)
            box.blockSignals(False)
        self.invert_box.blockSignals(True)
        self.invert_box.setChecked(d.invert)
        self.invert_box.blockSignals(False)
        has_light = self.model.image is not None and self.model.image.lens_light is not None
        for i, name in enumerate(LAYERS):
            b = self.layer_buttons.button(i)
            b.setEnabled(i == 0 or has_light)
            b.setChecked(name == d.layer)

    def _update_zoom_label(self) -> None:
        self.zoom_label.setText(f"zoom {self.canvas.zoom:.3g}x")

    # ================================================================ model
    def _on_model(self, topic: str) -> None:
        if topic == "image":
            self._push_layers()
        elif topic == "display":
            self._sync_display_widgets()
            if self.model.image is not None:
                self._recolour()
        elif topic == "marks":
            self._refit_all()
            self._refresh_marks()
            self._refresh_systems()
            self.request_estimate()
        elif topic == "inputs":
            self._refresh_systems()  # the list shows each system's z_s
            self.request_estimate()
        elif topic == "fit":
            self._refresh_marks()
        self._update_title()

    def _refit_all(self) -> None:
        """Fit every arc system's marks (a few points each: done on the GUI thread)."""
        m = self.model
        for i, system in enumerate(m.systems):
            fit, problem = None, None
            if m.image is not None:
                try:
                    fit = measuring.measure_system(system, m.centre, m.image)
                except LensInputError as exc:
                    problem = str(exc)
            else:
                problem = "Open an image to mark the arc."
            d = m.derived[i]
            d.fit, d.fit_problem = fit, problem
            system.fit = None if fit is None else fit.to_json()
        m.notify("fit")

    def _refresh_marks(self) -> None:
        m = self.model
        marks: list[Mark] = []
        fits: list[FitShape] = []
        for si, system in enumerate(m.systems):
            active = si == m.active
            marks += [Mark("point", si, i, x, y, active) for i, (x, y) in enumerate(system.points)]
            marks += [Mark("image", si, i, x, y, active) for i, (x, y) in enumerate(system.images)]
            fit = m.derived[si].fit if si < len(m.derived) else None
            if fit is not None:
                label = f"{system.name}: θE = {fit.theta_e_arcsec:.3f}″"
                fits.append(FitShape(fit.center_x, fit.center_y, fit.a_px, fit.b_px, fit.angle_deg, label, si, active))
        if m.centre is not None:
            marks.append(Mark("centre", -1, 0, m.centre[0], m.centre[1], True))
        self.canvas.marks, self.canvas.fits = marks, fits
        self.canvas.update()
        fit = m.fit
        if fit is not None:
            self.fit_label.setText(f"θE = {fit.theta_e_arcsec:.3f} ± {fit.theta_e_err_arcsec:.3f}″\n{fit.method}")
        else:
            self.fit_label.setText(m.derived[m.active].fit_problem or "")

    def _refresh_systems(self) -> None:
        m = self.model
        self.system_list.blockSignals(True)
        self.system_list.clear()
        for i, s in enumerate(m.systems):
            zs = f"z_s {s.z_s:g}" if s.z_s is not None else (
                f"z_s {s.z_s_range[0]:g}-{s.z_s_range[1]:g}" if s.z_s_range else "z_s ?")
            item = QListWidgetItem(f"◆ {s.name}   {len(s.points)} pts, {len(s.images)} img   {zs}")
            item.setToolTip(item.text())
            item.setForeground(self._colour(i))
            self.system_list.addItem(item)
        self.system_list.setCurrentRow(m.active)
        self.system_list.blockSignals(False)
        self.shape_box.setCurrentText(m.active_system.shape)
        self.remove_system_button.setEnabled(len(m.systems) > 1 or bool(m.active_system.points or m.active_system.images))

    def _colour(self, i: int):
        from PySide6.QtGui import QColor

        c = QColor(SYSTEM_COLOURS[i % len(SYSTEM_COLOURS)])
        return c.darker(150) if self.palette().color(self.palette().ColorRole.Base).lightness() > 128 else c

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
                problem = str(exc)
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
            from lensmass.core.estimate import estimate

            out = []
            for n, (i, gen, theta, err, kwargs) in enumerate(jobs):
                if should_stop():
                    break
                progress(n / len(jobs), f"system {m.systems[i].name}" if i < len(m.systems) else "")
                try:
                    out.append((i, gen, estimate(theta, theta_e_err=err, **kwargs), None))
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
            m.derived[i].result, m.derived[i].result_problem = result, problem
        if stale:
            self._estimate_wanted = True
        m.notify("result")

    def _estimate_failed(self, message: str) -> None:
        d = self.model.derived[self.model.active]
        d.result, d.result_problem = None, message
        self.model.notify("result")

    def _after_task(self) -> None:
        self._estimating = False
        if self._estimate_wanted:
            self._estimate_timer.start()

    def run_task(self, fn, label: str, on_result, on_error=None):
        """Run ``fn(progress, should_stop)`` in the background (panel API, see panel_registry)."""
        if self.tasks.busy and self._estimating:
            self.tasks.cancel()
            self.tasks.wait(5000)
            QApplication.processEvents()
        return self.tasks.start(fn, label, on_result, on_error or self.show_error)

    # ================================================================ marking
    def _set_tool(self, tool: str) -> None:
        self.tool = tool
        hints = {k: tip for k, _l, _h, tip in TOOLS}
        self.show_message(hints[tool], 4000)

    def _on_snap(self, on: bool) -> None:
        self.model.snap_to_ridge = bool(on)
        if on and self.model.centre is None:
            self.show_message("Snapping needs the lens centre: set it with the Centre tool (C).")

    def _on_canvas_click(self, x: float, y: float) -> None:
        m = self.model
        if m.image is None:
            return
        if self.tool == "centre":
            self.undo_stack.push(SetCentre(m, (x, y)))
            return
        if m.snap_to_ridge and self.tool == "point":
            try:
                (x, y), note = measuring.snap_to_ridge(m.image, x, y, m.centre)
            except LensInputError as exc:
                note = str(exc)
            if note:
                self.show_message(note)
        self.undo_stack.push(AddMark(m, self.tool, m.active, (x, y)))

    def _on_mark_dragged(self, mark: Mark, x: float, y: float) -> None:
        if self._drag_origin is None:
            self._drag_origin = (mark.x, mark.y)
        if mark.kind == "centre":
            self.model.session.centre.x, self.model.session.centre.y = x, y
            self.model.notify("marks")
        else:
            self.model.move_mark(mark.kind, mark.system, mark.index, (x, y), final=False)

    def _on_mark_released(self, mark: Mark, x: float, y: float) -> None:
        origin = self._drag_origin or (mark.x, mark.y)
        self._drag_origin = None
        self.undo_stack.push(MoveMark(self.model, mark.kind, mark.system, mark.index, origin, (x, y)))

    def _on_mark_delete(self, mark: Mark) -> None:
        self.undo_stack.push(RemoveMark(self.model, mark.kind, mark.system, mark.index))

    def delete_last_mark(self) -> None:
        s = self.model.active_system
        kind = "image" if self.tool == "image" and s.images else "point" if s.points else "image" if s.images else None
        if kind is None:
            self.show_message("The selected arc system has no marks to delete.")
            return
        self.undo_stack.push(RemoveMark(self.model, kind, self.model.active, len(self.model._marks(kind, self.model.active)) - 1))

    def add_system(self) -> None:
        self.inputs_panel.commit_all()
        self.undo_stack.push(AddSystem(self.model))
        self.show_message(f"Arc system {self.model.active_system.name}: click its arc and give its z_s.")

    def remove_system(self) -> None:
        self.undo_stack.push(RemoveSystem(self.model, self.model.active))

    def _on_system_selected(self, row: int) -> None:
        if 0 <= row < len(self.model.systems) and row != self.model.active:
            self.inputs_panel.commit_all()
            self.model.select_system(row)

    def _on_shape(self, _index: int) -> None:
        shape = self.shape_box.currentText()
        if shape != self.model.active_system.shape:
            self.undo_stack.push(SetSystemShape(self.model, self.model.active, shape))

    def _on_hover(self, x: float, y: float) -> None:
        img = self.model.image
        if img is None:
            return
        col, row = int(round(x)), int(round(y))
        ny, nx = img.data.shape
        if not (0 <= col < nx and 0 <= row < ny):
            return
        value = img.data[row, col]
        text = f"x {x:7.1f}  y {y:7.1f}"
        if img.loaded.has_sky:
            try:
                ra, dec = img.loaded.pixel_to_sky(x, y)
                text += f"   RA {float(ra):9.5f}  Dec {float(dec):+9.5f}"
            except Exception:
                pass
        text += "   value " + ("masked" if not np.isfinite(value) else f"{value:.4g}")
        if self.model.display.layer != "image":
            layer = self.model.image.lens_light if self.model.display.layer == "lens light" else self.model.image.residual
            if layer is not None:
                text += f"   {self.model.display.layer} {layer[row, col]:.4g}"
        self.position_label.setText(text)

    def set_pixel_scale_dialog(self) -> None:
        img = self._image_or_hint()
        if img is None:
            return
        value, ok = QInputDialog.getDouble(self, "Pixel scale", "arcsec per pixel:",
                                           float(img.pixel_scale_arcsec or 0.2), 1e-4, 1e3, 4)
        if ok:
            self.set_pixel_scale(value)

    def set_pixel_scale(self, arcsec: float) -> None:
        img = self.model.image
        img.loaded.pixel_scale_arcsec = float(arcsec)
        self.model.session.image.pixel_scale_arcsec = float(arcsec)
        self.canvas.pixel_scale_arcsec = float(arcsec)
        self.model.dirty = True
        self.model.notify("marks")

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
        data, centre, residual = image.data, self.model.centre, image.residual

        def work(progress, should_stop):
            from lensmass.core.ringfinder import find_ring

            kwargs = {"progress": progress, "should_stop": should_stop}
            if residual is not None:
                kwargs["residual"] = residual
            cx, cy = (None, None) if centre is None else centre
            return find_ring(data, cx, cy, **kwargs)

        self.run_task(work, "Finding the ring", self._ring_found)

    def _ring_found(self, ring) -> None:
        m = self.model
        if not getattr(ring, "found", False):
            self.show_error(ring.message or "No ring or arc was found: mark the arc by hand.")
            return
        xs, ys = np.asarray(ring.points_x, float), np.asarray(ring.points_y, float)
        if xs.size > 32:
            keep = np.linspace(0, xs.size - 1, 32).round().astype(int)
            xs, ys = xs[keep], ys[keep]
        self.undo_stack.beginMacro("ring finder result")
        if m.centre is None:
            self.undo_stack.push(SetCentre(m, (ring.center_x, ring.center_y), "found"))
        if m.active_system.points or m.active_system.images:
            self.undo_stack.push(AddSystem(m))
        if ring.lens_light is not None and m.image is not None and m.image.lens_light is None:
            m.set_lens_light(ring.lens_light.model, ring.lens_light.method)
            self._sync_display_widgets()
        for x, y in zip(xs, ys):
            self.undo_stack.push(AddMark(m, "point", m.active, (float(x), float(y))))
        self.undo_stack.endMacro()
        confidence = "confident" if ring.confident else "not confident: check the marks"
        warn = f" {ring.warnings[-1]}" if ring.warnings else ""  # the last is about the ring itself
        self.show_message(f"Ring found at {ring.radius_pix:.1f} px ({confidence}); its points are editable.{warn}")

    def fit_lens_light(self, then_layer: str = "residual") -> None:
        image = self._image_or_hint()
        if image is None:
            return
        data, centre = image.data, self.model.centre

        def work(progress, should_stop):
            from lensmass.core.lenslight import fit_lens_light
            from lensmass.core.ringfinder import find_center

            cx, cy = centre if centre is not None else find_center(data)
            return fit_lens_light(data, cx, cy, progress=progress, should_stop=should_stop)

        self.run_task(work, "Fitting the lens light", lambda fit: self._light_fitted(fit, then_layer))

    def _light_fitted(self, fit, then_layer: str = "residual") -> None:
        if self.model.image is None:
            return
        self.model.set_lens_light(fit.model, fit.method)
        self.set_display(layer=then_layer)
        note = f" {fit.notes[0]}" if getattr(fit, "notes", None) else ""
        self.show_message(f"Lens light: Sersic n = {fit.sersic_n:.2f}, R_eff = {fit.r_eff_pix:.1f} px; "
                          f"showing the {then_layer}.{note}")

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
