"""Marks on the report's figures in the window's look (:mod:`lensmass.io.mark_palette`):
the same glyphs, two-tone strokes and system colours, drawn with matplotlib's object API.

Examples
--------
>>> from matplotlib.figure import Figure
>>> ax = Figure().add_subplot()
>>> draw_glyphs(ax, [(1.0, 2.0), (3.0, 4.0)], "point", system=1)
>>> casing, core = legend_handle("centre")
>>> core.get_marker().vertices.shape[1]
2
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from lensmass.io import mark_palette as P

#: Glyph size on the page, points (matplotlib marker size is the glyph's width).
GLYPH_SIZE_PT = {"point": 9.0, "image": 9.0, "centre": 12.0}


def glyph_marker(kind: str):
    """Mark ``kind``'s glyph as a matplotlib marker Path (unit radius; the marked point left open)."""
    from matplotlib.path import Path

    vertices, codes = [], []
    for line in P.GLYPHS[kind]:
        for k, xy in enumerate(line):
            vertices.append(xy)
            codes.append(Path.MOVETO if k == 0 else Path.LINETO)
    return Path(np.asarray(vertices, float), codes)


def draw_glyphs(ax, xy: Sequence[tuple[float, float]], kind: str, system: int = 0, zorder: float = 3.0) -> None:
    """Glyphs of ``kind`` at data positions ``xy``: a dark casing, then the core in the mark's colour."""
    p = np.asarray(xy, float).reshape(-1, 2)
    if not len(p):
        return
    marker, size = glyph_marker(kind), GLYPH_SIZE_PT[kind] ** 2
    colour = P.mark_colour(kind, system)
    ax.scatter(p[:, 0], p[:, 1], s=size, marker=marker, facecolors="none", edgecolors=P.CASING_COLOUR,
               linewidths=P.CASING_WIDTH_PT, alpha=P.CASING_ALPHA, zorder=zorder)
    ax.scatter(p[:, 0], p[:, 1], s=size, marker=marker, facecolors="none", edgecolors=colour,
               linewidths=P.CORE_WIDTH_PT, zorder=zorder + 0.1)


def draw_fit_curve(ax, patch_factory, system: int = 0, zorder: float = 2.5) -> None:
    """A fitted circle or ellipse, two-tone and solid (``patch_factory(**style)`` makes the patch)."""
    ax.add_patch(patch_factory(fill=False, ec=P.CASING_COLOUR, lw=P.CASING_WIDTH_PT, alpha=P.CASING_ALPHA,
                               zorder=zorder))
    ax.add_patch(patch_factory(fill=False, ec=P.system_colour(system), lw=P.CORE_WIDTH_PT, zorder=zorder + 0.1))


def legend_handle(kind: str, system: int = 0) -> tuple:
    """A legend entry drawn like the marks, casing under core (``kind``: "point", "image", "centre" or
    "fit"); a tuple of two artists, which matplotlib's legend draws one over the other."""
    from matplotlib.lines import Line2D

    if kind == "fit":
        return (Line2D([], [], color=P.CASING_COLOUR, alpha=P.CASING_ALPHA, lw=P.CASING_WIDTH_PT),
                Line2D([], [], color=P.system_colour(system), lw=P.CORE_WIDTH_PT))
    style = dict(ls="", marker=glyph_marker(kind), markersize=GLYPH_SIZE_PT[kind] * 0.8, mfc="none")
    return (Line2D([], [], mec=P.CASING_COLOUR, alpha=P.CASING_ALPHA, mew=P.CASING_WIDTH_PT, **style),
            Line2D([], [], mec=P.mark_colour(kind, system), mew=P.CORE_WIDTH_PT, **style))
