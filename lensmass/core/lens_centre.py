"""Which lens centre a measurement used, in pixels and on the sky, and how it is written.

Every theta_E is measured about a centre: one the user marked or gave, one the ring finder
found (the light peak it chose), or the centre of the fitted circle, ellipse or image set.
:func:`centre_keys` gives the result keys ``center_x``, ``center_y`` (0-based pixels),
``center_ra``, ``center_dec`` (degrees, when the image has a WCS) and ``center_source``
(which centre it is, in words); :func:`sky_position_text` writes a position in decimal
degrees and sexagesimal (IAU practice: RA in hours, Dec in degrees).
"""

from __future__ import annotations

import math
from typing import Any, Callable

#: How a centre held in a session was set -> words for ``center_source``.
CENTRE_HOW_WORDS = {
    "hand": "marked by hand (held fixed in the fit)",
    "found": "found by the ring finder (held fixed in the fit)",
    "given": "given by the user (held fixed in the fit)",
}

#: The fit's own centre, by fitted shape -> words for ``center_source``.
FITTED_CENTRE_WORDS = {
    "circle": "centre of the circle fitted to the arc points",
    "ellipse": "centre of the ellipse fitted to the arc points",
    "images": "centre fitted to the image positions",
}


def centre_keys(x: float, y: float, source: str,
                pixel_to_sky: Callable[[float, float], tuple[Any, Any]] | None = None) -> dict[str, Any]:
    """The lens-centre keys of a result.

    Parameters
    ----------
    x, y : float
        The centre in 0-based pixels (column, row as stored).
    source : str
        Which centre it is, in words (see :data:`CENTRE_HOW_WORDS`, :data:`FITTED_CENTRE_WORDS`).
    pixel_to_sky : callable, optional
        ``(x, y) -> (ra_deg, dec_deg)``, e.g. :meth:`lensmass.io.images.LoadedImage.pixel_to_sky`;
        None (no WCS) leaves ``center_ra``/``center_dec`` None.

    Examples
    --------
    >>> k = centre_keys(10.0, 20.0, "marked by hand", lambda x, y: (150.0 + x / 3600, 2.0 + y / 3600))
    >>> round(k["center_ra"], 6), round(k["center_dec"], 6), k["center_source"]
    (150.002778, 2.005556, 'marked by hand')
    """
    ra = dec = None
    if pixel_to_sky is not None:
        a, d = pixel_to_sky(float(x), float(y))
        a, d = float(a), float(d)
        if math.isfinite(a) and math.isfinite(d):
            ra, dec = a % 360.0, d
    return {"center_x": float(x), "center_y": float(y), "center_ra": ra, "center_dec": dec,
            "center_source": str(source)}


def sky_position_text(ra_deg: float | None, dec_deg: float | None) -> str:
    """'RA 150.119167, Dec +2.205833 deg (10:00:28.60 +02:12:21.0)'; '' without a position.

    Sexagesimal by :class:`astropy.coordinates.Angle` (RA in hours to 0.01 s, Dec to 0.1 arcsec).

    Examples
    --------
    >>> sky_position_text(150.119167, 2.205833)
    'RA 150.119167, Dec +2.205833 deg (10:00:28.60 +02:12:21.0)'
    >>> sky_position_text(None, None)
    ''
    """
    if ra_deg is None or dec_deg is None:
        return ""
    import astropy.units as u
    from astropy.coordinates import Angle

    ra_h = Angle(float(ra_deg), u.deg).to_string(unit=u.hourangle, sep=":", precision=2, pad=True)
    dec_s = Angle(float(dec_deg), u.deg).to_string(unit=u.deg, sep=":", precision=1, pad=True, alwayssign=True)
    return f"RA {float(ra_deg):.6f}, Dec {float(dec_deg):+.6f} deg ({ra_h} {dec_s})"


def centre_text(result: dict) -> str:
    """One line about the lens centre of ``result``: pixels, sky position when known, and which centre it is.

    Examples
    --------
    >>> centre_text({"center_x": 10.0, "center_y": 20.5, "center_source": "marked by hand"})
    'x 10.00, y 20.50 (0-based pixels); marked by hand'
    """
    x, y = result.get("center_x"), result.get("center_y")
    if x is None or y is None:
        return ""
    text = f"x {float(x):.2f}, y {float(y):.2f} (0-based pixels)"
    sky = sky_position_text(result.get("center_ra"), result.get("center_dec"))
    if sky:
        text += f"; {sky}"
    source = result.get("center_source")
    return text + (f"; {source}" if source else "")
