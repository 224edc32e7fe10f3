"""Every documented key of the triage queue, pressed with the queue docked in the real window.

The keys are the ones the README and the panel's help list (``TRIAGE_KEYS``). With the candidate list
focused they must act on the queue, not on the window's own one-key shortcuts (F fit, N new arc system,
1 zoom 1:1, ...); elsewhere the window's shortcuts keep working.
"""

import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402

from lensmass.gui.triage_panel import TRIAGE_KEYS, TriagePanel  # noqa: E402
from tests.gui.test_triage import queue  # noqa: E402,F401  (fixture: three invented candidates)


@pytest.fixture
def docked(make_window, qtbot, queue, monkeypatch):  # noqa: F811
    monkeypatch.setenv("LENSMASS_GRADER", "tess")
    window = make_window(load_panels=True)
    qtbot.waitUntil(lambda: any(isinstance(p, TriagePanel) for p in window.panels), timeout=10000)
    panel = next(p for p in window.panels if isinstance(p, TriagePanel))
    asked = []
    window.ask_unsaved = lambda: asked.append(1) or "cancel"  # any prompt is counted (and refused)
    assert panel.open_queue(queue)
    panel.tree.setFocus()
    qtbot.waitUntil(panel.tree.hasFocus, timeout=3000)
    return window, panel, asked


def _press(qtbot, panel, key):
    qtbot.keyClick(panel.tree, key)


def test_the_documented_keys_are_the_tested_ones():
    # the keys this file tests are exactly the documented ones
    assert [k for k, _ in TRIAGE_KEYS] == [".", ",", "0-3", "F", "N", "M"]


def test_every_triage_key_acts_on_the_queue_not_the_window(docked, qtbot, tmp_path):
    window, panel, asked = docked
    zoom = window.canvas.zoom if hasattr(window.canvas, "zoom") else None
    n_systems = len(window.model.systems)
    for g in (0, 1, 2, 3):
        _press(qtbot, panel, str(g))
        assert panel.store.history("Q-00")[-1]["grade"] == g
    assert (window.canvas.zoom if zoom is not None else None) == zoom  # "1" did not set 1:1
    _press(qtbot, panel, "f")
    assert panel.store.history("Q-00")[-1]["flagged"] is True  # "F" flagged, did not fit to window
    _press(qtbot, panel, "F")
    assert panel.store.history("Q-00")[-1]["flagged"] is False
    _press(qtbot, panel, "n")
    assert panel.note_edit.hasFocus()  # "N" went to the note, no new arc system
    assert len(window.model.systems) == n_systems
    qtbot.keyClicks(panel.note_edit, "faint arc, 1 F n . , m")  # typing in the note never grades or steps
    qtbot.keyClick(panel.note_edit, Qt.Key_Return)
    last = panel.store.history("Q-00")[-1]
    assert last["note"] == "faint arc, 1 F n . , m" and last["grade"] == 3 and panel.current_id == "Q-00"
    assert panel.tree.hasFocus()
    _press(qtbot, panel, "m")  # nothing measured yet: says so, stores nothing
    assert panel.store.measurements("Q-00") == [] and "No measurement" in panel.status.text()
    _press(qtbot, panel, ".")
    assert panel.current_id == "Q-01" and window.model.image.path.endswith("q1.fits")
    _press(qtbot, panel, ",")
    assert panel.current_id == "Q-00"
    assert asked == []  # nothing was measured: no "unsaved changes?" on the way
    assert len(window.model.systems) == n_systems
    assert sorted(p.name for p in tmp_path.iterdir()) == ["img", "night3.csv", "night3.grades.sqlite",
                                                           "settings.ini"]  # no file the user did not ask for


def test_marks_without_a_stored_measurement_ask_before_moving_on(docked, qtbot):
    from tests.gui.conftest import click_image

    window, panel, asked = docked
    window.model.set_texts({"z_s": ""})  # no source redshift: the marks cannot become a measurement
    click_image(qtbot, window, 30, 24)
    panel.tree.setFocus()
    _press(qtbot, panel, ".")
    assert asked == [1]  # something was measured and is kept nowhere: the window asks (answer: cancel)
    assert window.model.image.path.endswith("q0.fits")


def test_a_measured_candidate_is_stored_and_the_next_opens_without_a_prompt(docked, qtbot):
    from lensmass.core.estimate import estimate
    from tests.gui.conftest import click_image

    window, panel, asked = docked
    for x, y in ((31, 24), (24, 31), (17, 24), (24, 17)):
        click_image(qtbot, window, x, y)
    window.model.set_result(0, estimate(1.4, 0.31, 1.2, samples=200, theta_e_err=0.05), None)
    panel.tree.setFocus()
    _press(qtbot, panel, ".")
    assert asked == [] and panel.current_id == "Q-01"
    assert len(panel.store.measurements("Q-00")) == 1  # the marks are kept in the store, with the candidate


def test_away_from_the_list_the_window_keys_still_work(docked, qtbot):
    window, panel, asked = docked
    n = len(window.model.systems)
    window.canvas.setFocus()
    qtbot.waitUntil(window.canvas.hasFocus, timeout=3000)
    qtbot.keyClick(window.canvas, "n")
    assert len(window.model.systems) == n + 1  # N = new arc system, as the help says
    assert panel.store.history() == []  # and the queue graded nothing


def test_a_full_disk_under_the_store_is_said_in_the_window(docked, qtbot, monkeypatch):
    from tests.io.test_store_full_disk import fill_the_disk

    window, panel, asked = docked
    _press(qtbot, panel, "2")
    fill_the_disk(monkeypatch)
    panel.note_edit.setText("n" * 400)
    for _ in range(200):
        panel.save_note()
        if "full" in panel.status.text():
            break
    text = panel.status.text()
    assert "is full" in text and "grades written before it are safe" in text and "went wrong" not in text
    monkeypatch.undo()
    assert panel.store.history("Q-00")[0]["grade"] == 2  # the grade before the full disk is kept
