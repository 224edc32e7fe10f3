"""Read the second maps of a cluster: X-ray counts (+ exposure), member catalogues, gas mass maps.

- X-ray: a FITS image of counts with a celestial WCS; the exposure map is a separate FITS
  file on the same pixels or an extension named EXPOSURE (or EXPMAP) in the same file.
- Members: a table (FITS, CSV, ECSV, Parquet) with ``ra``, ``dec`` (degrees) and one of
  ``mstar`` (Msun), ``log_mstar`` (log10 Msun) or ``mag`` (apparent magnitude), mapped by
  ``role=COLUMN`` text like the shear catalogues, or guessed from usual names.
- Gas mass map: a FITS image in Msun per pixel with a celestial WCS.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from lensmass.core.errors import LensInputError

MEMBER_ROLES = ("ra", "dec", "mstar", "log_mstar", "mag")
_MEMBER_USUAL = {
    "ra": ("ra", "ra_deg", "raj2000", "alpha_j2000"),
    "dec": ("dec", "dec_deg", "dej2000", "decj2000", "delta_j2000"),
    "mstar": ("mstar", "m_star", "stellar_mass", "mass_star"),
    "log_mstar": ("log_mstar", "logmstar", "log_m_star", "lmstar", "log_stellar_mass"),
    "mag": ("mag", "mag_r", "rmag", "r_mag", "mag_auto", "magnitude"),
}
_EXPOSURE_NAMES = ("EXPOSURE", "EXPMAP", "EXPO")


@dataclass
class SkyImage:
    """A 2-D image with its celestial WCS (and where it came from)."""

    data: np.ndarray
    wcs: object
    path: str


@dataclass
class MemberCatalog:
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    stellar_mass_msun: np.ndarray | None
    magnitude: np.ndarray | None
    columns: dict
    path: str


def _open_fits(path: str | Path, what: str):
    from astropy.io import fits

    p = Path(path)
    if not p.is_file():
        raise LensInputError(f"The {what} '{p}' does not exist: check the path.")
    try:
        return fits.open(p, memmap=False)
    except (OSError, ValueError) as exc:
        raise LensInputError(f"Cannot read the {what} '{p.name}' as FITS ({exc}); give a FITS image.") from None


def _image_with_wcs(hdu, path: Path, what: str) -> SkyImage:
    import warnings

    from astropy.wcs import WCS, FITSFixedWarning

    data = np.asarray(hdu.data, float)
    while data.ndim > 2 and data.shape[0] == 1:
        data = data[0]
    if data.ndim != 2:
        raise LensInputError(f"The {what} '{path.name}' is not a 2-D image (shape {data.shape}); give a single plane.")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FITSFixedWarning)
        try:
            wcs = WCS(hdu.header).celestial
        except Exception:  # astropy raises several types for broken headers
            wcs = None
    if wcs is None or not wcs.has_celestial or wcs.naxis != 2:
        raise LensInputError(f"The {what} '{path.name}' has no usable sky coordinates (WCS): it must carry "
                             "RA/Dec keywords to be aligned with the mass map.")
    return SkyImage(data, wcs, str(path))


def read_xray(path: str | Path, exposure_path: str | Path | None = None) -> tuple[SkyImage, np.ndarray | None]:
    """The counts image (first image HDU) and its exposure map (file or EXPOSURE extension), or None."""
    p = Path(path)
    with _open_fits(p, "X-ray image") as hdul:
        image_hdu = next((h for h in hdul if getattr(h, "data", None) is not None and h.data.ndim >= 2), None)
        if image_hdu is None:
            raise LensInputError(f"The X-ray file '{p.name}' holds no image: give a FITS counts image.")
        counts = _image_with_wcs(image_hdu, p, "X-ray image")
        exposure = None
        for h in hdul:
            if h.name.upper() in _EXPOSURE_NAMES and h.data is not None:
                exposure = np.asarray(h.data, float)
    if exposure_path is not None:
        ep = Path(exposure_path)
        with _open_fits(ep, "exposure map") as hdul:
            hdu = next((h for h in hdul if getattr(h, "data", None) is not None and h.data.ndim >= 2), None)
            if hdu is None:
                raise LensInputError(f"The exposure file '{ep.name}' holds no image.")
            exposure = np.asarray(hdu.data, float)
    if exposure is not None and exposure.shape != counts.data.shape:
        raise LensInputError(f"The exposure map is {exposure.shape[1]} x {exposure.shape[0]} pixels but the counts "
                             f"image is {counts.data.shape[1]} x {counts.data.shape[0]}: give the exposure map "
                             "made for this image.")
    return counts, exposure


def read_sky_image(path: str | Path, what: str = "gas mass map") -> SkyImage:
    """The first 2-D image of a FITS file and its celestial WCS."""
    p = Path(path)
    with _open_fits(p, what) as hdul:
        hdu = next((h for h in hdul if getattr(h, "data", None) is not None and h.data.ndim >= 2), None)
        if hdu is None:
            raise LensInputError(f"The {what} '{p.name}' holds no image.")
        return _image_with_wcs(hdu, p, what)


def read_member_catalog(path: str | Path, columns: str | dict | None = None) -> MemberCatalog:
    """Member galaxies: positions and stellar masses (linear or log10) or magnitudes."""
    from lensmass.io.catalogs import _float_column, _read_table, catalog_format, parse_column_map

    p = Path(path)
    if not p.is_file():
        raise LensInputError(f"The member catalogue '{p}' does not exist: check the path.")
    mapping = parse_column_map(columns) if isinstance(columns, str) or columns is None else dict(columns)
    unknown = set(mapping) - set(MEMBER_ROLES)
    if unknown:
        raise LensInputError(f"Unknown member column role(s) {', '.join(sorted(unknown))}: use "
                             f"{', '.join(MEMBER_ROLES)}.")
    table = _read_table(p, catalog_format(p))
    if len(table) == 0:
        raise LensInputError(f"The member catalogue '{p.name}' has no rows.")
    lower = {c.lower(): c for c in table.colnames}
    resolved = {}
    for role in MEMBER_ROLES:
        if role in mapping:
            if mapping[role] not in table.colnames:
                raise LensInputError(f"The member catalogue has no column '{mapping[role]}' (for {role}); its "
                                     f"columns are {', '.join(table.colnames)}.")
            resolved[role] = mapping[role]
        else:
            name = next((lower[n] for n in _MEMBER_USUAL[role] if n in lower), None)
            if name is not None:
                resolved[role] = name
    for role in ("ra", "dec"):
        if role not in resolved:
            raise LensInputError(f"The member catalogue has no '{role}' column: map one (`member_columns`, "
                                 f"role {role}).")
    data = {role: _float_column(table, name, role) for role, name in resolved.items()}
    mass = data.get("mstar")
    if mass is None and "log_mstar" in data:
        mass = 10.0 ** data["log_mstar"]
    if mass is None and "mag" not in data:
        raise LensInputError("The member catalogue needs stellar masses (mstar or log_mstar) or magnitudes (mag): "
                             "map one (`member_columns`).")
    return MemberCatalog(data["ra"], data["dec"], mass, data.get("mag"), resolved, str(p))
