"""The ring finder on three-band 8-bit colour pictures (PNG/JPEG, as survey viewers give cutouts).

The pictures are the asinh stretch of Lupton et al. (2004, PASP 116, 133; common practice for
colour cutouts) of the project's own generated fields (:mod:`lensmass.core.realistic_fields`), the
truth the SIE Einstein radius of Kormann, Schneider & Bartelmann (1994). Coverage targets are those
of a Gaussian error (68.3% / 95.4%, common practice); the issue asks for 60-76% and at least 90%.
Seeds 610000-610999 were not used to tune the colour route (tuned on 510000-519999).
"""

import io

import numpy as np
import pytest

from lensmass.core.colour_separation import arc_image, choose_strength, linearise, noise_normalised
from lensmass.core.realistic_fields import colour_picture, make_cutout
from lensmass.core.ringfinder import find_ring, lossy_error_scale

#: Unseen seeds (see the module docstring): the first rings of make_sample's cycle from here.
FIRST_SEED = 610000
N_RINGS = 12


def test_linearise_undoes_numpy_asinh_stretch():
    # Reference: the stretch written with numpy's arcsinh (Lupton et al. 2004, eq. 2 per band).
    flux = np.geomspace(0.01, 300.0, 50)
    for soft, top in ((1.0, 300.0), (6.0, 100.0)):
        strength = np.arcsinh(top / soft)
        v = 255 * np.arcsinh(flux / soft) / strength
        assert np.allclose(linearise(v[None, :, None], strength)[0, :, 0] * soft, flux, rtol=1e-10)


def test_arc_image_cancels_a_red_lens_and_keeps_a_blue_ring():
    # Colours of the generator (lens g/i 0.35, arc g/i 1.67) through the stretch of the picture itself.
    c = make_cutout(610006, "ring")
    pic = colour_picture(c)
    strength = np.arcsinh(np.percentile(c.bands[2], 99.8) / 2.0)
    arcs = arc_image(pic, c.truth["center_x"], c.truth["center_y"], strength)
    yy, xx = np.mgrid[0:pic.shape[0], 0:pic.shape[1]]
    r = np.hypot(xx - c.truth["center_x"], yy - c.truth["center_y"])
    te = c.truth["radius_pix"]
    lens_only = (r > 1.5) & (r < 0.4 * te)
    on_ring = np.abs(r - te) < 0.5
    sky = np.nanstd(arcs[r > 2 * te])
    assert abs(np.nanmedian(arcs[lens_only])) < 2 * sky          # the lens (peak >= 30 sigma) is gone
    assert np.nanmedian(arcs[on_ring]) > 3 * sky                 # the ring is not


def _jpeg(pic):
    from PIL import Image

    buf = io.BytesIO()
    Image.fromarray(pic, "RGB").save(buf, format="JPEG", quality=90)
    return np.asarray(Image.open(io.BytesIO(buf.getvalue())).convert("RGB"))


def _colour_ring(pic, compressed=False):
    return find_ring(pic.astype(np.float32) @ np.array([0.299, 0.587, 0.114], np.float32), colour=pic,
                     compressed=compressed)


@pytest.fixture(scope="module")
def rings():
    from lensmass.core.realistic_fields import make_sample

    # make_sample cycles through the lens kinds: ring, arc, ring+neighbour, ring+star, arc+..., so
    # the rings are every cutout whose kind starts with "ring".
    cutouts = [c for c in make_sample(2 * N_RINGS, 0, first_seed=FIRST_SEED) if c.truth["kind"].startswith("ring")]
    return cutouts[:N_RINGS]


def test_colour_pictures_find_rings_as_fits_does(rings, capsys):
    """Same fields as the r band (FITS), as a PNG and as a JPEG: rings within 5% and the coverage."""
    lines, within, pulls = [], {}, {}
    for route in ("FITS", "PNG", "JPEG"):
        ok, pull = 0, []
        for c in rings:
            if route == "FITS":
                r = find_ring(c.image)
            else:
                pic = colour_picture(c)
                r = (_colour_ring(_jpeg(pic), compressed=90) if route == "JPEG" else _colour_ring(pic))
                assert not r.confident and any("not calibrated flux" in w for w in r.warnings)
            truth = c.truth["radius_pix"]
            ok += bool(r.found and abs(r.radius_pix / truth - 1) <= 0.05)
            if r.found:
                pull.append((r.radius_pix - truth) / r.radius_err_pix)
        within[route], pulls[route] = ok, np.abs(pull)
        lines.append(f"{route}: {ok}/{len(rings)} within 5%, inside 1/2 sigma "
                     f"{np.mean(pulls[route] <= 1):.0%} / {np.mean(pulls[route] <= 2):.0%}")
    with capsys.disabled():
        print("\n[colour pictures, unseen seeds] " + "; ".join(lines))
    # The target is the FITS rate. On these 12 rings (every ring, 1.5-6 FWHM) the finder finds 11 within 5%
    # on the r band; the colour route that reads the stretch from the lens's pixels finds 6 on the PNG and 3 on
    # the JPEG q90 (first run; the route it replaced: 8 and 8, but it assumed our own per-band asinh and found
    # 29-50% of hard rings on Lupton pictures): the pictures stay short of the FITS rate (an open item), so this
    # guards the pictures' own counts against losing more, and the 2-sigma coverage.
    assert within["FITS"] >= 10
    assert within["PNG"] >= 5 and within["JPEG"] >= 2
    for route in ("PNG", "JPEG"):
        assert np.mean(pulls[route] <= 2) >= 0.85


def test_jpeg_files_are_read_as_lossy_and_their_error_scaled(tmp_path):
    # JPEG is lossy by its standard (ISO/IEC 10918-1; common practice), PNG lossless (ISO/IEC 15948).
    from PIL import Image

    from lensmass.core.einstein import find_ring_on_image
    from lensmass.io.images import load_image

    c = make_cutout(FIRST_SEED + 6, "ring")
    pic = colour_picture(c)
    Image.fromarray(pic, "RGB").save(tmp_path / "cut.png")
    Image.fromarray(pic, "RGB").save(tmp_path / "cut.jpg", quality=90)
    png, jpg = load_image(tmp_path / "cut.png"), load_image(tmp_path / "cut.jpg")
    assert not png.lossy and jpg.lossy
    r_png, r_jpg = find_ring_on_image(png), find_ring_on_image(jpg)
    assert any("lossy compression" in w for w in r_jpg.warnings)
    assert not any("lossy compression" in w for w in r_png.warnings)
    assert jpg.jpeg_quality == 90  # read from the file's quantisation tables (ITU-T T.81 Annex K, IJG scaling)
    plain = find_ring(jpg.data, colour=jpg.rgb, compressed=jpg.jpeg_quality)
    assert r_jpg.found and plain.found
    assert r_jpg.radius_pix == plain.radius_pix and r_jpg.radius_err_pix == plain.radius_err_pix
    assert any("quality 90), which blurs" in w and f"scaled by {lossy_error_scale(90):.2f}" in w
               for w in r_jpg.warnings)


def test_lupton_pictures_keep_colours_and_per_band_asinh_does_not():
    # Reference: astropy's make_lupton_rgb docstring (Lupton et al. 2004): one factor f(I)/I on all bands,
    # so a one-colour object keeps one band ratio at every brightness; a per-band asinh bends it to 1.
    c = make_cutout(630000, "elliptical")
    t = c.truth
    yy, xx = np.mgrid[0:c.image.shape[0], 0:c.image.shape[1]]
    r = np.hypot(xx - t["center_x"], yy - t["center_y"])
    ratios = {}
    for stretch in ("lupton", "asinh"):
        pic = colour_picture(c, stretch=stretch).astype(float)
        ok = (pic[..., 0] < 255) & (r < 20)
        bright, faint = ok & (pic[..., 0] >= 180), ok & (pic[..., 0] >= 90) & (pic[..., 0] < 140)
        ratios[stretch] = [np.median(pic[m, 2] / pic[m, 0]) for m in (bright, faint)]
    assert abs(ratios["lupton"][0] / ratios["lupton"][1] - 1) < 0.1
    assert ratios["asinh"][0] / ratios["asinh"][1] > 1.15


def test_the_lens_pixels_choose_a_straight_locus_for_colour_keeping_stretches():
    # Lupton (astropy make_lupton_rgb) and a clipped linear stretch put a one-colour lens on a straight line
    # (strength near 0); a per-band asinh of strength asinh(top / soft) (numpy) on a curve (strength >= 2).
    chosen = {}
    for stretch in ("lupton", "linear", "asinh"):
        picks = []
        for seed in range(630010, 630016):
            c = make_cutout(seed, "ring", theta_e_over_fwhm=(2.5, 6.0))
            pic = colour_picture(c, stretch=stretch)
            picks.append(choose_strength(pic, c.truth["center_x"], c.truth["center_y"], 0.5 * c.truth["radius_pix"])[0])
        chosen[stretch] = np.array(picks)
    assert np.mean(chosen["lupton"] <= 1.0) >= 5 / 6 and np.mean(chosen["linear"] <= 1.0) >= 5 / 6
    assert np.mean(chosen["asinh"] >= 2.0) >= 4 / 6


def test_noise_normalised_map_has_unit_noise_whatever_the_gain():
    # Reference: numpy's normal generator (unit variance), scaled by a radial gain as a stretch scales it.
    yy, xx = np.mgrid[0:101, 0:101]
    r = np.hypot(xx - 50, yy - 50)
    gain = 1 / (1 + 0.2 * r)
    snr = noise_normalised(np.random.default_rng(630020).normal(0, 1, r.shape) * gain, 50, 50)
    for lo, hi in ((4, 12), (20, 30), (40, 48)):
        assert abs(np.std(snr[(r >= lo) & (r < hi)]) - 1) < 0.1


def _jpeg_q(pic, quality):
    from PIL import Image

    buf = io.BytesIO()
    Image.fromarray(pic, "RGB").save(buf, format="JPEG", quality=quality, subsampling=2)  # Pillow, 4:2:0
    return np.asarray(Image.open(io.BytesIO(buf.getvalue())).convert("RGB"))


@pytest.fixture(scope="module")
def hard_rings():
    # The hard case (a ring >= 2.5 seeing FWHM with a neighbour or a star), check seeds.
    return [make_cutout(630100 + i, ("ring+neighbour", "ring+star")[i % 2], theta_e_over_fwhm=(2.5, 6.0))
            for i in range(N_RINGS)]


@pytest.mark.parametrize("stretch, quality, at_least", [
    # First run: 9, 8, 9 and 2 of 12 (JPEG q75 is the open item); guards one below.
    ("lupton", None, 8), ("lupton-mild", None, 7), ("sqrt", None, 8), ("asinh", 75, 1)])
def test_hard_rings_on_other_stretches(hard_rings, stretch, quality, at_least, capsys):
    """Pictures made by stretches other than our per-band asinh (astropy's make_lupton_rgb with Q 8 and
    Q 3, a clipped square root, Pillow's JPEG q75): hard rings within 5%, the 2-sigma coverage."""
    ok, pulls = 0, []
    for c in hard_rings:
        pic = colour_picture(c, stretch=stretch)
        if quality:
            pic = _jpeg_q(pic, quality)
        r = _colour_ring(pic, compressed=quality or False)
        assert not r.confident
        truth = c.truth["radius_pix"]
        ok += bool(r.found and abs(r.radius_pix / truth - 1) <= 0.05)
        if r.found:
            pulls.append(abs(r.radius_pix - truth) / r.radius_err_pix)
    with capsys.disabled():
        print(f"\n[{stretch}{f', JPEG q{quality}' if quality else ''}, check seeds] hard rings {ok}/{len(hard_rings)} "
              f"within 5%, inside 1/2 sigma {np.mean(np.array(pulls) <= 1):.0%} / {np.mean(np.array(pulls) <= 2):.0%}")
    assert ok >= at_least
    assert np.mean(np.array(pulls) <= 2) >= 0.8


def test_pictures_whose_display_interval_lies_below_the_sky(capsys):
    # astropy's make_rgb with a PercentileInterval per band (its lower end below the sky) and a square-root
    # stretch: each band's sky is lifted by its own amount. Without the sky levels taken out of the arc image
    # the lens's wings read as a blue ring: seeds 600423 and 600426 gave 55.3 and 49.2 pixels (truth 22.6 and
    # 19.9, 15 and 13 sigma off); with them, all eight within 1.6 sigma and six within 5% (run 2026-12-03).
    from astropy.visualization import PercentileInterval, SqrtStretch, make_rgb

    pulls, within = [], 0
    for seed in range(600420, 600428):
        c = make_cutout(seed, "ring")
        g, r, i = c.bands
        r_out = _colour_ring(make_rgb(i, r, g, interval=PercentileInterval(99.5), stretch=SqrtStretch()))
        truth = c.truth["radius_pix"]
        assert r_out.found and not r_out.confident
        pulls.append(abs(r_out.radius_pix - truth) / r_out.radius_err_pix)
        within += abs(r_out.radius_pix / truth - 1) <= 0.05
    with capsys.disabled():
        print(f"\n[make_rgb sqrt, percentile per band] within 5% {within}/8, pulls {np.round(pulls, 1).tolist()}")
    assert within >= 5 and sum(p <= 2 for p in pulls) >= 7
