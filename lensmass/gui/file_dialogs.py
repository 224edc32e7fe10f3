"""Where file dialogs open: beside the work in hand, never in the program's own folder.

Every open, save and export dialog of the window and its panels starts in the folder of the
open session file, else of the open image, else the last folder the user chose a file in,
else the home folder; a file chosen there becomes the "last folder".
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

#: Settings key of the last folder a file was chosen in.
LAST_FOLDER_KEY = "last_folder"


def start_folder(model: Any = None, settings: Any = None) -> Path:
    """The folder a dialog opens in (see the module docstring); ``model`` is the window's
    :class:`lensmass.gui.model.WindowModel`, ``settings`` its QSettings (either may be None)."""
    candidates = []
    if model is not None:
        session_path = getattr(model, "session_path", None)
        if session_path:
            candidates.append(Path(session_path).absolute().parent)
        image = getattr(model, "image", None)
        if image is not None and getattr(image, "path", None):
            candidates.append(Path(image.path).absolute().parent)
    if settings is not None:
        last = settings.value(LAST_FOLDER_KEY)
        if last:
            candidates.append(Path(str(last)))
    for folder in candidates:
        if folder.is_dir():
            return folder
    return Path.home()


def start_path(model: Any, settings: Any, name: str = "") -> str:
    """``name`` in :func:`start_folder` (the folder alone when ``name`` is empty), for a dialog's start."""
    folder = start_folder(model, settings)
    return str(folder / name) if name else str(folder)


def remember_folder(settings: Any, path: str | os.PathLike | None) -> None:
    """Keep the folder of a chosen file (or a chosen folder) as the last folder."""
    if settings is None or not path:
        return
    p = Path(path).absolute()
    settings.setValue(LAST_FOLDER_KEY, str(p if p.is_dir() else p.parent))


def window_of(widget: Any) -> tuple[Any, Any]:
    """(model, settings) of the main window a panel or dialog belongs to ((None, None) if none)."""
    w = widget
    while w is not None:
        if hasattr(w, "model") and hasattr(w, "settings"):
            return w.model, w.settings
        window = getattr(w, "window", None)
        if window is not None and not callable(window) and hasattr(window, "settings"):
            return getattr(window, "model", None), window.settings
        parent = getattr(w, "parentWidget", None)
        w = parent() if callable(parent) else None
    return None, None
