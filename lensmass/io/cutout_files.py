"""Write generated cutouts (:mod:`lensmass.core.realistic_fields`) as survey-like files.

FITS: the r band with a celestial WCS (gnomonic projection, CD matrix rotated by a given
angle, as survey cutouts taken off a rotated detector come); PNG or JPEG: the 8-bit asinh
stretched g, r, i picture that survey viewers show. The sky position is our invented Tern Ridge
Imaging Survey field; nothing here follows another program's file layout.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from lensmass.core.realistic_fields import Cutout, colour_picture
from lensmass.io.atomic import write_bytes_atomic

#: Invented TRIS field centre (degrees).
TRIS_RA_DEG, TRIS_DEC_DEG = 151.7342, -12.4187


def cutout_header(cutout: Cutout, *, rotation_deg: float = 0.0):
    """A FITS header with a TAN WCS of the cutout's pixel scale, rotated by ``rotation_deg`` (north
    turned from +y towards -x)."""
    from astropy.io import fits

    ny, nx = cutout.image.shape
    s = cutout.pixel_scale_arcsec / 3600.0
    t = np.radians(rotation_deg)
    h = fits.Header()
    h["CTYPE1"], h["CTYPE2"] = "RA---TAN", "DEC--TAN"
    h["CRPIX1"], h["CRPIX2"] = (nx + 1) / 2, (ny + 1) / 2
    h["CRVAL1"], h["CRVAL2"] = TRIS_RA_DEG, TRIS_DEC_DEG
    # East to the left (RA falls with x) before the rotation.
    h["CD1_1"], h["CD1_2"] = -s * np.cos(t), s * np.sin(t)
    h["CD2_1"], h["CD2_2"] = s * np.sin(t), s * np.cos(t)
    h["BUNIT"] = "noise"
    h["ORIGIN"] = "lensmass inject-and-recover (TRIS, invented)"
    return h


def write_cutout_fits(path: str | os.PathLike, cutout: Cutout, *, rotation_deg: float = 0.0) -> Path:
    """Write the r band with a rotated WCS (atomic write)."""
    import io

    from astropy.io import fits

    buf = io.BytesIO()
    fits.PrimaryHDU(np.asarray(cutout.image, np.float32), cutout_header(cutout, rotation_deg=rotation_deg)).writeto(buf)
    write_bytes_atomic(path, buf.getvalue())
    return Path(path)


def write_cutout_picture(path: str | os.PathLike, cutout: Cutout, *, soft: float | None = None,
                         top: float | None = None, quality: int = 90) -> Path:
    """Write the 8-bit stretched colour picture; PNG or JPEG by the file ending (atomic write)."""
    import io

    from PIL import Image

    rgb = colour_picture(cutout, soft=soft, top=top)  # array rows as stored: same pixel positions as the FITS
    fmt = "JPEG" if Path(path).suffix.lower() in (".jpg", ".jpeg") else "PNG"
    buf = io.BytesIO()
    Image.fromarray(rgb, "RGB").save(buf, format=fmt, **({"quality": quality} if fmt == "JPEG" else {}))
    write_bytes_atomic(path, buf.getvalue())
    return Path(path)
