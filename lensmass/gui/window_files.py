"""Files: panel state in sessions, opening images and sessions, saving, autosave and recovery, recent files, settings, closing.

A mixin of :class:`lensmass.gui.mainwindow.MainWindow`; it uses the widgets and
the model that the window builds (see ``MainWindow.__init__``).
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtWidgets import QFileDialog

from lensmass.core.errors import LensInputError
from lensmass.gui.display import COLORMAPS, LIMITS, STRETCHES
from lensmass.gui.window_common import IMAGE_FILTER, LAYERS, MAX_RECENT, SESSION_FILTER, _is_session_path


class WindowFilesMixin:
    """Files part of the main window."""

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
        from lensmass.gui.file_dialogs import start_path

        path, _ = QFileDialog.getOpenFileName(self, "Open image or session", start_path(self.model, self.settings),
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
        from lensmass.gui.file_dialogs import remember_folder

        remember_folder(self.settings, path)
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
        name = Path(path).name + (f" ({notes[0]})" if notes else "")
        self.show_message(f"Opened {name}.")
        from lensmass.gui.light_on_open import offer_light_fit

        offer_light_fit(self, name)  # a bright centre: its light is fitted and the residual shown

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
        self.colour_bar.show_scale(None, None, None)
        self._refresh_systems()
        self._update_title()

    def save_session(self) -> bool:
        if not self.model.session_path:
            return self.save_session_as()
        return self._save_to(self.model.session_path)

    def save_session_as(self) -> bool:
        from lensmass.io.session import SESSION_SUFFIX

        from lensmass.gui.file_dialogs import start_path

        start = self.model.session_path or start_path(self.model, self.settings, (
            Path(self.model.image.path).stem if self.model.image else "measurement") + SESSION_SUFFIX)
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
        """Offer the newest autosave of a run that did not close cleanly (see gui/recovery_prompt)."""
        from lensmass.gui.recovery_prompt import DISCARD, RESTORE, ask_recovery
        from lensmass.io.session import discard_autosave, list_recoverable

        try:
            found = list_recoverable()
        except Exception:
            return
        if not found or not self.interactive:
            return
        item = found[0]
        answer = ask_recovery(self, item)
        if answer == RESTORE:
            self.recover(item.key, item.origin)
        elif answer == DISCARD:
            discard_autosave(item.key)

    def recover(self, key: str, origin: str | None = None) -> bool:
        """Restore autosave ``key``; ``origin`` (the session file it belongs to) keeps its name and path."""
        from lensmass.io.session import discard_autosave, load_autosave

        try:
            session = load_autosave(key)
            self._apply_session(session, origin)
        except LensInputError as exc:
            self.show_error(str(exc))
            return False
        discard_autosave(key)
        self.model.dirty = True
        self._update_title()
        where = f" of {Path(origin).name}" if origin else ""
        self.show_message(f"Restored the autosaved work{where}: save it to keep it.")
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
