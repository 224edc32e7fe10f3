"""The question asked after a crash: restore the autosaved work, discard it, or decide later.

The buttons say what they do, and the text names the session file (or the image, for work never
saved as a session) and when the work was autosaved, in the user's local time.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

from PySide6.QtWidgets import QMessageBox, QWidget

#: The three answers, as the buttons say them.
RESTORE, DISCARD, LATER = "Restore my work", "Discard it", "Decide later"


def _saved_when(saved_at: datetime) -> str:
    local = saved_at.astimezone()
    return f"{local:%Y-%m-%d at %H:%M} ({local:%Z})" if local.tzname() else f"{local:%Y-%m-%d at %H:%M}"


def recovery_text(item) -> str:
    """What the prompt says about a :class:`lensmass.io.autosave.RecoverableSession`.

    Examples
    --------
    >>> from datetime import timezone
    >>> from types import SimpleNamespace
    >>> item = SimpleNamespace(origin="/data/night3/ring_a.lensmass.json", image_name="ring_a.fits",
    ...                        saved_at=datetime(2026, 5, 1, 22, 15, tzinfo=timezone.utc))
    >>> recovery_text(item).startswith("lensmass did not close cleanly while you were working on the session "
    ...                                "'ring_a.lensmass.json' (image ring_a.fits).")
    True
    """
    if item.origin:
        what = f"the session '{Path(item.origin).name}'" + (f" (image {item.image_name})" if item.image_name else "")
        keep = f"Restoring reopens it under the same name, {item.origin}, with the unsaved changes."
    else:
        what = f"the image {item.image_name}, not yet saved as a session" if item.image_name else "an unsaved measurement"
        keep = "Restoring puts the marks and inputs back; save them to keep them."
    return (f"lensmass did not close cleanly while you were working on {what}. Your work was autosaved on "
            f"{_saved_when(item.saved_at)}. {keep}")


def recovery_box(parent: QWidget | None, item) -> QMessageBox:
    """The (not yet shown) question with its three buttons; each button's object name is its answer."""
    box = QMessageBox(parent)
    box.setObjectName("recovery_prompt")
    box.setIcon(QMessageBox.Question)
    box.setWindowTitle("Unsaved work from the last run")
    box.setText(recovery_text(item))
    box.setInformativeText("'Decide later' keeps the autosave and asks again at the next start.")
    restore = box.addButton(RESTORE, QMessageBox.AcceptRole)
    discard = box.addButton(DISCARD, QMessageBox.DestructiveRole)
    later = box.addButton(LATER, QMessageBox.RejectRole)
    for button, name in ((restore, RESTORE), (discard, DISCARD), (later, LATER)):
        button.setObjectName(name)
    box.setDefaultButton(restore)
    box.setEscapeButton(later)
    return box


def ask_recovery(parent: QWidget | None, item) -> str:
    """Show the question modally; returns :data:`RESTORE`, :data:`DISCARD` or :data:`LATER`."""
    box = recovery_box(parent, item)
    box.exec()
    clicked = box.clickedButton()
    return clicked.objectName() if clicked is not None else LATER
