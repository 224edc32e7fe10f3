"""pytest-qt fixtures: an offscreen window on a demo field, driven as a user would."""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
# Autosaves of the tests go to a throw-away folder, never the user's data folder.
os.environ.setdefault("LENSMASS_DATA_DIR", tempfile.mkdtemp(prefix="lensmass-gui-tests-"))

import pytest  # noqa: E402

REPO = Path(__file__).resolve().parents[2]
DEMO_DIR = Path(os.environ.get("LENSMASS_GUI_TEST_FIELDS", REPO / "demo_fields"))
#: Monte Carlo draws in tests (enough for stable medians, quick).
TEST_SAMPLES = 400


def demo_field(name: str = "tris_ring_a") -> tuple[Path, dict]:
    """Path of a demo field and its truth file (written by the project's demo generator)."""
    fits_path = DEMO_DIR / f"{name}.fits"
    truth_path = DEMO_DIR / f"{name}.truth.json"
    if not fits_path.is_file() or not truth_path.is_file():
        pytest.fail(f"demo field {fits_path} or its truth file is missing: run 'lensmass demo demo_fields'")
    return fits_path, json.loads(truth_path.read_text())


@pytest.fixture
def make_window(qtbot, tmp_path):
    """Factory of windows with their own settings file, no recovery prompt, no blocking dialogs."""
    from PySide6.QtCore import QSettings

    from lensmass.gui.mainwindow import MainWindow

    def make(load_panels: bool = False):
        settings = QSettings(str(tmp_path / "settings.ini"), QSettings.IniFormat)
        w = MainWindow(settings, offer_recovery=False, interactive=False, load_panels=load_panels)
        w.model.mc_samples = TEST_SAMPLES
        w.resize(1280, 820)
        qtbot.addWidget(w)
        w.show()
        qtbot.waitExposed(w)
        return w

    return make


@pytest.fixture
def window(make_window):
    return make_window()


@pytest.fixture
def ring_window(window):
    """A window with the galaxy-scale ring demo field open; returns (window, truth)."""
    path, truth = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    return window, truth


def click_image(qtbot, window, x: float, y: float, button=None) -> None:
    """A still mouse click on image pixel (x, y), through the canvas transform."""
    from PySide6.QtCore import Qt

    pos = window.canvas.image_to_widget(x, y).toPoint()
    qtbot.mouseClick(window.canvas, button or Qt.LeftButton, pos=pos)


def type_into(qtbot, window, key: str, text: str) -> None:
    """Select all in an input field, type ``text`` and press Enter."""
    from PySide6.QtCore import Qt

    edit = window.inputs_panel.fields[key].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClicks(edit, text)
    qtbot.keyClick(edit, Qt.Key_Return)


def wait_for_result(qtbot, window, timeout: int = 20000) -> dict:
    qtbot.waitUntil(lambda: window.model.result is not None, timeout=timeout)
    return window.model.result


def wait_idle(qtbot, window, timeout: int = 20000) -> None:
    qtbot.waitUntil(lambda: not window.tasks.busy and not window._estimate_timer.isActive()
                    and not window._estimate_wanted and getattr(window, "light_on_open_pending", None) is None,
                    timeout=timeout)


def label_float(label) -> float:
    return float(label.text().replace(",", ""))


def click_find_ring(qtbot, window, timeout: int = 120000):
    """Click the ring finder's button as a user would and return the answer the window received."""
    from PySide6.QtCore import Qt

    answers = []
    original = window._ring_found
    window._ring_found = lambda ring: (answers.append(ring), original(ring))
    qtbot.mouseClick(window.ring_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: bool(answers), timeout=timeout)
    wait_idle(qtbot, window, timeout)
    window._ring_found = original
    return answers[0]
