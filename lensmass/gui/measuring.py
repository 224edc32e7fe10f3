"""The window's calls into lensmass.core for measuring marks (no Qt, no physics here).

Each function turns the window's marks into the arguments of one core function
and its answer into a :class:`lensmass.gui.model.SystemFit` for drawing. The
numbers themselves (fits, ridge snapping, ring finder, lens light, estimate)
all come from :mod:`lensmass.core`.
"""

from __future__ import annotations

import importlib

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.gui.model import ImageState, SystemFit

def _core(name: str, what: str):
    try:
        return importlib.import_module(f"lensmass.core.{name}")
    except ModuleNotFoundError as exc:
        if exc.name == f"lensmass.core.{name}":
            raise LensInputError(f"{what} is not available in this build (lensmass.core.{name} is missing).") from None
        raise


def measure_system(system, centre: tuple[float, float] | None, image: ImageState) -> SystemFit:
    """Measure one arc system with :func:`lensmass.core.einstein.measure_theta_e_from_points`.

    A circle or ellipse (the system's ``shape``) through its arc points and images,
    or the multiple-image estimate when only images are marked; held at the lens
    centre when one is set. The fit is done in arcsec on the sky by the core; the
    returned shape is converted back to image pixels for drawing.
    """
    if not system.points and not system.images:
        raise LensInputError(f"Arc system {system.name} has no marks yet: click along its arc (or on its images).")
    einstein = _core("einstein", "Measuring theta_E")
    if image.pixel_scale_arcsec is None:
        raise LensInputError("This image has no pixel scale (no WCS): set it with Measure > Set pixel scale.")
    points = list(system.points)
    images = list(system.images)
    shape = system.shape if points else "images" if len(images) >= 2 else system.shape
    pts = np.asarray(points + images if shape != "images" else images, float).reshape(-1, 2)
    if len(pts) == 0:
        raise LensInputError(f"Arc system {system.name} has no marks yet: click along its arc (or on its images).")
    m = einstein.measure_theta_e_from_points(pts[:, 0], pts[:, 1], image=image.loaded, shape=shape, center=centre)
    matrix = np.asarray(getattr(image.loaded, "pixel_matrix_arcsec", None)
                        if getattr(image.loaded, "pixel_matrix_arcsec", None) is not None
                        else einstein.north_up_matrix(m.pixel_scale_arcsec,
                                                      getattr(image.loaded, "kind", "fits") != "fits"), float)
    radius_px = m.theta_e_arcsec / m.pixel_scale_arcsec
    a_px = b_px = radius_px
    angle = 0.0
    if shape == "ellipse" and m.fit_axis_ratio:
        q = float(m.fit_axis_ratio)
        a_px, b_px = radius_px / np.sqrt(q), radius_px * np.sqrt(q)
        pa = np.radians(m.fit_position_angle_deg or 0.0)
        dx, dy = np.linalg.inv(matrix) @ np.array([np.sin(pa), np.cos(pa)])  # major axis: east, north -> pixels
        angle = float(np.degrees(np.arctan2(dy, dx)))
    shown = {"circle": "circle", "ellipse": "ellipse", "images": "images"}[shape]
    return SystemFit(shown, m.center_x, m.center_y, float(a_px), float(b_px), angle, float(m.theta_e_arcsec),
                     float(m.theta_e_err_arcsec), int(m.n_points), m.method,
                     tuple(n for n in m.notes if not n.startswith("No pixel-scale uncertainty")))


def with_ring_answer(fit: SystemFit, measurement) -> SystemFit:
    """The system's fit with theta_E, its error, interval and method taken from the ring finder's
    measurement (:meth:`lensmass.gui.model.WindowModel.ring_measurement_for`); the drawn shape, the fit through
    the marks, is scaled to that theta_E. A lone arc's theta_E lies inside the arc (a circle through it would
    overstate theta_E), so its circle is drawn inside the arc."""
    from dataclasses import replace

    if measurement is None:
        return fit
    scale = float(measurement.theta_e_arcsec) / fit.theta_e_arcsec if fit.theta_e_arcsec > 0 else 1.0
    return replace(fit, a_px=fit.a_px * scale, b_px=fit.b_px * scale, theta_e_arcsec=float(measurement.theta_e_arcsec),
                   theta_e_err_arcsec=float(measurement.theta_e_err_arcsec), method=measurement.method, warnings=(),
                   bounds_arcsec=measurement.theta_e_bounds_arcsec)


def lens_subtracted(image: ImageState, centre: tuple[float, float]) -> np.ndarray:
    """The image with the lens light subtracted, for snapping: the fitted lens light if the user
    fitted it, else the command line's masked fit (:func:`lensmass.core.lenslight.fit_lens_light_masked`)
    about ``centre``, computed once per centre and kept on the image state."""
    if image.lens_light is not None:
        return image.residual
    key = (round(float(centre[0]), 2), round(float(centre[1]), 2))
    cached = getattr(image, "_snap_residual", None)
    if cached is None or cached[0] != key:
        options = _core("einstein", "Snapping onto the arc ridge").picture_options(image.loaded)
        light = _core("lenslight", "Snapping onto the arc ridge").fit_lens_light_masked(image.data, *centre, **options)
        image._snap_residual = (key, light.residual if light.ok else image.data)
    return image._snap_residual[1]


def snap_to_ridge(image: ImageState, x: float, y: float,
                  centre: tuple[float, float] | None) -> tuple[tuple[float, float], str]:
    """Move a click radially onto the arc ridge (lensmass.core.ridge).

    Returns ((x, y), note); the click itself and the reason when no ridge is near
    or no centre is known (snapping needs the radial direction from the centre).
    """
    if centre is None:
        return (x, y), "Set the lens centre first: snapping moves a click along the radius from it."
    ridge = _core("ridge", "Snapping onto the arc ridge")
    first = image.residual if image.lens_light is not None else image.data
    out = ridge.refine_to_ridge(first, x, y, centre[0], centre[1])
    if not out.ok and image.lens_light is None:  # as the command line's --refine: lens-subtracted next
        out = ridge.refine_to_ridge(lens_subtracted(image, centre), x, y, centre[0], centre[1])
    if not out.ok:
        return (x, y), out.warning or "No arc ridge near the click: the point stays where it was clicked."
    return (float(out.x), float(out.y)), out.warning


def masses_for_request(theta: float, theta_err: float, kwargs: dict) -> dict:
    """The Mass budget of one system from :meth:`WindowModel.estimate_request`'s answer: the lens model's
    theta_E posterior through :func:`lensmass.core.lens_model.masses_from_lens_model` when the request
    carries a current model, else :func:`lensmass.core.estimate.estimate` of the circle fit."""
    kwargs = dict(kwargs)
    model = kwargs.pop("lens_model_result", None)
    system = kwargs.pop("lens_model_system", None)
    note = kwargs.pop("lens_model_note", None)
    found = kwargs.pop("ring_measurement", None)
    if model is not None:
        return _core("lens_model", "The lens model").masses_from_lens_model(model, system=system, **kwargs)
    result = _core("estimate", "Estimating masses").estimate(theta, theta_e_err=theta_err, **kwargs)
    if found is not None:  # the ring finder's answer: the command line's keys, notes and words
        result = _core("einstein", "Measuring theta_E").with_measurement(result, found)
    if note:
        result["notes"] = [note] + list(result.get("notes") or [])
    return result
