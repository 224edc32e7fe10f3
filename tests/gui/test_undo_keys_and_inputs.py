"""Redo from the keyboard, undo texts in words, a toolbar that keeps still, and the inputs laid out
without overlap at 1366 x 768 (the common practice smallest laptop screen the window is laid out for).

Driven as a user would: clicks on the image, keys pressed on the window, text typed into fields.
"""

import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import QRect, Qt  # noqa: E402
from PySide6.QtWidgets import QToolBar  # noqa: E402

from tests.gui.conftest import click_image, type_into  # noqa: E402
from tests.gui.test_window import ring_points  # noqa: E402


@pytest.mark.parametrize("platform", [["Ctrl+Shift+Z"], ["Ctrl+Y"], ["Ctrl+Y", "Alt+Shift+Backspace", "Ctrl+Shift+Z"],
                                      ["Ctrl+Shift+Z", "Ctrl+Shift+Z"]],
                         ids=["linux desktop", "windows", "generic", "doubled"])
def test_redo_keys_hold_both_keys_once_whatever_the_platform_binds(qapp, platform):
    from PySide6.QtGui import QKeySequence

    from lensmass.gui.undo_actions import redo_keys

    keys = [k.toString(QKeySequence.PortableText) for k in redo_keys(platform)]
    assert len(keys) == len(set(keys))
    assert {"Ctrl+Shift+Z", "Ctrl+Y"} <= set(keys)


def _bar_buttons(window) -> dict[str, QRect]:
    bar = window.findChild(QToolBar, "quick_bar")
    return {a.text(): bar.widgetForAction(a).geometry() for a in bar.actions() if bar.widgetForAction(a)}


def test_ctrl_shift_z_and_ctrl_y_both_redo_without_ambiguity(qtbot, qtlog, ring_window):
    window, truth = ring_window
    from PySide6.QtGui import QKeySequence

    # Each redo key is bound once, and no other action of the window claims it (no "ambiguous overload").
    keys = [k.toString(QKeySequence.PortableText) for k in window.act_redo.shortcuts()]
    assert sorted(keys) == sorted(set(keys)) and {"Ctrl+Shift+Z", "Ctrl+Y"} <= set(keys)
    others = [k.toString(QKeySequence.PortableText) for a in window.actions() if a is not window.act_redo
              for k in a.shortcuts()]
    assert not {"Ctrl+Shift+Z", "Ctrl+Y"} & set(others)
    for x, y in ring_points(truth, 3):
        click_image(qtbot, window, x, y)
    points = window.model.active_system.points
    assert len(points) == 3
    window.activateWindow()
    qtbot.keyClick(window.canvas, Qt.Key_Z, Qt.ControlModifier)
    qtbot.keyClick(window.canvas, Qt.Key_Z, Qt.ControlModifier)
    assert len(window.model.active_system.points) == 1
    qtbot.keyClick(window.canvas, Qt.Key_Z, Qt.ControlModifier | Qt.ShiftModifier)
    assert len(window.model.active_system.points) == 2
    qtbot.keyClick(window.canvas, Qt.Key_Y, Qt.ControlModifier)
    assert len(window.model.active_system.points) == 3
    assert window.model.active_system.points == points
    assert not [r.message for r in qtlog.records if "mbiguous" in r.message]  # Qt's "Ambiguous shortcut overload"


def test_undo_names_the_edit_in_words_and_the_toolbar_keeps_still(qtbot, ring_window):
    window, truth = ring_window
    before = _bar_buttons(window)
    assert {"Undo", "Redo"} <= set(before)
    type_into(qtbot, window, "z_s_err", "0.05")
    # words from the key registry (z_s: "source redshift"), never the internal key z_s_err
    assert window.act_undo.text().replace("&", "") == "Undo: source redshift error"
    assert "z_s_err" not in window.act_undo.text()
    click_image(qtbot, window, *ring_points(truth, 1)[0])
    assert window.act_undo.text().replace("&", "") == "Undo: add arc point"
    window.act_undo.trigger()
    assert window.act_redo.text().replace("&", "") == "Redo: add arc point"
    after = _bar_buttons(window)
    assert after == before  # same labels, same places, same widths
    bar = window.findChild(QToolBar, "quick_bar")
    undo_button = bar.widgetForAction(window.undo_actions.bar_undo)
    assert undo_button.toolTip().startswith("Undo: source redshift error")
    assert undo_button.isEnabled()


def _input_widgets(window):
    """The visible fields, choices and texts of the inputs panel (not the parts inside a spin box)."""
    from PySide6.QtWidgets import QAbstractSpinBox, QComboBox, QLabel, QLineEdit

    panel = window.inputs_panel
    found = [w for cls in (QLineEdit, QComboBox, QAbstractSpinBox, QLabel) for w in panel.findChildren(cls)
             if w.isVisible() and (not isinstance(w, QLabel) or w.text())]
    return [w for w in found if not any(o is not w and o.isAncestorOf(w) for o in found)]


def _rect(w, panel) -> QRect:
    return QRect(w.mapTo(panel, w.rect().topLeft()), w.size())


def _assert_laid_out(window) -> None:
    panel = window.inputs_panel
    rects = [(w, _rect(w, panel)) for w in _input_widgets(window)]
    for i, (a, ra) in enumerate(rects):
        for b, rb in rects[i + 1:]:
            assert not ra.intersects(rb), f"{a.objectName() or a.text()!r} overlaps {b.objectName() or b.text()!r}"
    for key, f in panel.fields.items():
        if f.problem.isVisible():  # the whole problem is shown: its label is as tall as its wrapped text
            assert f.problem.height() >= f.problem.heightForWidth(f.problem.width()), key
    # a value and its error stay on one line, whatever problem either shows
    for a, b in (("z_l", "z_l_err"), ("z_s", "z_s_err")):
        assert _rect(panel.fields[a].edit, panel).top() == _rect(panel.fields[b].edit, panel).top()


def test_input_problems_never_overlap_the_next_row_at_1366_by_768(qtbot, ring_window):
    window, _truth = ring_window
    window.resize(1366, 768)
    qtbot.wait(50)
    panel = window.inputs_panel
    type_into(qtbot, window, "z_s_err", "abc")  # one long problem under the narrow error field
    qtbot.wait(50)
    assert panel.fields["z_s_err"].problem.isVisible()
    _assert_laid_out(window)
    problem, cosmology = panel.fields["z_s_err"].problem, panel.cosmology
    assert _rect(problem, panel).bottom() < _rect(cosmology, panel).top()
    # Every typed field wrong at once (the custom cosmology and fixed concentration fields shown too).
    from lensmass.gui.model import CUSTOM_COSMOLOGY

    window.model.set_choice(cosmology=CUSTOM_COSMOLOGY, concentration="fixed")
    for key in panel.fields:
        type_into(qtbot, window, key, "abc")
    qtbot.wait(50)
    shown = [k for k, f in panel.fields.items() if f.problem.isVisible()]
    assert {"z_l", "z_l_err", "z_s", "z_s_err", "h0", "om0"} <= set(shown)
    _assert_laid_out(window)
