"""DEVELOPERS.md "How to add a mass model" in the window: a newly registered key shows in the
"Mass budget" panel, in the copied text and in the window's ECSV export, with its unit.

Outside source for the toy number: it is defined as half of pi Sigma_cr R_E^2, and the panel must
show exactly what the core computed (astropy reads the unit back from the exported ECSV).
"""

import pytest

pytest.importorskip("PySide6")

from tests.gui.conftest import wait_for_result  # noqa: E402
from tests.gui.test_window import enter_redshifts, mark_ring  # noqa: E402
from tests.test_result_keys import toy_key  # noqa: E402,F401 (fixture)


def test_a_registered_key_shows_in_the_window_and_its_export(qtbot, make_window, toy_key, tmp_path):  # noqa: F811
    from astropy.table import Table

    from lensmass.core.result_text import format_number
    from tests.gui.conftest import demo_field

    window = make_window()  # built after the key is registered, as a window started after the change
    path, truth = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    mark_ring(qtbot, window, truth)
    enter_redshifts(qtbot, window, truth["z_l"], truth["z_s"])
    result = wait_for_result(qtbot, window)
    assert result["toy_core_mass_msun"] == pytest.approx(0.5 * result["mass_einstein_msun"], rel=1e-12)
    panel = window.results_panel
    qtbot.waitUntil(lambda: panel.values["toy_core_mass_msun"].text() != "–", timeout=10000)
    assert panel.values["toy_core_mass_msun"].text() == format_number(result["toy_core_mass_msun"])
    assert "M<sub>toy</sub>" in panel.names["toy_core_mass_msun"].text()
    assert "toy M_core" in window.copy_results()
    table = Table.read(window.export_results(str(tmp_path / "r.ecsv")), format="ascii.ecsv")
    assert str(table["toy_core_mass_msun"].unit) == "solMass"
    assert table["toy_core_mass_msun"][0] == pytest.approx(result["toy_core_mass_msun"])
