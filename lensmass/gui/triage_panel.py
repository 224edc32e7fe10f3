"""The "Triage queue" dock: step through many candidates, grade, flag, note and measure each.

Open a folder of images or a manifest (CSV/ECSV with id, image, z_l, z_s ...). The
list shows every candidate with your grade, the team's consensus (mean +- spread
over graders, and how many) and its state. The current candidate's image opens in
the window, with its redshifts typed in; the window's measurement result is stored
with the candidate when you store it or move on. Grades, flags, notes and results
go to the queue's store (:mod:`lensmass.io.store`): SQLite beside the manifest, or a
PostgreSQL URL typed in the store field; a lost server keeps entries queued locally.

Keys (with the list focused): ``.`` next candidate, ``,`` previous, ``0``-``3`` grade,
``F`` flag on/off, ``N`` write a note (Enter saves it), ``M`` store the measurement now.

Longer than 500 lines because the triage list, its keyboard grading and the store dialog share one
widget state that is being reworked; split after.
"""

from __future__ import annotations

import math
from pathlib import Path

from PySide6.QtCore import QEvent, QObject, Qt
from PySide6.QtGui import QBrush, QColor
from PySide6.QtWidgets import (QComboBox, QFileDialog, QGridLayout, QHBoxLayout, QLabel, QLineEdit, QPushButton,
                               QTreeWidget, QTreeWidgetItem, QVBoxLayout, QWidget)

from lensmass.gui.file_dialogs import start_path, window_of
from lensmass.core.errors import LensInputError
from lensmass.io.store import GRADE_SCALE, consensus_of, default_grader, grade_label
from lensmass.gui.words import window_words

#: Columns of the list.
COLUMNS = ("candidate", "my grade", "team", "state")
#: View filters: key -> label.
FILTERS = {"all": "all candidates", "todo": "not graded by me", "disputed": "graders disagree",
           "flagged": "flagged"}
DISPUTED_COLOUR = "#b34700"

#: Keys of the candidate list (key, what it does); also listed on the window's help page.
TRIAGE_KEYS = ((".", "next candidate"), (",", "previous candidate"), ("0-3", "grade the candidate (scale above)"),
               ("F", "flag on/off"), ("N", "write a note (Enter keeps it)"),
               ("M", "store the window's measurement and marks with the candidate now"))

KEY_HELP = ("Keys in the list: " + ", ".join(f"{k} {what.split(' (')[0]}" for k, what in TRIAGE_KEYS) + ". "
            "Grades: " + "; ".join(f"{g} {name} ({meaning})" for g, (name, meaning) in GRADE_SCALE.items()) + ".")


def _marks_signature(model) -> str:
    """The measured part of the window's session (marks, redshifts, models), not how it is displayed."""
    import json

    d = model.to_session().to_dict()
    keep = ("centre", "z_l", "z_l_err", "cosmology", "concentration", "halo_definition", "mc_samples", "mc_seed")
    arcs = [{k: v for k, v in a.items() if k != "fit"} for a in d["arcs"]]
    return json.dumps({"arcs": arcs, **{k: d[k] for k in keep}}, sort_keys=True, default=str)


class _Keys(QObject):
    """Key handling on the candidate list (so typing a note never grades)."""

    def __init__(self, panel: "TriagePanel"):
        super().__init__(panel)
        self.panel = panel

    #: The characters the list answers to (see TRIAGE_KEYS).
    KEYS = frozenset({".", ",", "f", "n", "m", *(str(g) for g in GRADE_SCALE)})

    def _ours(self, event) -> bool:
        plain = not (event.modifiers() & ~(Qt.ShiftModifier | Qt.KeypadModifier))
        return plain and event.text().lower() in self.KEYS

    def eventFilter(self, obj, event):  # noqa: N802
        if event.type() == QEvent.ShortcutOverride and self._ours(event):
            # Claim the key before the window's one-key shortcuts (F fit, N new arc system, 1 zoom 1:1)
            # see it: Qt delivers it to the list as a key press instead of triggering the shortcut.
            event.accept()
            return True
        if event.type() != QEvent.KeyPress or not self._ours(event):
            return False
        text = event.text().lower()
        p = self.panel
        if text == ".":
            p.step(1)
        elif text == ",":
            p.step(-1)
        elif text in {str(g) for g in GRADE_SCALE}:
            p.grade(int(text))
        elif text == "f":
            p.toggle_flag()
        elif text == "n":
            p.note_edit.setFocus()
            p.note_edit.selectAll()
        elif text == "m":
            p.store_measurement()
        else:
            return False
        return True


class TriagePanel(QWidget):
    """Dock panel for a queue of candidates (see the module docstring)."""

    PANEL_TITLE = "Triage queue"
    DOCK_AREA = "left"

    def __init__(self, app_model, canvas, window):
        super().__init__()
        self.model, self.canvas, self.window = app_model, canvas, window
        self.manifest = None
        self.store = None
        self.current_id: str | None = None
        self._stored_result_ids: dict[str, int] = {}
        self._mine: dict[str, dict] = {}
        self._team: dict[str, dict] = {}
        self._measured: set[str] = set()
        self.remembered_manifest: str | None = None
        #: candidate -> what its marks were when last stored or restored (to skip storing them again)
        self._restored: dict[str, str] = {}
        self._build()
        self.model.subscribe(self._on_model)

    # ---------------------------------------------------------------- building
    def _build(self) -> None:
        lay = QVBoxLayout(self)
        top = QGridLayout()
        self.open_button = QPushButton("Open queue...")
        self.open_button.setToolTip("A folder of images, or a manifest table (CSV/ECSV: id, image, z_l, z_s, ...).")
        self.open_button.clicked.connect(self._open_dialog)
        self.store_edit = QLineEdit()
        self.store_edit.setPlaceholderText("store: empty = SQLite file beside the manifest, or postgresql://...")
        self.store_edit.setToolTip("Where grades go: empty = a SQLite file beside the manifest; or a SQLite "
                                   "file path, or postgresql://user@host:port/db for a team.")
        self.grader_edit = QLineEdit(default_grader())
        self.grader_edit.setToolTip("Your name as a grader; each grader's grades are kept apart.")
        top.addWidget(self.open_button, 0, 0)
        top.addWidget(QLabel("grader"), 0, 1)
        top.addWidget(self.grader_edit, 0, 2)
        top.addWidget(self.store_edit, 1, 0, 1, 3)
        lay.addLayout(top)

        self.filter_box = QComboBox()
        for key, label in FILTERS.items():
            self.filter_box.addItem(label, key)
        self.filter_box.currentIndexChanged.connect(lambda _i: self.refresh())
        lay.addWidget(self.filter_box)

        self.tree = QTreeWidget()
        self.tree.setHeaderLabels(list(COLUMNS))
        self.tree.setRootIsDecorated(False)
        self.tree.setToolTip(KEY_HELP)
        self.tree.setHorizontalScrollBarPolicy(Qt.ScrollBarAsNeeded)  # columns scroll inside a narrow dock
        self.tree.setMinimumWidth(120)
        self.tree.currentItemChanged.connect(self._on_current)
        self.tree.installEventFilter(_Keys(self))
        lay.addWidget(self.tree, 1)

        # Two buttons a row everywhere below: the dock stays narrow enough for a 1366 x 768 screen.
        grades = QGridLayout()
        self.grade_buttons = []
        for g, (name, meaning) in GRADE_SCALE.items():
            b = QPushButton(f"{g} {name}")
            b.setToolTip(f"{meaning} (key {g})")
            b.clicked.connect(lambda _c=False, g=g: self.grade(g))
            grades.addWidget(b, g // 2, g % 2)
            self.grade_buttons.append(b)
        lay.addLayout(grades)
        row = QHBoxLayout()
        self.flag_button = QPushButton("Flag")
        self.flag_button.setCheckable(True)
        self.flag_button.setToolTip("Mark the candidate for a second look (F).")
        self.flag_button.clicked.connect(lambda _c=False: self.toggle_flag())
        self.note_edit = QLineEdit()
        self.note_edit.setPlaceholderText("note (Enter saves)")
        self.note_edit.returnPressed.connect(self.save_note)
        row.addWidget(self.flag_button)
        row.addWidget(self.note_edit, 1)
        lay.addLayout(row)
        row2 = QGridLayout()
        self.measure_button = QPushButton("Store measurement")
        self.measure_button.setToolTip("Keep the window's current result with this candidate (M).")
        self.measure_button.clicked.connect(self.store_measurement)
        self.export_button = QPushButton("Export...")
        self.export_button.setToolTip("Write the consensus and the measurements to ECSV or CSV.")
        self.export_button.clicked.connect(self._export_dialog)
        self.grading_button = QPushButton("Grade a class...")
        self.grading_button.clicked.connect(self.open_grading_dialog)
        for i, b in enumerate((self.measure_button, self.export_button, self.grading_button)):
            row2.addWidget(b, i // 2, i % 2)
        lay.addLayout(row2)
        self.status = QLabel("No queue open. " + KEY_HELP)
        self.status.setWordWrap(True)
        lay.addWidget(self.status)

    # ---------------------------------------------------------------- queue
    def _open_dialog(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Open a manifest", start_path(*window_of(self)),
                                              "Manifests (*.csv *.ecsv)")
        if not path:
            path = QFileDialog.getExistingDirectory(self, "Or a folder of candidate images", start_path(*window_of(self)))
        if path:
            self.open_queue(path)

    def open_queue(self, path: str | Path, store: str | None = None) -> bool:
        """Open a manifest or folder and its store; returns True when it opened."""
        from lensmass.io.manifest import read_manifest
        from lensmass.io.store_open import open_store

        if store is not None:
            self.store_edit.setText(store)
        try:
            manifest = read_manifest(path)
            new_store = open_store(self.store_edit.text().strip() or None, manifest.source,
                                   grader=self.grader_name())
        except LensInputError as exc:
            self._say(str(exc))
            return False
        self.close_queue()
        self.manifest, self.store = manifest, new_store
        self.refresh()
        ident = f" (queue id {new_store.queue})" if new_store.queue != manifest.name else ""
        self._say(f"Queue {manifest.name}{ident}: {len(manifest.rows)} candidates; grades go to "
                  f"{new_store.describe()}.")
        if self.tree.topLevelItemCount():
            self.tree.setCurrentItem(self.tree.topLevelItem(0))
        return True

    def close_queue(self) -> None:
        self._leave_current()
        if self.store is not None:
            self.store.close()
        self.store, self.manifest, self.current_id = None, None, None
        self.tree.blockSignals(True)
        self.tree.clear()
        self.tree.blockSignals(False)

    # ---------------------------------------------------------------- saved in sessions (panel_registry)
    PANEL_KEY = "triage"

    def panel_state(self, session_dir=None) -> dict:
        """The queue's manifest (relative path) and the grader's name. The store field is not saved:
        a server address may hold a password, and a session file is shared."""
        from lensmass.gui.panel_registry import stored_path

        source = getattr(self.manifest, "source", None)
        return {"manifest": stored_path(source, session_dir) if source else None, "grader": self.grader_name()}

    def restore_panel_state(self, state: dict, session_dir=None) -> None:
        from lensmass.gui.panel_registry import resolved_path

        if isinstance(state.get("grader"), str) and state["grader"].strip():
            self.grader_edit.setText(state["grader"].strip())
        self.remembered_manifest = resolved_path(state.get("manifest"), session_dir)
        if self.manifest is None and self.remembered_manifest:
            # Not reopened by itself: opening a queue opens its first candidate over this session.
            self.status.setText(f"This session was measured from the queue {Path(self.remembered_manifest).name}: "
                                "open it with 'Open queue...' to go on grading.")

    def grader_name(self) -> str:
        return self.grader_edit.text().strip() or default_grader()

    def _load_state(self) -> bool:
        try:
            current = self.store.current()
            cons = consensus_of(current.values())  # the same rows: one read of the store, not two
            self._measured = {m["candidate"] for m in self.store.measurements()}
        except LensInputError as exc:
            self._say(str(exc))
            return False
        me = self.grader_name()
        self._mine = {cand: row for (cand, grader), row in current.items() if grader == me}
        self._team = {c["candidate"]: c for c in cons}
        return True

    def refresh(self) -> None:
        """Rebuild the list from the store (keeps the current candidate selected)."""
        if self.manifest is None:
            return
        self._load_state()
        wanted = self.filter_box.currentData()
        keep = self.current_id
        self.tree.blockSignals(True)
        self.tree.clear()
        for row in self.manifest.rows:
            if not self._visible(row.id, wanted):
                continue
            item = QTreeWidgetItem(self._cells(row.id))
            item.setData(0, Qt.UserRole, row.id)
            if self._team.get(row.id, {}).get("disputed"):
                for col in range(len(COLUMNS)):
                    item.setForeground(col, QBrush(QColor(DISPUTED_COLOUR)))
            self.tree.addTopLevelItem(item)
            if row.id == keep:
                self.tree.setCurrentItem(item)
        self.tree.blockSignals(False)
        for col in range(len(COLUMNS)):
            self.tree.resizeColumnToContents(col)
        self._sync_controls()

    def _visible(self, cand: str, wanted: str) -> bool:
        if wanted == "todo":
            return self._mine.get(cand, {}).get("grade") is None
        if wanted == "disputed":
            return bool(self._team.get(cand, {}).get("disputed"))
        if wanted == "flagged":
            return bool(self._team.get(cand, {}).get("flagged_by"))
        return True

    def _cells(self, cand: str) -> list[str]:
        mine = self._mine.get(cand, {})
        team = self._team.get(cand)
        if team and team["n_graders"]:
            spread = "" if team["n_graders"] < 2 else f" +- {team['spread']:.2f}"
            team_text = f"{team['mean_grade']:.2f}{spread} ({team['n_graders']})"
        else:
            team_text = "-"
        state = []
        if mine.get("grade") is not None:
            state.append("graded")
        if team and team["flagged_by"]:
            state.append("flagged")
        if cand in self._measured:
            state.append("measured")
        if team and team.get("disputed"):
            state.append("disputed")
        if mine.get("note"):
            state.append("note")
        return [cand, grade_label(mine.get("grade")) if mine else "ungraded", team_text, ", ".join(state) or "new"]

    def candidate_ids(self) -> list[str]:
        """Ids in the list as shown (after the filter)."""
        return [self.tree.topLevelItem(i).data(0, Qt.UserRole) for i in range(self.tree.topLevelItemCount())]

    # ---------------------------------------------------------------- current candidate
    def step(self, delta: int) -> None:
        """Move to the next (+1) or previous (-1) candidate in the list."""
        n = self.tree.topLevelItemCount()
        if not n:
            return
        item = self.tree.currentItem()
        i = self.tree.indexOfTopLevelItem(item) if item is not None else -1
        j = min(max(i + delta, 0), n - 1)
        if j != i:
            self.tree.setCurrentItem(self.tree.topLevelItem(j))

    def _on_current(self, item, _previous=None) -> None:
        if item is None or self.manifest is None:
            return
        cand = item.data(0, Qt.UserRole)
        if cand == self.current_id:
            return
        self._leave_current()
        if not self._unstored_marks():
            # Nothing was measured, or the measurement is kept in the store: no "unsaved changes?" prompt.
            self.model.dirty = False
        self.current_id = cand
        row = self.manifest.by_id()[cand]
        opened = False
        if row.image is not None:
            opened = self.window.open_path(str(row.image))
            if not opened:
                self._say(f"Could not open the image of {cand}; the grade can still be given.")
        restored, restore_note = self._restore_stored_marks(cand) if opened else (False, "")
        texts = {k: f"{v:g}" for k, v in (("z_l", row.z_l), ("z_s", row.z_s)) if v is not None}
        if texts and not restored:
            self.model.set_texts(texts)
        if opened:
            self.model.dirty = False  # the redshifts come from the manifest: nothing of the user's to save yet
            update_title = getattr(self.window, "_update_title", None)
            if update_title is not None:
                update_title()
        self._stored_result_ids.setdefault(cand, id(self.model.result) if self.model.result is not None else 0)
        self._sync_controls()
        where = f" at RA {row.ra_deg:.5f}, Dec {row.dec_deg:+.5f}" if None not in (row.ra_deg, row.dec_deg) else ""
        self._say(f"{cand}{where}" + (f": {row.notes}" if row.notes else "") + f" ({self._position()})"
                  + self._last_measurement_text(cand) + restore_note + ".")

    def _restore_stored_marks(self, cand: str) -> tuple[bool, str]:
        """Show again the marks this grader stored with ``cand`` (their latest): (restored, note for the status)."""
        if self.store is None or self.model.image is None:
            return False, ""
        try:
            mine = [m for m in self.store.measurements(cand)
                    if m["grader"] == self.grader_name() and m.get("session_state")]
        except LensInputError:
            return False, ""
        if not mine:
            return False, ""
        if not self.window.restore_marks(mine[-1]["session_state"], f"The stored marks of {cand}"):
            return False, "; your stored marks could not be read, so the image opens bare"
        self._restored[cand] = _marks_signature(self.model)
        return True, "; your stored marks are back"

    def _last_measurement_text(self, cand: str) -> str:
        if cand not in self._measured:
            return ""
        try:
            last = self.store.measurements(cand)[-1]
        except (LensInputError, IndexError):
            return ""
        mass = last["result"].get("mass_einstein_msun")
        if not isinstance(mass, (int, float)):
            return ""
        return (f"; stored by {last['grader']}: M(<theta_E) = {mass:.3g} Msun "
                f"({last['result'].get('cosmology', '')})")

    def _position(self) -> str:
        item = self.tree.currentItem()
        return f"{self.tree.indexOfTopLevelItem(item) + 1} of {self.tree.topLevelItemCount()}"

    def _unstored_marks(self) -> bool:
        """True when the window holds marks of the current candidate that are not kept in the store."""
        if not any(system.points or system.images for system in self.model.systems):
            return False
        return self._restored.get(self.current_id or "") != _marks_signature(self.model)

    def _leave_current(self) -> None:
        """Store the window's new result with the candidate being left (if any); restored marks
        that were not changed are not stored a second time."""
        if self.current_id and self.store is not None and self.model.result is not None:
            unchanged = self._restored.get(self.current_id) == _marks_signature(self.model)
            if self._stored_result_ids.get(self.current_id) != id(self.model.result) and not unchanged:
                self.store_measurement()

    def _sync_controls(self) -> None:
        mine = self._mine.get(self.current_id or "", {})
        self.flag_button.setChecked(bool(mine.get("flagged")))
        self.note_edit.setText(mine.get("note", ""))
        on = self.current_id is not None
        for w in (*self.grade_buttons, self.flag_button, self.note_edit, self.measure_button):
            w.setEnabled(on)

    # ---------------------------------------------------------------- grading
    def _record(self, **changes):
        """Add the grader's new state of the current candidate; returns the Receipt (None on a problem)."""
        if self.store is None or self.current_id is None:
            self._say("Open a queue and choose a candidate first.")
            return None
        mine = dict(self._mine.get(self.current_id, {}))
        state = {"grade": mine.get("grade"), "flagged": bool(mine.get("flagged")), "note": mine.get("note", "")}
        state.update(changes)
        try:
            receipt = self.store.add_grade(self.current_id, state["grade"], flagged=state["flagged"],
                                           note=state["note"], grader=self.grader_name())
        except LensInputError as exc:
            self._say(str(exc))
            return None
        self._mine[self.current_id] = {**mine, **state, "candidate": self.current_id}
        self.refresh()
        return receipt

    def _said(self, receipt, text: str) -> None:
        """Confirm an action; a queued (not yet stored) entry says so first."""
        self._say(text if receipt.saved else f"{receipt.message} ({text})")

    def grade(self, value: int) -> None:
        """Give the current candidate a grade of the scale (a new row in the store)."""
        receipt = self._record(grade=value)
        if receipt is not None:
            self._said(receipt, f"{self.current_id}: {grade_label(value)}, {self._position()}")

    def toggle_flag(self) -> None:
        flagged = not bool(self._mine.get(self.current_id or "", {}).get("flagged"))
        receipt = self._record(flagged=flagged)
        if receipt is not None:
            self._said(receipt, f"{self.current_id} {'flagged' if flagged else 'unflagged'}")

    def save_note(self) -> None:
        receipt = self._record(note=self.note_edit.text().strip())
        if receipt is not None:
            self._said(receipt, f"note kept for {self.current_id}")
            self.tree.setFocus()

    def store_measurement(self) -> None:
        """Keep the window's current estimate result with the current candidate."""
        result = self.model.result
        if self.store is None or self.current_id is None:
            self._say("Open a queue and choose a candidate first.")
            return
        if result is None:
            self._say("No measurement to store yet: mark the arcs and give the redshifts first.")
            return
        try:
            receipt = self.store.add_measurement(self.current_id, result, grader=self.grader_name(),
                                                 session_state=self.model.to_session().to_dict())
        except LensInputError as exc:
            self._say(str(exc))
            return
        self._stored_result_ids[self.current_id] = id(result)
        self._restored[self.current_id] = _marks_signature(self.model)
        mass = result.get("mass_einstein_msun")
        text = f"Measurement of {self.current_id} stored"
        if isinstance(mass, float) and math.isfinite(mass):
            text += f" (M(<theta_E) = {mass:.3g} Msun, {result.get('cosmology', '')})"
        self.refresh()
        self._said(receipt, text)

    def _on_model(self, topic: str) -> None:
        if topic == "result" and self.current_id:
            self.measure_button.setEnabled(self.model.result is not None)

    # ---------------------------------------------------------------- export and grading
    def _export_dialog(self) -> None:
        if self.store is None:
            self._say("Open a queue first.")
            return
        path, _ = QFileDialog.getSaveFileName(self, "Export the consensus", start_path(*window_of(self), "consensus.ecsv"),
                                              "Tables (*.ecsv *.csv)")
        if path:
            self.export(path)

    def export(self, consensus_path: str | Path) -> tuple[Path, Path] | None:
        """Write the consensus to ``consensus_path`` and the measurements beside it."""
        from lensmass.io.store import export_consensus, export_measurements

        p = Path(consensus_path)
        m = p.with_name(p.stem + "-measurements" + p.suffix)
        try:
            n_c = export_consensus(self.store, p)
            n_m = export_measurements(self.store, m)
        except LensInputError as exc:
            self._say(str(exc))
            return None
        self._say(f"Exported {n_c} candidates to {p.name} and {n_m} measurements to {m.name}.")
        return p, m

    def open_grading_dialog(self):
        from lensmass.gui.grading_dialog import GradingDialog

        dlg = GradingDialog(self)
        dlg.setAttribute(Qt.WA_DeleteOnClose)
        dlg.show()
        return dlg

    def _say(self, text: str) -> None:
        text = window_words(text)
        self.status.setText(text)
        show = getattr(self.window, "show_message", None)
        if show is not None:
            show(text)

    def closeEvent(self, event) -> None:  # noqa: N802
        self.close_queue()
        super().closeEvent(event)
