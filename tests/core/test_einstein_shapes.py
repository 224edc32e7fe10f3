"""theta_E from marks: refusals and orientation (lensmass.core.einstein, lensmass.io.images)."""

import numpy as np
import pytest
from PIL import Image

from lensmass.core.einstein import measure_theta_e_from_points
from lensmass.core.errors import LensInputError
from lensmass.io.images import load_image


def test_ellipse_on_a_short_arc_is_refused_not_given_a_tiny_error():
    # The issue: points on one arc fitted as an ellipse gave 5245 +- 0.027" for a 13" lens. A short arc fixes a
    # local curvature, not the axes of an ellipse (common practice): refuse with one sentence.
    t = np.radians(np.linspace(10, 80, 9))
    x, y = 100 + 65 * np.cos(t), 100 + 60 * np.sin(t)
    with pytest.raises(LensInputError, match="short arc"):
        measure_theta_e_from_points(x, y, shape="ellipse", pixel_scale_arcsec=0.2)
    with pytest.raises(LensInputError, match="short arc"):
        measure_theta_e_from_points(x, y, shape="ellipse", center=(100, 100), pixel_scale_arcsec=0.2)


def test_single_arc_circle_says_it_overestimates():
    t = np.radians(np.linspace(0, 70, 8))
    m = measure_theta_e_from_points(50 + 10 * np.cos(t), 50 + 10 * np.sin(t), pixel_scale_arcsec=0.1,
                                    center=(50, 50))
    assert any("outside the critical curve" in n for n in m.notes)


@pytest.mark.parametrize("scale_later", [False, True])
@pytest.mark.parametrize("pa_deg", [30.0, 120.0])
def test_png_position_angle_is_not_mirrored(tmp_path, pa_deg, scale_later):
    # PNG/JPEG rows run from the top (common practice for pictures): on a north-up, east-left cutout a ring
    # elongated at PA (east of north) must come back with that PA, not 180 - PA (the issue saw 150 for 30).
    s = 0.1
    p = tmp_path / "cutout.png"
    Image.fromarray(np.zeros((200, 200), np.uint8)).save(p)
    if scale_later:  # the window's way: open the picture, then set its pixel scale
        image = load_image(p)
        image.pixel_scale_arcsec = s
    else:
        image = load_image(p, pixel_scale_arcsec=s)
    t = np.linspace(0, 2 * np.pi, 25)[:-1]
    a, b = 6.0, 4.0  # arcsec
    major = np.array([np.sin(np.radians(pa_deg)), np.cos(np.radians(pa_deg))])  # (east, north)
    minor = np.array([-major[1], major[0]])
    east = a * np.cos(t) * major[0] + b * np.sin(t) * minor[0]
    north = a * np.cos(t) * major[1] + b * np.sin(t) * minor[1]
    x = 100 - east / s  # east is to the left
    y = 100 - north / s  # north is up, and row 0 is the top row
    m = measure_theta_e_from_points(x, y, image=image, shape="ellipse")
    assert m.fit_position_angle_deg == pytest.approx(pa_deg, abs=0.5)
    assert m.theta_e_arcsec == pytest.approx(np.sqrt(a * b), rel=1e-4)
