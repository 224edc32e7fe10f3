"""Building the window: central canvas and view strip, status bar, docks, actions, menus, signal wiring, registered panels.

A mixin of :class:`lensmass.gui.mainwindow.MainWindow`; it uses the widgets and
the model that the window builds (see ``MainWindow.__init__``).
"""

from __future__ import annotations

from typing import Callable

from PySide6.QtCore import Qt, QTimer
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (
    QButtonGroup,
    QCheckBox,
    QComboBox,
    QDockWidget,
    QHBoxLayout,
    QLabel,
    QListWidget,
    QProgressBar,
    QPushButton,
    QRadioButton,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from lensmass.gui.display import COLORMAPS, LIMITS, MANUAL, STRETCHES
from lensmass.gui.inputs_panel import InputsPanel
from lensmass.gui.plots_panel import PlotsPanel
from lensmass.gui.position_readout import PositionReadout
from lensmass.gui.results_panel import ResultsPanel
from lensmass.gui.undo_actions import UndoActions
from lensmass.gui.window_common import LAYERS, TOOLS, _scrolling


class WindowBuildMixin:
    """Building the window part of the main window."""

    # ================================================================ building
    def _build_central(self) -> None:
        central = QWidget()
        lay = QVBoxLayout(central)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.setSpacing(0)
        lay.addWidget(self.canvas, 1)
        from lensmass.gui.colour_bar import ColourBar

        self.colour_bar = ColourBar(self.show_message)
        lay.addWidget(self.colour_bar)
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
        self.limits_box = self._combo("limits", tuple(LIMITS) + (MANUAL,), "Which values span black to white.")
        for i, key in enumerate(LIMITS):
            self.limits_box.setItemData(i, LIMITS[key], Qt.ToolTipRole)
        self.limits_box.setItemData(len(LIMITS), "the low and high values typed beside the colour bar, or set by "
                                    "dragging on the image with the right button", Qt.ToolTipRole)
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
        self.readout = PositionReadout(self, self.position_label, self.settings)
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
        self.undo_actions = UndoActions(self.undo_stack, self)
        self.act_undo, self.act_redo = self.undo_actions.menu_undo, self.undo_actions.menu_redo
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
        from lensmass.gui.magnifier import Loupe

        self.loupe = Loupe(self.canvas)
        self.act_loupe = A("Loupe (enlarged pixels under the cursor)", self.loupe.set_on, QKeySequence("G"),
                           "Show the pixels around the cursor enlarged with a cross-hair, to place a mark to a "
                           "fraction of a pixel (G).", checkable=True)
        self.act_tools = []
        for i, (key, label, hint, tip) in enumerate(TOOLS):
            self.act_tools.append(A(f"Tool: {label.lower()}", lambda i=i: self.tool_buttons.button(i).setChecked(True),
                                    QKeySequence(hint), tip))
        self.act_new_system = A("&New arc system", self.add_system, QKeySequence("N"))
        self.act_snap = A("Snap onto the arc ridge", lambda: self.snap_box.toggle(), QKeySequence("R"))
        self.act_ring = A("&Find the ring", self.find_ring, QKeySequence("Ctrl+F"))
        self.act_light = A("Fit &lens light", self.fit_lens_light, QKeySequence("Ctrl+L"))
        from lensmass.gui.light_on_open import SETTING, light_on_open_wanted

        self.act_light_on_open = A("Fit lens light on open", lambda on: self.settings.setValue(SETTING, bool(on)),
                                   None, "When an image with a bright galaxy at its centre opens, fit its light "
                                   "in the background and show the residual.", checkable=True)
        self.act_light_on_open.setChecked(light_on_open_wanted(self.settings))
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
        e_edit = e
        m = mb.addMenu("&Measure")
        for a in self.act_tools + [self.act_new_system, self.act_snap]:
            m.addAction(a)
        m.addSeparator()
        for a in (self.act_ring, self.act_light, self.act_light_on_open, self.act_estimate, self.act_scale, self.act_cancel):
            m.addAction(a)
        v = mb.addMenu("&View")
        for a in (self.act_fit, self.act_actual, self.act_zoom_in, self.act_zoom_out, self.act_cycle_layer,
                  self.act_invert, self.act_loupe):
            v.addAction(a)
        self.readout.add_to_menus(e_edit, v)
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
        for a in (self.act_open, self.act_save, self.undo_actions.bar_undo, self.undo_actions.bar_redo, self.act_ring,
                  self.act_report):
            tb.addAction(a)
        self._rebuild_recent_menu()

    def _connect(self) -> None:
        self.model.subscribe(self._on_model)
        self.model.subscribe(lambda topic: topic == "image" and self.readout.clear())
        c = self.canvas
        c.clicked.connect(self._on_canvas_click)
        c.mark_dragged.connect(self._on_mark_dragged)
        c.mark_released.connect(self._on_mark_released)
        c.mark_delete_requested.connect(self._on_mark_delete)
        c.hovered.connect(self._on_hover)
        c.left_image.connect(self.readout.leave)
        c.view_changed.connect(self._update_zoom_label)
        c.click_hint.connect(lambda hint: self.show_message(hint or "Clicks on the image add marks again.", 0 if hint else 4000))
        self.tool_buttons.idClicked.connect(lambda i: self._set_tool(TOOLS[i][0]))
        self.tool_buttons.idToggled.connect(lambda i, on: on and self._set_tool(TOOLS[i][0]))
        self.snap_box.toggled.connect(self._on_snap)
        self.system_list.currentRowChanged.connect(self._on_system_selected)
        self.add_system_button.clicked.connect(self.add_system)
        self.remove_system_button.clicked.connect(self.remove_system)
        self.shape_box.activated.connect(self._on_shape)
        self.ring_button.clicked.connect(lambda _checked=False: self.find_ring())
        self.light_button.clicked.connect(lambda _checked=False: self.fit_lens_light())
        self.layer_buttons.idClicked.connect(lambda i: self.set_display(layer=LAYERS[i]))
        self.stretch_box.activated.connect(lambda _i: self.set_display(stretch=self.stretch_box.currentText()))
        self.limits_box.activated.connect(lambda _i: self.choose_limits(self.limits_box.currentText()))
        self.colour_bar.limits_typed.connect(self.set_manual_limits)
        c.contrast_dragged.connect(self._on_contrast_drag)
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
