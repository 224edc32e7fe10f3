"""The drawings the report page shares with the window: the image cutout with its marks and
scale bar, the enclosed-mass curves of the SIS and NFW models, and the Monte Carlo histogram.

They draw onto any matplotlib Axes (object API, no pyplot state, no Qt), so the plot on
screen and on paper are one.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.io.mark_palette import CENTRE_COLOUR, system_colour  # noqa: F401  (CENTRE_COLOUR: report names)
from lensmass.io.report_format import _finite, _mathtext_safe, _power

#: Our palette: ink, muted ink, accent for the SIS, accent for the NFW; marks on the image come from
#: lensmass.io.mark_palette (the window's look: the first arc system's colour, the lens centre's).
INK, MUTED, RULE = "#1d2433", "#5b6477", "#c9ced8"
SIS_COLOUR, NFW_COLOUR = "#1f6f8b", "#c0552b"
POINT_COLOUR = FIT_COLOUR = system_colour(0)


@dataclass
class Overlay:
    """What is drawn over the cutout, in full-image pixel coordinates (0-based, x right, y up).

    ``origin_px`` is the full-image pixel of ``cutout[0, 0]``; ``ellipse_px`` is
    (x0, y0, semi-major, semi-minor, angle in degrees counter-clockwise from +x).
    """

    pixel_scale_arcsec: float
    centre_px: tuple[float, float] | None = None
    points_px: Sequence[tuple[float, float]] = ()
    images_px: Sequence[tuple[float, float]] = ()
    circle_px: tuple[float, float, float] | None = None
    ellipse_px: tuple[float, float, float, float, float] | None = None
    origin_px: tuple[float, float] = (0.0, 0.0)
    label: str = ""
    system: int = 0  # which arc system (its colour in lensmass.io.mark_palette)


def cutout(image: np.ndarray, centre_px: tuple[float, float], half_size_px: int) -> tuple[np.ndarray, tuple[int, int]]:
    """A square cutout around ``centre_px`` clipped to the image, and its origin (x, y).

    Examples
    --------
    >>> img = np.arange(100.0).reshape(10, 10)
    >>> c, origin = cutout(img, (2.2, 7.9), 3)
    >>> c.shape, origin
    ((5, 6), (0, 5))
    """
    data = np.asarray(image, float)
    if data.ndim != 2 or data.size == 0:
        raise LensInputError("The report needs a two-dimensional image: pick one plane of the cube.")
    half = max(int(half_size_px), 1)
    cx, cy = int(round(centre_px[0])), int(round(centre_px[1]))
    x0, y0 = max(cx - half, 0), max(cy - half, 0)
    x1, y1 = min(cx + half + 1, data.shape[1]), min(cy + half + 1, data.shape[0])
    if x1 <= x0 or y1 <= y0:
        raise LensInputError("The lens centre lies outside the image: set the centre inside it.")
    return data[y0:y1, x0:x1], (x0, y0)



def draw_cutout(ax, image_cutout: np.ndarray | None, overlay: Overlay, *, scale_bar_arcsec: float | None = None) -> None:
    """The cutout (asinh stretch, 0.5-99.7 percentile limits) with points, centre, fit and scale bar."""
    from astropy.visualization import AsinhStretch, ImageNormalize, PercentileInterval

    ax.set_facecolor("#0b0e14")
    ax.set_xticks([])
    ax.set_yticks([])
    if image_cutout is None:
        ax.text(0.5, 0.5, "no image", color="white", ha="center", va="center", transform=ax.transAxes)
        return
    data = np.asarray(image_cutout, float)
    if data.ndim != 2 or data.size == 0:
        raise LensInputError("The report needs a two-dimensional image cutout: pick one plane of the cube.")
    if not (_finite(overlay.pixel_scale_arcsec) and overlay.pixel_scale_arcsec > 0):
        raise LensInputError("The report needs a positive pixel scale: set it in arcsec per pixel.")
    x0, y0 = overlay.origin_px
    ny, nx = data.shape
    extent = (x0 - 0.5, x0 + nx - 0.5, y0 - 0.5, y0 + ny - 0.5)
    finite = data[np.isfinite(data)]
    masked = np.ma.masked_invalid(data)
    if finite.size and np.ptp(finite) > 0:
        norm = ImageNormalize(finite, interval=PercentileInterval(99.2), stretch=AsinhStretch(0.08))
        ax.imshow(masked, origin="lower", cmap="bone", norm=norm, extent=extent, interpolation="nearest")
    else:
        ax.imshow(masked, origin="lower", cmap="bone", extent=extent, interpolation="nearest")
    from functools import partial

    from matplotlib.patches import Circle, Ellipse

    from lensmass.io.report_marks import draw_fit_curve, draw_glyphs

    if overlay.circle_px is not None:
        cx, cy, r = overlay.circle_px
        draw_fit_curve(ax, partial(Circle, (cx, cy), r), overlay.system)
    if overlay.ellipse_px is not None:
        cx, cy, a, b, ang = overlay.ellipse_px
        draw_fit_curve(ax, partial(Ellipse, (cx, cy), 2 * a, 2 * b, angle=ang), overlay.system)
    draw_glyphs(ax, overlay.points_px, "point", overlay.system)
    draw_glyphs(ax, overlay.images_px, "image", overlay.system)
    if overlay.centre_px is not None:
        draw_glyphs(ax, [overlay.centre_px], "centre", zorder=4)
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    width_arcsec = nx * overlay.pixel_scale_arcsec
    bar = scale_bar_arcsec or _nice_length(width_arcsec / 4)
    bar_px = bar / overlay.pixel_scale_arcsec
    bx, by = extent[0] + 0.06 * nx, extent[2] + 0.07 * ny
    ax.plot([bx, bx + bar_px], [by, by], color="white", lw=2.2, solid_capstyle="butt", zorder=5)
    ax.text(bx + bar_px / 2, by + 0.025 * ny, f'{bar:g}"', color="white", ha="center", va="bottom", fontsize=7.5,
            zorder=5)
    if overlay.label:
        ax.text(0.03, 0.97, _mathtext_safe(overlay.label), color="white", ha="left", va="top", fontsize=7,
                transform=ax.transAxes)


def _nice_length(target: float) -> float:
    """1, 2 or 5 times a power of ten, at most ``target`` (for scale bars)."""
    if not (target > 0):
        return 1.0
    exp = math.floor(math.log10(target))
    for m in (5, 2, 1):
        if m * 10**exp <= target:
            return m * 10**exp
    return 10**exp


@dataclass(frozen=True)
class PlotInk:
    """The colours and text size of the shared plots: the page's by default; the window passes its
    palette (light or dark) and a larger text so the same drawing reads well on screen."""

    ink: str = INK
    muted: str = MUTED
    rule: str = RULE
    paper: str = "white"
    text_scale: float = 1.0


PAGE_INK = PlotInk()


def _style_axes(ax, label_size: float = 7.0, tick_size: float = 6.5, look: PlotInk = PAGE_INK) -> None:
    """Our axis look, set on the Axes itself (no global rc state, safe beside a running window)."""
    for spine in ax.spines.values():
        spine.set_color(look.muted)
        spine.set_linewidth(0.6)
    ax.tick_params(which="both", colors=look.muted, labelsize=tick_size * look.text_scale, width=0.6)
    ax.xaxis.label.set_size(label_size * look.text_scale)
    ax.yaxis.label.set_size(label_size * look.text_scale)
    ax.xaxis.label.set_color(look.ink)
    ax.yaxis.label.set_color(look.ink)


def draw_mass_curves(ax, curves, *, interval68: Sequence[float] | None = None, arcsec_axis: bool = True,
                     look: PlotInk = PAGE_INK) -> None:
    """Enclosed projected mass against radius: SIS, NFW, their 68% bands and the Einstein point.

    ``curves`` is a :class:`lensmass.core.mass_profiles.MassCurves`; ``interval68``
    (the estimate's [p16, p84] of M(<theta_E)) draws the Einstein point's error bar.
    ``look`` sets colours and text size (the page's by default; the window passes its palette).
    """
    r = curves.radius_kpc
    scale = look.text_scale
    if curves.sis_p16 is not None:
        ax.fill_between(r, curves.sis_p16, curves.sis_p84, color=SIS_COLOUR, alpha=0.18, lw=0)
    if curves.nfw_p16 is not None:
        ax.fill_between(r, curves.nfw_p16, curves.nfw_p84, color=NFW_COLOUR, alpha=0.18, lw=0)
    ax.plot(r, curves.sis_msun, color=SIS_COLOUR, lw=1.6, label="SIS")
    if np.any(np.isfinite(curves.nfw_msun)):
        ax.plot(r, curves.nfw_msun, color=NFW_COLOUR, lw=1.6, ls=(0, (5, 2)), label="NFW halo alone")
    ax.axvline(curves.einstein_radius_kpc, color=look.muted, lw=0.7, ls=":")
    yerr = None
    if interval68 is not None and all(_finite(v) for v in interval68) and interval68[0] != interval68[1]:
        # The point is the nominal mass; with few or skewed draws it can lie outside the 68% interval
        # of the draws: the bar then reaches the interval on one side only (matplotlib refuses negatives).
        yerr = [[max(0.0, curves.einstein_mass_msun - float(interval68[0]))],
                [max(0.0, float(interval68[1]) - curves.einstein_mass_msun)]]
    ax.errorbar([curves.einstein_radius_kpc], [curves.einstein_mass_msun], yerr=yerr, fmt="o", ms=5, color=look.ink,
                mfc=look.paper, mew=1.3, capsize=2.5, zorder=5, label=r"$M(<\theta_E)$ at $R_E$")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlim(r.min(), r.max())
    ax.set_xlabel("projected radius R [kpc]")
    ax.set_ylabel(r"$M_{2D}(<R)$ [M$_\odot$]")
    _style_axes(ax, look=look)
    ax.grid(True, which="major", color=look.rule, lw=0.5)
    # the page keeps matplotlib's default legend text colour; another palette sets its own ink
    ax.legend(loc="upper left", fontsize=7 * scale, frameon=False, labelcolor=None if look == PAGE_INK else look.ink)
    if arcsec_axis:
        k = curves.einstein_radius_kpc / curves.einstein_radius_arcsec
        top = ax.secondary_xaxis("top", functions=(lambda x, k=k: x / k, lambda t, k=k: t * k))
        top.set_xlabel("angle [arcsec]", fontsize=7 * scale, color=look.muted)
        top.tick_params(labelsize=6.5 * scale, colors=look.muted)


def draw_sample_histogram(ax, hist, *, unit: str = r"M$_\odot$", label: str = r"$M(<\theta_E)$",
                          look: PlotInk = PAGE_INK, empty_text: str = "no uncertainty propagated\n(no Monte Carlo draws)") -> None:
    """Step histogram of Monte Carlo draws with the median and the 68% interval shaded.

    ``hist`` is a :class:`lensmass.core.mass_profiles.SampleHistogram` or None (then
    ``empty_text`` is shown); ``look`` sets colours and text size.
    """
    if hist is None:
        ax.text(0.5, 0.5, empty_text, ha="center", va="center", wrap=True,
                fontsize=7.5 * look.text_scale, color=look.muted, transform=ax.transAxes)
        ax.set_xticks([])
        ax.set_yticks([])
        return
    exp = None if hist.log_bins else _power(hist.median)
    scale = 1.0 if exp is None else 10.0**exp
    ax.stairs(hist.counts, hist.edges / scale, color=look.ink, lw=1.0, fill=False)
    ax.axvspan(hist.interval68[0] / scale, hist.interval68[1] / scale, color=SIS_COLOUR, alpha=0.15, lw=0)
    ax.axvline(hist.median / scale, color=SIS_COLOUR, lw=1.2)
    if hist.log_bins:
        ax.set_xscale("log")
    ax.set_yticks([])
    power = "" if exp is None else f"$10^{{{exp}}}$ "
    ax.set_xlabel(f"{label} [{power}{unit}]" if unit or power else label)
    _style_axes(ax, look=look)
    ax.get_xlim()  # settles the autoscaled limits, so the median's place on the axes is known
    right = ax.transAxes.inverted().transform(ax.transData.transform((hist.median / scale, 0.0)))[0] > 0.5
    ax.text(0.01 if right else 0.99, 0.95, f"{hist.n_finite} draws\nline: median\nshaded: 68%",  # beside the bars
            fontsize=6.3 * look.text_scale, color=look.muted, ha="left" if right else "right", va="top",
            transform=ax.transAxes)


# ------------------------------------------------------------------ page
