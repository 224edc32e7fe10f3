"""The window's "Curves" plots are drawn by the report's own drawing functions (one piece of code for
the screen and the page), in the window's palette (offscreen Qt, the window driven as a user would).

Outside reference: M(<theta_E) = (c^2 / 4G) (D_l D_s / D_ls) theta_E^2 (Narayan & Bartelmann 1996,
arXiv:astro-ph/9606001, eq. 20) with astropy's Planck18 distances, for the Einstein point on the curve.
"""

from __future__ import annotations

import pytest

pytest.importorskip("PySide6")

from tests.gui.test_window import astropy_einstein_mass_msun, enter_redshifts, mark_ring  # noqa: E402
from tests.gui.conftest import type_into, wait_for_result, wait_idle  # noqa: E402


def test_curves_on_screen_come_from_the_report_drawing(ring_window, qtbot, monkeypatch):
    import lensmass.io.report as report

    calls = []
    for name in ("draw_mass_curves", "draw_sample_histogram"):
        original = getattr(report, name)

        def spy(ax, *args, _original=original, _name=name, **kwargs):
            calls.append((_name, ax, kwargs.get("look")))
            return _original(ax, *args, **kwargs)

        monkeypatch.setattr(report, name, spy)
    window, truth = ring_window
    mark_ring(qtbot, window, truth)
    enter_redshifts(qtbot, window, truth["z_l"], truth["z_s"])
    type_into(qtbot, window, "z_l_err", "0.01")
    result = wait_for_result(qtbot, window)
    wait_idle(qtbot, window)
    qtbot.waitUntil(lambda: window.plots_panel.problems.get("draws") is None
                    and window.plots_panel.problems.get("mass") is None, timeout=10000)
    panel = window.plots_panel
    mass_ax, hist_ax = panel.mass_figure.axes[0], panel.hist_figure.axes[0]
    drawn = {name: (ax, look) for name, ax, look in calls}
    assert drawn["draw_mass_curves"][0] is mass_ax and drawn["draw_sample_histogram"][0] is hist_ax
    # in the window's palette, not the page's ink
    fg = panel.palette().color(panel.palette().ColorRole.WindowText).name()
    assert drawn["draw_mass_curves"][1].ink == fg

    # What the user sees: the report's legend, axis labels and the Einstein point at M(<theta_E).
    labels = [t.get_text() for t in mass_ax.get_legend().get_texts()]
    assert labels[:2] == ["SIS", "NFW halo alone"]
    assert mass_ax.get_xlabel() == "projected radius R [kpc]"
    point = [c for c in mass_ax.containers if hasattr(c, "lines")][0].lines[0]
    assert float(point.get_ydata()[0]) == pytest.approx(result["mass_einstein_msun"], rel=1e-9)
    assert result["mass_einstein_msun"] == pytest.approx(
        astropy_einstein_mass_msun(result["theta_e_arcsec"], result["z_l"], result["z_s"]), rel=2e-3)
    texts = " ".join(t.get_text() for t in hist_ax.texts)
    assert "draws" in texts and "median" in texts and "68%" in texts


def test_report_drawing_alone_keeps_the_page_look():
    """Without a look the functions draw in the page's ink (the report's own tests check the page)."""
    from matplotlib.figure import Figure

    from lensmass.core.estimate import estimate
    from lensmass.core.mass_profiles import enclosed_mass_curves
    from lensmass.io.report import INK, PAGE_INK, draw_mass_curves

    result = estimate(1.2, 0.3, 1.1, theta_e_err=0.05, samples=300)
    ax = Figure().add_subplot(111)
    draw_mass_curves(ax, enclosed_mass_curves(result, n=40, band_draws=100))
    assert PAGE_INK.ink == INK and ax.xaxis.label.get_color() == INK


def test_einstein_point_outside_the_draws_interval_still_draws():
    """A nominal mass outside the 68% interval of few, skewed draws (seen in the window) must not break
    the drawing: matplotlib's errorbar refuses negative error lengths (matplotlib documentation)."""
    from matplotlib.figure import Figure

    from lensmass.core.estimate import estimate
    from lensmass.core.mass_profiles import enclosed_mass_curves
    from lensmass.io.report import draw_mass_curves

    result = estimate(1.2, 0.3, 1.1, theta_e_err=0.05, samples=300)
    curves = enclosed_mass_curves(result, n=40, band_draws=100)
    m = curves.einstein_mass_msun
    ax = Figure().add_subplot(111)
    draw_mass_curves(ax, curves, interval68=(1.1 * m, 1.3 * m))  # the point below the whole interval
    bar = [c for c in ax.containers if hasattr(c, "lines")][0]
    segment = bar.lines[2][0].get_segments()[0]
    assert segment[:, 1].min() == pytest.approx(m) and segment[:, 1].max() == pytest.approx(1.3 * m)
