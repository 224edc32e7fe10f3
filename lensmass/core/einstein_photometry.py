"""The light of the lens inside theta_E, measured on the image: one aperture rule for every caller.

The aperture is the circle of radius theta_E about the lens centre; for an ellipse fit that
circle has the ellipse's area (theta_E = sqrt(a b)), so the light and the mass M(<theta_E) are
taken inside the same circle. The marked arc points are masked (and filled from the lens light's
rings) and the sky comes from an annulus in units of theta_E. The zeropoint and exposure come
from the given values first, then the image header. The window and the command line both call
:func:`light_inside_einstein`, so they measure the same magnitude.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.photometry import lens_magnitude_inside

#: Default sky annulus, in units of theta_E (common practice: well outside the lens light's core).
DEFAULT_SKY_ANNULUS = (4.0, 6.0)
#: Default width in pixels of the band masked around the marked arc points.
DEFAULT_ARC_WIDTH_PIX = 3.0


def header_number(header, key: str, what: str) -> float:
    """A number from a FITS header keyword, or one sentence naming the keyword."""
    if header is None or key not in header:
        raise LensInputError(f"The image header has no keyword '{key}' for the {what}: check the name or give the value directly.")
    try:
        value = float(header[key])
    except (TypeError, ValueError):
        raise LensInputError(f"Header keyword '{key}' holds '{header[key]}', not a number usable as the {what}.") from None
    return value


def zeropoint_and_exposure(header, zeropoint=None, zeropoint_key=None, exptime=None) -> tuple[float, float, str]:
    """(zeropoint, exposure time in s, where the exposure came from): given values first, then the header.

    An image whose header BUNIT is per second (``count/s``, ``electron/s``...) is already a
    rate: its exposure time is 1 s for the conversion, whatever EXPTIME says.
    """
    if zeropoint is not None and zeropoint_key:
        raise LensInputError("Give the zeropoint one way only: a value (`zeropoint`) or a header keyword (`zeropoint_key`).")
    if zeropoint is None and not zeropoint_key:
        raise LensInputError("The photometry needs a zeropoint: give its value (`zeropoint`) or the header keyword that holds it (`zeropoint_key`).")
    zp = float(zeropoint) if zeropoint is not None else header_number(header, zeropoint_key, "zeropoint")
    if exptime is not None:
        return zp, float(exptime), "given"
    unit = str(header.get("BUNIT", "")).lower().replace(" ", "") if header is not None else ""
    if unit.endswith(("/s", "s-1", "s**-1", "/sec")) or unit in ("cps", "counts/s"):
        return zp, 1.0, f"header BUNIT '{header['BUNIT']}' is per second"
    if header is not None and "EXPTIME" in header:
        return zp, header_number(header, "EXPTIME", "exposure time"), "header EXPTIME"
    return zp, 1.0, "none given: image taken as counts per second"


def light_inside_einstein(image, header=None, *, center_x: float, center_y: float, theta_e_pix: float,
                          zeropoint: float | None = None, zeropoint_key: str | None = None,
                          exptime: float | None = None, annulus=DEFAULT_SKY_ANNULUS, arc_points_xy=None,
                          arc_width_pix: float = DEFAULT_ARC_WIDTH_PIX, mask_residuals: bool = False) -> dict[str, Any]:
    """Aperture magnitude of the lens inside the circle of radius theta_E (pixels) about its centre.

    Returns the mapping of :func:`lensmass.core.photometry.lens_magnitude_inside` plus
    ``exptime_source`` (where the exposure time came from).

    Examples
    --------
    A uniform disc of 49 pixels at 10 counts per second, zeropoint 25: m = 25 - 2.5 log10(490):

    >>> yy, xx = np.mgrid[0:61, 0:61]
    >>> img = np.where(np.hypot(xx - 30, yy - 30) <= 4.0, 10.0, 0.0)
    >>> out = light_inside_einstein(img, center_x=30, center_y=30, theta_e_pix=10, zeropoint=25.0)
    >>> out["flux"], round(out["aperture_mag"], 4), round(float(25 - 2.5 * np.log10(490)), 4)
    (490.0, 18.2745, 18.2745)
    """
    zp, exptime_s, exp_source = zeropoint_and_exposure(header, zeropoint, zeropoint_key, exptime)
    points = None if arc_points_xy is None or len(arc_points_xy) == 0 else np.asarray(arc_points_xy, float).reshape(-1, 2)
    phot = lens_magnitude_inside(np.asarray(image, float), float(center_x), float(center_y), float(theta_e_pix),
                                 zeropoint=zp, exptime_s=exptime_s, annulus=tuple(annulus), arc_points_xy=points,
                                 arc_width_pix=arc_width_pix, mask_residuals=mask_residuals)
    phot["exptime_source"] = exp_source
    return phot


def photometry_note(phot: dict) -> str:
    """One sentence describing the photometry behind the light inside theta_E."""
    return (f"Photometry inside theta_E: {phot['flux']:.4g} +- {phot['flux_err']:.2g} counts above a sky of "
            f"{phot['sky_per_pixel']:.4g} per pixel ({phot['sky_pixels']} annulus pixels), "
            f"{phot['masked_pixels_in_aperture']} arc pixels masked and filled, zeropoint {phot['zeropoint']:g}, "
            f"exposure {phot['exptime_s']:g} s ({phot.get('exptime_source', 'given')}): "
            f"m = {phot['aperture_mag']:.3f} +- {phot['aperture_mag_err']:.3f}.")
