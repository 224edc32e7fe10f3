"""The window and the command line measure the lens light inside theta_E by one rule.

Outside check: for the same image, centre and ellipse fit both give the magnitude of the circle of
radius sqrt(a b) (the equal-area circle, common practice for an Einstein radius from an ellipse),
which is also what the core aperture photometry gives for that circle directly.
"""

import math
from argparse import Namespace
from types import SimpleNamespace

import numpy as np
import pytest

pytest.importorskip("PySide6")


def test_window_and_command_line_measure_the_same_magnitude():
    from lensmass.commands.light_options import image_photometry
    from lensmass.core.photometry import lens_magnitude_inside
    from lensmass.gui.light_panel import LightRequest, compute_light

    yy, xx = np.mgrid[0:81, 0:81]
    r = np.hypot(xx - 40.2, yy - 39.7)
    image = 200 * np.exp(-7.669 * ((r / 5.0) ** 0.25 - 1)) + np.random.default_rng(3).normal(0, 1.0, r.shape) + 10
    fit = SimpleNamespace(center_x=40.2, center_y=39.7, a_px=9.0, b_px=6.0, angle_deg=30.0)
    points = [(40.2 + 9 * math.cos(t), 39.7 + 6 * math.sin(t)) for t in np.linspace(0, 6, 12)]
    photometry = {"zeropoint": 28.0, "zeropoint_key": None, "exptime": 1.0, "annulus": (4.0, 6.0),
                  "arc_width_pix": 3.0, "mask_residuals": False}
    request = LightRequest("magnitude", {}, photometry)
    result = {"theta_e_arcsec": 1.0}
    loaded = SimpleNamespace(data=image, loaded=SimpleNamespace(header=None))
    calls = []
    import lensmass.core.light as light

    def no_light(out, **kwargs):
        calls.append(kwargs)
        return out
    original, light.add_light = light.add_light, no_light
    try:
        window = compute_light(result, {}, request, image=loaded, fit=fit, arc_points=points)["light_photometry"]
    finally:
        light.add_light = original
    args = Namespace(zeropoint=28.0, zeropoint_key=None, exptime=1.0, sky_annulus="4,6", arc_width=3.0,
                     mask_bright=False)
    cli = image_photometry(args, image, None, x_pix=40.2, y_pix=39.7, theta_e_pix=math.sqrt(9.0 * 6.0),
                           arc_points_xy=points)
    direct = lens_magnitude_inside(image, 40.2, 39.7, math.sqrt(54.0), zeropoint=28.0, annulus=(4.0, 6.0),
                                   arc_points_xy=np.asarray(points), arc_width_pix=3.0)
    assert window["aperture_mag"] == cli["aperture_mag"] == direct["aperture_mag"]
    assert calls and calls[0]["aperture_mag"] == window["aperture_mag"]
