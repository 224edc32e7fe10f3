"""From marks on an image (or the ring finder) to theta_E +- error in arcsec, then to masses.

Longer than 500 lines because it is the one path from marks or the ring finder to theta_E, its error and the
finder's interval that the window, the command line and the batch runner share.

The window, the command line and the batch runner all call
:func:`measure_from_points` or :func:`measure_auto_ring`; both return every key of
:func:`lensmass.core.estimate.estimate` plus

``theta_e_err_arcsec, center_x, center_y, center_ra, center_dec, method,
fit_rms_arcsec, ring_score, ring_confident, n_points, fit_axis_ratio,
fit_position_angle_deg, pixel_scale_arcsec, points_xy``

(pixel positions are 0-based column/row as stored in the file; RA/Dec in degrees,
None without a WCS). The fits are done in arcsec on the sky: marked pixel offsets
are mapped through the local 2 x 2 pixel matrix of the WCS (so rotated, skewed or
unequal pixel axes are handled) or through the user's pixel scale.

Error budget: theta_E error = sqrt(fit_err^2 + (theta_E sigma_s / s)^2), the fit's
standard error and the relative pixel-scale error s (common practice: independent
errors add in quadrature); it enters the core Monte Carlo as ``theta_e_err``.

The image argument is any object with the attributes of
:class:`lensmass.io.images.LoadedImage` (``data``, ``pixel_scale_arcsec``,
``pixel_scale_err_arcsec``, ``pixel_matrix_arcsec``, ``wcs``, ``pixel_to_sky``, ``notes``);
the core does no file input itself.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from lensmass.core.arcfit import _algebraic_circle, arc_span_deg, fit_circle, fit_ellipse, multiple_image_radius
from lensmass.core.errors import LensInputError
from lensmass.core.progress import ProgressCallback, StopCallback
from lensmass.core.ridge import refine_to_ridge
from lensmass.core.ring_interval import (ASYMMETRIC_NOTE, BOUND_KEYS, bounds_from_pixels, draw_options,
                                          interval_bounds, interval_note, is_counter_pair, is_normal)

#: Default 1-sigma uncertainty of a marked position, in pixels (a click is good to about half a pixel).
DEFAULT_POINT_ERR_PIX = 0.5
SHAPES = ("circle", "ellipse", "images")
#: An ellipse needs points around at least half of the ring (common practice: a short arc fixes a local
#: curvature, not the axes).
ELLIPSE_MIN_SPAN_DEG = 180.0


def _rough_center(x, y) -> tuple[float, float]:
    """Centre of the algebraic circle through the points (their mean if they are collinear)."""
    try:
        cx, cy, _ = _algebraic_circle(np.asarray(x, float), np.asarray(y, float))
        return cx, cy
    except LensInputError:
        return float(np.mean(x)), float(np.mean(y))


@dataclass
class ThetaEMeasurement:
    """theta_E measured on an image, before any mass is derived."""

    theta_e_arcsec: float
    theta_e_err_arcsec: float
    center_x: float
    center_y: float
    center_ra: float | None
    center_dec: float | None
    method: str
    fit_rms_arcsec: float
    n_points: int
    pixel_scale_arcsec: float
    ring_score: float | None = None
    ring_confident: bool | None = None
    fit_axis_ratio: float | None = None
    fit_position_angle_deg: float | None = None
    points_xy: list[list[float]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    center_source: str = ""
    """Which centre it is, in words (see :mod:`lensmass.core.lens_centre`)."""
    theta_e_bounds_arcsec: tuple[float, float, float, float] | None = None  # the finder's -2..+2 sigma bounds
    asymmetric: bool = False  # those bounds are not radius -+ 1, 2 errors: the masses' Monte Carlo draws from them
    interval_note: str = ""  # what the model words say of them (lensmass.core.ring_interval.interval_note)

    def keys(self) -> dict[str, Any]:
        """The measurement keys merged into the estimate result."""
        return {
            "theta_e_err_arcsec": self.theta_e_err_arcsec,
            "center_x": self.center_x,
            "center_y": self.center_y,
            "center_ra": self.center_ra,
            "center_dec": self.center_dec,
            "center_source": self.center_source,
            "method": self.method,
            "fit_rms_arcsec": self.fit_rms_arcsec,
            "ring_score": self.ring_score,
            "ring_confident": self.ring_confident,
            "n_points": self.n_points,
            "fit_axis_ratio": self.fit_axis_ratio,
            "fit_position_angle_deg": self.fit_position_angle_deg,
            "pixel_scale_arcsec": self.pixel_scale_arcsec,
            "points_xy": self.points_xy,
            **({} if self.theta_e_bounds_arcsec is None else dict(zip(BOUND_KEYS, self.theta_e_bounds_arcsec))),
        }


def theta_e_from_pixels(radius_pix: float, radius_err_pix: float, pixel_scale_arcsec: float,
                        pixel_scale_err_arcsec: float = 0.0) -> tuple[float, float]:
    """A radius in pixels +- error to theta_E +- error in arcsec (errors in quadrature).

    Examples
    --------
    >>> [round(v, 4) for v in theta_e_from_pixels(7.0, 0.3, 0.2, 0.002)]  # hypot(0.3 * 0.2, 1.4 * 0.002 / 0.2)
    [1.4, 0.0616]
    """
    s = float(pixel_scale_arcsec)
    theta = float(radius_pix) * s
    err = float(np.hypot(float(radius_err_pix) * s, theta * float(pixel_scale_err_arcsec) / s))
    return theta, err


def north_up_matrix(scale_arcsec: float, rows_run_down: bool = False) -> np.ndarray:
    """Pixel offsets (dx, dy) to (east, north) arcsec for a north-up, east-left picture.

    FITS rows run upwards (row 0 at the bottom); PNG/JPEG/TIFF rows run downwards (row 0 at the top),
    so there a step down a row is a step south (common practice for pictures).

    Examples
    --------
    >>> north_up_matrix(0.2, rows_run_down=True).tolist()
    [[-0.2, 0.0], [0.0, -0.2]]
    """
    s = float(scale_arcsec)
    return np.array([[-s, 0.0], [0.0, -s if rows_run_down else s]])


def _geometry(image, pixel_scale_arcsec, pixel_scale_err_arcsec, pixel_matrix_arcsec):
    """(matrix, scale, scale_err, pixel_to_sky, data, notes) from an image and/or explicit values."""
    data = getattr(image, "data", None) if image is not None else None
    if image is not None and not hasattr(image, "data"):
        data = np.asarray(image)
        image = None
    scale = pixel_scale_arcsec if pixel_scale_arcsec is not None else getattr(image, "pixel_scale_arcsec", None)
    err = pixel_scale_err_arcsec if pixel_scale_err_arcsec is not None else getattr(image, "pixel_scale_err_arcsec", 0.0)
    if scale is None:
        if image is not None and hasattr(image, "require_pixel_scale"):
            image.require_pixel_scale()  # names what is wrong with the file's WCS
        raise LensInputError("The pixel scale is unknown (the image has no usable WCS): "
                             "give it in arcsec per pixel (`pixel_scale_arcsec`).")
    from lensmass.core.limits import pixel_scale

    scale = pixel_scale(scale)
    matrix = pixel_matrix_arcsec
    if matrix is None and image is not None and pixel_scale_arcsec is None:
        matrix = getattr(image, "pixel_matrix_arcsec", None)
    if matrix is None:
        matrix = north_up_matrix(scale, rows_run_down=getattr(image, "kind", "fits") not in ("fits", None))
    matrix = np.asarray(matrix, float)
    to_sky = None
    if image is not None and getattr(image, "wcs", None) is not None:
        to_sky = image.pixel_to_sky
    notes = [f"image: {n}" for n in getattr(image, "notes", []) if "scale" in n or "skew" in n or "plane" in n.lower()]
    return matrix, scale, float(err or 0.0), to_sky, data, notes


def _sky(to_sky, x, y):
    if to_sky is None:
        return None, None
    ra, dec = to_sky(float(x), float(y))
    return float(ra), float(dec)


def measure_theta_e_from_points(
    x,
    y,
    *,
    image=None,
    shape: str = "circle",
    center: tuple[float, float] | None = None,
    refine: bool = False,
    refine_image: np.ndarray | None = None,
    point_err_pix: float = DEFAULT_POINT_ERR_PIX,
    pixel_scale_arcsec: float | None = None,
    pixel_scale_err_arcsec: float | None = None,
    pixel_matrix_arcsec: np.ndarray | None = None,
) -> ThetaEMeasurement:
    """theta_E from marked pixel positions (no masses yet).

    Parameters
    ----------
    x, y : array_like
        Marked positions, 0-based column and row.
    image : LoadedImage-like or 2-D array, optional
        Supplies the pixel scale/matrix/WCS, and the pixels for ``refine``.
    shape : {"circle", "ellipse", "images"}
        Circle through arc points (3+), ellipse (5+, or 4+ with a centre; theta_E = sqrt(a b)),
        or the multiple images of one source (2+; see :func:`lensmass.core.arcfit.multiple_image_radius`).
    center : (x, y), optional
        The lens centre in pixels; holds the circle/ellipse centre there.
    refine : bool
        Move each point onto the brightness ridge first (:func:`lensmass.core.ridge.refine_to_ridge`),
        using ``refine_image``, or the image data and, for points with no ridge there, the image
        with the lens light subtracted (:func:`lensmass.core.lenslight.fit_lens_light_masked`).
    point_err_pix : float
        1-sigma uncertainty of each position (pixels); a floor under the fit's scatter.
    pixel_scale_arcsec, pixel_scale_err_arcsec, pixel_matrix_arcsec : optional
        Override the image's geometry (required when there is no image or WCS).

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 9)[:-1]
    >>> m = measure_theta_e_from_points(50 + 7 * np.cos(t), 40 + 7 * np.sin(t), pixel_scale_arcsec=0.2)
    >>> round(m.theta_e_arcsec, 6), round(m.center_x, 6)
    (1.4, 50.0)
    """
    if shape not in SHAPES:
        raise LensInputError(f"Unknown fit shape '{shape}': use one of {', '.join(SHAPES)}.")
    matrix, scale, scale_err, to_sky, data, notes = _geometry(image, pixel_scale_arcsec, pixel_scale_err_arcsec,
                                                              pixel_matrix_arcsec)
    px = np.asarray(x, float).ravel()
    py = np.asarray(y, float).ravel()
    if data is not None:
        from lensmass.core.limits import on_image

        on_image(px, py, np.shape(data), "A marked point", "check that the points belong to this image")
        if center is not None:
            on_image(center[0], center[1], np.shape(data), "The lens centre", "check the lens centre (`center`)")
    need = {"circle": 3 if center is None else 1, "ellipse": 5 if center is None else 4, "images": 2}[shape]
    if px.size < need:
        what = {"circle": "arc points for a circle", "ellipse": "arc points for an ellipse",
                "images": "multiple images"}[shape]
        raise LensInputError(f"Too few points: {px.size} given, at least {need} {what} are needed; mark more points.")
    if refine and shape != "images":
        pixels = refine_image if refine_image is not None else data
        if pixels is None:
            raise LensInputError("Refining points onto the ridge needs the image pixels; open the image first.")
        if center is not None:
            rc = center
        else:
            rough = fit_circle(px, py) if px.size >= 3 else None
            rc = (rough.center_x, rough.center_y) if rough else (px.mean(), py.mean())
        moved = [refine_to_ridge(pixels, a, b, rc[0], rc[1]) for a, b in zip(px, py)]
        if refine_image is None and data is not None and not all(m.ok for m in moved):
            # Under a bright lens in ground seeing the galaxy's falling light hides an arc's ridge in
            # the raw pixels: those points are searched again on the lens-subtracted image (the ring
            # finder's lens light, stars, neighbours and the ring masked). The raw image goes first:
            # where its ridge shows, it is not moved by the lens model's misfit.
            from lensmass.core.lenslight import fit_lens_light_masked

            light = fit_lens_light_masked(data, rc[0], rc[1], **picture_options(image))
            if light.ok:
                again = [refine_to_ridge(light.residual, a, b, rc[0], rc[1]) if not m.ok else m
                         for a, b, m in zip(px, py, moved)]
                n_more = sum(a.ok and not m.ok for a, m in zip(again, moved))
                moved = again
                notes.append(f"{n_more} point(s) found their ridge only on the lens-subtracted image.")
        n_bad = sum(not m.ok for m in moved)
        px = np.array([m.x for m in moved])
        py = np.array([m.y for m in moved])
        if n_bad:
            notes.append(f"{n_bad} of {len(moved)} points had no brightness ridge nearby and were left as marked.")
    ref_x, ref_y = (center if center is not None else (float(px.mean()), float(py.mean())))
    offsets = matrix @ np.vstack([px - ref_x, py - ref_y])
    ex, ey = offsets
    point_err = point_err_pix * scale
    sky_center = (0.0, 0.0) if center is not None else None
    axis_ratio = pa = None
    if shape == "circle":
        fit = fit_circle(ex, ey, center=sky_center, point_err=point_err)
        theta, fit_err, rms = fit.radius, fit.radius_err, fit.rms
        cxy = (fit.center_x, fit.center_y)
        method = ("circle fit with the centre held at the lens centre" if center is not None
                  else "circle fit (algebraic start, geometric least squares)")
        notes.extend(fit.warnings)
    elif shape == "ellipse":
        span = arc_span_deg(ex, ey, *((0.0, 0.0) if center is not None else _rough_center(ex, ey)))
        if span < ELLIPSE_MIN_SPAN_DEG:
            raise LensInputError(
                f"The points span only {span:.0f} deg around the centre: an ellipse is not fixed by a short arc "
                "(its radius can come out anywhere with a tiny error); fit a circle with the lens centre held, "
                "or fit the lens model ('lensmass model') with the arc's counter-image.")
        ellipse = fit_ellipse(ex, ey, center=sky_center, point_err=point_err)
        theta, fit_err, rms = ellipse.theta_e, ellipse.theta_e_err, ellipse.rms
        cxy = (ellipse.center_x, ellipse.center_y)
        axis_ratio = ellipse.axis_ratio
        # Position angle of the major axis, east of north (ex = east, ey = north).
        phi = np.radians(ellipse.angle_deg)
        pa = float(np.degrees(np.arctan2(np.cos(phi), np.sin(phi))) % 180.0)
        method = "ellipse fit, theta_E = sqrt(a b)" + (" with the centre held at the lens centre" if center else "")
        notes.extend(ellipse.warnings)
    else:
        est = multiple_image_radius(ex, ey, center=sky_center, point_err=point_err)
        theta, fit_err, rms = est.radius, est.radius_err, float("nan")
        cxy = (est.center_x, est.center_y)
        method = est.method
        notes.extend(est.warnings)
        d = np.hypot(ex - cxy[0], ey - cxy[1])
        rms = float(np.sqrt(np.mean((d - theta) ** 2))) if est.n_images > 2 or center is not None else float("nan")
    if not np.isfinite(fit_err) or not np.isfinite(theta):
        raise LensInputError("The fit cannot estimate an error for these points (they fix the shape exactly or "
                             "are degenerate): mark more points spread along the arcs.")
    if shape == "circle" and fit.arc_span_deg < 180.0:
        notes.append("A single arc lies outside the critical curve (about theta_E + beta from the lens for an "
                     "isothermal lens), so a circle through it overestimates theta_E by the unknown source offset; "
                     "mark the counter-image and fit the lens model ('lensmass model') for a bounded answer.")
    err = float(np.hypot(fit_err, theta * scale_err / scale))
    inv = np.linalg.inv(matrix)
    dxp, dyp = inv @ np.array(cxy, float)
    cx_pix, cy_pix = float(ref_x + dxp), float(ref_y + dyp)
    ra, dec = _sky(to_sky, cx_pix, cy_pix)
    if scale_err == 0:
        notes.append("No pixel-scale uncertainty given: theta_E error is from the fit alone.")
    from lensmass.core.lens_centre import CENTRE_HOW_WORDS, FITTED_CENTRE_WORDS

    source = CENTRE_HOW_WORDS["given"] if center is not None else FITTED_CENTRE_WORDS[shape]
    return ThetaEMeasurement(float(theta), err, cx_pix, cy_pix, ra, dec, method, float(rms), int(px.size), scale,
                             None, None, axis_ratio, pa,
                             [[float(a), float(b)] for a, b in zip(px, py)], notes, source)


def _run_estimate(m: ThetaEMeasurement, z_l, z_s, estimate_options, estimate_fn) -> dict[str, Any]:
    if estimate_fn is not None:  # the caller's estimate, with the same theta_E draws when the interval is asymmetric
        draws = draw_options(None, m.theta_e_arcsec, m.theta_e_bounds_arcsec, m.asymmetric).get("theta_e_draws")
        result = estimate_fn(m.theta_e_arcsec, m.theta_e_err_arcsec, draws)
    else:
        from lensmass.core.estimate import estimate

        if z_l is None:
            raise LensInputError("No lens redshift: give the lens redshift (`z_l`).")
        options = draw_options(estimate_options, m.theta_e_arcsec, m.theta_e_bounds_arcsec, m.asymmetric)
        result = estimate(m.theta_e_arcsec, z_l, z_s, theta_e_err=m.theta_e_err_arcsec, **options)
    return with_measurement(result, m)


def with_measurement(result: dict[str, Any], m: ThetaEMeasurement) -> dict[str, Any]:
    """An estimate's result with the measurement's keys, notes and the words of where theta_E came from: the
    one ending of every measured estimate (command line, batch runner, window)."""
    result = dict(result)
    result.update(m.keys())
    result["notes"] = list(m.notes) + [n for n in result.get("notes", []) if n not in m.notes]
    models = dict(result.get("models", {}))
    models["theta_e_arcsec"] = (f"measured on the image: {m.method}; error = fit + pixel-scale error in quadrature"
                                + (m.interval_note or (ASYMMETRIC_NOTE if m.asymmetric else "")))
    result["models"] = models
    return result


def measure_from_points(
    x,
    y,
    *,
    image=None,
    shape: str = "circle",
    center: tuple[float, float] | None = None,
    refine: bool = False,
    refine_image: np.ndarray | None = None,
    point_err_pix: float = DEFAULT_POINT_ERR_PIX,
    pixel_scale_arcsec: float | None = None,
    pixel_scale_err_arcsec: float | None = None,
    pixel_matrix_arcsec: np.ndarray | None = None,
    z_l: float | None = None,
    z_s: float | None = None,
    estimate_options: dict | None = None,
    estimate_fn: Callable[[float, float, np.ndarray | None], dict] | None = None,
) -> dict[str, Any]:
    """Marked points to a full :func:`~lensmass.core.estimate.estimate` result plus measurement keys.

    ``estimate_options`` go to ``estimate`` (cosmology, concentration, halo_definition,
    z_l_err, z_s_err, z_s_range, z_s_distribution, samples, seed); or pass
    ``estimate_fn(theta_e, theta_e_err, theta_e_draws) -> dict`` to run the estimate your own way
    (``theta_e_draws`` is None, or draws of theta_E to use instead of the Gaussian error when the
    measurement's interval is asymmetric).
    Other parameters: see :func:`measure_theta_e_from_points`.

    Examples
    --------
    >>> t = np.linspace(0, 2 * np.pi, 9)[:-1]
    >>> r = measure_from_points(50 + 7 * np.cos(t), 40 + 7 * np.sin(t), pixel_scale_arcsec=0.2,
    ...                         z_l=0.25, z_s=0.9, estimate_options={"samples": 500})
    >>> round(r["theta_e_arcsec"], 3), r["method"].startswith("circle")
    (1.4, True)
    """
    m = measure_theta_e_from_points(x, y, image=image, shape=shape, center=center, refine=refine,
                                    refine_image=refine_image, point_err_pix=point_err_pix,
                                    pixel_scale_arcsec=pixel_scale_arcsec,
                                    pixel_scale_err_arcsec=pixel_scale_err_arcsec,
                                    pixel_matrix_arcsec=pixel_matrix_arcsec)
    return _run_estimate(m, z_l, z_s, estimate_options, estimate_fn)


def find_ring_on_image(
    image,
    *,
    center: tuple[float, float] | None = None,
    mask: np.ndarray | None = None,
    residual: np.ndarray | None = None,
    max_radius_pix: float | None = None,
    progress: ProgressCallback = None,
    should_stop: StopCallback = None,
):
    """The ring finder on a loaded image: its pixels, its RGB picture (if any), the centre and the
    hand-painted mask. The window and the command line both call this, so they see the same ring
    with the same error (:class:`lensmass.core.ring_result.RingResult`)."""
    from lensmass.core.ringfinder import find_ring

    data = getattr(image, "data", None) if image is not None else None
    if image is not None and data is None:
        data = np.asarray(image)
    if data is None:
        raise LensInputError("The ring finder needs the image pixels; open the image first.")
    cx, cy = (None, None) if center is None else center
    return find_ring(data, cx, cy, residual=residual, max_radius_pix=max_radius_pix, mask=mask,
                     progress=progress, should_stop=should_stop, **picture_options(image))


def picture_options(image) -> dict:
    """What the ring finder and the lens-light fit need to know about a loaded image that is an 8-bit
    picture: its RGB bands (``colour``), lossy compression (``compressed``: the JPEG quality, or True) and a
    grey stretch (``stretched``); all off for FITS data or a bare array. One source for the window's finder, its
    lens-light fit, its masks and the command line.

    Examples
    --------
    >>> picture_options(np.zeros((4, 4)))
    {'colour': None, 'compressed': False, 'stretched': False}
    """
    colour = getattr(image, "rgb", None)
    # A JPEG's quality (read from its quantisation tables) sets how far the finder widens its error.
    lossy = getattr(image, "jpeg_quality", None) or bool(getattr(image, "lossy", False))
    return {"colour": colour, "compressed": lossy,
            "stretched": colour is None and bool(getattr(image, "eight_bit", False))}


def measure_theta_e_auto_ring(
    image,
    *,
    center: tuple[float, float] | None = None,
    require_confident: bool = True,
    max_radius_pix: float | None = None,
    pixel_scale_arcsec: float | None = None,
    pixel_scale_err_arcsec: float | None = None,
    mask: np.ndarray | None = None,
    residual: np.ndarray | None = None,
    progress: ProgressCallback = None,
    should_stop: StopCallback = None,
) -> tuple[ThetaEMeasurement, Any]:
    """Run the ring finder and turn its radius into theta_E; returns (measurement, RingResult).

    The window and the command line both come here, with the same inputs: the image (and its
    RGB picture, if any), the centre, the hand-painted ``mask``; ``residual`` is only for callers
    that hold their own lens-subtracted image (the finder then does not fit the lens light).
    """
    if image is None:
        raise LensInputError("The ring finder needs an image: give the image file (or mark points instead).")
    data = _geometry(image, pixel_scale_arcsec, pixel_scale_err_arcsec, None)[4]  # a missing pixel scale first
    if data is None:
        raise LensInputError("The ring finder needs the image pixels; open the image first.")
    cx, cy = (None, None) if center is None else center
    if max_radius_pix is not None:
        from lensmass.core.limits import positive_radius

        positive_radius(max_radius_pix, "The search radius (`max_radius_pix`)")
    if center is not None:
        from lensmass.core.limits import on_image

        on_image(cx, cy, data.shape, "The lens centre", "check the lens centre (`center`)")
    ring = find_ring_on_image(image, center=center, mask=mask, residual=residual, max_radius_pix=max_radius_pix,
                              progress=progress, should_stop=should_stop)
    if not ring.found or (require_confident and not ring.confident):
        hint = f" {ring.center_hint}" if ring.center_hint else ""
        raise LensInputError(f"{ring.message}{hint} Mark points on the arcs instead (`points`).")
    return measurement_of_ring(ring, image, pixel_scale_arcsec=pixel_scale_arcsec,
                               pixel_scale_err_arcsec=pixel_scale_err_arcsec), ring


def measurement_of_ring(ring, image, *, pixel_scale_arcsec: float | None = None,
                        pixel_scale_err_arcsec: float | None = None) -> ThetaEMeasurement:
    """A found ring (:class:`~lensmass.core.ring_result.RingResult`) as theta_E on the sky: its radius, error and
    interval in arcsec, the centre used, the method in words. The window and :func:`measure_theta_e_auto_ring`
    both turn the finder's answer into numbers here."""
    _, scale, scale_err, to_sky, _, notes = _geometry(image, pixel_scale_arcsec, pixel_scale_err_arcsec, None)
    theta, err = theta_e_from_pixels(ring.radius_pix, ring.radius_err_pix, scale, scale_err)
    tail = float(getattr(ring, "interval_tail_pix", 0.0) or 0.0)
    ra, dec = _sky(to_sky, ring.center_x, ring.center_y)
    notes = notes + [f"Lens centre ({ring.center_x:.2f}, {ring.center_y:.2f}) pixels: {ring.center_source}."]
    notes += list(ring.warnings)
    if not ring.confident and not np.isfinite(ring.lone_arc_radius_pix):  # a lone arc's warning says it all
        notes.append(ring.message)
    shape = "ellipse through the ridge, theta_E = sqrt(a b)" if ring.axis_ratio < 1.0 else "circle through the ridge"
    method = f"automatic ring finder ({ring.kind}; {shape}; lens light: "
    method += (ring.lens_light.method if ring.lens_light is not None and ring.lens_light.ok else "none subtracted") + ")"
    pa = None
    if np.isfinite(ring.angle_deg):
        pa = float(ring.angle_deg)
        notes.append("fit_position_angle_deg from the ring finder is measured in pixel axes (from +x towards +y).")
    return ThetaEMeasurement(theta, err, ring.center_x, ring.center_y, ra, dec, method, ring.fit_rms_pix * scale,
                             int(ring.points_x.size), scale, ring.score, ring.confident,
                             float(ring.axis_ratio) if np.isfinite(ring.axis_ratio) else None, pa,
                             [[float(a), float(b)] for a, b in zip(ring.points_x, ring.points_y)], notes,
                             "given by the user" if ring.center_source == "given"
                             else f"ring finder's centre: {ring.center_source}",
                             bounds_from_pixels(ring.radius_pix, interval_bounds(ring), scale, scale_err),
                             not is_normal(ring), interval_note(getattr(ring, "interval_shape_pix", None) is not None,
                                                               tail / ring.radius_pix if tail > 0 else 0.0,
                                                               pair=is_counter_pair(ring)))


def measure_auto_ring(
    image,
    *,
    center: tuple[float, float] | None = None,
    require_confident: bool = True,
    max_radius_pix: float | None = None,
    pixel_scale_arcsec: float | None = None,
    pixel_scale_err_arcsec: float | None = None,
    z_l: float | None = None,
    z_s: float | None = None,
    estimate_options: dict | None = None,
    estimate_fn: Callable[[float, float, np.ndarray | None], dict] | None = None,
    mask: np.ndarray | None = None,
    progress: ProgressCallback = None,
    should_stop: StopCallback = None,
) -> dict[str, Any]:
    """Ring finder -> theta_E -> :func:`~lensmass.core.estimate.estimate` result plus measurement keys.

    Raises :class:`LensInputError` when no ring is found (or only a weak one while
    ``require_confident``). The :class:`~lensmass.core.ring_result.RingResult` is kept
    under the private key ``"_ring"`` (residual image, ridge points, profile) for plots;
    private keys are dropped from JSON.

    Examples
    --------
    The ring of :func:`lensmass.core.ringfinder.find_ring`'s example at 0.1" a pixel: theta_E = 1.5":

    >>> yy, xx = np.mgrid[0:81, 0:81]
    >>> r = np.hypot(xx - 40, yy - 40)
    >>> img = np.exp(-7.67 * ((r / 8) ** 0.25 - 1)) + np.exp(-0.5 * ((r - 15) / 1.5) ** 2)
    >>> img = img + np.random.default_rng(1).normal(0, 0.02, r.shape)
    >>> res = measure_auto_ring(img, pixel_scale_arcsec=0.1, z_l=0.3, z_s=1.2)
    >>> round(res["theta_e_arcsec"], 1), res["method"].split(" (")[0]
    (1.5, 'automatic ring finder')
    >>> 1e11 < res["mass_einstein_msun"] < 1e12
    True
    """
    m, ring = measure_theta_e_auto_ring(image, center=center, require_confident=require_confident,
                                        max_radius_pix=max_radius_pix, pixel_scale_arcsec=pixel_scale_arcsec,
                                        pixel_scale_err_arcsec=pixel_scale_err_arcsec, mask=mask,
                                        progress=progress, should_stop=should_stop)
    result = _run_estimate(m, z_l, z_s, estimate_options, estimate_fn)
    result["_ring"] = ring
    return result
