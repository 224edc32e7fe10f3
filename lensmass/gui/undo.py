"""Undoable edits: each is a QUndoCommand that changes the :class:`WindowModel`.

Push them on the window's ``QUndoStack``; ``push`` applies the edit (``redo``).
"""

from __future__ import annotations

import copy

from PySide6.QtGui import QUndoCommand

from lensmass.gui.model import WindowModel
from lensmass.gui.words import input_words


class AddMark(QUndoCommand):
    """Add an arc point or an image of a multiple-image system."""

    def __init__(self, model: WindowModel, kind: str, system: int, xy: tuple[float, float]):
        super().__init__("add arc point" if kind == "point" else "add image")
        self.model, self.kind, self.system, self.xy = model, kind, system, xy
        self.index: int | None = None

    def redo(self) -> None:
        self.index = self.model.add_mark(self.kind, self.system, self.xy, self.index)

    def undo(self) -> None:
        self.model.remove_mark(self.kind, self.system, self.index)


class MoveMark(QUndoCommand):
    """Move a mark (arc point, image or the lens centre) from ``old`` to ``new``."""

    def __init__(self, model: WindowModel, kind: str, system: int, index: int, old, new):
        super().__init__("move lens centre" if kind == "centre" else f"move {'arc point' if kind == 'point' else 'image'}")
        self.model, self.kind, self.system, self.index, self.old, self.new = model, kind, system, index, old, new

    def redo(self) -> None:
        self.model.move_mark(self.kind, self.system, self.index, self.new)

    def undo(self) -> None:
        self.model.move_mark(self.kind, self.system, self.index, self.old)


class RemoveMark(QUndoCommand):
    def __init__(self, model: WindowModel, kind: str, system: int, index: int):
        super().__init__("delete lens centre" if kind == "centre" else
                         f"delete {'arc point' if kind == 'point' else 'image'}")
        self.model, self.kind, self.system, self.index = model, kind, system, index
        self.xy = None

    def redo(self) -> None:
        if self.kind == "centre":
            self.xy = self.model.centre
            self.model.set_centre(None)
        else:
            self.xy = self.model.remove_mark(self.kind, self.system, self.index)

    def undo(self) -> None:
        if self.kind == "centre":
            self.model.set_centre(self.xy)
        else:
            self.model.add_mark(self.kind, self.system, self.xy, self.index)


class SetCentre(QUndoCommand):
    def __init__(self, model: WindowModel, xy, how: str = "hand"):
        super().__init__("set lens centre")
        self.model, self.new, self.how = model, xy, how
        self.old = model.session.centre

    def redo(self) -> None:
        self.model.set_centre(self.new, self.how)

    def undo(self) -> None:
        old = self.old
        self.model.set_centre(None if old is None else (old.x, old.y), "hand" if old is None else old.how)


class AddSystem(QUndoCommand):
    def __init__(self, model: WindowModel, system=None):
        super().__init__("add arc system")
        self.model, self.system = model, system
        self.index: int | None = None
        self.previous_active = model.active

    def redo(self) -> None:
        self.index = self.model.add_system(copy.deepcopy(self.system) if self.system else None, self.index)
        self.system = copy.deepcopy(self.model.systems[self.index])

    def undo(self) -> None:
        self.model.remove_system(self.index)
        self.model.select_system(self.previous_active)


class RemoveSystem(QUndoCommand):
    def __init__(self, model: WindowModel, index: int):
        super().__init__(f"delete arc system {model.systems[index].name}")
        self.model, self.index = model, index
        self.system = None

    def redo(self) -> None:
        self.system = self.model.remove_system(self.index)

    def undo(self) -> None:
        self.model.add_system(copy.deepcopy(self.system), self.index)


class SetSystemShape(QUndoCommand):
    def __init__(self, model: WindowModel, index: int, shape: str):
        super().__init__({"circle": "fit a circle", "ellipse": "fit an ellipse"}.get(shape, f"fit the {shape}"))
        self.model, self.index, self.new = model, index, shape
        self.old = model.systems[index].shape

    def redo(self) -> None:
        self.model.set_system_shape(self.index, self.new)

    def undo(self) -> None:
        self.model.set_system_shape(self.index, self.old)


class SetText(QUndoCommand):
    """A typed input (z_l, z_s, errors, custom cosmology, fixed concentration)."""

    def __init__(self, model: WindowModel, key: str, new: str, old: str | None = None):
        super().__init__(input_words(key))
        self.model, self.key, self.new = model, key, new
        self.old = model.texts.get(key, "") if old is None else old
        self.system = model.active

    def redo(self) -> None:
        self._apply(self.new)

    def undo(self) -> None:
        self._apply(self.old)

    def _apply(self, text: str) -> None:
        if self.key in ("z_s", "z_s_err") and self.model.active != self.system:
            self.model.select_system(self.system)
        self.model.set_text(self.key, text)


class SetChoice(QUndoCommand):
    """A choice from a list (cosmology preset, concentration relation, halo definition)."""

    def __init__(self, model: WindowModel, key: str, new, old):
        super().__init__(input_words(key))
        self.model, self.key, self.new, self.old = model, key, new, old

    def redo(self) -> None:
        self.model.set_choice(**{self.key: self.new})

    def undo(self) -> None:
        self.model.set_choice(**{self.key: self.old})
