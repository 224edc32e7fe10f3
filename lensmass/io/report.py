"""The one-page report (PNG or PDF) and the plots it shares with the window.

The page, A4 portrait, holds: the image cutout with the marked points, the
lens centre, the fitted circle or ellipse and a scale bar in arcsec; the
inputs; the results with their 68% intervals and units; the enclosed-mass
curves of the SIS and NFW models through the Einstein point; the Monte Carlo
distribution of M(<theta_E); the caveat notes; which model produced each
number; the method and references. It is drawn with matplotlib's object API
(no pyplot state, no Qt) so it renders headless, and written atomically.

:func:`draw_mass_curves` and :func:`draw_sample_histogram` draw onto any
matplotlib Axes; the window embeds the same drawings, so the plot on screen and
on paper are one.
"""

from __future__ import annotations

import math
import os
import textwrap
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from lensmass.core.errors import LensInputError

#: Page size in inches (A4 portrait).
PAGE_INCHES = (8.27, 11.69)
#: Our palette: ink, muted ink, accent for the SIS, accent for the NFW, marks on the image.
INK, MUTED, RULE = "#1d2433", "#5b6477", "#c9ced8"
SIS_COLOUR, NFW_COLOUR, POINT_COLOUR, FIT_COLOUR, CENTRE_COLOUR = "#1f6f8b", "#c0552b", "#ffb000", "#5ee0c0", "#ff4d6d"

#: How each result appears on the page: (key, label in mathtext, unit in mathtext).
RESULT_ROWS = [
    ("theta_e_arcsec", r"$\theta_E$", "arcsec"),
    ("r_e_kpc", r"$R_E = D_l\,\theta_E$", "kpc"),
    ("d_l_mpc", r"$D_l$", "Mpc"),
    ("d_s_mpc", r"$D_s$", "Mpc"),
    ("d_ls_mpc", r"$D_{ls}$", "Mpc"),
    ("sigma_cr_msun_per_pc2", r"$\Sigma_{cr}$", r"M$_\odot$ pc$^{-2}$"),
    ("mass_einstein_msun", r"$M(<\theta_E)$", r"M$_\odot$"),
    ("sis_sigma_v_kms", r"$\sigma_{SIS}$", r"km s$^{-1}$"),
    ("nfw_m200_msun", r"NFW $M_{200}$", r"M$_\odot$"),
    ("nfw_c200", r"NFW $c_{200}$", ""),
    ("nfw_r200_kpc", r"NFW $r_{200}$", "kpc"),
]

REFERENCES = [
    "Narayan R., Bartelmann M. 1996, arXiv:astro-ph/9606001 (Sigma_cr, Einstein mass, SIS)",
    "Wright C. O., Brainerd T. G. 2000, ApJ 534, 34 (NFW lensing profiles)",
    "Navarro J. F., Frenk C. S., White S. D. M. 1997, ApJ 490, 493 (NFW density profile)",
    "Duffy A. R., Schaye J., Kay S. T., Dalla Vecchia C. 2008, MNRAS 390, L64 (c(M, z))",
    "Hogg D. W. 1999, arXiv:astro-ph/9905116 (cosmological distances)",
    "Astropy Collaboration 2013, A&A 558, A33; 2018, AJ 156, 123 (astropy)",
]
_EXTRA_REFERENCES = {
    "Dutton": "Dutton A. A., Maccio A. V. 2014, MNRAS 441, 3359 (c(M, z))",
    "Bryan & Norman": "Bryan G. L., Norman M. L. 1998, ApJ 495, 80 (virial overdensity)",
}


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


# ------------------------------------------------------------------ formatting


def _finite(value) -> bool:
    try:
        return math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def _decimals(ref: float, digits: int) -> int:
    """Decimals that give ``digits`` significant figures to a number of size ``ref``."""
    return max(0, digits - 1 - int(math.floor(math.log10(abs(ref))))) if ref else digits - 1


def _power(ref: float) -> int | None:
    """The power of ten to factor out of numbers of size ``ref`` (None: write them plainly)."""
    if ref != 0 and (abs(ref) >= 1e5 or abs(ref) < 1e-3):
        return int(math.floor(math.log10(abs(ref))))
    return None


def format_value(value, digits: int = 3) -> str:
    """A number in mathtext: 0.981, 263, 1051 or 2.63 x 10^11; '-' when missing.

    Examples
    --------
    >>> print(format_value(2.632e11), format_value(1051.3), format_value(1.2))
    $2.63\\times10^{11}$ 1051 1.20
    >>> format_value(float('nan'))
    '-'
    """
    if not _finite(value):
        return "-"
    v = float(value)
    exp = _power(v)
    if exp is not None:
        mant = v / 10**exp
        if round(abs(mant), digits - 1) >= 10:
            mant, exp = mant / 10, exp + 1
        return f"${mant:.{digits - 1}f}\\times10^{{{exp}}}$"
    return f"{v:.{_decimals(v, digits)}f}"


def format_interval(low, high, like, digits: int = 3) -> str:
    """An interval written with the power of ten and decimals of its value ``like``.

    Examples
    --------
    >>> print(format_interval(2.69e11, 3.21e11, 2.94e11))
    [2.69, 3.21]$\\times10^{11}$
    >>> format_interval(1033.2, 1069.9, 1051.0)
    '[1033, 1070]'
    """
    if not (_finite(low) and _finite(high)) or float(low) == float(high):
        return ""
    lo, hi = float(low), float(high)
    ref = float(like) if _finite(like) and float(like) != 0 else hi
    exp = _power(ref)
    if exp is not None:
        d = _decimals(ref / 10**exp, digits)
        return f"[{lo / 10**exp:.{d}f}, {hi / 10**exp:.{d}f}]$\\times10^{{{exp}}}$"
    d = _decimals(ref, digits)
    return f"[{lo:.{d}f}, {hi:.{d}f}]"


def _mathtext_safe(text: str) -> str:
    """Plain text for matplotlib: escape the '$' that would start mathtext."""
    return str(text).replace("$", r"\$")


# ------------------------------------------------------------------ drawings


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
    from matplotlib.patches import Circle, Ellipse

    if overlay.circle_px is not None:
        cx, cy, r = overlay.circle_px
        ax.add_patch(Circle((cx, cy), r, fill=False, ec=FIT_COLOUR, lw=1.2, ls=(0, (4, 2))))
    if overlay.ellipse_px is not None:
        cx, cy, a, b, ang = overlay.ellipse_px
        ax.add_patch(Ellipse((cx, cy), 2 * a, 2 * b, angle=ang, fill=False, ec=FIT_COLOUR, lw=1.2, ls=(0, (4, 2))))
    if len(overlay.points_px):
        p = np.asarray(overlay.points_px, float).reshape(-1, 2)
        ax.scatter(p[:, 0], p[:, 1], s=22, facecolors="none", edgecolors=POINT_COLOUR, linewidths=1.1, zorder=3)
    if len(overlay.images_px):
        p = np.asarray(overlay.images_px, float).reshape(-1, 2)
        ax.scatter(p[:, 0], p[:, 1], s=30, marker="s", facecolors="none", edgecolors=FIT_COLOUR, linewidths=1.1,
                   zorder=3)
    if overlay.centre_px is not None:
        ax.scatter([overlay.centre_px[0]], [overlay.centre_px[1]], s=50, marker="+", c=CENTRE_COLOUR,
                   linewidths=1.4, zorder=4)
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
    ax.text(0.99, 0.95, f"{hist.n_finite} draws\nline: median\nshaded: 68%", fontsize=6.3 * look.text_scale,
            color=look.muted, ha="right", va="top", transform=ax.transAxes)


# ------------------------------------------------------------------ page


def _text_rows(ax, rows: Sequence[Sequence[str]], col_x: Sequence[float], *, top: float = 0.9,
               step: float = 0.085, header: Sequence[str] | None = None, size: float = 7.6) -> float:
    """Rows of text at fixed column positions (axes fraction); returns the y below the last row."""
    y = top
    if header:
        for x, h in zip(col_x, header):
            ax.text(x, y, h, fontsize=size - 0.6, color=MUTED, va="top", transform=ax.transAxes)
        y -= step
        ax.plot([0, 1], [y + step * 0.25] * 2, color=RULE, lw=0.6, transform=ax.transAxes)
    for row in rows:
        for i, (x, cell) in enumerate(zip(col_x, row)):
            label_colour = INK if header else MUTED  # a header-less table is label: value
            ax.text(x, y, cell, fontsize=size, color=label_colour if i == 0 else INK, va="top",
                    transform=ax.transAxes)
        y -= step
    return y


def _section(ax, title: str) -> None:
    ax.set_axis_off()
    ax.text(0, 1.0, title.upper(), fontsize=7.2, color=MUTED, fontweight="bold", va="bottom",
            transform=ax.transAxes)
    ax.plot([0, 1], [0.985, 0.985], color=RULE, lw=0.8, transform=ax.transAxes, clip_on=False)


def _input_rows(inputs: Mapping[str, Any]) -> list[tuple[str, str]]:
    rows = []
    for k, v in inputs.items():
        if isinstance(v, (float, int, np.floating, np.integer)) and not isinstance(v, bool):
            shown = f"{v:g}"  # as the user typed it
        else:
            shown = _mathtext_safe(str(v))
        rows.append((_mathtext_safe(str(k)), textwrap.shorten(shown, 46, placeholder="...") if "$" not in shown else shown))
    return rows


def _result_rows(result: Mapping[str, Any]) -> list[tuple[str, str, str, str]]:
    i68 = result.get("intervals68") or {}
    rows = []
    for key, label, unit in RESULT_ROWS:
        if key not in result:
            continue
        value = result[key]
        lo, hi = (i68.get(key) or [None, None])[:2]
        rows.append((label, format_value(value), format_interval(lo, hi, value), unit))
    return rows


def _model_lines(result: Mapping[str, Any]) -> list[str]:
    """'label: description' lines, one per distinct description (labels joined)."""
    models = result.get("models") or {}
    labels = {key: label for key, label, _ in RESULT_ROWS}
    grouped: dict[str, list[str]] = {}
    for key, text in models.items():
        grouped.setdefault(str(text), []).append(labels.get(key, key))
    return [", ".join(names) + ": " + _mathtext_safe(text) for text, names in grouped.items()]


def _references(result: Mapping[str, Any]) -> list[str]:
    text = " ".join(str(v) for v in (result.get("models") or {}).values())
    refs = list(REFERENCES)
    refs += [ref for key, ref in _EXTRA_REFERENCES.items() if key in text]
    return refs


def _method_text(result: Mapping[str, Any]) -> str:
    mc = result.get("mc_samples")
    unc = (f"Uncertainties: {mc} Monte Carlo draws of the inputs (seed {result.get('mc_seed')}); intervals are "
           "the 16th-84th percentiles (68%)." if mc else "No input uncertainty was given, so no interval is quoted.")
    return (
        "The Einstein radius is the radius of the circle (or the equal-area radius of the ellipse) fitted to the "
        "marked arc points about the lens centre. Angular-diameter distances follow Hogg (1999) in the stated "
        "cosmology. The critical density is c^2 D_s / (4 pi G D_l D_ls) and the mass inside the Einstein radius, "
        "pi Sigma_cr R_E^2, holds for any axisymmetric lens. The SIS dispersion solves "
        "theta_E = 4 pi (sigma/c)^2 D_ls / D_s; the NFW halo is the one whose mean convergence inside theta_E is "
        "one, its concentration set by the c(M, z) relation. " + unc
    )


def report_figure(image_cutout: np.ndarray | None, overlay: Overlay, inputs: Mapping[str, Any],
                  result: Mapping[str, Any], *, title: str = "Lens mass report", subtitle: str = "",
                  cosmo: Any = None, halo_definition: str = "200c", curves=None, histogram=None,
                  generated_at: datetime | None = None):
    """Build the report page as a matplotlib Figure (Agg canvas attached; nothing shown).

    Parameters
    ----------
    image_cutout : 2-D array or None
        The image around the lens (see :func:`cutout`); None draws a placeholder.
    overlay : Overlay
        Marks to draw, in full-image pixels, and the pixel scale (arcsec / pixel).
    inputs : mapping
        What the user entered, label -> value (see :func:`inputs_from_session`).
    result : dict
        Output of :func:`lensmass.core.estimate.estimate` for one lens.
    cosmo, halo_definition
        The estimate's cosmology and halo boundary (for the NFW curve).
    curves, histogram : optional
        Precomputed :class:`MassCurves` / :class:`SampleHistogram`; computed when None.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from lensmass import __version__
    from lensmass.core.mass_profiles import enclosed_mass_curves, sample_histogram

    if curves is None:
        curves = enclosed_mass_curves(result, cosmo, halo_definition, n=120)
    if histogram is None:
        histogram = sample_histogram(result)
    when = generated_at or datetime.now(timezone.utc)

    fig = Figure(figsize=PAGE_INCHES, dpi=100, facecolor="white")
    FigureCanvasAgg(fig)
    fig.set_layout_engine(None)
    # header band
    fig.text(0.06, 0.965, _mathtext_safe(title), fontsize=15, fontweight="bold", color=INK, va="top")
    if subtitle:
        fig.text(0.06, 0.94, _mathtext_safe(subtitle), fontsize=8.5, color=MUTED, va="top")
    fig.text(0.94, 0.965, f"lensmass {__version__}", fontsize=7.5, color=MUTED, ha="right", va="top")
    fig.text(0.94, 0.95, f"{when:%Y-%m-%d %H:%M} UTC", fontsize=7.5, color=MUTED, ha="right", va="top")
    fig.add_artist(_rule(fig, 0.925))

    # row 1: image and inputs
    ax_img = fig.add_axes((0.06, 0.675, 0.40, 0.225))
    draw_cutout(ax_img, image_cutout, overlay)
    _legend_for_marks(fig, overlay, 0.66)
    ax_in = fig.add_axes((0.52, 0.675, 0.42, 0.215))
    _section(ax_in, "inputs")
    in_rows = _input_rows(inputs)
    _text_rows(ax_in, in_rows, (0.0, 0.36), top=0.93, step=min(0.075, 0.9 / max(len(in_rows), 1)), size=7.4)

    # row 2: results and mass curves
    ax_res = fig.add_axes((0.06, 0.405, 0.46, 0.21))
    _section(ax_res, "results (68% intervals)")
    rows = _result_rows(result)
    _text_rows(ax_res, rows, (0.0, 0.30, 0.52, 0.86), top=0.94, step=min(0.074, 0.86 / max(len(rows), 1)),
               header=("quantity", "value", "68% interval", "unit"), size=7.4)
    ax_m = fig.add_axes((0.64, 0.425, 0.30, 0.165))
    i68 = (result.get("intervals68") or {}).get("mass_einstein_msun")
    draw_mass_curves(ax_m, curves, interval68=i68)
    fig.text(0.58, 0.625, "ENCLOSED PROJECTED MASS", fontsize=7.2, color=MUTED, fontweight="bold", va="bottom")
    fig.add_artist(_rule_at(fig, 0.58, 0.94, 0.623))

    # row 3: Monte Carlo distribution and notes
    fig.text(0.06, 0.362, "MONTE CARLO DISTRIBUTION OF " + r"$M(<\theta_E)$", fontsize=7.2, color=MUTED,
             fontweight="bold", va="bottom")
    fig.add_artist(_rule_at(fig, 0.06, 0.46, 0.36))
    ax_h = fig.add_axes((0.06, 0.265, 0.40, 0.075))
    draw_sample_histogram(ax_h, histogram)
    ax_notes = fig.add_axes((0.52, 0.235, 0.42, 0.125))
    _section(ax_notes, "notes")
    _wrapped(ax_notes, [f"- {_mathtext_safe(n)}" for n in result.get("notes") or []], top=0.92, size=6.6,
             hang="  ")

    # row 4: models, method, references
    ax_mod = fig.add_axes((0.06, 0.03, 0.88, 0.18))
    _section(ax_mod, "which model produced each number; method; references")
    _fitting_paragraphs(ax_mod, [
        (_model_lines(result), "      ", INK),
        ([_mathtext_safe(_method_text(result))], "", INK),
        (["References: " + "; ".join(_references(result)) + "."], "", MUTED),
    ])
    fig.text(0.06, 0.014, f"Cosmology: {_mathtext_safe(result.get('cosmology', ''))}. Masses are "
             "model-dependent estimates: each number is labelled with its model above.",
             fontsize=6.5, color=MUTED)
    return fig


def _rule(fig, y: float):
    return _rule_at(fig, 0.06, 0.94, y, lw=0.9)


def _rule_at(fig, x0: float, x1: float, y: float, lw: float = 0.8):
    from matplotlib.lines import Line2D

    return Line2D([x0, x1], [y, y], transform=fig.transFigure, color=RULE, lw=lw)


def _legend_for_marks(fig, overlay: Overlay, y: float) -> None:
    """One line under the image naming the marks that are drawn on it."""
    from matplotlib.lines import Line2D

    items = [(overlay.points_px, Line2D([], [], ls="", marker="o", mfc="none", mec=POINT_COLOUR), "arc points"),
             (overlay.images_px, Line2D([], [], ls="", marker="s", mfc="none", mec=FIT_COLOUR), "image positions"),
             (overlay.centre_px, Line2D([], [], ls="", marker="+", mec=CENTRE_COLOUR, mew=1.4), "lens centre"),
             (overlay.circle_px or overlay.ellipse_px, Line2D([], [], color=FIT_COLOUR, ls=(0, (4, 2))),
              "fitted ellipse" if overlay.ellipse_px is not None else "fitted circle")]
    shown = [(h, t) for present, h, t in items if present is not None and len(np.atleast_1d(present))]
    if shown:
        fig.legend([h for h, _ in shown], [t for _, t in shown], loc="center left", bbox_to_anchor=(0.055, y),
                   ncol=len(shown), frameon=False, fontsize=6.8, handlelength=1.6, columnspacing=1.4,
                   labelcolor=MUTED)


def _chars_per_line(ax, size: float) -> int:
    """How many characters of DejaVu Sans at ``size`` points fit across ``ax`` (about 0.5 em each)."""
    width_pt = ax.get_position().width * ax.figure.get_figwidth() * 72.0
    return max(20, int(width_pt / (0.5 * size)))


def _wrapped(ax, paragraphs: Sequence[str], *, top: float, size: float, hang: str = "",
             colour: str = INK, gap: float = 0.02) -> float:
    """Write wrapped paragraphs from ``top`` down (axes fraction); returns the y below them.

    Each paragraph is wrapped at an estimated width, measured with the renderer and
    re-wrapped narrower until it fits the axes.
    """
    renderer = ax.figure.canvas.get_renderer()
    ax_box = ax.get_window_extent(renderer)
    y = top
    for para in paragraphs:
        width = _chars_per_line(ax, size)
        while True:
            lines = textwrap.wrap(para, width=width, subsequent_indent=hang) or [""]
            t = ax.text(0, y, "\n".join(lines), fontsize=size, color=colour, va="top", transform=ax.transAxes,
                        linespacing=1.25)
            box = t.get_window_extent(renderer)
            if box.x1 <= ax_box.x1 + 0.5 or width <= 20:
                break
            t.remove()
            width = max(20, int(width * min(0.97, ax_box.width / box.width)))
        y = ax.transAxes.inverted().transform((box.x0, box.y0))[1] - gap
    return y


def _fitting_paragraphs(ax, blocks: Sequence[tuple[Sequence[str], str, str]],
                        sizes=(6.8, 6.5, 6.2, 5.9, 5.6, 5.3)) -> None:
    """Write blocks of (paragraphs, hanging indent, colour), shrinking the font until all fit in ``ax``."""
    keep = len(ax.texts)
    for size in sizes:
        for t in list(ax.texts)[keep:]:
            t.remove()
        y = 0.93
        for paragraphs, hang, colour in blocks:
            y = _wrapped(ax, paragraphs, top=y, size=size, hang=hang, colour=colour, gap=0.006) - 0.025
        if y >= -0.02:
            return


def render_report(path: str | os.PathLike, image_cutout: np.ndarray | None, overlay: Overlay,
                  inputs: Mapping[str, Any], result: Mapping[str, Any], *, title: str = "Lens mass report",
                  subtitle: str = "", cosmo: Any = None, halo_definition: str = "200c", curves=None,
                  histogram=None, dpi: int = 150, generated_at: datetime | None = None) -> Path:
    """Render the one-page report to ``path`` (``.png`` or ``.pdf``), atomically.

    See :func:`report_figure` for the arguments. Returns the absolute path written.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from lensmass.core.estimate import estimate
    >>> r = estimate(1.2, 0.3, 1.0, theta_e_err=0.05, samples=500)
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "report.pdf"
    >>> _ = render_report(out, None, Overlay(0.05), {"z_l": 0.3}, r)
    >>> out.read_bytes()[:4]
    b'%PDF'
    """
    from lensmass import __version__
    from lensmass.io.atomic import atomic_path

    target = Path(path).absolute()
    fmt = target.suffix.lower().lstrip(".")
    if fmt not in ("png", "pdf"):
        raise LensInputError(f"Cannot write a report as '{target.suffix or target.name}': name the file .png or .pdf.")
    fig = report_figure(image_cutout, overlay, inputs, result, title=title, subtitle=subtitle, cosmo=cosmo,
                        halo_definition=halo_definition, curves=curves, histogram=histogram,
                        generated_at=generated_at)
    meta = {"Title": title, "Creator": f"lensmass {__version__}"} if fmt == "pdf" else {
        "Title": title, "Software": f"lensmass {__version__}"}
    try:
        with atomic_path(target) as tmp:
            fig.savefig(tmp, format=fmt, dpi=dpi, metadata=meta, facecolor="white")
    except OSError as exc:
        raise LensInputError(f"Could not write the report '{target}' ({exc.strerror or exc}): choose another folder.") from None
    return target


def inputs_from_session(session, arc: int | str = 0, theta_e_arcsec: float | None = None,
                        theta_e_err: float | None = None, image_name: str | None = None) -> dict[str, str]:
    """The 'inputs' block of the report for a :class:`lensmass.io.session.Session`."""
    s = session
    system = s.arc(arc)
    rows: dict[str, str] = {}
    rows["image"] = image_name or (Path(s.image.path).name if s.image.path else "none")
    if s.image.hdu not in (0, None) or s.image.plane is not None:
        rows["HDU / plane"] = f"{s.image.hdu} / {'-' if s.image.plane is None else s.image.plane}"
    if s.image.pixel_scale_arcsec:
        rows["pixel scale"] = f"{s.image.pixel_scale_arcsec:g} arcsec/px (set by hand)"
    if s.centre is not None:
        rows["lens centre"] = f"({s.centre.x:.1f}, {s.centre.y:.1f}) px, {'by hand' if s.centre.how == 'hand' else 'found'}"
    rows["arc system"] = (f"{system.name}: {len(system.points)} points, {system.shape} fit"
                          + (f", {len(system.images)} images" if system.images else ""))
    if theta_e_arcsec is not None:
        err = f" ± {theta_e_err:.3g}" if theta_e_err else ""
        rows["theta_E measured"] = f"{theta_e_arcsec:.4g}{err} arcsec"
    rows["z_l"] = f"{s.z_l:g}" + (f" ± {s.z_l_err:g}" if s.z_l_err else "") if s.z_l is not None else "not set"
    if system.z_s is not None:
        rows["z_s"] = f"{system.z_s:g}" + (f" ± {system.z_s_err:g}" if system.z_s_err else "")
    elif system.z_s_range is not None:
        rows["z_s"] = f"unknown, uniform in [{system.z_s_range[0]:g}, {system.z_s_range[1]:g}]"
    c = s.cosmology
    rows["cosmology"] = c.preset if c.h0 is None else (
        f"H0 = {c.h0:g}, Om0 = {c.om0:g}" + (f", Ode0 = {c.ode0:g}" if c.ode0 is not None else " (flat)"))
    rows["concentration"] = str(s.concentration)
    rows["halo boundary"] = s.halo_definition
    rows["Monte Carlo"] = f"{s.mc_samples} draws, " + ("random seed" if s.mc_seed is None else f"seed {s.mc_seed}")
    return rows
