"""Aperture photometry of the lens galaxy inside its Einstein radius (arrays in, numbers out).

The apertures are photutils' (exact pixel overlap). Steps:

1. mask the lensed arcs: the marked arc points widened to a band, and/or pixels that are
   brighter than the lens's own ring at their elliptical radius (residual-bright);
2. measure a local sky: the sigma-clipped median per pixel of an annulus, arcs masked;
3. fill the masked pixels with the median of the unmasked pixels of the same elliptical
   ring (rings masked all round, as under a complete Einstein ring, take a Sersic-like
   law fitted to the rings around them), so the lens light under the arcs is still counted;
4. sum the filled image inside the circle or ellipse of theta_E and subtract the sky.

Pixel convention: (x, y) with the centre of pixel ``image[j, i]`` at (i, j) (photutils).
The error is sky noise in the aperture plus the error of the sky level, plus Poisson noise
of the source when a gain is given (common practice).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lensmass.core.errors import LensInputError

#: Default sky annulus, in units of the aperture's semi-major axis (inner, outer).
DEFAULT_ANNULUS = (4.0, 6.0)
#: Fewest usable sky pixels before the sky level is refused.
MIN_SKY_PIXELS = 20
#: 2.5 / ln 10: magnitude error per relative flux error.
MAG_PER_RELATIVE_FLUX = 2.5 / np.log(10.0)


@dataclass(frozen=True)
class ApertureGeometry:
    """Where the photometry was done, for drawing: centre, semi-axes, angle, annulus."""

    x_pix: float
    y_pix: float
    a_pix: float
    b_pix: float
    theta_rad: float
    annulus_in_pix: float
    annulus_out_pix: float


@dataclass(frozen=True)
class LensPhotometry:
    """Sky-subtracted flux of the lens inside the aperture, in image units (counts or counts/s)."""

    flux: float
    flux_err: float
    sky_per_pixel: float
    sky_std: float
    aperture_area_pix: float
    sky_pixels: int
    masked_in_aperture: int
    geometry: ApertureGeometry
    mask: np.ndarray = field(repr=False)


def elliptical_radius_pix(shape, x_pix, y_pix, axis_ratio=1.0, theta_rad=0.0) -> np.ndarray:
    """Semi-major-axis radius of every pixel about (x, y) for an ellipse of axis ratio q and angle theta."""
    yy, xx = np.indices(shape, dtype=float)
    dx, dy = xx - x_pix, yy - y_pix
    c, s = np.cos(theta_rad), np.sin(theta_rad)
    u = dx * c + dy * s
    v = -dx * s + dy * c
    return np.hypot(u, v / axis_ratio)


def arc_band_mask(shape, points_xy, width_pix: float) -> np.ndarray:
    """Pixels within ``width_pix / 2`` of any marked arc point (the points widened to a band).

    Examples
    --------
    >>> int(arc_band_mask((11, 11), [(5, 5)], 3.0).sum())
    9
    """
    mask = np.zeros(shape, bool)
    pts = np.asarray(points_xy, float).reshape(-1, 2) if points_xy is not None else np.empty((0, 2))
    if pts.size == 0:
        return mask
    if not np.all(np.isfinite(pts)):
        raise LensInputError("An arc point has a missing or non-numeric coordinate: fix or remove it before masking the arcs.")
    from scipy import ndimage

    seeds = np.ones(shape, bool)
    ij = np.rint(pts[:, ::-1]).astype(int)
    inside = (ij[:, 0] >= 0) & (ij[:, 0] < shape[0]) & (ij[:, 1] >= 0) & (ij[:, 1] < shape[1])
    if not inside.any():
        return mask
    seeds[ij[inside, 0], ij[inside, 1]] = False
    distance = ndimage.distance_transform_edt(seeds)
    return distance <= 0.5 * float(width_pix)


def _ring_statistics(image, radius, valid, ring_width_pix: float):
    """Per ring of elliptical radius: median, MAD-based sigma and median radius of the valid pixels."""
    ring = np.floor(radius / ring_width_pix).astype(int)
    n_rings = int(ring.max()) + 1
    median = np.full(n_rings, np.nan)
    sigma = np.full(n_rings, np.nan)
    centre = np.full(n_rings, np.nan)
    order = np.argsort(ring[valid], kind="stable")
    values = image[valid][order]
    radii = radius[valid][order]
    bounds = np.searchsorted(ring[valid][order], np.arange(n_rings + 1))
    for k in range(n_rings):  # one pass per ring (a few dozen), not per pixel
        chunk = values[bounds[k]:bounds[k + 1]]
        if chunk.size:
            m = np.median(chunk)
            median[k] = m
            sigma[k] = 1.4826 * np.median(np.abs(chunk - m))
            centre[k] = np.median(radii[bounds[k]:bounds[k + 1]])
    return ring, median, sigma, centre, np.diff(bounds)


def residual_bright_mask(image, x_pix, y_pix, r_max_pix, *, axis_ratio=1.0, theta_rad=0.0,
                         nsigma: float = 3.0, base_mask=None, ring_width_pix: float = 1.0) -> np.ndarray:
    """Pixels brighter than the median of their elliptical ring by ``nsigma`` robust sigmas.

    The lens light is smooth in rings; lensed arcs and images stand out above it.
    """
    image = np.asarray(image, float)
    radius = elliptical_radius_pix(image.shape, x_pix, y_pix, axis_ratio, theta_rad)
    valid = np.isfinite(image) & (radius <= r_max_pix)
    if base_mask is not None:
        valid &= ~base_mask
    ring, median, sigma, _, _ = _ring_statistics(image, radius, valid, ring_width_pix)
    ring = np.minimum(ring, len(median) - 1)
    with np.errstate(invalid="ignore"):
        bright = image > median[ring] + nsigma * np.maximum(sigma[ring], 0.0)
    return bright & (radius <= r_max_pix) & np.isfinite(image)


#: A ring whose unmasked pixels are fewer than this fraction is filled by interpolation instead.
MIN_RING_COVERAGE = 0.5


def _profile_across_gap(r_nodes, v_nodes, r_wanted, err_nodes=None) -> np.ndarray:
    """Lens light at ``r_wanted`` from ring medians around a fully masked stretch of radius.

    A Sersic-like law log I = a - b r^(1/n) is fitted (robust least squares, 0.3 <= n <= 10)
    to the rings above the background out to twice the largest radius wanted; where that
    is not possible, log-linear interpolation between the neighbouring rings is used.
    """
    from scipy.optimize import least_squares

    use = (v_nodes > 0) & (r_nodes <= 2.0 * r_wanted.max()) & (r_nodes > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        fallback = np.exp(np.interp(r_wanted, r_nodes[v_nodes > 0], np.log(v_nodes[v_nodes > 0])))
    if use.sum() < 5 or not np.any(r_nodes[use] < r_wanted.min()) or not np.any(r_nodes[use] > r_wanted.max()):
        return np.where(np.isfinite(fallback), fallback, np.interp(r_wanted, r_nodes, v_nodes))
    r, logv = r_nodes[use], np.log(v_nodes[use])
    # weights: the relative error of each ring median (floor 1% so bright noiseless rings do not dominate)
    rel = np.full(r.shape, 0.01) if err_nodes is None else np.maximum(err_nodes[use] / v_nodes[use], 0.01)

    def law(p, x):
        return p[0] - np.exp(p[1]) * x ** p[2]

    start = np.array([logv.max(), 0.0, 0.5])
    fit = least_squares(lambda p: (law(p, r) - logv) / rel, start, bounds=([-np.inf, -20, 0.1], [np.inf, 20, 1 / 0.3]),
                        loss="soft_l1", f_scale=3.0)
    if not fit.success:
        return fallback
    return np.exp(law(fit.x, r_wanted))


def fill_masked_by_ring(image, mask, x_pix, y_pix, *, axis_ratio=1.0, theta_rad=0.0,
                        ring_width_pix: float = 1.0, background: float = 0.0,
                        noise: float | None = None) -> np.ndarray:
    """Copy of ``image`` with masked (and non-finite) pixels replaced by the lens light of their ring.

    A masked pixel takes the median of the unmasked pixels of its elliptical ring. Where
    a ring is mostly masked (under a complete Einstein ring) the value is interpolated at
    the pixel's own radius from a Sersic-like law fitted to the well-covered rings around
    it (brightness above ``background``; ring medians weighted by ``noise`` per pixel, or by
    their own scatter when it is not given), see :func:`_profile_across_gap`.
    """
    image = np.asarray(image, float) - background
    bad = np.asarray(mask, bool) | ~np.isfinite(image)
    if not bad.any():
        return image + background
    radius = elliptical_radius_pix(image.shape, x_pix, y_pix, axis_ratio, theta_rad)
    ring, median, sigma, centre, n_valid = _ring_statistics(image, radius, ~bad, ring_width_pix)
    n_total = np.bincount(ring.ravel(), minlength=len(median))
    covered = (n_valid >= np.maximum(3, MIN_RING_COVERAGE * n_total)) & np.isfinite(median)
    if not covered.any():
        raise LensInputError("Every pixel around the lens is masked or missing: widen the image or mark fewer arc pixels.")
    out = image.copy()
    use_ring = bad & covered[ring]
    out[use_ring] = median[ring[use_ring]]
    rest = bad & ~covered[ring]
    if rest.any():
        scatter = sigma[covered] if noise is None else np.full(covered.sum(), float(noise))
        err = 1.2533 * scatter / np.sqrt(np.maximum(n_valid[covered], 1))  # error of a median
        out[rest] = _profile_across_gap(centre[covered], median[covered], radius[rest], err)
    return out + background


def lens_aperture_photometry(
    image,
    x_pix: float,
    y_pix: float,
    radius_pix: float,
    *,
    axis_ratio: float = 1.0,
    theta_rad: float = 0.0,
    annulus: tuple[float, float] = DEFAULT_ANNULUS,
    arc_points_xy=None,
    arc_width_pix: float = 3.0,
    mask_residuals: bool = False,
    nsigma: float = 3.0,
    mask=None,
    gain: float | None = None,
) -> LensPhotometry:
    """Sky-subtracted flux of the lens inside the Einstein-radius circle or ellipse.

    Parameters
    ----------
    image : 2-D array
        Counts (or counts per second); NaNs are treated as masked.
    x_pix, y_pix, radius_pix : float
        Lens centre and theta_E (semi-major axis for an ellipse) in pixels.
    axis_ratio, theta_rad : float
        Ellipse b/a and angle of the major axis from +x toward +y (circle by default).
    annulus : (inner, outer)
        Sky annulus in units of ``radius_pix``.
    arc_points_xy : (N, 2) array, optional
        Marked arc points; pixels within ``arc_width_pix / 2`` of them are masked.
    mask_residuals : bool
        Also mask pixels that stand ``nsigma`` above their elliptical ring.
    mask : bool array, optional
        Extra pixels to mask (True = masked).
    gain : float, optional
        Electrons per image unit, for the Poisson part of the error.

    Examples
    --------
    >>> img = np.zeros((41, 41)); img[20, 20] = 100.0
    >>> round(lens_aperture_photometry(img, 20, 20, 3.0).flux, 6)
    100.0
    """
    from astropy.stats import SigmaClip
    from photutils.aperture import ApertureStats, EllipticalAnnulus, EllipticalAperture, aperture_photometry

    image = np.asarray(image, float)
    if image.ndim != 2 or min(image.shape) < 5:
        raise LensInputError("Photometry needs a 2-D image of at least 5 x 5 pixels: check the image file or its extension.")
    if not (np.isfinite(radius_pix) and radius_pix > 0):
        raise LensInputError(f"The photometry aperture needs a positive Einstein radius in pixels, got {radius_pix}.")
    if not (0 < axis_ratio <= 1):
        raise LensInputError(f"The aperture axis ratio b/a must lie in (0, 1], got {axis_ratio}.")
    ny, nx = image.shape
    if not (0 <= x_pix <= nx - 1 and 0 <= y_pix <= ny - 1):
        raise LensInputError(f"The lens centre ({x_pix:g}, {y_pix:g}) lies outside the {nx} x {ny} image: mark the lens again.")
    a_in, a_out = (float(v) * radius_pix for v in annulus)
    if not (radius_pix <= a_in < a_out):
        raise LensInputError("The sky annulus must start at or outside the aperture and have outer > inner radius.")

    # work on a cutout just larger than the sky annulus (and the arc band's reach)
    reach = a_out + 0.5 * float(arc_width_pix) + 2.0
    x0, x1 = max(0, int(np.floor(x_pix - reach))), min(nx, int(np.ceil(x_pix + reach)) + 1)
    y0, y1 = max(0, int(np.floor(y_pix - reach))), min(ny, int(np.ceil(y_pix + reach)) + 1)
    full_shape, image = image.shape, image[y0:y1, x0:x1]
    points = None
    if arc_points_xy is not None:
        points = np.asarray(arc_points_xy, float).reshape(-1, 2) - [x0, y0]
    masked = ~np.isfinite(image)
    if mask is not None:
        masked |= np.asarray(mask, bool)[y0:y1, x0:x1]
    masked |= arc_band_mask(image.shape, points, arc_width_pix)
    cx, cy = float(x_pix) - x0, float(y_pix) - y0
    if mask_residuals:
        masked |= residual_bright_mask(image, cx, cy, a_out, axis_ratio=axis_ratio, theta_rad=theta_rad,
                                       nsigma=nsigma, base_mask=masked)

    pos = (cx, cy)
    aperture = EllipticalAperture(pos, radius_pix, radius_pix * axis_ratio, theta=theta_rad)
    ring = EllipticalAnnulus(pos, a_in, a_out, a_out * axis_ratio, theta=theta_rad)
    sky = ApertureStats(image, ring, mask=masked, sigma_clip=SigmaClip(sigma=3.0, maxiters=10), sum_method="center")
    n_sky = int(np.nan_to_num(sky.sum_aper_area.value))
    if n_sky < MIN_SKY_PIXELS or not np.isfinite(sky.median):
        raise LensInputError(
            f"Only {n_sky} unmasked sky pixels lie in the annulus at {a_in:.1f}-{a_out:.1f} px: "
            "use a larger image or a smaller annulus."
        )
    sky_level, sky_std = float(sky.median), float(sky.std)
    filled = fill_masked_by_ring(image, masked, cx, cy, axis_ratio=axis_ratio, theta_rad=theta_rad,
                                 background=sky_level, noise=sky_std)
    table = aperture_photometry(filled, aperture, method="exact")
    area = float(aperture.area_overlap(filled)) if hasattr(aperture, "area_overlap") else float(aperture.area)
    flux = float(table["aperture_sum"][0]) - sky_level * area
    var = area * sky_std**2 + area**2 * sky_std**2 / n_sky
    if gain:
        var += max(flux, 0.0) / float(gain)
    in_aperture = aperture.to_mask(method="center").to_image(image.shape)
    n_masked = int(np.sum(masked & (in_aperture > 0))) if in_aperture is not None else 0
    geometry = ApertureGeometry(float(x_pix), float(y_pix), float(radius_pix), float(radius_pix * axis_ratio),
                                float(theta_rad), a_in, a_out)
    full_mask = np.zeros(full_shape, bool)
    full_mask[y0:y1, x0:x1] = masked
    return LensPhotometry(flux, float(np.sqrt(var)), sky_level, sky_std, area, n_sky, n_masked, geometry, full_mask)


def counts_to_magnitude(flux, flux_err, zeropoint: float, exptime_s: float = 1.0) -> tuple[float, float]:
    """m = ZP - 2.5 log10(flux / t_exp), and its error 1.0857 flux_err / flux (common practice).

    ``zeropoint`` is the magnitude of one count per second (per image unit if ``exptime_s`` is 1).

    Examples
    --------
    >>> counts_to_magnitude(100.0, 0.0, 25.0)
    (20.0, 0.0)
    """
    if not np.isfinite(zeropoint):
        raise LensInputError("The photometric zeropoint must be a number: give its value (`zeropoint`) or the header keyword that holds it (`zeropoint_key`).")
    if not (np.isfinite(exptime_s) and exptime_s > 0):
        raise LensInputError(f"The exposure time must be a positive number of seconds, got {exptime_s}; check the exposure time (`exptime`).")
    if not (np.isfinite(flux) and flux > 0):
        raise LensInputError(
            f"The lens flux inside theta_E is {flux:.4g} after sky subtraction (not positive): "
            "check the lens centre, the sky annulus and the arc mask."
        )
    mag = float(zeropoint) - 2.5 * np.log10(float(flux) / float(exptime_s))
    return float(mag), float(MAG_PER_RELATIVE_FLUX * float(flux_err) / float(flux))


def lens_magnitude_inside(image, x_pix: float, y_pix: float, radius_pix: float, *, zeropoint: float,
                          exptime_s: float = 1.0, **photometry_options) -> dict:
    """Aperture photometry inside theta_E turned into a magnitude, as one JSON-ready summary.

    ``photometry_options`` go to :func:`lens_aperture_photometry`. The returned mapping has
    ``aperture_mag``, ``aperture_mag_err``, the flux, sky and mask counts, the zeropoint and
    exposure, ``aperture`` (geometry for drawing) and ``_mask`` (the masked pixels; dropped
    from JSON).
    """
    phot = lens_aperture_photometry(image, x_pix, y_pix, radius_pix, **photometry_options)
    mag, mag_err = counts_to_magnitude(phot.flux, phot.flux_err, zeropoint, exptime_s)
    g = phot.geometry
    return {
        "aperture_mag": mag, "aperture_mag_err": mag_err, "flux": phot.flux, "flux_err": phot.flux_err,
        "sky_per_pixel": phot.sky_per_pixel, "sky_std": phot.sky_std, "sky_pixels": phot.sky_pixels,
        "masked_pixels_in_aperture": phot.masked_in_aperture, "zeropoint": float(zeropoint),
        "exptime_s": float(exptime_s),
        "aperture": {"x_pix": g.x_pix, "y_pix": g.y_pix, "a_pix": g.a_pix, "b_pix": g.b_pix,
                     "theta_rad": g.theta_rad, "annulus_in_pix": g.annulus_in_pix,
                     "annulus_out_pix": g.annulus_out_pix},
        "_mask": phot.mask,
    }
