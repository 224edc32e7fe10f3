"""Dock panels written by other parts of lensmass, and the small API they may use.

The main window imports every entry of :data:`PANELS` whose module exists and
puts each panel in a dock. A missing module is skipped silently; a panel that
fails while being built is reported in the status bar in one sentence and the
window carries on without it.

Protocol of a panel
-------------------
A panel is a ``QWidget`` subclass::

    class ShearPanel(QWidget):
        PANEL_TITLE = "Shear profile"    # dock title (required)
        DOCK_AREA = "right"              # "left", "right" or "bottom" (optional, default "right")

        def __init__(self, app_model, canvas, window):
            ...

``app_model`` -- the :class:`lensmass.gui.model.WindowModel` (plain Python, no Qt).
    Read ``app_model.image`` (a :class:`lensmass.gui.model.ImageState` or None:
    ``.path``, ``.data`` float array with NaN masked, ``.wcs``, ``.pixel_scale_arcsec``,
    ``.loaded`` the :class:`lensmass.io.images.LoadedImage`), ``app_model.session``
    (the :class:`lensmass.io.session.Session`: ``.z_l``, ``.cosmology.resolve()``,
    ``.arcs``, ``.centre``, ``.panels[name]`` for a panel's own saved state),
    ``app_model.fit`` / ``app_model.result`` (the selected arc system's
    :class:`lensmass.gui.model.SystemFit` and estimate result, or None) ...
    Subscribe with ``app_model.subscribe(callback)``; ``callback(topic)`` is called
    with one of :data:`lensmass.gui.model.TOPICS` ("image", "display", "marks",
    "inputs", "fit", "result", "validation"). Unsubscribe with ``app_model.unsubscribe``.

``canvas`` -- the :class:`lensmass.gui.canvas.ImageCanvas`.
    Drawing: ``canvas.set_layer(name, draw)`` registers ``draw(painter, canvas)``,
    called on every repaint after the image and before the window's own marks;
    ``painter`` is a ``QPainter`` in widget coordinates. Map positions with
    ``canvas.image_to_widget(x, y) -> QPointF`` and ``canvas.widget_to_image(qpoint)
    -> (x, y)`` (0-based pixel column, row as stored); ``canvas.zoom`` is widget
    pixels per image pixel. ``canvas.remove_layer(name)`` removes it;
    ``canvas.update()`` asks for a repaint after your data changed.
    Clicks: ``canvas.claim_clicks(owner, handler, hint="...")`` routes left clicks on
    the image to ``handler(x, y)`` (image pixels) instead of the window's marking
    tools, until ``canvas.release_clicks(owner)``. The hint shows in the status bar.
    Pan and zoom keep working while a panel holds the clicks.

``window`` -- the :class:`lensmass.gui.mainwindow.MainWindow`.
    ``window.run_task(fn, label, on_result, on_error=None)`` runs
    ``fn(progress, should_stop)`` off the GUI thread with the window's progress bar
    and Cancel button (see :mod:`lensmass.gui.workers`): call ``progress(fraction,
    message)`` now and then and return early (or raise
    :class:`lensmass.gui.workers.TaskCancelled`) when ``should_stop()`` is true.
    ``on_result(value)`` / ``on_error(message)`` run back on the GUI thread.
    ``window.open_path(path)`` opens an image or session in the window (asks
    before discarding unsaved marks; returns True if it opened);
    ``window.show_message(text)`` shows one sentence in the status bar;
    ``window.restore_marks(state)`` puts the marks, redshifts and arc systems of a
    session dict (``app_model.to_session().to_dict()``, as stored earlier) back over
    the open image, with a fresh undo stack (returns True if it did).

Saved state (optional)
----------------------
A panel whose inputs belong to the measurement defines two methods; the window
calls them when it saves, autosaves and opens a session. The state lives in the
session file under ``"panels": {PANEL_KEY: {...}}`` (``PANEL_KEY`` defaults to the
class name)::

    PANEL_KEY = "shear"

    def panel_state(self, session_dir: Path | None) -> dict:
        # JSON-ready inputs of the panel; file paths through stored_path(path, session_dir)
        ...

    def restore_panel_state(self, state: dict, session_dir: Path | None) -> None:
        # put the inputs back; tolerate missing keys (older files); paths through resolved_path()
        ...

When the user edits one of those inputs, call ``window.mark_unsaved()`` so the
window asks before dropping the change and autosaves it.
``session_dir`` is the folder of the session file (None for an autosave: paths are
then stored absolute). ``restore_panel_state`` is called only when the session has
an entry for the panel, so an older session without one leaves the panel as it is;
a panel built after the session opened (panels load after the first paint) gets
its state when it is built. A panel without the two methods is simply not saved.

Keep to these names: they are the stable part. Anything else in the window may change.
"""

from __future__ import annotations

import importlib
import os
from pathlib import Path

#: (module, class) of each dock panel, in dock order. Add a line for a new panel.
PANELS: list[tuple[str, str]] = [
    ("lensmass.gui.shear_panel", "ShearPanel"),
    ("lensmass.gui.light_panel", "LightPanel"),
    ("lensmass.gui.cluster_panel", "ClusterPanel"),
    ("lensmass.gui.triage_panel", "TriagePanel"),
    ("lensmass.gui.lens_model_panel", "LensModelPanel"),
    ("lensmass.gui.mask_panel", "MaskPanel"),
]

#: Where a panel goes when it does not say (``DOCK_AREA``).
DEFAULT_DOCK_AREA = "right"


def panel_key(panel) -> str:
    """The name of a panel's entry in a session's ``panels`` (``PANEL_KEY`` or the class name)."""
    return str(getattr(panel, "PANEL_KEY", type(panel).__name__))


def mark_unsaved(window) -> None:
    """Tell ``window`` that a panel input changed (a no-op for a window without that call)."""
    mark = getattr(window, "mark_unsaved", None)
    if mark is not None:
        mark()


def stored_path(path: str | os.PathLike | None, session_dir: str | os.PathLike | None) -> dict | None:
    """A file path for a panel's state: relative to the session folder (as the image path is), with
    the absolute path as a fallback hint.

    Examples
    --------
    >>> stored_path("/data/night/shapes.fits", "/data/night")["path"]
    'shapes.fits'
    """
    from lensmass.io.session import _image_paths

    if not path:
        return None
    stored, absolute = _image_paths(str(path), session_dir)
    return {"path": stored, "absolute_path": absolute}


def resolved_path(entry, session_dir: str | os.PathLike | None) -> str | None:
    """The file a :func:`stored_path` entry names: relative to ``session_dir`` if that file exists,
    else the absolute hint if that exists, else the relative candidate (so a message can name it)."""
    if not isinstance(entry, dict) or not entry.get("path"):
        return None
    candidate = Path(str(entry["path"]))
    if not candidate.is_absolute() and session_dir is not None:
        candidate = Path(session_dir) / candidate
    candidate = Path(os.path.normpath(os.path.abspath(candidate)))
    hint = entry.get("absolute_path")
    if candidate.is_file() or not isinstance(hint, str) or not Path(hint).is_file():
        return str(candidate)
    return hint


def load_panel_classes(entries=None) -> tuple[list[type], list[str]]:
    """Import the panel classes that exist.

    Returns ``(classes, problems)``; ``problems`` holds one sentence per entry whose
    module exists but could not be imported (a module that is simply absent is
    not a problem: that panel is not part of this build).
    """
    classes: list[type] = []
    problems: list[str] = []
    for module_name, class_name in PANELS if entries is None else entries:
        try:
            module = importlib.import_module(module_name)
        except ModuleNotFoundError as exc:
            if exc.name == module_name:
                continue
            problems.append(f"Panel {class_name} is left out: it needs the missing module '{exc.name}'.")
            continue
        except Exception as exc:  # a broken panel must not stop the window
            problems.append(f"Panel {class_name} is left out: importing it failed ({type(exc).__name__}: {exc}).")
            continue
        cls = getattr(module, class_name, None)
        if cls is None:
            problems.append(f"Panel {class_name} is left out: {module_name} does not define it.")
            continue
        classes.append(cls)
    return classes, problems
