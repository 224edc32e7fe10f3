"""The "Curves" panel: enclosed projected mass against radius (SIS, NFW) and the
Monte Carlo distribution of M(<theta_E), drawn with matplotlib.

Curves come from :mod:`lensmass.core.mass_profiles`; the panel only draws them.
It redraws when a new result arrives, never on display changes. matplotlib is
imported when the first result is drawn, so the window opens without waiting for it.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QTabWidget, QVBoxLayout, QWidget

from lensmass.core.errors import LensInputError
from lensmass.gui.model import WindowModel

SIS_COLOUR, NFW_COLOUR, POINT_COLOUR = "#2a9d8f", "#c77d2e", "#d1495b"


def _style_axes(ax, fg: str) -> None:
    ax.tick_params(colors=fg, labelsize=8)
    for spine in ax.spines.values():
        spine.set_color(fg)
    ax.xaxis.label.set_color(fg)
    ax.yaxis.label.set_color(fg)
    ax.title.set_color(fg)


def draw_mass_curves(ax, result: dict, halo_definition: str, cosmo=None, fg: str = "black") -> str | None:
    """Draw M_2D(<R) of SIS and NFW for ``result`` on ``ax``; returns a problem sentence or None."""
    from lensmass.core.mass_profiles import enclosed_mass_curves

    try:
        curves = enclosed_mass_curves(result, cosmo, halo_definition=halo_definition, band_draws=400)
    except LensInputError as exc:
        return str(exc)
    r = curves.radius_kpc
    ax.loglog(r, curves.sis_msun, color=SIS_COLOUR, lw=1.6, label="SIS")
    if curves.sis_p16 is not None:
        ax.fill_between(r, curves.sis_p16, curves.sis_p84, color=SIS_COLOUR, alpha=0.18, lw=0)
    if np.isfinite(curves.nfw_msun).any():
        ax.loglog(r, curves.nfw_msun, color=NFW_COLOUR, lw=1.6, ls="--", label="NFW halo alone")
        if curves.nfw_p16 is not None:
            ax.fill_between(r, curves.nfw_p16, curves.nfw_p84, color=NFW_COLOUR, alpha=0.15, lw=0)
    ax.plot([curves.einstein_radius_kpc], [curves.einstein_mass_msun], "D", mfc="none", mec=POINT_COLOUR,
            mew=1.5, ms=7, label="M(<theta_E)")
    ax.axvline(curves.einstein_radius_kpc, color=POINT_COLOUR, lw=0.6, alpha=0.5)
    ax.set_xlabel("projected radius R [kpc]", fontsize=8)
    ax.set_ylabel("M_2D(<R) [Msun]", fontsize=8)
    ax.legend(fontsize=7, frameon=False, labelcolor=fg)
    ax.grid(True, which="major", alpha=0.25)
    _style_axes(ax, fg)
    return None


def draw_mass_histogram(ax, result: dict, fg: str = "black") -> str | None:
    """Histogram of the Monte Carlo draws of M(<theta_E); a problem sentence when there are none."""
    from lensmass.core.mass_profiles import sample_histogram

    h = sample_histogram(result, "mass_einstein_msun")
    if h is None:
        return "No Monte Carlo draws: give an error on theta_E, z_l or z_s to see the mass distribution."
    ax.stairs(h.counts, h.edges, fill=True, color=SIS_COLOUR, alpha=0.55)
    for v, ls in ((h.median, "-"), (h.interval68[0], "--"), (h.interval68[1], "--")):
        ax.axvline(v, color=POINT_COLOUR, ls=ls, lw=1)
    if h.log_bins:
        ax.set_xscale("log")
    ax.set_xlabel("M(<theta_E) [Msun]", fontsize=8)
    ax.set_ylabel("draws", fontsize=8)
    ax.set_title(f"median {h.median:.3g}, 68% [{h.interval68[0]:.3g}, {h.interval68[1]:.3g}]", fontsize=8)
    _style_axes(ax, fg)
    return None


class PlotsPanel(QWidget):
    PANEL_TITLE = "Curves"

    def __init__(self, model: WindowModel, parent=None):
        super().__init__(parent)
        self.model = model
        self.tabs = QTabWidget()
        self.mass_figure = self.hist_figure = None
        self.mass_canvas = self.hist_canvas = None
        self._placeholders = [QLabel("No estimate yet."), QLabel("No estimate yet.")]
        for label, title in zip(self._placeholders, ("Enclosed mass", "Mass draws")):
            label.setAlignment(Qt.AlignCenter)
            label.setWordWrap(True)
            self.tabs.addTab(label, title)
        lay = QVBoxLayout(self)
        lay.setContentsMargins(2, 2, 2, 2)
        lay.addWidget(self.tabs)
        self._drawn_for = None
        self.problems: dict[str, str | None] = {}
        model.subscribe(self._on_model)

    def _ensure_figures(self) -> None:
        """Create the matplotlib figures on first use (imports matplotlib's Qt backend)."""
        if self.mass_figure is not None:
            return
        from matplotlib.backends.backend_qtagg import FigureCanvasQTAgg
        from matplotlib.figure import Figure

        self.mass_figure = Figure(figsize=(4.2, 2.6), dpi=96, layout="constrained")
        self.hist_figure = Figure(figsize=(4.2, 2.6), dpi=96, layout="constrained")
        self.mass_canvas = FigureCanvasQTAgg(self.mass_figure)
        self.hist_canvas = FigureCanvasQTAgg(self.hist_figure)
        current = self.tabs.currentIndex()
        self.tabs.clear()
        self.tabs.addTab(self.mass_canvas, "Enclosed mass")
        self.tabs.addTab(self.hist_canvas, "Mass draws")
        self.tabs.setCurrentIndex(current)

    def _on_model(self, topic: str) -> None:
        if topic == "result":
            self.redraw()

    def redraw(self) -> None:
        result = self.model.result
        if result is self._drawn_for and self.problems:
            return
        self._drawn_for = result
        if result is None and self.mass_figure is None:
            self.problems = {"mass": "No estimate yet.", "draws": "No estimate yet."}
            return
        self._ensure_figures()
        pal = self.palette()
        bg = pal.color(pal.ColorRole.Window).name()
        fg = pal.color(pal.ColorRole.WindowText).name()
        for fig, canvas, name in ((self.mass_figure, self.mass_canvas, "mass"),
                                  (self.hist_figure, self.hist_canvas, "draws")):
            fig.clear()
            fig.set_facecolor(bg)
            ax = fig.add_subplot(111)
            ax.set_facecolor(bg)
            if result is None:
                problem = "No estimate yet."
            elif name == "mass":
                try:
                    cosmo = self.model.session.cosmology.resolve()
                except LensInputError:
                    cosmo = None
                problem = draw_mass_curves(ax, result, self.model.session.halo_definition, cosmo, fg)
            else:
                problem = draw_mass_histogram(ax, result, fg)
            self.problems[name] = problem
            if problem:
                ax.clear()
                ax.set_axis_off()
                ax.text(0.5, 0.5, problem, ha="center", va="center", wrap=True, fontsize=8, color=fg,
                        transform=ax.transAxes)
            canvas.draw_idle()
