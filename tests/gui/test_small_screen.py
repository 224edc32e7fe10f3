"""Everything of the triage and shear docks is reachable at 1366 x 768, and the window opens on the screen.

"Reachable" here: each control lies wholly inside the visible part of its dock (no scrolling, no clipping),
and the dock inside the window. 1366 x 768 is the common practice smallest laptop screen the window is
laid out for.
"""

import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import QRect, QSize, Qt  # noqa: E402

from tests.gui.conftest import DEMO_DIR  # noqa: E402
from tests.gui.test_triage import queue  # noqa: E402,F401  (fixture: three invented candidates)

SCREEN = (1366, 768)


def _dock_of(window, panel):
    from PySide6.QtWidgets import QDockWidget

    w = panel
    while w is not None and not isinstance(w, QDockWidget):
        w = w.parentWidget()
    return w


def _shown_whole(widget, window) -> bool:
    """The widget's rectangle is inside its scroll area's viewport and inside the window."""
    from PySide6.QtWidgets import QScrollArea

    if not widget.isVisible():
        return False
    area = widget
    while area is not None and not isinstance(area, QScrollArea):
        area = area.parentWidget()
    rect = QRect(widget.mapTo(window, widget.rect().topLeft()), widget.size())
    if area is not None:
        port = area.viewport()
        visible = QRect(port.mapTo(window, port.rect().topLeft()), port.size())
        if not visible.contains(rect):
            return False
    return window.rect().contains(rect)


@pytest.fixture
def small(make_window, qtbot):
    from lensmass.gui.shear_panel import ShearPanel
    from lensmass.gui.triage_panel import TriagePanel

    window = make_window(load_panels=True)
    window.resize(*SCREEN)
    qtbot.waitUntil(lambda: any(isinstance(p, TriagePanel) for p in window.panels), timeout=10000)
    qtbot.wait(100)  # the docks are sized once the window has its size
    triage = next(p for p in window.panels if isinstance(p, TriagePanel))
    shear = next(p for p in window.panels if isinstance(p, ShearPanel))
    return window, triage, shear


def test_the_triage_dock_shows_its_columns_and_every_button(small, queue, qtbot):  # noqa: F811
    window, panel, _ = small
    assert panel.open_queue(queue)
    _dock_of(window, panel).raise_()
    qtbot.wait(50)
    controls = [panel.open_button, panel.grader_edit, panel.store_edit, panel.filter_box, panel.tree,
                *panel.grade_buttons, panel.flag_button, panel.note_edit, panel.measure_button,
                panel.export_button, panel.grading_button]
    hidden = [c.text() if hasattr(c, "text") else type(c).__name__ for c in controls if not _shown_whole(c, window)]
    assert hidden == []
    header = panel.tree.header()
    for col in range(header.count()):  # every column wholly visible, no sideways scrolling
        assert header.sectionViewportPosition(col) + header.sectionSize(col) <= panel.tree.viewport().width()
    assert panel.grading_button.text() == "Grade a class..."


def test_the_shear_dock_shows_its_plot_and_numbers(small, qtbot):
    from PySide6.QtCore import QTimer

    window, _, panel = small
    assert window.open_path(str(DEMO_DIR / "tris_cluster_d.fits"))
    dialog = panel.column_dialog(str(DEMO_DIR / "tris_cluster_d_shear.fits"))
    QTimer.singleShot(0, dialog.accept)
    assert panel.open_catalog(str(DEMO_DIR / "tris_cluster_d_shear.fits"), dialog)
    truth_centre = window.model.image.data.shape[1] / 2, window.model.image.data.shape[0] / 2
    ra, dec = window.model.image.loaded.wcs.pixel_to_world_values(*truth_centre)
    panel.centre_edit.setText(f"{float(ra)}, {float(dec)}")
    panel.zl_edit.setText("0.35")
    _dock_of(window, panel).raise_()
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: panel.output is not None, timeout=60000)
    qtbot.wait(50)
    assert "NFW M200" in panel.results.text()
    for control in (panel.run_button, panel.plot, panel.results):
        assert _shown_whole(control, window), type(control).__name__
    assert panel.plot.height() >= 150  # a plot one can read, not a sliver


def test_the_window_opens_inside_a_small_screen():
    from lensmass.gui.dock_layout import initial_window_rect

    available = QRect(0, 0, 1366, 730)  # a 1366 x 768 screen less a 38 px task bar
    rect = initial_window_rect(available, QSize(1360, 860))
    assert available.contains(rect) and rect.height() <= 730 - 40 and rect.width() <= 1366 - 16
    big = QRect(0, 0, 2560, 1440)
    assert initial_window_rect(big, QSize(1360, 860)).size() == QSize(1360, 860)
