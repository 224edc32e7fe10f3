"""The clipped core of a JPEG colour picture: its lens centre (lensmass.core.clipped_plateau, h22d).

Outside references: astropy.visualization.make_lupton_rgb (Lupton et al. 2004, PASP 116, 133) makes the picture,
astropy.modeling.models.Sersic2D the lens, Pillow's JPEG encoder (ISO/IEC 10918-1) the lossy file; the lens centre
is the Sersic profile's own x_0, y_0.
"""

import io

import numpy as np
import pytest
from astropy.modeling.models import Sersic2D
from astropy.visualization import make_lupton_rgb
from PIL import Image

from lensmass.core.clipped_plateau import clipped_plateaus, near_top
from lensmass.core.ringfinder import field_masks
from lensmass.core.ring_result import RingResult


def _jpeg_lupton(seed: int, quality: int) -> tuple[np.ndarray, float, float]:
    rng = np.random.default_rng(seed)
    yy, xx = np.mgrid[0:96, 0:96].astype(float)
    x0, y0 = 47.5 + rng.uniform(-3, 3), 47.5 + rng.uniform(-3, 3)
    lens = Sersic2D(amplitude=1.0, r_eff=6.0, n=4.0, x_0=x0, y_0=y0, ellip=0.1, theta=0.4)(xx, yy)
    lens = 20000.0 * lens / lens.max()
    g, r, i = (c * lens + rng.normal(0, 1, lens.shape) for c in (0.4, 0.7, 1.0))
    with np.errstate(invalid="ignore", divide="ignore"):
        pic = make_lupton_rgb(i, r, g, minimum=0, stretch=5, Q=8)  # a core of some 100 pixels clipped, colour kept
    buf = io.BytesIO()
    Image.fromarray(pic).save(buf, format="JPEG", quality=quality)
    return np.asarray(Image.open(io.BytesIO(buf.getvalue())).convert("RGB"), np.float32), x0, y0


def test_jpeg_clipped_core_gives_the_lens_centre():
    # The lens centre the masks take on eight JPEG pictures (quality 70-95) of a clipped Sersic core: median offset
    # from the Sersic's x_0, y_0. Before the plateau was closed over JPEG's holes: 6.8 pixels (4-10 on each); now 1.2.
    offsets = []
    for seed, quality in [(1, 75), (2, 80), (3, 90), (4, 72), (5, 75), (6, 85), (7, 70), (8, 80)]:
        rgb, x0, y0 = _jpeg_lupton(seed, quality)
        masks = field_masks(rgb @ np.array([0.299, 0.587, 0.114], np.float32), picture=True, colour=rgb)
        offsets.append(np.hypot(masks.center_x - x0, masks.center_y - y0))
    assert np.median(offsets) <= 2.0


def test_scattered_clipped_pixels_make_no_plateau():
    # isolated clipped pixels (a strong stretch clips the sky's noise peaks) stay out of any plateau
    clipped = np.zeros((50, 50), bool)
    clipped[3:50:7, 4:50:6] = True
    assert not clipped_plateaus(clipped, near_top(np.where(clipped[..., None], 255, 30).astype(np.uint8))).any()


def test_ring_at_a_jpeg_clipped_core_edge_is_widened():
    # A ring reported at the edge of the clipped Sersic core of a JPEG make_lupton_rgb picture gets 30% of its radius
    # in its error; one well outside it keeps its error (the core's radius from the same picture).
    from types import SimpleNamespace

    from lensmass.core.clipped_plateau import CORE_EDGE_SYSTEMATIC, lossy_core_radius, widen_near_lossy_core

    rgb, x0, y0 = _jpeg_lupton(2, 80)
    core = lossy_core_radius(rgb, x0, y0)
    assert core > 5  # the clipped core (some 350 pixels with its JPEG holes) is found whole
    near = SimpleNamespace(found=True, radius_pix=core, radius_err_pix=0.5, center_x=x0, center_y=y0, warnings=[])
    far = SimpleNamespace(found=True, radius_pix=3 * core, radius_err_pix=0.5, center_x=x0, center_y=y0, warnings=[])
    widen_near_lossy_core(near, rgb)
    widen_near_lossy_core(far, rgb)
    assert near.radius_err_pix == pytest.approx(np.hypot(0.5, CORE_EDGE_SYSTEMATIC * core)) and near.warnings
    assert far.radius_err_pix == 0.5 and not far.warnings


def test_partial_arcs_inside_a_png_clipped_core_are_refused():
    # The PNG twin (h26d): the same clipped Sersic core written losslessly by Pillow's PNG encoder (make_lupton_rgb
    # keeps the core's colour where it clips). Arcs seen in 30% of the directions at 0.9 core radii are refused as the
    # core's residual; a ring seen all round there, and the same arcs at 2 core radii, are kept.
    from lensmass.core.clipped_plateau import LOSSLESS_CORE_RATIO, lossy_core_radius, refuse_partial_in_lossless_core

    rng = np.random.default_rng(2)
    yy, xx = np.mgrid[0:96, 0:96].astype(float)
    lens = Sersic2D(amplitude=1.0, r_eff=6.0, n=4.0, x_0=47.0, y_0=48.0, ellip=0.1, theta=0.4)(xx, yy)
    lens = 200000.0 * lens / lens.max()  # a core of some 125 pixels clipped, colour kept
    g, r, i = (c * lens + rng.normal(0, 1, lens.shape) for c in (0.4, 0.7, 1.0))
    with np.errstate(invalid="ignore", divide="ignore"):
        pic = make_lupton_rgb(i, r, g, minimum=0, stretch=5, Q=8)
    buf = io.BytesIO()
    Image.fromarray(pic).save(buf, format="PNG")
    rgb = np.asarray(Image.open(io.BytesIO(buf.getvalue())).convert("RGB"), np.float32)
    assert np.array_equal(rgb, pic)  # lossless
    core = lossy_core_radius(rgb, 47.0, 48.0)
    assert core > 5

    def answer(radius, coverage):
        empty = np.array([])
        return RingResult(True, True, "arcs", radius, 0.5, 5.0, coverage, 47.0, 48.0, 1.0, 0.0, 0.1, empty, empty,
                          empty, empty, empty, 1.0, None, None)

    inside, whole, outside = answer(0.9 * core, 0.3), answer(0.9 * core, 0.8), answer(2 * LOSSLESS_CORE_RATIO * core, 0.3)
    for out in (inside, whole, outside):
        refuse_partial_in_lossless_core(out, rgb)
    assert not inside.found and not inside.confident and "clipped core" in inside.warnings[0]
    assert inside.message.startswith("No ring")
    assert whole.found and not whole.warnings and outside.found and not outside.warnings
