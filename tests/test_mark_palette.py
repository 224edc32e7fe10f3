"""The look of marks (lensmass.io.mark_palette) reads on light and dark images and on every colour map.

Outside sources:
- relative luminance and contrast ratio: WCAG 2.1 (W3C Recommendation 2018), definitions of
  "relative luminance" and "contrast ratio"; 3:1 is its minimum for graphical objects (SC 1.4.11) and
  4.5:1 its minimum for normal text (SC 1.4.3). Our luminance is checked against scikit-image's sRGB to
  CIE XYZ conversion (Y is the relative luminance), a second, independent computation.
- colour difference: CIEDE2000 from scikit-image (``deltaE_ciede2000``); a difference above about 10
  is plainly visible side by side (common practice).
- the colour maps are matplotlib's own (the window's maps: gray, viridis, magma, inferno, cividis,
  each also inverted).
"""

import itertools

import numpy as np
import pytest

from lensmass.io import mark_palette as P

MAPS = ("gray", "viridis", "magma", "inferno", "cividis")
CORES = list(P.SYSTEM_COLOURS) + [P.CENTRE_COLOUR]


def _rgb(hex_colour: str) -> np.ndarray:
    h = hex_colour.lstrip("#")
    return np.array([int(h[i:i + 2], 16) / 255.0 for i in (0, 2, 4)])


def _hex(rgb) -> str:
    return "#" + "".join(f"{int(round(float(c) * 255)):02x}" for c in np.clip(rgb, 0, 1))


def _contrast(a: str, b: str) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05), lighter over darker (written here again)."""
    la, lb = sorted((P.relative_luminance(a), P.relative_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def _backgrounds() -> list[str]:
    import matplotlib

    levels = np.linspace(0.0, 1.0, 65)
    out = []
    for name in MAPS:
        rgb = matplotlib.colormaps[name](levels)[:, :3]
        out += [_hex(c) for c in rgb]  # inverted maps run through the same colours backwards
    return out


def test_relative_luminance_agrees_with_scikit_image_xyz():
    from skimage.color import rgb2xyz

    for colour in CORES + [P.CASING_COLOUR, "#777777", "#ffffff", "#000000"]:
        y = float(rgb2xyz(_rgb(colour)[None, None, :])[0, 0, 1])
        assert P.relative_luminance(colour) == pytest.approx(y, abs=2e-3), colour
    # WCAG 2.1: black on white is 21:1
    assert _contrast("#000000", "#ffffff") == pytest.approx(21.0)


def test_every_mark_reads_on_every_background_of_the_window():
    """On every background (the casing blended over it at its opacity, as the window paints it) the core
    parts from its casing as text must (4.5:1, SC 1.4.3), and the glyph's outside, core or casing,
    stands out from the background as a graphical object must (3:1, SC 1.4.11)."""
    for bg in _backgrounds():
        casing = _hex(P.CASING_ALPHA * _rgb(P.CASING_COLOUR) + (1 - P.CASING_ALPHA) * _rgb(bg))
        for core in CORES:
            assert _contrast(core, casing) >= 4.5, (core, bg)
            best = max(_contrast(core, bg), _contrast(casing, bg))
            assert best >= 3.0, (core, bg, best)


def test_system_colours_and_the_centre_are_plainly_different():
    from skimage.color import deltaE_ciede2000, rgb2lab

    labs = {c: rgb2lab(_rgb(c)[None, None, :])[0, 0] for c in CORES}
    for a, b in itertools.combinations(CORES, 2):
        assert float(deltaE_ciede2000(labs[a], labs[b])) > 20.0, (a, b)


def test_every_glyph_leaves_the_marked_point_open_and_kinds_differ():
    shapes = {}
    for kind, lines in P.GLYPHS.items():
        assert P.inner_radius(kind) >= 0.45, kind  # nearly half the glyph's radius is clear round the point
        shapes[kind] = sorted(tuple(round(v, 6) for xy in line for v in xy) for line in lines)
    assert len({str(s) for s in shapes.values()}) == len(shapes)
    # on screen: at least 2 px clear round the point, the casing included
    assert P.open_radius_px() >= 2.0


def test_tab_ink_is_the_more_legible_of_dark_and_white():
    for colour in CORES + ["#202020", "#3050a0"]:
        ink = P.tab_ink(colour)
        other = "#ffffff" if ink == P.TAB_INK else P.TAB_INK
        assert _contrast(colour, ink) >= _contrast(colour, other), colour


def test_the_report_draws_the_same_glyphs_and_colours():
    from matplotlib.figure import Figure

    from lensmass.io.report_marks import glyph_marker
    from lensmass.io.report_plots import Overlay, draw_cutout

    ax = Figure().add_subplot()
    img = np.random.default_rng(5).normal(size=(40, 40))
    draw_cutout(ax, img, Overlay(0.1, centre_px=(20, 20), points_px=[(10, 12), (30, 28)], images_px=[(5, 5)],
                                 circle_px=(20, 20, 9.0), system=2))
    cores = [c for c in ax.collections if float(c.get_linewidths()[0]) == pytest.approx(P.CORE_WIDTH_PT)]

    def shape(vertices) -> tuple:  # matplotlib rescales a marker path: compare shapes, not sizes
        v = np.asarray(vertices, float)
        return tuple(np.round(v.ravel() / np.abs(v).max(), 6))

    drawn = {shape(c.get_paths()[0].vertices): _hex(c.get_edgecolors()[0][:3]) for c in cores}
    for kind, colour in (("point", P.system_colour(2)), ("image", P.system_colour(2)), ("centre", P.CENTRE_COLOUR)):
        key = shape(glyph_marker(kind).vertices)
        assert drawn.get(key) == colour, kind
    fits = [p for p in ax.patches if _hex(p.get_edgecolor()[:3]) == P.system_colour(2)]
    assert len(fits) == 1 and fits[0].get_linestyle() in ("-", "solid")


@pytest.mark.parametrize("base", ["#ffffff", "#f0f0f0", "#2b2b2b", "#000000"], ids=["white", "light", "dark", "black"])
def test_system_colours_as_text_read_on_light_and_dark_window_palettes(base):
    for colour in CORES:
        text = P.readable_on(colour, base)
        assert _contrast(text, base) >= 4.5, (colour, base)  # WCAG 2.1 SC 1.4.3, normal text
        assert P.contrast_ratio(text, base) == pytest.approx(_contrast(text, base))
        if _contrast(colour, base) >= 4.5:
            assert text == colour  # left as it is where it already reads
