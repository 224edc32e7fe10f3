"""Grey 8-bit pictures (one band through a display stretch, saved as PNG): the ring finder undoes the
stretch instead of taking the picture's values for flux.

References: the asinh stretch of Lupton et al. (2004, PASP 116, 133) and the square-root stretch (common
practice for survey and image-viewer cutouts); PNG is lossless 8-bit (ISO/IEC 15948), written and read by
Pillow. Truth from lensmass.core.realistic_fields (check seeds 600000+, not used for tuning).
"""

import copy

import numpy as np
import pytest

from lensmass.core.realistic_fields import make_cutout
from lensmass.core.ringfinder import find_ring

SEEDS = tuple(range(600420, 600432))  # twelve "ring" fields


def _asinh8(c, soft=2.0):
    r = c.bands[1]
    top = max(float(np.percentile(r, 99.8)), 3 * soft)
    return np.clip(np.round(255 * np.arcsinh(np.clip(r, 0, None) / soft) / np.arcsinh(top / soft)), 0, 255)


def _sqrt8(c):
    r = c.bands[1]
    return np.clip(np.round(255 * np.sqrt(np.clip(r, 0, None) / np.percentile(r, 99.5))), 0, 255)


# sqrt: before the search started outside the lens core (ring_pictures PICTURE_CORE_RATIO), 4 of the 12 were the core's
# residual at 3.8-5.2 pixels (truth 11-23); now 11 found, 7 within 5% (run 2026-12-03).
@pytest.mark.parametrize("stretch, least", [(_asinh8, (10, 8, 10)), (_sqrt8, (10, 6, 9))], ids=["asinh", "sqrt"])
def test_grey_pictures_found_within_their_errors_and_never_confident(stretch, least):
    # Read as flux (main before this route), the asinh pictures of seeds 562000+ gave hard rings within 5%
    # 10% of the time and the truth inside 2 sigma 68%; the counts below guard the route's own figures.
    found = within = inside2 = 0
    for seed in SEEDS:
        c = make_cutout(seed, "ring")
        out = find_ring(stretch(c), stretched=True)
        truth = c.truth["radius_pix"]
        assert not out.confident
        if out.found:
            assert any("grey 8-bit picture" in w for w in out.warnings)
            found += 1
            within += abs(out.radius_pix / truth - 1) < 0.05
            inside2 += abs(out.radius_pix - truth) < 2 * out.radius_err_pix
    print(f"[grey pictures, {stretch.__name__}] found {found}/12, within 5% {within}, inside 2 sigma {inside2}")
    assert found >= least[0] and within >= least[1] and inside2 >= least[2]


def test_grey_png_is_read_as_eight_bit_and_measured_as_a_picture(tmp_path):
    from PIL import Image

    from lensmass.core.einstein import find_ring_on_image
    from lensmass.io.images import load_image

    c = make_cutout(SEEDS[0], "ring+star")
    Image.fromarray(_asinh8(c).astype(np.uint8), "L").save(tmp_path / "grey.png")
    img = load_image(tmp_path / "grey.png")
    assert img.eight_bit and img.rgb is None
    assert find_ring_on_image(img).radius_pix == find_ring(img.data, stretched=True).radius_pix


def test_window_masks_are_the_finders_on_pictures():
    # One code path (issue 14): the window's mask panel calls field_masks, which must give the masks the
    # finder used, for a grey picture and a colour one (colour_picture: per-band asinh, Lupton et al. 2004).
    from lensmass.core.realistic_fields import colour_picture
    from lensmass.core.ringfinder import field_masks

    c = make_cutout(SEEDS[1], "ring+star")
    grey = _asinh8(c)
    assert np.array_equal(field_masks(grey, picture=True).mask, find_ring(grey, stretched=True).masks.mask)
    rgb = colour_picture(c)
    lum = rgb.astype(np.float32) @ np.array([0.299, 0.587, 0.114], np.float32)
    assert np.array_equal(field_masks(lum, picture=True, colour=rgb).mask,
                          find_ring(lum, colour=rgb, stretched=True).masks.mask)


def test_a_ring_inside_the_lens_core_on_a_picture_is_not_reported():
    # On tuning seeds 590000-590099/595000-595099 every picture ring found inside 0.65 of the lens's
    # half-maximum diameter was the stretched core's residual, 54-77% smaller than theta_E (ringfinder
    # PICTURE_CORE_RATIO); the rule is checked here on a hand-made result, both sides of the limit.
    from lensmass.core.cutout_masks import FieldObject
    from lensmass.core.ring_pictures import PICTURE_CORE_RATIO, _refuse_core_residual

    class Masks:
        objects = [FieldObject(1, 40.0, 40.0, 200.0, 1e4, 300, 0.1, 10.0, 1.1, 0.0, kind="lens")]

    c = make_cutout(SEEDS[0], "ring")
    out = find_ring(_asinh8(c), stretched=True)
    assert out.found
    for radius, kept in ((PICTURE_CORE_RATIO * 10.0 - 0.5, False), (PICTURE_CORE_RATIO * 10.0 + 0.5, True)):
        out.found, out.kind, out.radius_pix, out.center_x, out.center_y = True, "ring", radius, 40.0, 40.0
        out.warnings = []
        _refuse_core_residual(out, Masks())
        assert out.found == kept
        assert any("half-maximum" in w for w in out.warnings) != kept


def test_another_stretchs_ring_widens_the_error():
    # The radius seen at another assumed stretch (beyond 20% of the chosen one) is a sign of a wrong candidate:
    # its distance goes into the error in quadrature (tuning seeds 590000-590099: such cases were up to 70% off).
    from lensmass.core.ring_pictures import STRETCH_DISAGREE_SHARE, _widen_for_stretch

    c = make_cutout(SEEDS[0], "ring")
    best = find_ring(_asinh8(c), stretched=True)
    near, far = copy.deepcopy(best), copy.deepcopy(best)
    near.radius_pix, far.radius_pix = best.radius_pix * 1.05, best.radius_pix * 1.8
    err0 = best.radius_err_pix
    spread, n_agreed, apart = _widen_for_stretch(best, [near, far])
    assert n_agreed == 2 and np.isclose(apart, 0.8 * best.radius_pix)
    assert np.isclose(best.radius_err_pix, np.sqrt(err0 ** 2 + spread ** 2 + (STRETCH_DISAGREE_SHARE * apart) ** 2))
    assert any("Another assumed stretch" in w for w in best.warnings)
