"""Positions as text: RA/Dec in sexagesimal and in degrees, pixels in either numbering.

Pixels inside lensmass are 0-based (column and row of the array as stored); the FITS
standard numbers the first pixel 1 (Pence et al. 2010, A&A 524, A42, section 8.1), so a
position shown "FITS 1-based" is the 0-based one plus one on each axis. The sky
position of a point does not depend on how its pixel is numbered.

Examples
--------
>>> sexagesimal(201.4471, 4.1882)
('13:25:47.304', '+04:11:17.52')
>>> pixel_text(50.3, 49.6, origin=1)
'x 51.30  y 50.60 (FITS 1-based)'
"""

from __future__ import annotations

#: Pixel numberings the window offers: origin -> how the read-out names it.
PIXEL_ORIGINS = {0: "0-based", 1: "FITS 1-based"}
#: Decimals of the seconds: 1 ms of RA (15 mas on the equator) and 10 mas of Dec.
RA_DECIMALS, DEC_DECIMALS = 3, 2
#: Decimals of degrees: 1e-6 deg = 3.6 mas.
DEGREE_DECIMALS = 6


def sexagesimal(ra_deg: float, dec_deg: float) -> tuple[str, str]:
    """RA as hours:minutes:seconds and Dec as signed degrees:arcmin:arcsec (astropy ``Angle.to_string``)."""
    import astropy.units as u
    from astropy.coordinates import Angle

    ra = Angle(float(ra_deg), u.deg).wrap_at(360 * u.deg)
    ra_text = ra.to_string(unit=u.hourangle, sep=":", precision=RA_DECIMALS, pad=True)
    dec_text = Angle(float(dec_deg), u.deg).to_string(unit=u.deg, sep=":", precision=DEC_DECIMALS, pad=True,
                                                      alwayssign=True)
    return str(ra_text), str(dec_text)


def degrees(ra_deg: float, dec_deg: float) -> tuple[str, str]:
    """RA and Dec in decimal degrees (Dec signed).

    >>> degrees(201.4471, -4.1882)
    ('201.447100', '-4.188200')
    """
    return f"{float(ra_deg) % 360.0:.{DEGREE_DECIMALS}f}", f"{float(dec_deg):+.{DEGREE_DECIMALS}f}"


def pixel_numbers(x: float, y: float, origin: int = 0) -> tuple[float, float]:
    """0-based pixel ``(x, y)`` in the numbering that starts at ``origin`` (0 or 1)."""
    if origin not in PIXEL_ORIGINS:
        raise ValueError(f"pixel numbering starts at 0 or 1, not {origin!r}")
    return float(x) + origin, float(y) + origin


def pixel_text(x: float, y: float, origin: int = 0) -> str:
    """The pixel read-out, naming its numbering."""
    px, py = pixel_numbers(x, y, origin)
    return f"x {px:.2f}  y {py:.2f} ({PIXEL_ORIGINS[origin]})"
