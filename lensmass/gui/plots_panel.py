"""The "Curves" panel: enclosed projected mass against radius (SIS, NFW) and the
Monte Carlo distribution of M(<theta_E), drawn with matplotlib.

Curves come from :mod:`lensmass.core.mass_profiles`; they are drawn by the report's
own functions (:mod:`lensmass.io.report`) in the window's palette, so the plot on
screen and on the page are one piece of code.
It redraws when a new result arrives, never on display changes. matplotlib is
imported when the first result is drawn, so the window opens without waiting for it.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QTabWidget, QVBoxLayout, QWidget

from lensmass.core.errors import LensInputError
from lensmass.gui.model import WindowModel

#: Text on screen a little larger than on the A4 page (the panel is about the same size in inches
#: but is read from further away).
SCREEN_TEXT_SCALE = 1.2
NO_DRAWS = "No Monte Carlo draws: give an error on theta_E, z_l or z_s to see the mass distribution."


def _mix(a: str, b: str, t: float) -> str:
    """The colour ``t`` of the way from ``a`` to ``b`` (hex colours)."""
    ca, cb = (tuple(int(c[i:i + 2], 16) for i in (1, 3, 5)) for c in (a, b))
    return "#" + "".join(f"{round(x + (y - x) * t):02x}" for x, y in zip(ca, cb))


def screen_look(fg: str, bg: str):
    """The report's plot style in the window's palette (light or dark)."""
    from lensmass.io.report import PlotInk

    return PlotInk(ink=fg, muted=_mix(fg, bg, 0.35), rule=_mix(fg, bg, 0.8), paper=bg, text_scale=SCREEN_TEXT_SCALE)


def draw_result_plot(ax, name: str, result: dict, halo_definition: str, cosmo, look) -> str | None:
    """Draw plot ``name`` ("mass" or "draws") of ``result`` with the report's drawing functions
    (:func:`lensmass.io.report.draw_mass_curves`, :func:`~lensmass.io.report.draw_sample_histogram`),
    so the screen and the page are one drawing. Returns a problem sentence instead when it cannot."""
    from lensmass.core.mass_profiles import enclosed_mass_curves, sample_histogram
    from lensmass.io.report import draw_mass_curves, draw_sample_histogram

    if name == "mass":
        try:
            curves = enclosed_mass_curves(result, cosmo, halo_definition=halo_definition, band_draws=400)
        except LensInputError as exc:
            return str(exc)
        draw_mass_curves(ax, curves, interval68=(result.get("intervals68") or {}).get("mass_einstein_msun"),
                         look=look)
        return None
    hist = sample_histogram(result, "mass_einstein_msun")
    if hist is None:
        return NO_DRAWS
    draw_sample_histogram(ax, hist, look=look)
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
        look = screen_look(fg, bg)
        try:
            cosmo = self.model.session.cosmology.resolve()
        except LensInputError:
            cosmo = None
        for fig, canvas, name in ((self.mass_figure, self.mass_canvas, "mass"),
                                  (self.hist_figure, self.hist_canvas, "draws")):
            fig.clear()
            fig.set_facecolor(bg)
            ax = fig.add_subplot(111)
            ax.set_facecolor(bg)
            if result is None:
                problem = "No estimate yet."
            else:
                problem = draw_result_plot(ax, name, result, self.model.session.halo_definition, cosmo, look)
            self.problems[name] = problem
            if problem:
                ax.clear()
                ax.set_axis_off()
                ax.text(0.5, 0.5, problem, ha="center", va="center", wrap=True, fontsize=8 * SCREEN_TEXT_SCALE,
                        color=fg, transform=ax.transAxes)
            canvas.draw_idle()
