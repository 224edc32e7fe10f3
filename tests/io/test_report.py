"""The one-page report: it renders headless, is not blank, says what produced each number.

Outside references: the PDF 1.x file header "%PDF-" (ISO 32000-1, sec. 7.5.2) and the PNG signature
(RFC 2083, sec. 3.1); A4 is 210 x 297 mm (ISO 216); matplotlib.image.imread reads the PNG back.
"""

from __future__ import annotations

import hashlib
import sys

import numpy as np
import pytest
from matplotlib.image import imread

from lensmass.core.errors import LensInputError
from lensmass.core.estimate import estimate
from lensmass.io.report import (
    Overlay,
    cutout,
    format_interval,
    format_value,
    inputs_from_session,
    render_report,
    report_figure,
)
from lensmass.io.session import ArcSystem, ImageRef, LensCentre, Session


@pytest.fixture(scope="module")
def scene():
    """A small invented ring image of the Kestrel survey field K-17 and its estimate."""
    yy, xx = np.mgrid[0:120, 0:120]
    cx, cy, rpx = 60.4, 58.7, 20.0
    rr = np.hypot(xx - cx, yy - cy)
    image = 100 * np.exp(-0.5 * (rr / 4) ** 2) + 30 * np.exp(-0.5 * ((rr - rpx) / 1.5) ** 2)
    image += np.random.default_rng(5).normal(0, 1, image.shape)
    image[3, 3] = np.nan  # a bad pixel must not break the stretch
    angles = np.linspace(0.2, 2.6, 6)
    points = [(cx + rpx * np.cos(a), cy + rpx * np.sin(a)) for a in angles]
    cut, origin = cutout(image, (cx, cy), 40)
    overlay = Overlay(0.06, centre_px=(cx, cy), points_px=points, circle_px=(cx, cy, rpx), origin_px=origin,
                      label="K-17 arc A")
    result = estimate(rpx * 0.06, 0.38, 1.4, theta_e_err=0.04, z_l_err=0.005, samples=400, seed=9)
    session = Session(image=ImageRef("/data/kestrel/k17.fits"), centre=LensCentre(cx, cy), z_l=0.38, z_l_err=0.005,
                      arcs=[ArcSystem("A", z_s=1.4, points=points)], mc_samples=400, mc_seed=9)
    return cut, overlay, inputs_from_session(session, 0, rpx * 0.06, 0.04), result


def test_png_is_a_legible_a4_page_and_not_blank(tmp_path, scene):
    cut, overlay, inputs, result = scene
    path = render_report(tmp_path / "k17.png", cut, overlay, inputs, result, dpi=60,
                         subtitle="Kestrel survey field K-17")
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature, RFC 2083
    pixels = imread(path)
    h, w = pixels.shape[:2]
    assert h / w == pytest.approx(297 / 210, rel=0.01)  # A4 portrait, ISO 216
    grey = pixels[..., :3].mean(axis=-1)
    assert grey.var() > 1e-3  # not blank
    assert (grey < 0.5).mean() > 0.02  # there is ink on the page (text, image, curves)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["k17.png"]


def test_pdf_starts_with_the_pdf_header(tmp_path, scene):
    cut, overlay, inputs, result = scene
    path = render_report(tmp_path / "k17.pdf", cut, overlay, inputs, result)
    data = path.read_bytes()
    assert data[:5] == b"%PDF-"  # ISO 32000-1 file header
    assert b"%%EOF" in data[-64:]


def _all_text(fig) -> str:
    texts = [t.get_text() for t in fig.texts]
    for ax in fig.axes:
        texts += [t.get_text() for t in ax.texts]
        texts += [ax.get_xlabel(), ax.get_ylabel(), ax.get_title(loc="left")]
        legend = ax.get_legend()
        if legend is not None:
            texts += [t.get_text() for t in legend.get_texts()]
    return "\n".join(texts)


def test_page_states_results_models_method_and_references(scene):
    cut, overlay, inputs, result = scene
    text = _all_text(report_figure(cut, overlay, inputs, result))
    assert format_value(result["mass_einstein_msun"]) in text
    lo, hi = result["intervals68"]["mass_einstein_msun"]
    assert format_interval(lo, hi, result["mass_einstein_msun"]) in text
    for model_text in set(result["models"].values()):
        assert model_text[:40] in text.replace("\n", " ")
    for note in result["notes"]:
        assert note[:30] in text.replace("\n", " ")
    for ref in ("Narayan R., Bartelmann M. 1996", "Wright C. O., Brainerd T. G. 2000", "Duffy A. R.",
                "Hogg D. W. 1999", "Astropy Collaboration"):
        assert ref in text.replace("\n", " ")
    assert "Planck18" in text and "k17.fits" in text
    assert "SIS" in text and "NFW halo alone" in text


def test_dutton_relation_adds_its_reference():
    result = estimate(1.5, 0.3, 1.0, concentration="dutton14")
    text = _all_text(report_figure(None, Overlay(0.05), {}, result)).replace("\n", " ")
    assert "Dutton A. A., Maccio A. V. 2014" in text


def test_report_without_image_or_uncertainty_still_renders(tmp_path):
    result = estimate(1.1, 0.25, 0.9)
    path = render_report(tmp_path / "plain.png", None, Overlay(0.05), {"z_l": 0.25}, result, dpi=40)
    assert imread(path)[..., :3].var() > 1e-4
    text = _all_text(report_figure(None, Overlay(0.05), {}, result))
    assert "no uncertainty propagated" in text and "no image" in text


def test_bad_requests_give_one_sentence(tmp_path, scene):
    cut, overlay, inputs, result = scene
    with pytest.raises(LensInputError, match="name the file .png or .pdf"):
        render_report(tmp_path / "k17.docx", cut, overlay, inputs, result)
    with pytest.raises(LensInputError, match="positive pixel scale"):
        report_figure(cut, Overlay(0.0), inputs, result)
    with pytest.raises(LensInputError, match="two-dimensional"):
        report_figure(np.zeros((3, 4, 5)), overlay, inputs, result)
    assert list(tmp_path.iterdir()) == []


def test_failed_write_keeps_the_old_report(tmp_path, scene, monkeypatch):
    cut, overlay, inputs, result = scene
    path = render_report(tmp_path / "k17.png", cut, overlay, inputs, result, dpi=30)
    before = hashlib.sha256(path.read_bytes()).hexdigest()

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr("lensmass.io.atomic.os.replace", broken_replace)
    with pytest.raises(LensInputError, match="choose another folder"):
        render_report(path, cut, overlay, inputs, result, dpi=30)
    assert hashlib.sha256(path.read_bytes()).hexdigest() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["k17.png"]


def test_no_pyplot_state_is_used(scene):
    before = "matplotlib.pyplot" in sys.modules
    cut, overlay, inputs, result = scene
    report_figure(cut, overlay, inputs, result)
    assert ("matplotlib.pyplot" in sys.modules) == before


def test_cutout_clips_at_the_edges():
    img = np.arange(400.0).reshape(20, 20)
    c, origin = cutout(img, (18.6, 1.2), 4)
    assert origin == (15, 0) and c.shape == (6, 5)
    assert c[0, 0] == img[0, 15]
    with pytest.raises(LensInputError, match="outside the image"):
        cutout(img, (50, 50), 3)


def test_number_formatting_three_significant_figures():
    # Three significant figures and powers of ten for large numbers (common practice in tables).
    assert format_value(2.941e11) == r"$2.94\times10^{11}$"
    assert format_value(9.996e11) == r"$1.00\times10^{12}$"
    assert format_value(0.3504) == "0.350"
    assert format_value(1467.4) == "1467"
    assert format_value(None) == "-"
    assert format_interval(2.69e11, 3.21e11, 2.94e11) == r"[2.69, 3.21]$\times10^{11}$"
    assert format_interval(1.0, 1.0, 1.0) == ""


def test_overlay_marks_sit_in_full_image_pixels():
    from matplotlib.figure import Figure
    from matplotlib.patches import Ellipse

    from lensmass.io.report import draw_cutout

    img = np.random.default_rng(2).normal(0, 1, (50, 60))
    cut, origin = cutout(img, (40.0, 30.0), 15)
    ax = Figure().add_subplot()
    draw_cutout(ax, cut, Overlay(0.1, centre_px=(40.0, 30.0), ellipse_px=(40.0, 30.0, 8.0, 5.0, 30.0),
                                 images_px=[(48.0, 30.0)], origin_px=origin))
    ellipse = ax.patches[0]
    assert isinstance(ellipse, Ellipse)
    assert (ellipse.center, ellipse.width, ellipse.height, ellipse.angle) == ((40.0, 30.0), 16.0, 10.0, 30.0)
    # Pixel centres on integers (numpy/astropy convention, common practice): the cutout spans origin - 0.5 on.
    assert ax.get_xlim() == (origin[0] - 0.5, origin[0] + cut.shape[1] - 0.5)
    # The scale bar's drawn length in pixels times the pixel scale equals the length on its label.
    bar = [line for line in ax.lines if len(line.get_xdata()) == 2][0]
    length_px = np.ptp(bar.get_xdata())
    label = [t.get_text() for t in ax.texts if t.get_text().endswith('"')][0]
    assert length_px * 0.1 == pytest.approx(float(label[:-1]))


def test_a_ring_finders_interval_is_written_whole(scene):
    # The ring finder states theta_E with a 1- and 2-sigma interval (asymmetric for a lone arc,
    # lensmass.core.ring_interval); the report's inputs give both bounds, not a symmetric error.
    *_, _inputs, _result = scene
    session = Session(z_l=0.38, arcs=[ArcSystem("A", z_s=1.4, points=[(1.0, 2.0), (3.0, 4.0), (5.0, 1.0)])])
    rows = inputs_from_session(session, 0, 1.787, 0.8, theta_e_bounds=(0.883, 1.435, 3.036, 4.487))
    assert rows["theta_E measured"] == "1.787 arcsec, 1 sigma 1.435-3.036"
    assert rows["theta_E 2 sigma"] == "0.883-4.487 arcsec (ring finder)"
    assert "±" in inputs_from_session(session, 0, 1.787, 0.05)["theta_E measured"]


def test_the_method_paragraph_says_where_theta_e_came_from(scene):
    # The report's method paragraph must match how theta_E was measured: the marks' circle fit, or the ring finder
    # (the same words as its `method`, lensmass.core.einstein.measurement_of_ring).
    from lensmass.io.report import _method_text

    *_, result = scene
    assert "fitted to the marked arc points" in _method_text(result)
    found = _method_text({**result, "method": "automatic ring finder (arcs; circle through the ridge)"})
    assert "automatic ring finder's" in found and "marked arc points" not in found


def test_long_notes_stay_in_their_box(scene):
    # A lone arc's notes are long (lensmass.core.ring_shapes): they once ran over the next section's rule. The
    # notes must end inside their box, and notes left out for room are counted on the page (all stay in the result).
    cut, overlay, inputs, result = scene
    long_notes = [f"Note {i}: " + "a sentence that explains a caveat of this measurement at some length " * 3
                  for i in range(9)]
    fig = report_figure(cut, overlay, inputs, {**result, "notes": long_notes})
    renderer = fig.canvas.get_renderer()
    box = next(ax for ax in fig.axes if any(t.get_text() == "NOTES" for t in ax.texts))
    bottom = box.get_window_extent(renderer).y0
    written = [t for t in box.texts if t.get_text() != "NOTES"]
    assert all(t.get_window_extent(renderer).y0 >= bottom - 3 for t in written)  # within 3 px of the box
    text = " ".join(t.get_text() for t in written).replace("\n", " ")
    shown = sum(f"Note {i}:" in text for i in range(9))
    assert 0 < shown < 9 and f"and {9 - shown} more in the saved result's notes" in text


@pytest.mark.parametrize("median", [1e8, 3e13])
def test_histogram_legend_sits_beside_the_bars(median):
    # The legend of the Monte Carlo histogram ("N draws, line: median, shaded: 68%") once covered the bars when
    # the draws lay on the right of the axes: it now goes to the side away from the median.
    from matplotlib.figure import Figure

    from lensmass.core.mass_profiles import SampleHistogram
    from lensmass.io.report_plots import draw_sample_histogram

    edges = np.geomspace(1e6, 1e14, 41)
    counts = np.exp(-0.5 * ((np.log10(edges[:-1]) - np.log10(median)) / 0.3) ** 2)
    hist = SampleHistogram("mass_einstein_msun", counts, edges, True, median, (0.7 * median, 1.4 * median),
                           (0.5 * median, 2 * median), 1000)
    ax = Figure().add_subplot()
    draw_sample_histogram(ax, hist)
    legend = next(t for t in ax.texts if "draws" in t.get_text())
    median_at = ax.transAxes.inverted().transform(ax.transData.transform((median, 0.0)))[0]
    assert (legend.get_position()[0] < 0.5) == (median_at > 0.5)
