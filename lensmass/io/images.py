"""Open an image for measuring: FITS (with WCS) or PNG/JPEG/TIFF, masked pixels as NaN.

Longer than 500 lines because one loader serves every image format and keeps their shared sanity
checks together (WCS and pixel-scale limits, masked pixels, Pillow's decompression-bomb guard).

Pixel convention everywhere in lensmass: ``x`` is the 0-based column and ``y``
the 0-based row of the array *as stored in the file* (FITS as stored; for PNG,
JPEG and TIFF row 0 is the top row as stored). Sky conversions use astropy's
``pixel_to_world_values`` / ``world_to_pixel_values``, which use the same
0-based convention.

The pixel scale comes from the WCS (CD, or PC with CDELT, including rotation and
skew) or, for files without a usable celestial WCS, from the user
(``--pixel-scale``). When the two axes differ, the reported scale is the
area-equivalent one, sqrt(|det CD|), and a note says so; measurements of points
use the full 2 x 2 matrix (:attr:`LoadedImage.pixel_matrix_arcsec`).

References
----------
Greisen & Calabretta (2002), A&A 395, 1061 (FITS WCS paper I: CDi_j, PCi_j, CDELTi);
Pence et al. (2010), A&A 524, A42 (FITS 4.0: BSCALE/BZERO, BLANK, tile compression).
"""

from __future__ import annotations

import os
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from astropy.utils.exceptions import AstropyUserWarning

from lensmass.core.errors import LensInputError
from lensmass.io.image_views import colour_composite, display_limits, load_colour_composite  # noqa: F401 (moved; old paths)

#: File endings read as ordinary pictures (no WCS; need a pixel scale from the user).
#: File name endings of the images lensmass opens: FITS (plain or compressed) and pictures.
FITS_SUFFIXES = (".fits", ".fit", ".fts", ".fits.gz", ".fz")
RASTER_SUFFIXES = (".png", ".jpg", ".jpeg", ".tif", ".tiff")
IMAGE_SUFFIXES = FITS_SUFFIXES + RASTER_SUFFIXES
#: Relative difference of the two axis scales above which a note is added.
ANISOTROPY_NOTE_LEVEL = 1e-3
DEG_TO_ARCSEC = 3600.0


@dataclass
class LoadedImage:
    """A 2-D image ready for display and measurement.

    Attributes
    ----------
    data : ndarray, shape (ny, nx)
        Float array (float32 for 8/16-bit and float32 files, float64 otherwise); NaN marks
        masked pixels (NaN in the file, BLANK, non-finite values).
    header : astropy.io.fits.Header or None
        Header of the HDU that was read (None for PNG/JPEG/TIFF).
    wcs : astropy.wcs.WCS or None
        The celestial WCS, or None when the file has none usable.
    pixel_scale_arcsec : float or None
        Area-equivalent pixel scale sqrt(|det M|) in arcsec; None when unknown.
    pixel_scale_err_arcsec : float
        1-sigma uncertainty of the pixel scale (given by the user; 0 from a WCS).
    pixel_scale_xy_arcsec : (float, float) or None
        Scale along the x and y pixel axes (astropy ``proj_plane_pixel_scales``).
    pixel_matrix_arcsec : ndarray (2, 2) or None
        Local linear map from pixel offsets (dx, dy) to sky offsets (east, north) in arcsec
        (for a user-given scale: east = -dx s, north = dy s, the usual north-up, east-left layout).
    notes : list of str
        What the reader assumed or noticed (plane chosen, scales unequal, masked pixels...).
    """

    data: np.ndarray
    path: str = ""
    header: Any = None
    wcs: Any = None
    pixel_scale_arcsec: float | None = None
    pixel_scale_err_arcsec: float = 0.0
    pixel_scale_xy_arcsec: tuple[float, float] | None = None
    pixel_matrix_arcsec: np.ndarray | None = None
    hdu_index: int | None = None
    plane: int | None = None
    kind: str = "fits"
    notes: list[str] = field(default_factory=list)
    #: Why the file's WCS was not used (empty when it was, or when there is none).
    wcs_problem: str = ""
    #: The picture's (ny, nx, 3) RGB values for colour pictures (PNG/JPEG), else None: the ring
    #: finder uses the colour to tell blue arcs from the red lens light.
    rgb: np.ndarray | None = None
    #: True for pictures stored with lossy compression (JPEG): the ring finder widens its error.
    lossy: bool = False
    #: A JPEG's quality (1-100) read from its quantisation tables (:mod:`lensmass.io.jpeg_tables`), else None:
    #: the ring finder's noise floor and error follow it.
    jpeg_quality: float | None = None
    #: True for 8-bit pictures (PNG/JPEG/TIFF): values through a display stretch, not flux.
    eight_bit: bool = False
    #: NaN pixels, when the reader already counted them (else counted by ``load_image``).
    masked_pixels: int | None = field(default=None, repr=False)

    @property
    def shape(self) -> tuple[int, int]:
        return self.data.shape

    @property
    def has_sky(self) -> bool:
        """True when pixel <-> RA/Dec conversion is possible (a celestial WCS)."""
        return self.wcs is not None

    def _require_wcs(self) -> None:
        if self.wcs is None:
            raise LensInputError(
                f"{Path(self.path).name or 'This image'} has no sky coordinates (no usable WCS): "
                "give positions in pixels (x,y) instead of RA/Dec."
            )

    def pixel_to_sky(self, x, y) -> tuple[np.ndarray, np.ndarray]:
        """0-based pixel (x = column, y = row) to (RA, Dec) in degrees."""
        self._require_wcs()
        ra, dec = self.wcs.pixel_to_world_values(np.asarray(x, float), np.asarray(y, float))
        return np.asarray(ra), np.asarray(dec)

    def sky_to_pixel(self, ra_deg, dec_deg) -> tuple[np.ndarray, np.ndarray]:
        """(RA, Dec) in degrees to 0-based pixel (x, y)."""
        self._require_wcs()
        x, y = self.wcs.world_to_pixel_values(np.asarray(ra_deg, float), np.asarray(dec_deg, float))
        return np.asarray(x), np.asarray(y)

    def require_pixel_scale(self) -> float:
        """The pixel scale, or a clear error saying how to give it."""
        if self.pixel_scale_arcsec is None:
            name = Path(self.path).name or "This image"
            if self.wcs_problem:
                raise LensInputError(f"{name} has an unusable WCS ({self.wcs_problem}), so its pixel scale is "
                                     "unknown: fix the header or give it in arcsec per pixel (`pixel_scale_arcsec`).")
            raise LensInputError(
                f"{name} has no usable WCS, so its pixel scale is unknown: "
                "give it in arcsec per pixel (`pixel_scale_arcsec`)."
            )
        return float(self.pixel_scale_arcsec)


def _fail_open(path: Path, why: str) -> LensInputError:
    return LensInputError(f"Cannot read {path.name}: {why}.")


def load_image(
    path: str | os.PathLike,
    *,
    hdu: int | str | None = None,
    plane: int | None = None,
    pixel_scale_arcsec: float | None = None,
    pixel_scale_err_arcsec: float = 0.0,
) -> LoadedImage:
    """Read a FITS, PNG, JPEG or TIFF image into a :class:`LoadedImage`.

    Parameters
    ----------
    path : path-like
        The image file.
    hdu : int or str, optional
        FITS extension (index or EXTNAME); default the primary HDU if it holds an
        image, else the first image extension (tile-compressed images included).
    plane : int, optional
        For a 3-D cube, the 0-based plane along the slowest axis; required for cubes.
    pixel_scale_arcsec, pixel_scale_err_arcsec : float, optional
        Pixel scale (and its 1-sigma error) given by the user. It overrides the WCS scale
        for measurement, and is required when the file has no usable celestial WCS.

    Returns
    -------
    LoadedImage

    Raises
    ------
    LensInputError
        Unreadable, empty, truncated or non-image file; a cube without ``plane``;
        an image with no finite pixel.

    Examples
    --------
    >>> import numpy as np, tempfile, os
    >>> from astropy.io import fits
    >>> p = os.path.join(tempfile.mkdtemp(), "t.fits")
    >>> fits.PrimaryHDU(np.ones((4, 5), np.float32)).writeto(p)
    >>> im = load_image(p, pixel_scale_arcsec=0.2)
    >>> im.data.shape, im.pixel_scale_arcsec
    ((4, 5), 0.2)
    """
    p = Path(path)
    if not p.exists():
        raise LensInputError(f"No such image file: {p}; check the path.")
    if p.is_dir():
        raise LensInputError(f"{p} is a folder, not an image file; give the image file itself.")
    if p.stat().st_size == 0:
        raise _fail_open(p, "the file is empty (0 bytes); re-export or re-download it")
    user_scale = _check_user_scale(pixel_scale_arcsec, pixel_scale_err_arcsec)
    if p.suffix.lower() in RASTER_SUFFIXES:
        image = _load_raster(p)
    else:
        with warnings.catch_warnings():  # damage is reported in one sentence, not as astropy warnings
            warnings.simplefilter("ignore", AstropyUserWarning)
            image = _load_fits(p, hdu, plane)
    _finish(image, user_scale, pixel_scale_err_arcsec)
    return image


def _check_user_scale(scale, err) -> float | None:
    if scale is None:
        return None
    try:
        s = float(scale)
        e = float(err or 0.0)
    except (TypeError, ValueError):
        raise LensInputError(f"The pixel scale must be a number of arcsec per pixel, got {scale!r}.") from None
    if not np.isfinite(s) or s <= 0:
        raise LensInputError(f"The pixel scale must be a positive number of arcsec per pixel, got {scale}.")
    from lensmass.core import limits

    limits.pixel_scale(s, "The pixel scale", "give the pixel scale in arcsec per pixel (`pixel_scale_arcsec`)")
    if not np.isfinite(e) or e < 0:
        raise LensInputError(f"The pixel-scale error must be zero or positive, got {err}.")
    if e >= s:
        raise LensInputError(f"The pixel-scale error {e:g}\" is as large as the scale {s:g}\" itself; check "
                             "the pixel-scale error (`pixel_scale_err_arcsec`), a 1-sigma error in arcsec per pixel.")
    return s


def _load_fits(p: Path, hdu, plane) -> LoadedImage:
    from astropy.io import fits

    try:
        hdul = fits.open(p, memmap=True, lazy_load_hdus=True)
    except OSError:
        raise _fail_open(p, "it is not a valid FITS file (no FITS header at its start); check that it is a "
                            "FITS image") from None
    except Exception as exc:  # astropy raises assorted errors on damaged headers
        raise _fail_open(p, f"its FITS header is damaged ({_short(exc)})") from None
    try:
        with warnings.catch_warnings():  # a damaged file is reported in one sentence, not as warnings
            warnings.simplefilter("ignore")
            index, chosen = _choose_hdu(p, hdul, hdu)
        header = chosen.header
        direct = _read_plain_float(p, chosen)
        if direct is not None:  # the common case: one read into a native float array, no memory map beside it
            image = _finish_fits(p, direct[0], header, index, None, [])
            image.masked_pixels = direct[1]
            return image
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                try:
                    raw = chosen.data
                except ValueError as exc:
                    if "memmap" not in str(exc).lower():
                        raise
                    # Scaled integers (BSCALE/BZERO/BLANK) cannot be memory-mapped: read them normally.
                    hdul.close()
                    hdul = fits.open(p, memmap=False)
                    chosen = hdul[index]
                    header = chosen.header
                    raw = chosen.data
            except Exception as exc:
                raise _fail_open(p, f"the image data are truncated or damaged ({_short(exc)}); "
                                    "re-download or re-export the file") from None
        if raw is None:
            raise _fail_open(p, f"HDU {index} holds no image data; choose another (`hdu`)")
        notes: list[str] = []
        raw, plane_used = _pick_plane(p, raw, plane, notes)
        _check_size(p, *raw.shape)
        data = _to_float_masked(raw, header, chosen)
    finally:
        hdul.close()
    return _finish_fits(p, data, header, index, plane_used, notes)


def _finish_fits(p: Path, data: np.ndarray, header, index: int, plane_used, notes: list[str]) -> LoadedImage:
    problem: list[str] = []
    wcs = _celestial_wcs(header, notes, problem)
    return LoadedImage(data=data, path=str(p), header=header, wcs=wcs, hdu_index=index, plane=plane_used,
                       kind="fits", notes=notes, wcs_problem="; ".join(problem))


#: Rows cleaned at a time when turning non-finite pixels into NaN (keeps the temporary masks small).
_CLEAN_ROWS = 512


def _read_plain_float(p: Path, hdu) -> tuple[np.ndarray, int] | None:
    """A 2-D, unscaled, uncompressed float image read straight into one native-endian array
    (and its count of NaN pixels), or None.

    The FITS standard stores floats big-endian (IEEE 754) right after the header, at the data
    location astropy reports (``fileinfo()['datLoc']``); reading them into an array and swapping the
    bytes in place costs one copy of the image, where a memory map plus a native copy costs two.
    Anything else (integers, BSCALE/BZERO, tile compression, cubes) returns None for the general path.
    """
    from astropy.io import fits

    h = hdu.header
    if not isinstance(hdu, (fits.PrimaryHDU, fits.ImageHDU)) or isinstance(hdu, fits.CompImageHDU):
        return None
    if h.get("NAXIS") != 2 or h.get("BITPIX") not in (-32, -64) or "BLANK" in h:
        return None
    if h.get("BSCALE", 1) != 1 or h.get("BZERO", 0) != 0:
        return None
    try:
        nx, ny, offset = int(h["NAXIS1"]), int(h["NAXIS2"]), hdu.fileinfo()["datLoc"]
    except Exception:
        return None
    if nx <= 0 or ny <= 0 or offset is None:
        return None
    _check_size(p, ny, nx)
    data = np.empty((ny, nx), dtype=">f4" if h["BITPIX"] == -32 else ">f8")
    try:
        with open(p, "rb") as f:
            f.seek(int(offset))
            got = f.readinto(memoryview(data).cast("B"))
    except OSError as exc:
        raise _fail_open(p, f"the image data could not be read ({_short(exc)})") from None
    if got != data.nbytes:
        raise _fail_open(p, "the image data are truncated or damaged (the file ends before its last pixel); "
                            "re-download or re-export the file")
    data = data.byteswap(inplace=True).view(data.dtype.newbyteorder("="))
    n_bad = 0
    for start in range(0, ny, _CLEAN_ROWS):
        block = data[start:start + _CLEAN_ROWS]
        bad = ~np.isfinite(block)
        count = int(np.count_nonzero(bad))
        if count:
            block[bad] = np.nan
            n_bad += count
    if n_bad == data.size:
        raise LensInputError("Every pixel of the image is blank or NaN: there is nothing to measure; check the file or HDU.")
    return data, n_bad


def _short(exc: Exception) -> str:
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    return text[:120].rstrip(".")


def _choose_hdu(p: Path, hdul, hdu):
    from astropy.io import fits

    n = 0
    try:
        n = len(hdul)
    except Exception as exc:
        raise _fail_open(p, f"the file is truncated or damaged ({_short(exc)})") from None
    if hdu is not None:
        try:
            key = int(hdu) if str(hdu).lstrip("-").isdigit() else str(hdu)
            if isinstance(key, int) and key < 0:
                raise IndexError
            chosen = hdul[key]
        except (KeyError, IndexError):
            raise _fail_open(p, f"it has no HDU '{hdu}' (it has {n}, numbered 0 to {n - 1})") from None
        index = hdul.index_of(key) if isinstance(key, str) else key
        if not isinstance(chosen, (fits.PrimaryHDU, fits.ImageHDU, fits.CompImageHDU)):
            raise _fail_open(p, f"HDU {hdu} is a table, not an image; choose an image HDU (`hdu`)")
        return index, chosen
    for i in range(n):
        h = hdul[i]
        if isinstance(h, (fits.PrimaryHDU, fits.ImageHDU, fits.CompImageHDU)) and h.header.get("NAXIS", 0) > 0:
            return i, h
    raise _fail_open(p, "it contains no image (only tables or empty HDUs); open an image file")


def _pick_plane(p: Path, raw: np.ndarray, plane, notes: list[str]):
    if raw.ndim == 2:
        if plane not in (None, 0):
            notes.append("The image is 2-D; the plane number was ignored.")
        return raw, None
    if raw.ndim < 2:
        raise _fail_open(p, f"the data are {raw.ndim}-D, not an image (need 2-D rows and columns)")
    # Degenerate axes of length 1 (e.g. a 1 x ny x nx cube) need no choice.
    squeezed = raw.reshape([s for s in raw.shape if s != 1] or [1])
    if squeezed.ndim == 2:
        return squeezed, 0
    if squeezed.ndim > 3:
        raise _fail_open(p, f"the data are {squeezed.ndim}-D; lensmass reads 2-D images or one plane of a 3-D cube")
    if plane is None:
        raise LensInputError(
            f"{p.name} is a 3-D cube of {squeezed.shape[0]} planes: choose one (`plane`, 0 to {squeezed.shape[0] - 1})."
        )
    if not 0 <= int(plane) < squeezed.shape[0]:
        raise LensInputError(f"Plane {plane} does not exist in {p.name}: choose a plane (`plane`) from 0 to {squeezed.shape[0] - 1}.")
    notes.append(f"Plane {int(plane)} of a {squeezed.shape[0]}-plane cube.")
    return squeezed[int(plane)], int(plane)


def _check_size(p: Path, ny: int, nx: int) -> None:
    """Refuse images larger than :data:`lensmass.core.limits.IMAGE_PIXELS_MAX` or the free memory, before reading."""
    from lensmass.core import limits

    n = int(ny) * int(nx)
    need = 12 * n  # the float copy plus display and work arrays, about three float32 copies
    if n > limits.IMAGE_PIXELS_MAX or need > limits.MEMORY_FRACTION * limits.available_memory_bytes():
        raise _fail_open(p, f"it has {nx} x {ny} pixels, more than lensmass reads at once (up to "
                            f"{limits.IMAGE_PIXELS_MAX / 1e6:.0f} million and about half the free memory); "
                            "crop a cutout around the lens first")


def _to_float_masked(raw: np.ndarray, header, hdu_obj) -> np.ndarray:
    """One native-endian float copy of the (memory-mapped) data, BLANK and non-finite -> NaN."""
    if raw.size == 0:
        raise LensInputError("The image has no pixels (a zero-length axis); open a non-empty image.")
    blank = header.get("BLANK")
    if raw.dtype.kind in "iu":
        dtype = np.float32 if raw.dtype.itemsize <= 2 else np.float64
        data = raw.astype(dtype)
        if blank is not None and "BSCALE" not in header and "BZERO" not in header:
            data[raw == blank] = np.nan
    else:
        dtype = np.float32 if raw.dtype.itemsize <= 4 else np.float64
        data = np.array(raw, dtype=dtype)  # native byte order, one copy
        # astropy applies BSCALE/BZERO to integer files and NaNs their BLANK pixels itself.
    bad = ~np.isfinite(data)
    if bad.all():
        raise LensInputError("Every pixel of the image is blank or NaN: there is nothing to measure; check the file or HDU.")
    if bad.any():
        data[bad] = np.nan
    return data


#: Header cards that define the pixel-to-sky map (their values must be finite numbers).
_WCS_NUMBER_CARDS = ("CRPIX1", "CRPIX2", "CRVAL1", "CRVAL2", "CDELT1", "CDELT2", "CD1_1", "CD1_2", "CD2_1", "CD2_2",
                     "PC1_1", "PC1_2", "PC2_1", "PC2_2", "CROTA2")


def _wcs_card_problem(header) -> str:
    """A bad WCS number card (astropy silently skips a non-numeric CDELT and uses 1 deg), or ''."""
    for key in _WCS_NUMBER_CARDS:
        if key in header:
            value = header[key]
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value):
                return f"card {key} = {str(value)[:20]!r} is not a finite number"
    has_scale = any(k in header for k in ("CDELT1", "CDELT2", "CD1_1", "CD1_2", "CD2_1", "CD2_2"))
    has_celestial = any(str(header.get(f"CTYPE{i}", "")).upper()[:4] in ("RA--", "DEC-", "GLON", "GLAT", "ELON", "ELAT")
                        for i in (1, 2))
    if has_celestial and not has_scale:
        return "it names sky axes but gives no CDELTi or CDi_j scale cards"
    return ""


def _celestial_wcs(header, notes: list[str], problem: list[str] | None = None):
    from astropy.wcs import WCS, FITSFixedWarning

    from lensmass.core import limits

    problem = [] if problem is None else problem
    bad_card = _wcs_card_problem(header)
    if bad_card:
        problem.append(bad_card)
        notes.append(f"The WCS is not used: {bad_card}; no sky coordinates.")
        return None

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FITSFixedWarning)
        warnings.simplefilter("ignore", UserWarning)
        try:
            w = WCS(header)
        except Exception as exc:
            notes.append(f"The WCS in the header could not be read ({_short(exc)}); no sky coordinates.")
            return None
    if not w.has_celestial:
        return None
    cel = w.celestial
    try:
        m = cel.pixel_scale_matrix
    except Exception:
        return None
    norms = np.sqrt((np.asarray(m, float) ** 2).sum(axis=0)) if np.all(np.isfinite(m)) else np.zeros(2)
    if not np.all(np.isfinite(m)) or abs(np.linalg.det(m)) <= 1e-9 * norms[0] * norms[1]:
        problem.append("its CD/PC matrix is singular or not finite: the two pixel axes point the same way on the sky")
        notes.append("The WCS has a singular or non-finite CD/PC matrix; sky coordinates ignored.")
        return None
    scale = float(np.sqrt(abs(np.linalg.det(m)))) * DEG_TO_ARCSEC
    if not (limits.PIXEL_SCALE_MIN_ARCSEC <= scale <= limits.PIXEL_SCALE_MAX_ARCSEC):
        problem.append(f"its pixel scale is {scale:.3g}\" per pixel, outside {limits.PIXEL_SCALE_MIN_ARCSEC:g}\" "
                       "to 1 deg per pixel")
        notes.append(f"The WCS is not used: {problem[-1]}.")
        return None
    return cel


def wcs_pixel_scales_arcsec(wcs) -> tuple[float, float, float]:
    """Pixel scale of a celestial WCS: (along x, along y, area-equivalent), arcsec.

    The axis scales are the column norms of the pixel-scale matrix (CD, or PC x CDELT),
    as astropy's ``proj_plane_pixel_scales``; the area-equivalent scale is sqrt(|det|),
    the side of a square pixel of the same solid angle (Greisen & Calabretta 2002).

    Examples
    --------
    >>> from astropy.wcs import WCS
    >>> w = WCS(naxis=2); w.wcs.ctype = ["RA---TAN", "DEC--TAN"]; w.wcs.cdelt = [-0.2 / 3600, 0.2 / 3600]
    >>> [round(v, 6) for v in wcs_pixel_scales_arcsec(w)]
    [0.2, 0.2, 0.2]
    """
    m = np.asarray(wcs.pixel_scale_matrix, float) * DEG_TO_ARCSEC
    sx, sy = np.sqrt((m**2).sum(axis=0))
    return float(sx), float(sy), float(np.sqrt(abs(np.linalg.det(m))))


def _wcs_pixel_matrix_arcsec(wcs) -> np.ndarray:
    """(dx, dy) -> (east, north) arcsec. RA increases to the east, so east = d(RA) cos(dec)."""
    m = np.asarray(wcs.pixel_scale_matrix, float) * DEG_TO_ARCSEC
    # For a standard celestial WCS the first world axis is longitude (RA), increasing east.
    return m


def _load_raster(p: Path) -> LoadedImage:
    try:
        from PIL import Image, UnidentifiedImageError
    except ImportError:  # pragma: no cover - Pillow comes with matplotlib
        raise LensInputError("Reading PNG/JPEG/TIFF needs the Pillow package: pip install pillow.") from None
    notes: list[str] = []
    from PIL import Image as _pil

    rgb = None
    lossy = eight_bit = False
    quality = None
    try:
        with Image.open(p) as im:
            lossy = im.format in ("JPEG", "MPO")
            if lossy:
                quality = _jpeg_quality_note(im, notes)
            _check_size(p, im.size[1], im.size[0])
            im.load()
            mode = im.mode
            eight_bit = mode in ("1", "L", "P", "RGB", "RGBA", "LA", "CMYK", "YCbCr")
            if mode in ("RGB", "RGBA", "P", "LA", "CMYK", "YCbCr"):
                rgb = np.asarray(im.convert("RGB"), dtype=np.float32)
                # ITU-R BT.601 luma weights (common practice for a grey version of a picture).
                data = rgb @ np.array([0.299, 0.587, 0.114], np.float32)
                notes.append("Colour picture converted to one grey band (luma 0.299 R + 0.587 G + 0.114 B); "
                             "for photometry use a FITS band.")
            else:
                data = np.asarray(im, dtype=np.float32 if mode not in ("I", "F") else np.float64)
    except _pil.DecompressionBombError:
        raise _fail_open(p, "it declares more pixels than Pillow will decode safely (a possible decompression "
                            "bomb); crop or convert it to FITS first") from None
    except (UnidentifiedImageError, OSError, SyntaxError, ValueError, EOFError) as exc:
        raise _fail_open(p, f"it is not a readable picture ({_short(exc)})") from None
    if data.ndim != 2:
        raise _fail_open(p, "the picture is not a 2-D image")
    data = np.ascontiguousarray(data)
    bad = ~np.isfinite(data)
    if bad.all():
        raise LensInputError("Every pixel of the image is NaN: there is nothing to measure; check the file.")
    data[bad] = np.nan
    notes.append("Pictures (PNG/JPEG/TIFF) carry no sky coordinates; pixel values may be stretched, not linear flux.")
    if rgb is not None and np.ptp(rgb[..., 0] - rgb[..., 2]) == 0:
        rgb = None  # a grey picture saved as RGB carries no colour
    return LoadedImage(data=data, path=str(p), kind="raster", notes=notes, rgb=rgb, lossy=lossy,
                       eight_bit=eight_bit, jpeg_quality=quality)


def _jpeg_quality_note(im, notes: list[str]) -> float | None:
    """The JPEG's quality from its quantisation tables (None when it has none), with a note saying so and
    whether its colour was stored at half resolution (Pillow's ``get_sampling``: 2 = 4:2:0)."""
    from PIL import JpegImagePlugin

    from lensmass.io.jpeg_tables import quality_from_tables

    quality = quality_from_tables(getattr(im, "quantization", None))
    if quality is None:
        return None
    try:
        halved = JpegImagePlugin.get_sampling(im) in (1, 2)
    except Exception:  # a JPEG Pillow reads but whose sampling it cannot tell
        halved = False
    notes.append(f"JPEG of quality about {quality:.0f} (read from its quantisation tables)"
                 + (", colour stored at half resolution." if halved and im.mode != "L" else "."))
    return quality


def _count_nan(data: np.ndarray) -> int:
    """NaN pixels, counted a block of rows at a time (no image-sized temporary mask)."""
    if data.ndim != 2:
        return int(np.count_nonzero(np.isnan(data)))
    return sum(int(np.count_nonzero(np.isnan(data[i:i + _CLEAN_ROWS]))) for i in range(0, data.shape[0], _CLEAN_ROWS))


def _finish(image: LoadedImage, user_scale: float | None, user_err: float) -> None:
    """Fill in pixel scale, its matrix and notes."""
    n_masked = image.masked_pixels if image.masked_pixels is not None else _count_nan(image.data)
    if n_masked:
        image.notes.append(f"{n_masked} pixels are blank or NaN and are masked.")
    if image.wcs is not None:
        sx, sy, s_area = wcs_pixel_scales_arcsec(image.wcs)
        image.pixel_scale_xy_arcsec = (sx, sy)
        image.pixel_matrix_arcsec = _wcs_pixel_matrix_arcsec(image.wcs)
        if abs(sx - sy) > ANISOTROPY_NOTE_LEVEL * max(sx, sy):
            image.notes.append(
                f"Unequal pixel scales ({sx:.4g}\" along x, {sy:.4g}\" along y): radii from the ring finder use "
                f"the area-equivalent {s_area:.4g}\"/pixel; point fits use the full WCS matrix."
            )
        m = image.pixel_matrix_arcsec
        cos_angle = abs(np.dot(m[:, 0], m[:, 1])) / (sx * sy)
        if cos_angle > 1e-3:
            image.notes.append(f"The pixel axes are skewed by {np.degrees(np.arcsin(min(cos_angle, 1))):.2f} deg "
                               "from perpendicular (taken into account).")
        image.pixel_scale_arcsec = s_area
        image.pixel_scale_err_arcsec = 0.0
        if user_scale is not None:
            if abs(user_scale - s_area) > 1e-3 * s_area:
                image.notes.append(
                    f"The given pixel scale {user_scale:g}\" replaces the WCS scale {s_area:.4g}\" for measurement."
                )
            image.pixel_matrix_arcsec = m * (user_scale / s_area)
            image.pixel_scale_xy_arcsec = (sx * user_scale / s_area, sy * user_scale / s_area)
            image.pixel_scale_arcsec = user_scale
            image.pixel_scale_err_arcsec = float(user_err or 0.0)
        return
    if user_scale is not None:
        image.pixel_scale_arcsec = user_scale
        image.pixel_scale_err_arcsec = float(user_err or 0.0)
        image.pixel_scale_xy_arcsec = (user_scale, user_scale)
        # FITS rows run upwards (row 0 at the bottom); PNG/JPEG/TIFF rows run downwards (row 0 at the top).
        # Either way the picture is taken as north up, east left (common practice for cutouts).
        from lensmass.core.einstein import north_up_matrix  # imported here: it brings scipy

        image.pixel_matrix_arcsec = north_up_matrix(user_scale, rows_run_down=image.kind != "fits")
        image.notes.append(f"Pixel scale {user_scale:g}\"/pixel given by the user (no WCS in the file)"
                           + ("; row 0 is the top of the picture, taken as north up, east left." if image.kind != "fits"
                              else "; taken as north up, east left."))
    elif image.kind == "fits":
        image.notes.append("No usable WCS in the file: give the pixel scale in arcsec per pixel (`pixel_scale_arcsec`) to measure.")


def write_image_fits(path: str | os.PathLike, data: np.ndarray, header=None, history: str = "") -> None:
    """Write a 2-D image as FITS (float32) atomically, keeping the WCS and other cards of ``header``."""
    from astropy.io import fits

    from lensmass.io.atomic import atomic_path

    h = fits.Header()
    if header is not None:
        for card in header.cards:
            if card.keyword not in ("SIMPLE", "BITPIX", "NAXIS", "NAXIS1", "NAXIS2", "NAXIS3", "EXTEND", "BSCALE",
                                    "BZERO", "BLANK", "XTENSION", "PCOUNT", "GCOUNT", "ZIMAGE", "ZBITPIX",
                                    "ZNAXIS", "ZNAXIS1", "ZNAXIS2", "ZTILE1", "ZTILE2", "ZCMPTYPE", "CHECKSUM",
                                    "DATASUM", ""):
                try:
                    h.append(card)
                except Exception:
                    continue
    if history:
        h["HISTORY"] = history
    try:
        with atomic_path(path) as tmp:
            fits.PrimaryHDU(np.asarray(data, np.float32), header=h).writeto(tmp, overwrite=True)
    except PermissionError:
        raise LensInputError(f"Cannot write {path}: permission denied; choose a folder you can write to.") from None
