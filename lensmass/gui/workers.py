"""Long work off the GUI thread, with progress and cancel.

A task is a plain function ``fn(progress, should_stop) -> value``:

* ``progress(fraction, message="")`` reports how far it is (0..1);
* ``should_stop()`` turns true when the user pressed Cancel: return early or
  raise :class:`TaskCancelled` (core functions raise
  :class:`lensmass.core.progress.OperationCancelled`, treated the same).

:class:`TaskRunner` runs one task at a time in a :class:`QThread` and drives a
progress bar and a Cancel button; results and errors come back on the GUI thread.
A :class:`lensmass.core.errors.LensInputError` raised by the task arrives as its
one-sentence message; any other exception as one sentence naming its type.

Examples
--------
>>> def slow_sum(progress, should_stop):  # doctest: +SKIP
...     total = 0
...     for i in range(100):
...         if should_stop():
...             raise TaskCancelled()
...         total += i
...         progress(i / 100, "adding")
...     return total
>>> window.run_task(slow_sum, "Adding numbers", print)  # doctest: +SKIP
"""

from __future__ import annotations

import atexit
import threading
import time
from typing import Any, Callable

from PySide6.QtCore import QObject, QThread, Signal, Slot

from lensmass.core.errors import LensInputError
from lensmass.core.progress import OperationCancelled

TaskFunction = Callable[[Callable[..., None], Callable[[], bool]], Any]


#: Task threads still running (kept referenced until they finish; see TaskRunner.start).
_RUNNING: set = set()


class _ThreadKeeper(QObject):
    """Lives on the GUI thread; drops a finished task thread there (never inside the thread itself)."""

    @Slot()
    def release(self) -> None:
        thread = self.sender()
        if thread is not None:
            thread.wait()
            _RUNNING.discard(thread)


_KEEPER: _ThreadKeeper | None = None


def _keeper() -> _ThreadKeeper:
    global _KEEPER
    if _KEEPER is None:
        _KEEPER = _ThreadKeeper()
    return _KEEPER


def _stop_running_tasks() -> None:
    """At interpreter exit: ask every task to stop and wait for it (a live QThread must not be destroyed)."""
    for thread in list(_RUNNING):
        thread.cancel()
        thread.wait(5000)


atexit.register(_stop_running_tasks)


class TaskCancelled(Exception):
    """Raised inside a task to stop it after the user pressed Cancel."""


class TaskThread(QThread):
    """Runs one task function; emits progress, a result, an error or cancellation."""

    progressed = Signal(float, str)
    succeeded = Signal(object)
    failed = Signal(str)
    cancelled = Signal()

    #: Minimum seconds between two progress signals (keeps the GUI event queue calm).
    PROGRESS_INTERVAL_S = 0.05

    def __init__(self, fn: TaskFunction, parent: QObject | None = None):
        super().__init__(parent)
        self._fn = fn
        self._stop = threading.Event()
        self._last_progress = 0.0

    def cancel(self) -> None:
        """Ask the task to stop (it checks ``should_stop()``)."""
        self._stop.set()

    def should_stop(self) -> bool:
        return self._stop.is_set()

    def _progress(self, fraction: float, message: str = "") -> None:
        now = time.monotonic()
        if now - self._last_progress >= self.PROGRESS_INTERVAL_S or fraction >= 1:
            self._last_progress = now
            self.progressed.emit(float(min(max(fraction, 0.0), 1.0)), str(message))

    def run(self) -> None:  # runs in the worker thread
        try:
            value = self._fn(self._progress, self.should_stop)
        except (TaskCancelled, OperationCancelled):
            self.cancelled.emit()
            return
        except LensInputError as exc:
            self.failed.emit(str(exc))
            return
        except MemoryError:
            self.failed.emit("The task ran out of memory: try a smaller image cutout or fewer samples.")
            return
        except Exception as exc:  # shown as one sentence, never a traceback
            self.failed.emit(f"The task stopped with an unexpected {type(exc).__name__}: {exc}.")
            return
        if self._stop.is_set():
            self.cancelled.emit()
        else:
            self.succeeded.emit(value)


class TaskRunner(QObject):
    """One background task at a time, shown on a progress bar with a Cancel button.

    ``progress_bar`` (a ``QProgressBar``), ``cancel_button`` (a ``QAbstractButton``)
    and ``show_message`` (one-sentence status callback) are optional, so the runner
    also works headless in tests.
    """

    finished = Signal()

    def __init__(self, parent: QObject | None = None, progress_bar=None, cancel_button=None,
                 show_message: Callable[[str], None] | None = None):
        super().__init__(parent)
        self._bar = progress_bar
        self._cancel = cancel_button
        self._show = show_message or (lambda text: None)
        self._thread: TaskThread | None = None
        self._callbacks: tuple = ()
        self._label = ""
        if cancel_button is not None:
            cancel_button.clicked.connect(self.cancel)
        self._set_visible(False)

    # -- public ------------------------------------------------------------------
    @property
    def busy(self) -> bool:
        return self._thread is not None

    @property
    def label(self) -> str:
        return self._label

    def start(self, fn: TaskFunction, label: str, on_result: Callable[[Any], None],
              on_error: Callable[[str], None] | None = None,
              on_cancel: Callable[[], None] | None = None) -> TaskThread | None:
        """Run ``fn`` in the background; returns the thread, or None if one is already running."""
        if self._thread is not None:
            self._show(f"'{self._label}' is still running: wait for it or press Cancel first.")
            return None
        # No Qt parent: deleting the window (or this runner) must never destroy a running QThread,
        # which aborts the process. The thread is kept alive by _RUNNING until it has finished, and
        # its signals go to bound methods of this runner, which Qt disconnects if the runner is deleted.
        thread = TaskThread(fn)
        _RUNNING.add(thread)
        thread.finished.connect(_keeper().release)
        self._thread, self._label = thread, label
        self._callbacks = (on_result, on_error or self._show, on_cancel or (lambda: None))
        thread.progressed.connect(self._on_progress)
        thread.succeeded.connect(self._on_succeeded)
        thread.failed.connect(self._on_failed)
        thread.cancelled.connect(self._on_cancelled)
        self._set_visible(True)
        if self._bar is not None:
            self._bar.setValue(0)
            self._bar.setFormat(f"{label} %p%")
        self._show(f"{label}...")
        thread.start()
        return thread

    def cancel(self) -> None:
        """Ask the running task to stop."""
        if self._thread is not None:
            self._thread.cancel()
            self._show(f"Cancelling '{self._label}'...")

    def wait(self, timeout_ms: int = 5000) -> bool:
        """Block until the running task ends (for closing the window and tests)."""
        thread = self._thread
        return True if thread is None else thread.wait(timeout_ms)

    # -- internals ---------------------------------------------------------------
    def _on_succeeded(self, value) -> None:
        on_result = self._callbacks[0]
        self._done(lambda: on_result(value), f"{self._label}: done.")

    def _on_failed(self, message: str) -> None:
        on_error = self._callbacks[1]
        self._done(lambda: on_error(message), None)

    def _on_cancelled(self) -> None:
        self._done(self._callbacks[2], f"{self._label}: cancelled.")

    def _on_progress(self, fraction: float, message: str) -> None:
        if self._bar is not None:
            self._bar.setValue(int(round(fraction * 100)))
            if message:
                self._bar.setFormat(f"{self._label}: {message} %p%")

    def _done(self, callback: Callable[[], None], message: str | None) -> None:
        thread, self._thread = self._thread, None
        if thread is not None:
            thread.wait()
        self._set_visible(False)
        if message:
            self._show(message)
        try:
            callback()
        finally:
            self.finished.emit()

    def _set_visible(self, visible: bool) -> None:
        for widget in (self._bar, self._cancel):
            if widget is not None:
                widget.setVisible(visible)
