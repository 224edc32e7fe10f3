"""The window's calls into lensmass.core for measuring marks (no Qt, no physics here).

Each function turns the window's marks into the arguments of one core function
and its answer into a :class:`lensmass.gui.model.SystemFit` for drawing. The
numbers themselves (fits, ridge snapping, ring finder, lens light, estimate)
all come from :mod:`lensmass.core`.
"""

from __future__ import annotations

import importlib
from typing import Any

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.gui.model import ImageState, SystemFit

#: 1-sigma precision of a hand-placed mark in image pixels (common practice: about half a pixel);
#: the fits use the larger of this and the scatter of the points.
CLICK_PRECISION_PX = 0.5


def _core(name: str, what: str):
    try:
        return importlib.import_module(f"lensmass.core.{name}")
    except ModuleNotFoundError as exc:
        if exc.name == f"lensmass.core.{name}":
            raise LensInputError(f"{what} is not available in this build (lensmass.core.{name} is missing).") from None
        raise


def _scale(image: ImageState) -> float:
    scale = image.pixel_scale_arcsec
    if not scale:
        raise LensInputError("This image has no pixel scale (no WCS): set it under Image > Pixel scale to measure theta_E.")
    return float(scale)


def measure_system(system, centre: tuple[float, float] | None, image: ImageState) -> SystemFit:
    """Fit one arc system's marks: circle or ellipse through the arc points (and images),
    or the multiple-image estimate when only images are marked.

    The fit is made in image pixels and scaled by the (area-equivalent) pixel
    scale of the image; positions are held at the lens centre when it is set.
    """
    arcfit = _core("arcfit", "Arc fitting")
    scale = _scale(image)
    pts = np.asarray(list(system.points) + list(system.images), float).reshape(-1, 2)
    n_points, n_images = len(system.points), len(system.images)
    if n_points < 3 and n_images >= 2 and n_points == 0:
        est = arcfit.multiple_image_radius(pts[:, 0], pts[:, 1], center=centre, point_err=CLICK_PRECISION_PX)
        r = est.radius
        return SystemFit("images", est.center_x, est.center_y, r, r, 0.0, r * scale, est.radius_err * scale,
                         est.n_images, est.method, tuple(est.warnings))
    need = 1 if centre is not None and system.shape == "circle" else 3 if system.shape == "circle" else 5
    if len(pts) < need:
        what = "points on the arc" if n_images == 0 else "arc points or images"
        raise LensInputError(f"Mark at least {need} {what} to fit a {system.shape} (now {len(pts)}).")
    if system.shape == "ellipse":
        fit = arcfit.fit_ellipse(pts[:, 0], pts[:, 1], center=centre, point_err=CLICK_PRECISION_PX)
        method = f"ellipse through {fit.n_points} marks, theta_E = sqrt(a b)"
        return SystemFit("ellipse", fit.center_x, fit.center_y, fit.semi_major, fit.semi_minor, fit.angle_deg,
                         fit.theta_e * scale, fit.theta_e_err * scale, fit.n_points,
                         method + (" (centre held)" if fit.center_fixed else ""), tuple(fit.warnings))
    fit = arcfit.fit_circle(pts[:, 0], pts[:, 1], center=centre, point_err=CLICK_PRECISION_PX)
    method = f"circle through {fit.n_points} marks" + (" (centre held at the lens centre)" if fit.center_fixed else "")
    return SystemFit("circle", fit.center_x, fit.center_y, fit.radius, fit.radius, 0.0, fit.radius * scale,
                     fit.radius_err * scale, fit.n_points, method, tuple(fit.warnings))


def snap_to_ridge(image: ImageState, x: float, y: float, centre: tuple[float, float] | None) -> tuple[float, float]:
    """Move a click onto the nearest arc ridge (lensmass.core.ridge); the click itself if none is near."""
    ridge = _core("ridge", "Snapping onto the arc ridge")
    data = image.residual if image.lens_light is not None else image.data
    out = ridge.refine_to_ridge(data, x, y, center=centre)
    if isinstance(out, tuple) and len(out) >= 2:
        return float(out[0]), float(out[1])
    return float(getattr(out, "x", x)), float(getattr(out, "y", y))


def call_with_callbacks(fn, *args, progress=None, should_stop=None, **kwargs) -> Any:
    """Call a core function passing progress/should_stop only if it accepts them."""
    import inspect

    try:
        params = inspect.signature(fn).parameters
    except (TypeError, ValueError):
        params = {}
    if "progress" in params and progress is not None:
        kwargs["progress"] = progress
    if "should_stop" in params and should_stop is not None:
        kwargs["should_stop"] = should_stop
    return fn(*args, **kwargs)
