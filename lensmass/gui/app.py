"""Start the window: ``lensmass gui [IMAGE|SESSION] [--screenshot OUT.png]``."""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

from lensmass.core.errors import LensInputError


def application():
    """The QApplication (created once), named so QSettings finds our settings."""
    from PySide6.QtWidgets import QApplication

    app = QApplication.instance()
    if app is None:
        app = QApplication(sys.argv[:1])
        app.setApplicationName("lensmass")
        app.setOrganizationName("lensmass")
        app.setStyle("Fusion")
        follow_colour_scheme(app)
        app.styleHints().colorSchemeChanged.connect(lambda _scheme: follow_colour_scheme(app))
        sys.excepthook = _report_unexpected
    return app


def follow_colour_scheme(app) -> None:
    """Use a dark palette when the system asks for dark (or LENSMASS_COLOUR_SCHEME=dark), else the system's.

    Qt's own palette follows the system on most desktops; this covers platforms
    that report a dark scheme but hand out a light palette.
    """
    from PySide6.QtCore import Qt
    from PySide6.QtGui import QColor, QPalette

    wanted = os.environ.get("LENSMASS_COLOUR_SCHEME", "").lower()
    dark = wanted == "dark" or (wanted != "light" and app.styleHints().colorScheme() == Qt.ColorScheme.Dark)
    if not dark:
        app.setPalette(app.style().standardPalette())
        return
    pal = QPalette()
    roles = {
        QPalette.Window: "#20242b", QPalette.WindowText: "#dde3ea", QPalette.Base: "#171a1f",
        QPalette.AlternateBase: "#262b33", QPalette.Text: "#dde3ea", QPalette.Button: "#2a3039",
        QPalette.ButtonText: "#dde3ea", QPalette.Highlight: "#2f7f78", QPalette.HighlightedText: "#ffffff",
        QPalette.ToolTipBase: "#2a3039", QPalette.ToolTipText: "#dde3ea", QPalette.PlaceholderText: "#7d8794",
        QPalette.Mid: "#7d8794", QPalette.Dark: "#15181c", QPalette.Light: "#3a414c", QPalette.BrightText: "#ffffff",
        QPalette.Link: "#6fc8bd",
    }
    for role, colour in roles.items():
        pal.setColor(role, QColor(colour))
    for role in (QPalette.Text, QPalette.ButtonText, QPalette.WindowText):
        pal.setColor(QPalette.Disabled, role, QColor("#6b7480"))
    app.setPalette(pal)


def _report_unexpected(kind, error, tb) -> None:
    """An unexpected error inside the window: one sentence in the status bar, the work is kept.

    The traceback goes to stderr only when LENSMASS_DEBUG is set.
    """
    from PySide6.QtWidgets import QApplication

    if os.environ.get("LENSMASS_DEBUG"):
        sys.__excepthook__(kind, error, tb)
    text = (f"Something went wrong inside lensmass ({kind.__name__}: {str(error)[:160]}); your marks are kept: "
            "save the session and report the problem.")
    if isinstance(error, LensInputError):
        text = str(error)
    for widget in QApplication.topLevelWidgets():
        if hasattr(widget, "show_message") and hasattr(widget, "canvas"):
            widget.show_message(text, 20000)
            return
    print(f"lensmass gui: {text}", file=sys.stderr)


def wait_until_idle(window, timeout_s: float = 20.0) -> bool:
    """Process events until no background task or pending estimate remains."""
    from PySide6.QtWidgets import QApplication

    end = time.monotonic() + timeout_s
    while time.monotonic() < end:
        QApplication.processEvents()
        if not window.tasks.busy and not window._estimate_timer.isActive() and not window._estimate_wanted \
                and getattr(window, "light_on_open_pending", None) is None:
            QApplication.processEvents()
            return True
        time.sleep(0.01)
    return False


def run_window(path: str | None = None, screenshot: str | None = None, size: tuple[int, int] | None = None) -> int:
    """Open the window (on ``path`` if given); with ``screenshot`` save a PNG and exit."""
    if screenshot and not os.environ.get("QT_QPA_PLATFORM") and not os.environ.get("DISPLAY") \
            and sys.platform.startswith("linux") and not os.environ.get("WAYLAND_DISPLAY"):
        os.environ["QT_QPA_PLATFORM"] = "offscreen"
    if screenshot and not str(screenshot).lower().endswith(".png"):
        raise LensInputError(f"The screenshot must be a .png file, got '{screenshot}'.")
    if screenshot:
        from lensmass.io.atomic import check_writable

        check_writable(screenshot, "--screenshot")
    if path is not None and not Path(path).exists():
        raise LensInputError(f"No such image or session file: {path}; check the path.")
    qt = sys.modules.get("PySide6.QtWidgets")
    problem = "" if qt is not None and qt.QApplication.instance() is not None else display_problem()
    if problem and screenshot:
        os.environ["QT_QPA_PLATFORM"] = "offscreen"  # a screenshot needs no screen
        problem = ""
    if problem:
        raise LensInputError(f"{problem}: run lensmass on a desktop (or ssh -X), or render the window without a "
                             "screen with --screenshot OUT.png.")
    if screenshot:
        import tempfile

        # A screenshot must not depend on (or change) the user's remembered layout: settings in a
        # temporary folder, removed afterwards.
        with tempfile.TemporaryDirectory(prefix="lensmass-shot-") as folder:
            return _run(path, screenshot, size, folder)
    return _run(path, screenshot, size, None)


def display_problem(environ=None, platform: str | None = None) -> str:
    """Why Qt could not open a window here ('' when it can): checked before Qt aborts the process.

    On Linux a window needs a Wayland compositor or an X server (DISPLAY); a local DISPLAY ``:N``
    must have its socket /tmp/.X11-unix/XN (X11 convention, common practice).
    """
    env = os.environ if environ is None else environ
    platform = sys.platform if platform is None else platform
    if not platform.startswith("linux"):
        return ""
    qpa = env.get("QT_QPA_PLATFORM", "")
    if qpa and not qpa.startswith(("xcb", "wayland")):
        return ""  # offscreen, vnc, eglfs...: Qt needs no display server
    if env.get("WAYLAND_DISPLAY") and not qpa.startswith("xcb"):
        return ""
    display = env.get("DISPLAY", "")
    if not display:
        return "There is no display to open the window on (DISPLAY is not set)"
    host, _, number = display.partition(":")
    number = number.split(".")[0]
    if not host and number.isdigit() and not Path(f"/tmp/.X11-unix/X{number}").exists():
        return f"The display {display} has no X server running"
    return ""


def _run(path, screenshot, size, settings_folder) -> int:
    app = application()
    from PySide6.QtCore import QSettings

    from lensmass.gui.mainwindow import MainWindow

    settings = None
    if settings_folder is not None:
        settings = QSettings(str(Path(settings_folder) / "settings.ini"), QSettings.IniFormat)
    window = MainWindow(settings, offer_recovery=not screenshot, interactive=not screenshot, load_panels="deferred")
    window.resize(*(size or (1440, 900)))
    if not screenshot:
        if path is not None:
            window.open_path(path)  # a file that does not open is a sentence in the window
        window.show()
        return int(app.exec())
    try:
        return _screenshot(app, window, path, screenshot)
    finally:
        window.model.dirty = False
        window.close()
        if settings is not None:
            settings.sync()  # written now, while its temporary folder still exists


def _screenshot(app, window, path, screenshot) -> int:
    opened = True
    if path is not None:
        # Open before the first show: the image is in the first paint, extra panels load after it.
        opened = window.open_path(path)
    window.show()
    app.processEvents()
    if not opened:
        raise LensInputError(window.last_error or f"Could not open {path}.")
    wait_until_idle(window)
    window.canvas.fit_to_window()
    if window.model.fit is not None:
        f = window.model.fit
        window.canvas.centre_on_image(f.center_x, f.center_y)
        window.canvas.zoom_to(max(window.canvas.zoom, min(window.canvas.width(), window.canvas.height())
                                  / (11.0 * max(f.a_px, 1.0))))
        window.canvas.centre_on_image(f.center_x, f.center_y)
    app.processEvents()
    out = window.save_screenshot(screenshot)
    print(f"lensmass gui: screenshot written to {out}")
    return 0
