"""The look of marks, fitted curves and their labels: one place for the window and the report.

Our own design (no Qt, no matplotlib here; both draw from these numbers):

- every glyph leaves the marked pixel itself uncovered, so the data under a mark stays visible:
  an arc point is three short spokes pointing at it, an image of a multiple-image system a
  hexagon around it, the lens centre four diagonal ticks;
- every stroke is two-tone: a dark casing under a light core, so a mark reads on a white sky
  (inverted grey), on a black one and on every colour map of the window (checked against the
  WCAG 2.1 contrast ratio in ``tests/test_mark_palette.py``);
- a fitted circle or ellipse is a solid line with short outward ticks (it is a model, not a
  feature of the image), its label a tab in the system's colour placed outside the curve;
- arc systems take the colours of :data:`SYSTEM_COLOURS` in order; the lens centre its own.

Glyphs are polylines in units of the glyph's radius, x right and y up, about the marked point.

Examples
--------
>>> system_colour(0), system_colour(len(SYSTEM_COLOURS))
('#ffb000', '#ffb000')
>>> len(GLYPHS["point"]), len(GLYPHS["image"][0])
(3, 7)
"""

from __future__ import annotations

import math

#: Arc-system colours in order: amber, pink, sky, lime, periwinkle, mint. All light (relative luminance
#: above 0.46), so that on every background either the core or the casing stands out by 3:1.
SYSTEM_COLOURS = ("#ffb000", "#ff99cc", "#5cc8ff", "#b4e65a", "#b7b0ff", "#7fe3c4")
#: The lens centre: white, apart from every system colour.
CENTRE_COLOUR = "#ffffff"
#: The dark casing under every stroke, and its opacity (0-1).
CASING_COLOUR, CASING_ALPHA = "#0d1017", 0.9
#: Ink of the text on a system's label tab.
TAB_INK = "#0d1017"
#: Stroke widths on screen (pixels) and in the report (points): core and casing.
CORE_WIDTH_PX, CASING_WIDTH_PX = 1.7, 3.4
CORE_WIDTH_PT, CASING_WIDTH_PT = 1.0, 2.4
#: Opacity of the marks of the systems not selected.
INACTIVE_ALPHA = 0.55
#: Glyph radius on screen (pixels) for each mark kind.
GLYPH_RADIUS_PX = {"point": 8.0, "image": 7.0, "centre": 10.0}
#: Fitted curves: outward ticks (count, length in screen pixels); inactive curves are dotted.
FIT_TICKS, FIT_TICK_PX = 8, 5.0
INACTIVE_DASH = (1.0, 3.0)
#: Gap between a curve (or glyph) and its label, screen pixels.
LABEL_GAP_PX = 10.0


def _spoke(angle_deg: float, r0: float, r1: float) -> tuple[tuple[float, float], tuple[float, float]]:
    a = math.radians(angle_deg)
    return (r1 * math.cos(a), r1 * math.sin(a)), (r0 * math.cos(a), r0 * math.sin(a))


def _ring(n: int, start_deg: float) -> tuple[tuple[float, float], ...]:
    pts = [(math.cos(math.radians(start_deg + 360.0 * k / n)), math.sin(math.radians(start_deg + 360.0 * k / n)))
           for k in range(n)]
    return tuple(pts + pts[:1])


#: Each mark kind as polylines (unit radius, y up); the centre of every glyph is left open.
GLYPHS: dict[str, tuple[tuple[tuple[float, float], ...], ...]] = {
    "point": tuple(_spoke(a, 0.5, 1.0) for a in (90.0, 210.0, 330.0)),
    "image": (_ring(6, 0.0),),
    "centre": tuple(_spoke(a, 0.45, 1.0) for a in (45.0, 135.0, 225.0, 315.0)),
}
#: What each glyph means, for legends.
GLYPH_NAMES = {"point": "arc point", "image": "image of a multiple-image system", "centre": "lens centre"}


def inner_radius(kind: str) -> float:
    """How far the glyph of ``kind`` stays from the marked point, in units of its radius.

    >>> round(inner_radius("image"), 4)  # a hexagon's edges: cos 30 deg
    0.866
    """
    def nearest(p0, p1) -> float:
        (x0, y0), (x1, y1) = p0, p1
        dx, dy = x1 - x0, y1 - y0
        t = max(0.0, min(1.0, -(x0 * dx + y0 * dy) / ((dx * dx + dy * dy) or 1.0)))
        return math.hypot(x0 + t * dx, y0 + t * dy)

    return min(nearest(a, b) for line in GLYPHS[kind] for a, b in zip(line, line[1:]))


def open_radius_px() -> float:
    """Screen radius left uncovered round every marked point (inside every glyph and its casing)."""
    return min(GLYPH_RADIUS_PX[k] * inner_radius(k) for k in GLYPHS) - CASING_WIDTH_PX / 2


def system_colour(index: int) -> str:
    """The colour of arc system ``index`` (0-based; the set repeats after six systems)."""
    return SYSTEM_COLOURS[int(index) % len(SYSTEM_COLOURS)]


def mark_colour(kind: str, system: int) -> str:
    """The core colour of a mark of ``kind`` ("point", "image", "centre") of arc system ``system``."""
    return CENTRE_COLOUR if kind == "centre" else system_colour(system)


def relative_luminance(hex_colour: str) -> float:
    """Relative luminance of an sRGB colour ("#rrggbb"), WCAG 2.1 definition (0 black, 1 white).

    >>> round(relative_luminance("#ffffff"), 6), relative_luminance("#000000")
    (1.0, 0.0)
    """
    h = hex_colour.lstrip("#")
    channels = [int(h[i:i + 2], 16) / 255.0 for i in (0, 2, 4)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def contrast_ratio(a: str, b: str) -> float:
    """WCAG 2.1 contrast ratio of two sRGB colours, lighter over darker (1 to 21).

    >>> round(contrast_ratio("#000000", "#ffffff"), 6)
    21.0
    """
    la, lb = sorted((relative_luminance(a), relative_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def readable_on(hex_colour: str, background: str, ratio: float = 4.5) -> str:
    """``hex_colour`` mixed toward black (on a light background) or white (on a dark one) just enough
    to stand out from ``background`` by ``ratio`` (WCAG 2.1: 4.5 for text): a system's colour as text
    in lists and panels of a light or a dark window palette.

    >>> readable_on("#ffb000", "#000000")
    '#ffb000'
    >>> contrast_ratio(readable_on("#ffb000", "#ffffff"), "#ffffff") >= 4.5
    True
    """
    target = "#000000" if relative_luminance(background) > 0.18 else "#ffffff"
    rgb = [int(hex_colour.lstrip("#")[i:i + 2], 16) for i in (0, 2, 4)]
    end = [int(target[1:][i:i + 2], 16) for i in (0, 2, 4)]
    for step in range(0, 101):
        t = step / 100.0
        mixed = "#" + "".join(f"{round(c + (e - c) * t):02x}" for c, e in zip(rgb, end))
        if contrast_ratio(mixed, background) >= ratio:
            return mixed
    return target


def tab_ink(hex_colour: str) -> str:
    """Text colour on a label tab of ``hex_colour``: dark ink on light tabs, white on dark ones."""
    return TAB_INK if relative_luminance(hex_colour) > 0.18 else "#ffffff"
