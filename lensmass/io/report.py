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

The number formats live in :mod:`lensmass.io.report_format` and the shared drawings in
:mod:`lensmass.io.report_plots`; their public names are re-exported here.
"""

from __future__ import annotations

import os
import textwrap
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from lensmass.core.result_keys import MODEL_NOTE, RESULT_KEYS, fact, keys_in
from lensmass.io.report_format import _mathtext_safe, format_interval, format_value
from lensmass.io.report_plots import (
    CENTRE_COLOUR,
    FIT_COLOUR,
    INK,
    MUTED,
    NFW_COLOUR,
    PAGE_INK,
    POINT_COLOUR,
    RULE,
    SIS_COLOUR,
    Overlay,
    PlotInk,
    cutout,
    draw_cutout,
    draw_mass_curves,
    draw_sample_histogram,
)

__all__ = ["PAGE_INCHES", "INK", "MUTED", "RULE", "SIS_COLOUR", "NFW_COLOUR", "POINT_COLOUR", "FIT_COLOUR",
           "CENTRE_COLOUR", "result_rows", "REFERENCES", "Overlay", "cutout", "format_value", "format_interval",
           "draw_cutout", "PlotInk", "PAGE_INK", "draw_mass_curves", "draw_sample_histogram", "report_figure",
           "render_report", "inputs_from_session"]

#: Page size in inches (A4 portrait).
PAGE_INCHES = (8.27, 11.69)

#: Keys of the estimate the page leaves out of its results block (they are inputs, shown above it).
_INPUT_KEYS = ("z_l", "z_s")


def result_rows() -> list[tuple[str, str, str]]:
    """How each result appears on the page: (key, label in mathtext, unit in mathtext), from the key registry."""
    return [(key, fact(key).math_label, fact(key).math_unit)
            for key in keys_in("estimate", table_only=True) if key not in _INPUT_KEYS]

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
    """(label, value, 68% interval, unit): the program's one rounding rule (as the window and the command line)."""
    from lensmass.core.result_text import rounded_key
    from lensmass.io.report_pages import math_rounded

    return [(label, *math_rounded(rounded_key(dict(result), key)), unit)
            for key, label, unit in result_rows() if key in result]


def _centre_rows(result: Mapping[str, Any]) -> list[tuple[str, str]]:
    """Input rows of the lens centre the result was measured about: sky position and which centre."""
    from lensmass.core.lens_centre import sky_position_text

    if result.get("center_x") is None:
        return []
    rows = []
    sky = sky_position_text(result.get("center_ra"), result.get("center_dec"))
    if sky:
        degrees, sexagesimal = sky.rsplit(" (", 1)
        rows.append(("lens centre RA, Dec", sexagesimal.rstrip(")")))
        rows.append(("", degrees))
    else:
        rows.append(("lens centre", f"x {float(result['center_x']):.2f}, y {float(result['center_y']):.2f} px "
                                    "(no WCS: no sky position)"))
    if result.get("center_source"):
        rows.append(("which centre", textwrap.shorten(_mathtext_safe(str(result["center_source"])), 46,
                                                      placeholder="...")))
    return rows


def _model_lines(result: Mapping[str, Any]) -> list[str]:
    """'label: description' lines, one per distinct description (labels joined)."""
    models = result.get("models") or {}
    labels = {key: fact(key).math_label for key in models if key in RESULT_KEYS}
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
    if str(result.get("method", "")).startswith("automatic ring finder"):
        how = ("The Einstein radius is the automatic ring finder's: the radius of the circle (or the equal-area radius "
               "of the ellipse) through the ring's ridge in the lens-subtracted image; for arcs on opposite sides of "
               "the lens, or an arc and its fainter counter-image, the mean of their radii; for a single arc, its "
               "radius with the calibrated spread of theta_E over single arcs, or for a lone arc its radius scaled "
               "by the calibrated spread over lone arcs (asymmetric intervals); the 2-sigma interval also "
               "carries a tail term for a ring's light lying off theta_E and for wrong features, larger on an 8-bit "
               "picture (the notes say which rule applied). ")
    elif result.get("theta_e_from") == "lens model":
        how = "The Einstein radius is the lens model's, fitted to the marked images and arcs. "
    else:
        how = ("The Einstein radius is the radius of the circle (or the equal-area radius of the ellipse) fitted to "
               "the marked arc points about the lens centre. ")
    return (
        how + "Angular-diameter distances follow Hogg (1999) in the stated "
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
    in_rows = _input_rows(inputs) + _centre_rows(result)
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
    ax_notes = fig.add_axes((0.52, 0.222, 0.42, 0.138))
    _section(ax_notes, "notes")
    _fitting_notes(ax_notes, [f"- {_mathtext_safe(n)}" for n in result.get("notes") or []
                              if n != MODEL_NOTE])  # the page's last line says it

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
    from lensmass.io.report_marks import legend_handle

    k = overlay.system
    items = [(overlay.points_px, legend_handle("point", k), "arc points"),
             (overlay.images_px, legend_handle("image", k), "image positions"),
             (overlay.centre_px, legend_handle("centre"), "lens centre"),
             (overlay.circle_px or overlay.ellipse_px, legend_handle("fit", k),
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
                        sizes=(6.8, 6.5, 6.2, 5.9, 5.6, 5.3), *, top: float = 0.93, gap: float = 0.006) -> bool:
    """Write blocks of (paragraphs, hanging indent, colour), shrinking the font until all fit in ``ax``;
    False if they overflow it even at the smallest size (they are then left written at that size)."""
    keep = len(ax.texts)
    for size in sizes:
        for t in list(ax.texts)[keep:]:
            t.remove()
        y = top
        for paragraphs, hang, colour in blocks:
            y = _wrapped(ax, paragraphs, top=y, size=size, hang=hang, colour=colour, gap=gap) - 0.025
        if y >= -0.02:
            return True
    return False


def _fitting_notes(ax, notes: Sequence[str]) -> None:
    """The notes in their box: a smaller font first, then the last notes left out with a line saying how many
    (a lone arc's notes are long; they once ran over the next section's rule). All notes stay in the result."""
    keep = len(ax.texts)
    for shown in range(len(notes), 0, -1):
        for t in list(ax.texts)[keep:]:
            t.remove()
        tail = [] if shown == len(notes) else [f"... and {len(notes) - shown} more in the saved result's notes."]
        if _fitting_paragraphs(ax, [(list(notes[:shown]) + tail, "  ", INK)], (6.6, 6.3, 6.0, 5.7, 5.4), top=0.92,
                               gap=0.02):
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
    from lensmass.io.report_pages import report_format_of, write_figures

    report_format_of(path)  # a wrong suffix is refused before any drawing
    fig = report_figure(image_cutout, overlay, inputs, result, title=title, subtitle=subtitle, cosmo=cosmo,
                        halo_definition=halo_definition, curves=curves, histogram=histogram,
                        generated_at=generated_at)
    return write_figures(path, [fig], title=title, dpi=dpi)[0]


def inputs_from_session(session, arc: int | str = 0, theta_e_arcsec: float | None = None,
                        theta_e_err: float | None = None, image_name: str | None = None,
                        theta_e_bounds=None) -> dict[str, str]:
    """The 'inputs' block of the report for a :class:`lensmass.io.session.Session`; ``theta_e_bounds`` (-2, -1, +1,
    +2 sigma, arcsec): the ring finder's interval, written as the window and the command line write it."""
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
    if theta_e_arcsec is not None and theta_e_bounds is not None:  # the finder's interval, in two rows that fit
        lo2, lo1, hi1, hi2 = theta_e_bounds
        rows["theta_E measured"] = f"{theta_e_arcsec:.3f} arcsec, 1 sigma {lo1:.3f}-{hi1:.3f}"
        rows["theta_E 2 sigma"] = f"{lo2:.3f}-{hi2:.3f} arcsec (ring finder)"
    elif theta_e_arcsec is not None:
        from lensmass.core.result_text import round_measured

        rows["theta_E measured"] = f"{round_measured(theta_e_arcsec, theta_e_err).plain('±')} arcsec"
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
