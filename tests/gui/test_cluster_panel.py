"""The "Mass, gas and light" dock driven as a user would (offscreen Qt, real window)."""

import json

import numpy as np
import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402

from tests.gui.conftest import DEMO_DIR  # noqa: E402


@pytest.fixture
def panel_and_window(make_window, qtbot):
    from lensmass.gui.cluster_panel import ClusterPanel

    w = make_window(load_panels=True)
    qtbot.waitUntil(lambda: any(isinstance(p, ClusterPanel) for p in w.panels), timeout=10000)
    return w, next(p for p in w.panels if isinstance(p, ClusterPanel))


def test_bad_inputs_give_one_sentence(panel_and_window, qtbot, tmp_path):
    w, panel = panel_and_window
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    assert panel.status.text() == "Name a shear catalogue first."
    panel.shear_edit.setText(str(tmp_path / "nothing.fits"))
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    assert panel.status.text() == "Type the cluster redshift z_l."
    qtbot.keyClicks(panel.zl_edit, "0.29")
    panel.aperture_edit.setText("wide")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    assert panel.status.text() == "The aperture radius must be a number, got 'wide'."
    panel.aperture_edit.setText("250")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: not w.tasks.busy, timeout=30000)
    assert "nothing.fits" in panel.status.text() and "\n" not in panel.status.text()
    assert panel.output is None and not panel.export_button.isEnabled()


def test_demo_collision_located_with_tables_and_export(panel_and_window, qtbot, tmp_path):
    # The invented TRIS colliding-cluster field: the user fills in the demo, opens the optical image,
    # lowers the resamplings to keep the test quick, and runs. Checks against the field's truth file.
    w, panel = panel_and_window
    path = DEMO_DIR / "tris_collide_e_optical.fits"
    assert w.open_path(str(path))
    qtbot.mouseClick(panel.demo_button, Qt.LeftButton)
    assert panel.shear_edit.text().endswith("tris_collide_e_shear.fits") and panel.zl_edit.text() == "0.29"
    panel.resamples_edit.setText("40")
    panel.noise_edit.setText("10")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: panel.output is not None, timeout=240000)
    truth = json.loads((DEMO_DIR / "tris_collide_e.truth.json").read_text())
    result = panel.output["result"]
    assert len(result["mass_peaks"]) >= 2 and len(result["gas_peaks"]) == 2
    # each true gas clump is within 3" of a measured gas peak (X-ray counts are plentiful)
    for g in truth["gas"]:
        assert min(np.hypot(p["x_arcsec"] - g["x_arcsec"], p["y_arcsec"] - g["y_arcsec"])
                   for p in result["gas_peaks"]) < 3.0
    # what the user sees: offsets rows (mass-gas, mass-light), one budget column per mass peak
    assert panel.offsets_table.rowCount() >= 2
    assert panel.offsets_table.item(0, 0).text().startswith("M1 - ")
    assert panel.budget_table.columnCount() == 1 + len(result["mass_peaks"])
    labels = [panel.budget_table.item(i, 0).text() for i in range(panel.budget_table.rowCount())]
    assert "baryon fraction" in labels and "dark fraction" in labels
    ax = panel.figure.axes[0]
    assert len(ax.collections) >= 2  # mass and gas contour sets
    assert len(ax.images) == 1  # the optical image under the contours
    assert panel.export(str(tmp_path / "c.ecsv")) and panel.export(str(tmp_path / "c.json"))
    assert json.loads((tmp_path / "c.json").read_text())["kind"] == "cluster_components"
    state = panel.panel_state(tmp_path)
    assert state["shear_edit"]["absolute_path"].endswith("tris_collide_e_shear.fits")


def test_cancel_leaves_the_panel_as_it_was(panel_and_window, qtbot):
    w, panel = panel_and_window
    assert panel.fill_demo()
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    w.tasks.cancel()
    qtbot.waitUntil(lambda: not w.tasks.busy, timeout=60000)
    assert panel.output is None and not panel.export_button.isEnabled()
    assert panel.shear_edit.text().endswith("tris_collide_e_shear.fits")  # the inputs are kept
