"""The "Weak-lensing shear" panel driven as a user would (offscreen Qt, real window)."""

import json

import numpy as np
import pytest

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt, QTimer  # noqa: E402

from tests.gui.conftest import DEMO_DIR, click_image, demo_field  # noqa: E402

CATALOG = DEMO_DIR / "tris_cluster_d_shear.fits"


@pytest.fixture
def cluster(make_window, qtbot):
    """The real window with its registered panels, on the cluster demo image; returns (window, panel, truth)."""
    from lensmass.gui.shear_panel import ShearPanel

    w = make_window(load_panels=True)
    # the window may build its extra panels just after the first paint
    qtbot.waitUntil(lambda: any(isinstance(p, ShearPanel) for p in w.panels), timeout=10000)
    path, truth = demo_field("tris_cluster_d")
    assert w.open_path(str(path))
    w.canvas.fit_to_window()
    panels = [p for p in w.panels if isinstance(p, ShearPanel)]
    return w, panels[0], truth


def _accept_soon(dialog):
    QTimer.singleShot(0, dialog.accept)


def _load(panel):
    dialog = panel.column_dialog(str(CATALOG))
    _accept_soon(dialog)
    assert panel.open_catalog(str(CATALOG), dialog)
    return dialog


def test_column_dialog_previews_rows_and_guesses_roles(cluster):
    w, panel, truth = cluster
    dialog = panel.column_dialog(str(CATALOG))
    assert dialog.preview.rowCount() == 6
    assert dialog.preview.columnCount() == len(dialog.column_names)
    assert dialog.mapping() == {"ra": "RA", "dec": "DEC", "e1": "E1", "e2": "E2", "weight": "WEIGHT", "z": "Z_PHOT"}
    dialog.combos["weight"].setCurrentText("(none)")
    dialog.flip_e2.setChecked(True)
    _accept_soon(dialog)
    assert panel.open_catalog(str(CATALOG), dialog)
    assert "weight" not in panel.columns and panel.flips == (False, True)


def test_pick_centre_on_image_then_measure(cluster, qtbot):
    w, panel, truth = cluster
    _load(panel)
    qtbot.mouseClick(panel.pick_button, Qt.LeftButton)
    assert w.canvas.click_owner == "shear_panel"
    click_image(qtbot, w, truth["center_x"], truth["center_y"])
    ra, dec = (float(v) for v in panel.centre_edit.text().split(","))
    # the demo truth file gives the centre's sky position (astropy WCS of the image); a click lands within a pixel
    assert ra == pytest.approx(truth["center_ra"], abs=2e-4) and dec == pytest.approx(truth["center_dec"], abs=2e-4)
    assert w.canvas.click_owner is None
    panel.centre_edit.setText(f"{truth['center_ra']}, {truth['center_dec']}")
    panel.zl_edit.setText("0.35")
    panel.rmin_edit.setText("1")
    panel.rmax_edit.setText("10")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: panel.output is not None, timeout=60000)
    result = panel.output["result"]
    shear_truth = json.loads((DEMO_DIR / "tris_cluster_d_shear.truth.json").read_text())
    lo, hi = result["intervals95"]["nfw_m200_msun"]
    assert lo < shear_truth["lens_mass_model"]["m200_msun"] < hi
    assert "NFW M200" in panel.results.text() and "zeta mass" in panel.results.text()
    ax = panel.figure.axes[0]
    assert len(ax.lines) >= 2 and len(ax.containers) == 2  # SIS and NFW curves; two error-bar sets
    assert any(len(lines) for _, lines in panel.output["contours"])
    assert "shear_kappa_contours" in w.canvas._layers
    w.canvas.grab()  # paints the contour layer without error


def test_bad_inputs_give_one_sentence(cluster, qtbot):
    w, panel, truth = cluster
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    assert panel.status.text() == "Load a shape catalogue first."
    _load(panel)
    panel.centre_edit.setText("north of the cluster")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    assert "The centre must be RA, Dec in degrees" in panel.status.text()
    panel.centre_edit.setText(f"{truth['center_ra']}, {truth['center_dec']}")
    panel.zl_edit.setText("0.35")
    panel.zs_edit.setText("0.2")  # a source in front of the lens: the core's one sentence comes back
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: not w.tasks.busy, timeout=30000)
    assert "not behind the lens" in panel.status.text()
    assert panel.output is None


def test_cancel_keeps_previous_state(cluster, qtbot):
    w, panel, truth = cluster
    _load(panel)
    panel.centre_edit.setText(f"{truth['center_ra']}, {truth['center_dec']}")
    panel.zl_edit.setText("0.35")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    w.tasks.cancel()
    qtbot.waitUntil(lambda: not w.tasks.busy, timeout=30000)
    assert panel.output is None or np.isfinite(panel.output["result"]["nfw_m200_msun"])


def test_undetected_halo_shows_upper_limits(cluster, qtbot, tmp_path):
    # a 1e14 Msun halo at z_l = 0.7 behind 20 galaxies per arcmin^2 (seeded simulation, core.shear_simulation):
    # the data do not detect it, so the panel shows the significance and upper limits, not medians
    from astropy.cosmology import Planck18
    from astropy.table import Table

    from lensmass.core.shear_simulation import simulate_shear_catalog

    w, panel, truth = cluster
    cat = simulate_shear_catalog(center_ra=150.0, center_dec=2.0, z_l=0.7, cosmo=Planck18, field_arcsec=1200.0,
                                 density_per_arcmin2=20.0, m200_msun=1e14, seed=1003)
    path = tmp_path / "faint.csv"
    Table({"RA": cat["ra"], "DEC": cat["dec"], "E1": cat["e1"], "E2": cat["e2"], "Z_PHOT": cat["z"]}).write(path)
    dialog = panel.column_dialog(str(path))
    _accept_soon(dialog)
    assert panel.open_catalog(str(path), dialog)
    panel.centre_edit.setText("150.0, 2.0")
    panel.zl_edit.setText("0.7")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: panel.output is not None, timeout=60000)
    text = panel.results.text()
    assert "NOT detected" in text
    limit = panel.output["result"]["nfw_m200_upper95_msun"]
    assert limit > 1e14 and "NFW M200 < " in text and "(95% upper limit)" in text
