"""The whole report: one page per arc system and a page for the lens model, in one PDF.

Each arc system gets the page of :func:`lensmass.io.report.report_figure` (its marks, inputs,
results, curves, notes and models); when a lens model (SIE + external shear,
:mod:`lensmass.core.lens_model`) was fitted, one more page gives its parameters with 68% and 95%
intervals, the masses and time delays it predicts, its marked and model images, its notes and
which model produced each number. A PDF holds every page; a PNG holds one page, so a report
of several pages written as ``name.png`` becomes ``name.png``, ``name-2.png``, ... (all atomic).
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.result_text import Rounded, round_measured
from lensmass.io.report_format import _mathtext_safe
from lensmass.io.report_plots import INK, MUTED, NFW_COLOUR, Overlay, draw_cutout

#: Colour of the model's critical curve and predicted images on the lens-model page.
MODEL_COLOUR = NFW_COLOUR


@dataclass
class SystemPage:
    """What one arc system's page shows (the arguments of :func:`lensmass.io.report.report_figure`)."""

    name: str
    image_cutout: np.ndarray | None
    overlay: Overlay
    inputs: Mapping[str, Any]
    result: Mapping[str, Any]


def math_rounded(r: Rounded) -> tuple[str, str]:
    """(value, 68% interval) of a :class:`Rounded` in mathtext, the power of ten written once each."""
    power = "" if r.power is None else f"$\\times10^{{{r.power}}}$"
    value = r.value if not power else f"${r.value}\\times10^{{{r.power}}}$"
    interval = f"[{r.low}, {r.high}]{power}" if r.low else ""
    return value, interval


def _block_text(block: Mapping[str, Any] | None) -> tuple[str, str, str]:
    """(median, 68%, 95%) of a posterior summary block, by the program's one rounding rule."""
    if not block:
        return "-", "", ""
    r68 = round_measured(block["median"], None, block.get("interval68"))
    value, i68 = math_rounded(r68)
    lo95, hi95 = block.get("interval95") or (None, None)
    i95 = ""
    if lo95 is not None and hi95 is not None and r68.low:
        i95 = f"[{r68.same(lo95)}, {r68.same(hi95)}]" + ("" if r68.power is None else f"$\\times10^{{{r68.power}}}$")
    return value, i68, i95


def lens_model_rows(model_result: Mapping[str, Any]) -> list[tuple[str, str, str, str, str]]:
    """(label, median, 68%, 95%, unit) rows of the model's parameters, masses and delays."""
    from lensmass.io.lens_model_text import PARAMETER_ROWS, delay_rows

    lm = model_result["lens_model"]
    p = lm["parameters"]
    rows = [(label, *_block_text(p.get(key)), unit) for key, label, _short, unit, _fmt in PARAMETER_ROWS]
    i68, i95 = model_result.get("intervals68") or {}, model_result.get("intervals95") or {}
    for key, label, unit in (("mass_einstein_msun", r"$M(<\theta_E)$", r"M$_\odot$"),
                             ("sis_sigma_v_kms", r"$\sigma_{SIS}$", r"km s$^{-1}$")):
        if key in model_result and key in i68:
            block = {"median": model_result[key], "interval68": i68[key], "interval95": i95.get(key, i68[key])}
            rows.append((label, *_block_text(block), unit))
    rows += [(label.replace(" (d)", ""), *_block_text(block), "days") for label, block in delay_rows(lm)]
    return rows


def lens_model_figure(model_result: Mapping[str, Any], image_cutout: np.ndarray | None, overlay: Overlay, *,
                      title: str = "Lens mass report", subtitle: str = "", generated_at: datetime | None = None):
    """The lens-model page as a matplotlib Figure (Agg canvas attached; nothing shown)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from lensmass import __version__
    from lensmass.core.lens_model import chi2_text, model_curves
    from lensmass.io.lens_model_text import image_lines
    from lensmass.io.report import (PAGE_INCHES, _fitting_paragraphs, _model_lines, _rule, _section, _text_rows,
                                    _wrapped)

    lm = model_result["lens_model"]
    when = generated_at or datetime.now(timezone.utc)
    fig = Figure(figsize=PAGE_INCHES, dpi=100, facecolor="white")
    FigureCanvasAgg(fig)
    fig.set_layout_engine(None)
    fig.text(0.06, 0.965, _mathtext_safe(title), fontsize=15, fontweight="bold", color=INK, va="top")
    fig.text(0.06, 0.94, _mathtext_safe(subtitle or f"lens model: {lm['model']}"), fontsize=8.5, color=MUTED,
             va="top")
    fig.text(0.94, 0.965, f"lensmass {__version__}", fontsize=7.5, color=MUTED, ha="right", va="top")
    fig.text(0.94, 0.95, f"{when:%Y-%m-%d %H:%M} UTC", fontsize=7.5, color=MUTED, ha="right", va="top")
    fig.add_artist(_rule(fig, 0.925))

    ax_img = fig.add_axes((0.06, 0.62, 0.40, 0.28))
    draw_cutout(ax_img, image_cutout, overlay)
    if image_cutout is not None:
        try:
            x, y = model_curves(lm)["critical_curve_pix"]
            ax_img.plot(x, y, color=MODEL_COLOUR, lw=1.1, ls=(0, (5, 2)), zorder=4)
        except (KeyError, ValueError, np.linalg.LinAlgError):
            pass  # a stored summary without the best model: the table still says everything
        model_xy = np.array([(e["model_x"], e["model_y"]) for e in lm.get("images", [])
                             if e.get("model_x") is not None and e.get("kind") != "arc"], float).reshape(-1, 2)
        if model_xy.size:
            ax_img.scatter(model_xy[:, 0], model_xy[:, 1], s=60, marker="o", facecolors="none",
                           edgecolors=MODEL_COLOUR, linewidths=1.1, linestyles=":", zorder=4)
    from matplotlib.lines import Line2D

    from lensmass.io.report_marks import legend_handle

    handles: list[Any] = [legend_handle("image", overlay.system if overlay is not None else 0),  # as the window
                          Line2D([], [], ls="", marker="o", mfc="none", mec=MODEL_COLOUR),
                          Line2D([], [], color=MODEL_COLOUR, ls=(0, (5, 2))),
                          legend_handle("centre")]
    fig.legend(handles,
               ["marked images", "model images", "critical curve", "lens centre"], loc="center left",
               bbox_to_anchor=(0.055, 0.605), ncol=4, frameon=False, fontsize=6.8, handlelength=1.6,
               labelcolor=MUTED)

    ax_par = fig.add_axes((0.52, 0.62, 0.42, 0.28))
    _section(ax_par, "model parameters (median; 68%, 95% intervals)")
    rows = lens_model_rows(model_result)
    _text_rows(ax_par, rows, (0.0, 0.28, 0.46, 0.71, 0.93), top=0.94,
               step=min(0.075, 0.86 / max(len(rows) + 1, 1)), header=("quantity", "median", "68%", "95%", ""),
               size=7.0)

    ax_im = fig.add_axes((0.06, 0.40, 0.88, 0.17))
    _section(ax_im, "images: marked -> model (pixels), residual, magnification")
    from lensmass.core.lens_centre import centre_text

    centre = centre_text(dict(model_result))
    _wrapped(ax_im, [_mathtext_safe(line) for line in image_lines(lm)] +
             [_mathtext_safe(f"Fit: {lm['sampler']} posterior, {lm['n_draws']} draws; {chi2_text(lm)}.")] +
             ([_mathtext_safe(f"Lens centre: {centre}.")] if centre else []),
             top=0.9, size=6.8, gap=0.01)

    ax_notes = fig.add_axes((0.06, 0.22, 0.88, 0.14))
    _section(ax_notes, "notes")
    _wrapped(ax_notes, [f"- {_mathtext_safe(n)}" for n in model_result.get("notes") or []], top=0.9, size=6.5,
             hang="  ", gap=0.005)

    ax_mod = fig.add_axes((0.06, 0.03, 0.88, 0.15))
    _section(ax_mod, "which model produced each number")
    _fitting_paragraphs(ax_mod, [(_model_lines(model_result), "      ", INK)])
    fig.text(0.06, 0.014, "Masses are model-dependent estimates: each number is labelled with its model above.",
             fontsize=6.5, color=MUTED)
    return fig


def _png_paths(target: Path, n: int) -> list[Path]:
    return [target] + [target.with_name(f"{target.stem}-{i}{target.suffix}") for i in range(2, n + 1)]


def render_report_pages(path: str | os.PathLike, systems: Sequence[SystemPage],
                        lens_model: tuple[Mapping[str, Any], np.ndarray | None, Overlay] | None = None, *,
                        title: str = "Lens mass report", cosmo: Any = None, halo_definition: str = "200c",
                        dpi: int = 150, generated_at: datetime | None = None) -> list[Path]:
    """Write the report of every arc system (and the lens model) to ``path``; returns the files written.

    ``lens_model`` is (the model's result, its cutout, its overlay) or None. A ``.pdf`` holds
    every page; a ``.png`` gets one file per page (``name.png``, ``name-2.png``, ...).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from lensmass.core.estimate import estimate
    >>> pages = [SystemPage(n, None, Overlay(0.05), {"z_l": 0.3}, estimate(t, 0.3, 1.0))
    ...          for n, t in (("A", 1.2), ("B", 1.5))]
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "report.pdf"
    >>> [p.name for p in render_report_pages(out, pages)]
    ['report.pdf']
    """
    from lensmass.io.report import report_figure

    report_format_of(path)  # a wrong suffix is refused before any drawing
    if not systems and lens_model is None:
        raise LensInputError("There is nothing to report yet: mark an arc system and enter the redshifts first.")
    when = generated_at or datetime.now(timezone.utc)
    total = len(systems) + (lens_model is not None)
    figures = []
    for i, page in enumerate(systems, start=1):
        subtitle = f"arc system {page.name}" + (f" (page {i} of {total})" if total > 1 else "")
        figures.append(report_figure(page.image_cutout, page.overlay, page.inputs, page.result, title=title,
                                     subtitle=subtitle, cosmo=cosmo, halo_definition=halo_definition,
                                     generated_at=when))
    if lens_model is not None:
        result, cut, overlay = lens_model
        subtitle = f"lens model: {result['lens_model']['model']}" + (f" (page {total} of {total})" if total > 1 else "")
        figures.append(lens_model_figure(result, cut, overlay, title=title, subtitle=subtitle, generated_at=when))
    return write_figures(path, figures, title=title, dpi=dpi)


def report_format_of(path: str | os.PathLike) -> str:
    """'pdf' or 'png' from the file name; any other name is one sentence."""
    target = Path(path).absolute()
    fmt = target.suffix.lower().lstrip(".")
    if fmt not in ("png", "pdf"):
        raise LensInputError(f"Cannot write a report as '{target.suffix or target.name}': name the file .png or .pdf.")
    return fmt


def write_figures(path: str | os.PathLike, figures: Sequence[Any], *, title: str, dpi: int = 150) -> list[Path]:
    """Write report pages atomically: all in one PDF, or one PNG each (``name.png``, ``name-2.png``, ...)."""
    from lensmass import __version__
    from lensmass.io.atomic import atomic_path

    target = Path(path).absolute()
    fmt = report_format_of(target)
    written = []
    try:
        if fmt == "pdf":
            from matplotlib.backends.backend_pdf import PdfPages

            with atomic_path(target) as tmp:
                with PdfPages(tmp, metadata={"Title": title, "Creator": f"lensmass {__version__}"}) as pdf:
                    for fig in figures:
                        pdf.savefig(fig, facecolor="white")
            written.append(target)
        else:
            for fig, out in zip(figures, _png_paths(target, len(figures))):
                with atomic_path(out) as tmp:
                    fig.savefig(tmp, format="png", dpi=dpi, facecolor="white",
                                metadata={"Title": title, "Software": f"lensmass {__version__}"})
                written.append(out)
    except OSError as exc:
        raise LensInputError(f"Could not write the report '{target}' ({exc.strerror or exc}): choose another folder.") from None
    return written
