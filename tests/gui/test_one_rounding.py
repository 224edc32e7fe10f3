"""One rounding of theta_E (and of every number with an interval) in the window, the report and the command
line, and one lens centre on the sky in all three.

Outside references: the rule quotes an uncertainty to two significant figures and its value to the same
decimal place (common practice; Taylor J. R. 1997, An Introduction to Error Analysis, 2nd ed., sec. 2.2);
the centre's RA/Dec is checked against astropy's own WCS transform of the FITS header and its sexagesimal
spelling against astropy's SkyCoord.to_string('hmsdms').
"""

from __future__ import annotations

import re

import numpy as np
import pytest

pytest.importorskip("PySide6")

from lensmass.cli import main  # noqa: E402
from tests.gui.conftest import click_image, demo_field, type_into, wait_for_result, wait_idle  # noqa: E402


def _row(table: str, label: str) -> tuple[str, str]:
    """(value, interval) of a row of the command line's table."""
    for line in table.splitlines():
        if line.startswith(label + " "):
            rest = line[14:]
            value = rest[:12].strip()
            interval = rest[12:].strip()
            m = re.match(r"(\[[^\]]*\])", interval)
            return value, m.group(1) if m else ""
    raise AssertionError(f"no row {label!r} in\n{table}")


def test_window_report_and_command_line_write_the_same_numbers(qtbot, make_window, tmp_path, capsys, monkeypatch):
    from lensmass.io import report

    image, truth = demo_field("tris_ring_a")
    w = make_window()
    assert w.open_path(str(image))
    w.canvas.fit_to_window()
    for x, y in truth["arc_points_xy"][::6]:
        click_image(qtbot, w, x, y)
    type_into(qtbot, w, "z_l", "0.3")
    type_into(qtbot, w, "z_s", "1.2")
    result = wait_for_result(qtbot, w)
    wait_idle(qtbot, w)
    result = w.model.result
    fit = w.model.fit
    panel = w.results_panel

    # the window: Mass budget rows and the fit label under the systems list
    win_theta = panel.values["theta_e_arcsec"].text(), panel.intervals["theta_e_arcsec"].text()
    win_mass = panel.values["mass_einstein_msun"].text(), panel.intervals["mass_einstein_msun"].text()
    # the rule: error to 2 significant figures, value to the same decimal
    err = fit.theta_e_err_arcsec
    decimals = 1 - int(np.floor(np.log10(err)))
    assert win_theta[0] == f"{fit.theta_e_arcsec:.{decimals}f}"
    assert f"{fit.theta_e_arcsec:.{decimals}f} ± {err:.{decimals}f}" in w.fit_label.text()

    # the model note in words: where the window lists the models, never a JSON key
    assert "point at a row to see the model" in panel.notes.text() and "'models'" not in panel.notes.text()
    assert all(models_text in panel.names[key].toolTip() for key, models_text in result["models"].items()
               if key in panel.names and key != "theta_e_arcsec")

    # the command line on the same marks, redshifts and Monte Carlo draws
    csv = tmp_path / "marks.csv"
    csv.write_text("x,y\n" + "\n".join(f"{x},{y}" for x, y in w.model.active_system.points) + "\n")
    code = main(["measure", str(image), "--points", str(csv), "--zl", "0.3", "--zs", "1.2",
                 "--samples", str(result["mc_samples"]), "--seed", str(result["mc_seed"])])
    out, err_text = capsys.readouterr()
    assert code == 0, err_text
    assert _row(out, "theta_E") == win_theta
    assert _row(out, "M(<theta_E)") == win_mass
    assert _row(out, "theta_E err")[0] == f"{err:.{decimals}f}"

    # the report page of the same system
    texts: list[str] = []
    original = report.report_figure

    def spy(*args, **kwargs):
        fig = original(*args, **kwargs)
        texts.extend(t.get_text() for ax in fig.axes for t in ax.texts)
        return fig

    monkeypatch.setattr(report, "report_figure", spy)
    assert w.export_report(str(tmp_path / "page.pdf")) is not None
    assert win_theta[0] in texts and win_theta[1] in texts
    mant, power = re.fullmatch(r"([\d.]+)e\+(\d+)", win_mass[0]).groups()
    assert f"${mant}\\times10^{{{int(power)}}}$" in texts
    assert f"{fit.theta_e_arcsec:.{decimals}f} ± {err:.{decimals}f} arcsec" in texts  # the inputs' measured line
    assert not any("'models'" in t for t in texts) and "'models'" not in out

    # one lens centre: the window's line, the command line's line and the report's rows agree with astropy
    from astropy.coordinates import SkyCoord
    from astropy.io import fits
    from astropy.wcs import WCS

    centre_line = next(line for line in out.splitlines() if line.startswith("lens centre: "))
    assert panel.centre.text() == "Lens centre: " + centre_line[len("lens centre: "):]
    sky = WCS(fits.getheader(image)).pixel_to_world(result["center_x"], result["center_y"])
    assert result["center_ra"] == pytest.approx(sky.ra.deg, abs=1e-9)
    assert result["center_dec"] == pytest.approx(sky.dec.deg, abs=1e-9)
    hms = SkyCoord(sky.ra, sky.dec).to_string("hmsdms", sep=":", precision=1).split()[1]
    assert hms in centre_line  # the declination, to 0.1 arcsec
    assert "centre of the circle fitted to the arc points" in centre_line
    assert any(hms in t for t in texts) and "which centre" in texts
