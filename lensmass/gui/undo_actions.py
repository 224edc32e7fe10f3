"""Undo and redo as the user meets them: Edit-menu entries that name the edit in words, keys that
work on every platform without ambiguity, and toolbar buttons of fixed width.

The Edit menu reads "Undo: source redshift error"; the toolbar buttons always read "Undo" and
"Redo" (the edit is named in their tooltip), so the toolbar never shifts as edits come and go.
Redo answers Ctrl+Shift+Z and Ctrl+Y everywhere; each key sequence is given once, so Qt never
reports an "ambiguous shortcut overload" (on Linux the platform's Redo already is Ctrl+Shift+Z).
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction, QKeySequence, QUndoStack
from PySide6.QtWidgets import QWidget

#: Redo keys offered on every platform, besides the platform's own.
EXTRA_REDO_KEYS = ("Ctrl+Shift+Z", "Ctrl+Y")


def unique_keys(*sequences) -> list[QKeySequence]:
    """Key sequences without repeats (compared in portable text), empty ones dropped, order kept.

    >>> [k.toString() for k in unique_keys("Ctrl+Y", QKeySequence("Ctrl+Y"), "", "Ctrl+Shift+Z")]
    ['Ctrl+Y', 'Ctrl+Shift+Z']
    """
    seen, out = set(), []
    for seq in sequences:
        key = QKeySequence(seq)
        text = key.toString(QKeySequence.PortableText)
        if text and text not in seen:
            seen.add(text)
            out.append(key)
    return out


def redo_keys(platform_keys=None) -> list[QKeySequence]:
    """The platform's Redo keys (``platform_keys``, by default Qt's for this platform) plus
    Ctrl+Shift+Z and Ctrl+Y, each once.

    On a Linux desktop the platform's Redo is Ctrl+Shift+Z alone: giving it again made Qt report
    an ambiguous shortcut and do nothing, and Ctrl+Y was missing.

    >>> [k.toString() for k in redo_keys(["Ctrl+Shift+Z"])]
    ['Ctrl+Shift+Z', 'Ctrl+Y']
    """
    if platform_keys is None:
        platform_keys = QKeySequence.keyBindings(QKeySequence.Redo)
    return unique_keys(*platform_keys, *EXTRA_REDO_KEYS)


def undo_keys() -> list[QKeySequence]:
    """The platform's Undo keys (Ctrl+Z), each once."""
    return unique_keys(*QKeySequence.keyBindings(QKeySequence.Undo), "Ctrl+Z")


def _key_hint(action: QAction) -> str:
    keys = action.shortcuts()
    return " or ".join(k.toString(QKeySequence.NativeText) for k in keys)


class UndoActions:
    """The menu and toolbar actions of one undo stack, kept in step with it.

    ``menu_undo`` / ``menu_redo`` carry the keys and name the edit ("Undo: add arc point");
    ``bar_undo`` / ``bar_redo`` always read "Undo" / "Redo" and name the edit in the tooltip.
    """

    def __init__(self, stack: QUndoStack, owner: QWidget):
        self.stack = stack
        self.menu_undo = QAction("&Undo", owner)
        self.menu_redo = QAction("&Redo", owner)
        self.menu_undo.setShortcuts(undo_keys())
        self.menu_redo.setShortcuts(redo_keys())
        for a in (self.menu_undo, self.menu_redo):
            a.setShortcutContext(Qt.WindowShortcut)
            owner.addAction(a)
        self.bar_undo = QAction("Undo", owner)
        self.bar_redo = QAction("Redo", owner)
        for a in (self.bar_undo, self.bar_redo):
            a.setObjectName(f"bar_{a.text().lower()}")
        for a in (self.menu_undo, self.bar_undo):
            a.triggered.connect(lambda _c=False: stack.undo())
        for a in (self.menu_redo, self.bar_redo):
            a.triggered.connect(lambda _c=False: stack.redo())
        stack.indexChanged.connect(self.refresh)
        stack.cleanChanged.connect(self.refresh)
        self.refresh()

    def refresh(self, *_args) -> None:
        """Enable and name the actions after the stack's state."""
        try:
            states = (("Undo", self.menu_undo, self.bar_undo, self.stack.canUndo(), self.stack.undoText()),
                      ("Redo", self.menu_redo, self.bar_redo, self.stack.canRedo(), self.stack.redoText()))
        except RuntimeError:  # the stack clears itself while the window is being destroyed
            return
        for verb, menu, bar, can, text in states:
            named = f"{verb}: {text}" if can and text else verb
            menu.setText("&" + named)
            menu.setEnabled(can)
            bar.setEnabled(can)
            tip = f"{named} ({_key_hint(menu)})" if can else f"Nothing to {verb.lower()}."
            bar.setToolTip(tip)
            bar.setStatusTip(named if can else "")
            menu.setStatusTip(named if can else "")
