"""The main window: canvas in the middle, "Marks" on the left, "Lens & source" and
"Mass budget" on the right, "Curves" below, a view strip under the canvas.

The window wires widgets to the :class:`WindowModel`: clicks become undoable
commands, model changes refit the marks (on the GUI thread: a few points) and
schedule an estimate in the background (Monte Carlo), display changes recolour
the cached image levels and nothing else.

The window's parts live in mixins of one purpose each: ``window_build`` (widgets, actions,
menus), ``window_files`` (open, save, autosave, settings), ``window_view`` (display and
refresh), ``window_marks`` (clicks and undo), ``window_tasks`` (background work), ``window_export``
(tables, reports, help).
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QSettings, Qt, QTimer
from PySide6.QtGui import QUndoStack
from PySide6.QtWidgets import QMainWindow, QMessageBox, QWidget

from lensmass.gui.canvas import ImageCanvas
from lensmass.gui.display import DisplayPipeline
from lensmass.gui.model import WindowModel
from lensmass.gui.window_build import WindowBuildMixin
from lensmass.gui.window_common import (  # noqa: F401
    APP_NAME,
    AUTOSAVE_INTERVAL_MS,
    ESTIMATE_DELAY_MS,
    IMAGE_FILTER,
    LAYERS,
    MAX_RECENT,
    SESSION_FILTER,
    TOOLS,
    _is_session_path,
    _scrolling,
)
from lensmass.gui.window_export import WindowExportMixin
from lensmass.gui.window_files import WindowFilesMixin
from lensmass.gui.window_marks import WindowMarksMixin
from lensmass.gui.window_tasks import WindowTasksMixin
from lensmass.gui.window_view import WindowViewMixin
from lensmass.gui.words import window_words
from lensmass.gui.workers import TaskRunner


class MainWindow(WindowBuildMixin, WindowFilesMixin, WindowViewMixin, WindowMarksMixin, WindowTasksMixin,
                 WindowExportMixin, QMainWindow):
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
        self._automatic_task = False  # the lens-light fit started on open is running
        self.light_on_open_pending = None  # the image whose lens-light fit waits for the first paint
        self._queued_task: tuple | None = None
        self._contrast_start: tuple[float, float] | None = None  # limits when a right-button drag began
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
            QTimer.singleShot(0, self._load_panels_after_paint)
        elif load_panels:
            self._load_panels()
        self._refresh_marks()
        self._refresh_systems()
        self._update_title()
        if offer_recovery:
            QTimer.singleShot(0, self.offer_recovery)

    def _load_panels_after_paint(self, tries: int = 150) -> None:
        """Build the extra panels once the canvas has painted the opened image (or at once without one)."""
        waiting = self.model.image is not None and self.canvas.paint_count == 0
        if (waiting or not self.isVisible()) and tries > 0:
            QTimer.singleShot(20, lambda: self._load_panels_after_paint(tries - 1))
            return
        self._load_panels()

    # =============================================================== messages
    def show_message(self, text: str, timeout_ms: int = 8000) -> None:
        """One sentence in the status bar (also kept in ``last_message``)."""
        text = window_words(text)
        self.last_message = text
        self.statusBar().showMessage(text, timeout_ms)

    def show_error(self, text: str) -> None:
        """A problem the user must see: status bar plus a window-modal box (non-blocking)."""
        text = window_words(text)
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
