"""Gas and light maps put on the mass map's sky grid by WCS, and their peaks.

The mass map's grid (:func:`map_grid_wcs`) is a gnomonic (TAN) projection centred on the
map centre, x east and y north in arcsec, as in :mod:`lensmass.core.mass_map` (Calabretta
& Greisen 2002, A&A 395, 1077 for the FITS WCS conventions). A second map is either

- an X-ray image: counts with an optional exposure map, on its own WCS (any orientation
  and pixel size). Its peaks are found on its own pixels (summed in blocks of up to
  0.4 smoothing widths; sums of Poisson counts stay Poisson), as a count rate
  smoothed by a Gaussian with the stated width and divided by the equally smoothed exposure
  (normalised convolution, so chip gaps do not make false edges). Positions go to the sky
  with the image's WCS (astropy) and then to the mass map's offsets. Uncertainty: the counts
  are redrawn as Poisson variates of the observed counts (the parametric bootstrap).
  For display and aperture sums it is resampled onto the mass map's grid with the
  ``reproject`` library (exact spherical-polygon overlap; sums kept when ``conserve_sum``).
- a light map of member galaxies: their luminosities or stellar masses binned on the mass
  map's grid and smoothed with the same Gaussian; uncertainty from the Poisson bootstrap
  of the members, with regions widened by a factor calibrated on simulations
  (:data:`LIGHT_REGION_WIDENING`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import ndimage

from lensmass.core.errors import LensInputError
from lensmass.core.peak_finding import (
    PEAK_REGION_WIDENING,
    LocatedPeak,
    bootstrap_regions,
    local_peaks,
    nearest_peak,
    poisson_multiplicities,
)
from lensmass.core.shear_profile import tangent_plane_offsets_arcsec, tangent_plane_to_sky


def map_grid_wcs(center_ra: float, center_dec: float, pixel_arcsec: float, n_pixels: int):
    """astropy WCS of a mass map array as held in memory (axis 1 = x east, axis 0 = y north).

    Pixel (i, j) has offset ((i - n/2 + 0.5) p, (j - n/2 + 0.5) p) from the centre, as in
    :class:`lensmass.core.mass_map.MassMap`; east is toward increasing column here.
    """
    from astropy.wcs import WCS

    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [float(center_ra), float(center_dec)]
    w.wcs.crpix = [n_pixels / 2 + 0.5, n_pixels / 2 + 0.5]
    w.wcs.cdelt = [pixel_arcsec / 3600.0, pixel_arcsec / 3600.0]
    w.wcs.cunit = ["deg", "deg"]
    w.wcs.radesys = "ICRS"
    return w


def tan_wcs(center_ra: float, center_dec: float, pixel_arcsec: float, shape, rotation_deg: float = 0.0):
    """A TAN WCS with the usual sky layout (east left, north up), turned by ``rotation_deg``, centred on the image.

    CD matrix of a rotated image (Calabretta & Greisen 2002, eq. 189 with CDELT1 = -CDELT2).
    """
    from astropy.wcs import WCS

    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [center_ra, center_dec]
    w.wcs.crpix = [shape[1] / 2 + 0.5, shape[0] / 2 + 0.5]
    a = np.radians(rotation_deg)
    s = pixel_arcsec / 3600.0
    w.wcs.cd = [[-s * np.cos(a), s * np.sin(a)], [s * np.sin(a), s * np.cos(a)]]
    w.wcs.radesys = "ICRS"
    return w


def reproject_onto_map(data, wcs_in, center_ra: float, center_dec: float, pixel_arcsec: float, n_pixels: int,
                       *, conserve_sum: bool = False, exact: bool = True) -> np.ndarray:
    """``data`` (on ``wcs_in``) resampled onto the mass map's grid with the ``reproject`` library.

    With ``conserve_sum`` the values are per-pixel amounts (counts, Msun per pixel) and their
    total is kept; otherwise they are surface brightnesses. ``exact`` uses the exact
    spherical-polygon overlap (``reproject_exact``), else bilinear interpolation (for display).
    Pixels outside the input are NaN.
    """
    from astropy.wcs.utils import proj_plane_pixel_area
    from reproject import reproject_exact, reproject_interp

    target = map_grid_wcs(center_ra, center_dec, pixel_arcsec, n_pixels)
    values = np.asarray(data, float)
    method = reproject_exact if exact else reproject_interp
    out, footprint = method((values, wcs_in), target, shape_out=(n_pixels, n_pixels))
    out = np.where(footprint > 0, out, np.nan)
    if conserve_sum:
        out *= (pixel_arcsec / 3600.0) ** 2 / proj_plane_pixel_area(wcs_in.celestial)
    return out


def smooth_masked(values, valid, sigma_pix: float) -> np.ndarray:
    """Gaussian-smoothed ``values`` / smoothed ``valid`` (normalised convolution); NaN where unsupported."""
    v = np.where(valid, np.nan_to_num(np.asarray(values, float)), 0.0)
    num = ndimage.gaussian_filter(v, sigma_pix, mode="constant")
    den = ndimage.gaussian_filter(np.asarray(valid, float), sigma_pix, mode="constant")
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0.2, num / den, np.nan)


@dataclass
class SecondMapPeak(LocatedPeak):
    """A peak of the gas or light map (offsets from the mass map centre), with its sky position and height."""

    kind: str = ""
    ra_deg: float = np.nan
    dec_deg: float = np.nan
    height: float = np.nan


@dataclass
class SecondMap:
    """A second map on the mass map's grid (``image``, for display and sums) and its peaks."""

    kind: str
    image: np.ndarray
    unit: str
    smoothing_arcsec: float
    peaks: list[SecondMapPeak]
    description: str
    n_resamples: int


#: A gas or light peak found in fewer than this fraction of the resamplings is a noise feature
#: and is not reported (nor matched to a mass peak).
MIN_FOUND_FRACTION = 0.5


#: Widening of the light peaks' bootstrap regions (squared Mahalanobis radius). A light map is
#: dominated by its few brightest members, and the bootstrap moves its peak too little: over 60 seeded
#: two-cloud member simulations (80 members each, 60" scatter, log-normal masses of 0.4 dex) the
#: regions widened like the mass peaks' (1.2) held the true centre 57% / 91% of the time; 1.8 is
#: calibrated on those runs and checked on other seeds and settings in the tests.
LIGHT_REGION_WIDENING = 1.8
#: The X-ray regions come from redraws of the exact noise model (Poisson counts) and are not widened:
#: over 60 seeded beta-model images (about 15 000 counts) they held the true clump centre 68% / 98%
#: of the time unwidened (75% / 100% with the mass peaks' 1.2).
XRAY_REGION_WIDENING = 1.0


def _regions_for(kind, measured_xy, samples, center_ra, center_dec, heights,
                 widening: float = PEAK_REGION_WIDENING) -> list[SecondMapPeak]:
    out = []
    for j, (x, y) in enumerate(measured_xy):
        if np.mean(np.all(np.isfinite(samples[:, j]), axis=1)) < MIN_FOUND_FRACTION:
            continue
        cov, regions, qs = bootstrap_regions((x, y), samples[:, j], widening=widening)
        ra, dec = tangent_plane_to_sky(np.array([x]), np.array([y]), center_ra, center_dec)
        out.append(SecondMapPeak(float(x), float(y), cov, regions, qs,
                                 int(np.count_nonzero(np.all(np.isfinite(samples[:, j]), axis=1))), samples[:, j],
                                 kind=kind, ra_deg=float(ra[0]), dec_deg=float(dec[0]), height=float(heights[j])))
    return out


def xray_peaks(counts, wcs_in, *, exposure=None, center_ra: float, center_dec: float, pixel_arcsec: float,
               n_pixels: int, smoothing_arcsec: float, n_resamples: int = 200, max_peaks: int = 6,
               min_fraction: float = 0.1, search: float = 1.5, seed: int | None = 0) -> SecondMap:
    """Peaks of an X-ray count image and their bootstrap regions; its rate map on the mass grid.

    Peaks lower than ``min_fraction`` of the highest are dropped. ``counts`` and ``exposure``
    are arrays on ``wcs_in``; exposure in any unit (s, or s cm^2), zero where not observed.
    """
    from astropy.wcs.utils import proj_plane_pixel_scales

    c = np.asarray(counts, float)
    if c.ndim != 2:
        raise LensInputError("The X-ray image must be a 2-D array of counts; pick the plane or extension.")
    exp = np.ones_like(c) if exposure is None else np.asarray(exposure, float)
    if exp.shape != c.shape:
        raise LensInputError(f"The exposure map is {exp.shape[1]} x {exp.shape[0]} pixels but the counts image is "
                             f"{c.shape[1]} x {c.shape[0]}: give the exposure map made for this image.")
    ok = np.isfinite(c) & np.isfinite(exp) & (exp > 0)
    if not np.any(ok) or np.nansum(np.where(ok, c, 0)) <= 0:
        raise LensInputError("The X-ray image has no counts where it was exposed: check the file and the exposure map.")
    if np.any(c[ok] < 0) or not np.allclose(c[ok], np.round(c[ok])):
        raise LensInputError("The X-ray image must hold photon counts (whole numbers >= 0); "
                             "give the counts image and the exposure map separately, not a rate map.")
    wcs = wcs_in.celestial
    scale_arcsec = float(np.mean(proj_plane_pixel_scales(wcs))) * 3600.0
    block = max(1, int(np.floor(smoothing_arcsec / 2.5 / scale_arcsec)))
    cb, eb, okb, wcs_b = _block_sum(np.where(ok, c, 0.0), np.where(ok, exp, 0.0), block, wcs)
    sigma_pix = smoothing_arcsec / (scale_arcsec * block)
    exp_s = ndimage.gaussian_filter(eb, sigma_pix, mode="constant")
    floor = 0.05 * np.max(exp_s)
    valid = exp_s > floor

    def rate(cnt):
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(valid, ndimage.gaussian_filter(cnt, sigma_pix, mode="constant") / exp_s, np.nan)

    r0 = rate(cb)
    radius = max(1, int(round(0.5 * sigma_pix)))
    found = local_peaks(r0, threshold=min_fraction * np.nanmax(r0), radius_pix=radius, max_peaks=max_peaks,
                        valid=valid)
    rng = np.random.default_rng(seed)
    samples_pix = np.full((int(n_resamples), len(found), 2), np.nan)
    for b in range(int(n_resamples)):
        rb = rate(rng.poisson(cb).astype(float))
        cand = local_peaks(rb, threshold=-np.inf, radius_pix=radius, max_peaks=1000, valid=valid)
        for j, (px, py, _) in enumerate(found):
            samples_pix[b, j] = nearest_peak(cand, px, py, search * sigma_pix)[:2]
    to_off = _pixel_to_offsets(wcs_b, center_ra, center_dec)
    measured = [to_off(px, py) for px, py, _ in found]
    samples = np.full_like(samples_pix, np.nan)
    for j in range(len(found)):
        sx, sy = to_off(samples_pix[:, j, 0], samples_pix[:, j, 1])
        samples[:, j, 0], samples[:, j, 1] = sx, sy
    image = reproject_onto_map(np.where(ok, c / np.where(ok, exp, 1.0), np.nan), wcs, center_ra, center_dec,
                               pixel_arcsec, n_pixels, exact=False)
    image = smooth_masked(image, np.isfinite(image), smoothing_arcsec / pixel_arcsec)
    peaks = _regions_for("gas", measured, samples, center_ra, center_dec, found[:, 2] if found.size else [],
                         widening=XRAY_REGION_WIDENING)
    return SecondMap("gas", image, "count rate per map pixel (smoothed)", float(smoothing_arcsec), peaks,
                     "X-ray count rate (counts / exposure), Gaussian-smoothed; peaks on the image's own pixels "
                     f"summed {block}x{block}; regions from {int(n_resamples)} Poisson redraws of the counts",
                     int(n_resamples))


def _block_sum(counts, exposure, block: int, wcs):
    if block == 1:
        return counts, exposure, exposure > 0, wcs
    ny, nx = (s // block * block for s in counts.shape)
    cb = counts[:ny, :nx].reshape(ny // block, block, nx // block, block).sum(axis=(1, 3))
    eb = exposure[:ny, :nx].reshape(ny // block, block, nx // block, block).mean(axis=(1, 3))
    return cb, eb, eb > 0, wcs.slice((slice(None, None, block), slice(None, None, block)))


def _pixel_to_offsets(wcs, center_ra: float, center_dec: float):
    def convert(px, py):
        px = np.asarray(px, float)
        py = np.asarray(py, float)
        good = np.isfinite(px) & np.isfinite(py)
        ra, dec = wcs.all_pix2world(np.where(good, px, 0.0), np.where(good, py, 0.0), 0)
        x, y = tangent_plane_offsets_arcsec(np.atleast_1d(ra), np.atleast_1d(dec), center_ra, center_dec)
        x = np.where(good, x, np.nan)
        y = np.where(good, y, np.nan)
        return (float(x[0]), float(y[0])) if np.ndim(px) == 0 else (x, y)

    return convert


def light_peaks(ra_deg, dec_deg, amount, *, center_ra: float, center_dec: float, pixel_arcsec: float,
                n_pixels: int, smoothing_arcsec: float, n_resamples: int = 200, max_peaks: int = 6,
                min_fraction: float = 0.1, search: float = 1.5, unit: str = "Msun", seed: int | None = 0
                ) -> SecondMap:
    """Light (or stellar-mass) map of member galaxies on the mass grid, its peaks and bootstrap regions.

    ``amount`` is each member's luminosity or stellar mass; the map holds the smoothed amount per
    map pixel.
    """
    a = np.asarray(amount, float)
    x, y = tangent_plane_offsets_arcsec(np.asarray(ra_deg, float), np.asarray(dec_deg, float), center_ra, center_dec)
    good = np.isfinite(x) & np.isfinite(y) & np.isfinite(a) & (a > 0)
    if np.count_nonzero(good) < 3:
        raise LensInputError("The member catalogue needs at least 3 galaxies with positions and positive "
                             "magnitudes-derived luminosities or stellar masses.")
    ix = np.floor(x[good] / pixel_arcsec + n_pixels / 2).astype(int)
    iy = np.floor(y[good] / pixel_arcsec + n_pixels / 2).astype(int)
    on = (ix >= 0) & (ix < n_pixels) & (iy >= 0) & (iy < n_pixels)
    if np.count_nonzero(on) < 3:
        raise LensInputError("Fewer than 3 member galaxies fall on the mass map: check the members' coordinates "
                             "or enlarge the map.")
    flat = iy[on] * n_pixels + ix[on]
    a_on = a[good][on]
    sigma_pix = smoothing_arcsec / pixel_arcsec

    def smoothed(weights):
        grid = np.bincount(flat, weights=weights, minlength=n_pixels * n_pixels).reshape(n_pixels, n_pixels)
        return ndimage.gaussian_filter(grid, sigma_pix, mode="constant")

    image = smoothed(a_on)
    radius = max(1, int(round(0.5 * sigma_pix)))
    found = local_peaks(image, threshold=min_fraction * image.max(), radius_pix=radius, max_peaks=max_peaks)
    rng = np.random.default_rng(seed)
    samples = np.full((int(n_resamples), len(found), 2), np.nan)
    for b in range(int(n_resamples)):
        cand = local_peaks(smoothed(a_on * poisson_multiplicities(rng, a_on.size)), threshold=-np.inf,
                           radius_pix=radius, max_peaks=1000)
        for j, (px, py, _) in enumerate(found):
            samples[b, j] = nearest_peak(cand, px, py, search * sigma_pix)[:2]
    off = lambda p: (p - n_pixels / 2 + 0.5) * pixel_arcsec  # noqa: E731
    measured = [(off(px), off(py)) for px, py, _ in found]
    peaks = _regions_for("light", measured, off(samples), center_ra, center_dec, found[:, 2] if found.size else [],
                         widening=LIGHT_REGION_WIDENING)
    return SecondMap("light", image, f"{unit} per map pixel (smoothed)", float(smoothing_arcsec), peaks,
                     f"member galaxies' {unit} binned on the mass map's grid and Gaussian-smoothed; regions from "
                     f"{int(n_resamples)} Poisson-bootstrap resamplings of the members, widened by the calibrated factor "
                     f"{LIGHT_REGION_WIDENING:g}", int(n_resamples))
