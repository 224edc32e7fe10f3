"""File dialogs open beside the work in hand: the session's folder, else the image's, else the last folder
used, never the program's folder or the demo folder. The dialogs are Qt's own; the test records the folder
each is asked to start in (a native dialog cannot be clicked offscreen)."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

pytest.importorskip("PySide6")
from PySide6.QtWidgets import QFileDialog  # noqa: E402

from tests.gui.conftest import demo_field, wait_for_result, click_image, type_into  # noqa: E402


@pytest.fixture
def asked(monkeypatch):
    """Every file dialog's start folder, in order; the dialogs return 'cancelled'."""
    starts: list[Path] = []

    def record(parent, title="", start="", *args, **kwargs):
        p = Path(start)
        starts.append(p if p.is_dir() or not p.suffix else p.parent)
        return "", ""

    monkeypatch.setattr(QFileDialog, "getSaveFileName", staticmethod(record))
    monkeypatch.setattr(QFileDialog, "getOpenFileName", staticmethod(record))
    monkeypatch.setattr(QFileDialog, "getExistingDirectory", staticmethod(lambda parent, title="", start="", *a, **k:
                                                                          starts.append(Path(start)) or ""))
    return starts


def _image_in(folder: Path) -> Path:
    image, _ = demo_field("tris_ring_a")
    folder.mkdir(parents=True, exist_ok=True)
    return Path(shutil.copy(image, folder / image.name))


def test_dialogs_start_in_the_image_folder_then_the_session_folder(qtbot, make_window, tmp_path, asked, monkeypatch):
    monkeypatch.chdir(tmp_path)  # the program's working folder must not be where dialogs open
    w = make_window()
    w.settings.setValue("last_folder", str(tmp_path))  # an older choice, elsewhere
    image = _image_in(tmp_path / "night1")
    assert w.open_path(str(image))
    _, truth = demo_field("tris_ring_a")
    for x, y in truth["arc_points_xy"][::8]:
        click_image(qtbot, w, x, y)
    type_into(qtbot, w, "z_l", "0.3")
    type_into(qtbot, w, "z_s", "1.2")
    wait_for_result(qtbot, w)
    for action in (w.act_results, w.act_report, w.act_save_as, w.act_open):
        action.trigger()
    assert asked == [image.parent] * 4
    # once the work is a session saved elsewhere, dialogs open beside the session
    session = tmp_path / "sessions" / "ring.lensmass.json"
    session.parent.mkdir()
    assert w._save_to(str(session))
    asked.clear()
    w.act_results.trigger()
    w.act_report.trigger()
    assert asked == [session.parent] * 2


def test_without_an_image_the_last_folder_is_used(qtbot, make_window, tmp_path, asked):
    w = make_window()
    last = tmp_path / "last"
    last.mkdir()
    w.settings.setValue("last_folder", str(last))
    w.act_open.trigger()
    assert asked == [last]


def test_panel_dialogs_start_in_the_image_folder(qtbot, make_window, tmp_path, asked):
    from lensmass.gui.shear_panel import ShearPanel

    w = make_window(load_panels=True)
    image = _image_in(tmp_path / "night2")
    assert w.open_path(str(image))
    qtbot.waitUntil(lambda: any(isinstance(p, ShearPanel) for p in w.panels), timeout=10000)
    panel = next(p for p in w.panels if isinstance(p, ShearPanel))
    panel.choose_catalog()
    assert asked == [image.parent]
