"""The ring finder's sector grid: the residual binned in radius and azimuth (circular or elliptical annuli),
the azimuthal profiles built from it, and the pixels of a found ring (:func:`ring_pixels`)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lensmass.core.elliptical_annuli import elliptical_radius
from lensmass.core.ring_result import RingResult

#: Width (pixels) of the sector grid's radius bins.
BIN_PIX = 0.5
#: Second pass: the ring is masked out to this many ring widths (FWHM) either side of its ridge.
MASK_HALF_WIDTHS = 1.5


@dataclass
class _SectorGrid:
    """Which (sector, radius-bin) cell each pixel of the search box falls in, for one centre. The radius is
    the elliptical radius of :mod:`lensmass.core.elliptical_annuli` for ``axis_ratio`` < 1 (sectors stay
    sectors of the ordinary polar angle)."""

    box: tuple[slice, slice]
    inside: np.ndarray
    cell: np.ndarray
    radii: np.ndarray
    n_sectors: int
    axis_ratio: float = 1.0
    angle_rad: float = 0.0

    @property
    def n_cells(self) -> int:
        return self.n_sectors * self.radii.size


def _sector_grid(shape, cx, cy, rmin, rmax, n_sectors, axis_ratio: float = 1.0, angle_rad: float = 0.0) -> _SectorGrid:
    ny, nx = shape
    reach = rmax / np.sqrt(axis_ratio)
    x0, x1 = max(0, int(cx - reach) - 1), min(nx, int(cx + reach) + 2)
    y0, y1 = max(0, int(cy - reach) - 1), min(ny, int(cy + reach) + 2)
    dy = (np.arange(y0, y1) - cy)[:, None]
    dx = (np.arange(x0, x1) - cx)[None, :]
    if axis_ratio < 1.0:
        r = elliptical_radius(dx, dy, axis_ratio, angle_rad)
    else:
        r = np.sqrt(dx * dx + dy * dy)
    inside = (r >= rmin) & (r < rmax)
    phi = np.arctan2(np.broadcast_to(dy, r.shape)[inside], np.broadcast_to(dx, r.shape)[inside])
    nb = int(np.ceil((rmax - rmin) / BIN_PIX))
    rb = ((r[inside] - rmin) / BIN_PIX).astype(np.int64)
    sb = ((phi + np.pi) / (2 * np.pi) * n_sectors).astype(np.int64) % n_sectors
    radii = rmin + (np.arange(nb) + 0.5) * BIN_PIX
    return _SectorGrid((slice(y0, y1), slice(x0, x1)), inside, sb * nb + rb, radii, n_sectors, axis_ratio, angle_rad)


def _sector_profiles(image, grid: _SectorGrid, offset: float = 0.0):
    """Sums and pixel counts of ``image - offset`` in each (sector, radius) cell; NaN pixels left out."""
    vals = np.asarray(image[grid.box][grid.inside], float) - offset
    ok = np.isfinite(vals)
    shape = (grid.n_sectors, grid.radii.size)
    if ok.all():
        sums = np.bincount(grid.cell, vals, minlength=grid.n_cells)
        counts = np.bincount(grid.cell, minlength=grid.n_cells)
    else:
        sums = np.bincount(grid.cell[ok], vals[ok], minlength=grid.n_cells)
        counts = np.bincount(grid.cell[ok], minlength=grid.n_cells)
    return sums.reshape(shape), counts.reshape(shape), grid.radii


def unmasked_sector_share(image: np.ndarray, cx: float, cy: float, radius_pix: float, n_sectors: int,
                          half_width_pix: float = 2.0) -> float:
    """Share of the ``n_sectors`` directions in which at least half the pixels within ``half_width_pix`` of
    ``radius_pix`` from (``cx``, ``cy``) are unmasked (finite), binned by :func:`_sector_grid`."""
    grid = _sector_grid(image.shape, cx, cy, max(radius_pix - half_width_pix, 0.0), radius_pix + half_width_pix,
                        n_sectors)
    _, good, _ = _sector_profiles(image, grid)
    total = np.bincount(grid.cell, minlength=grid.n_cells).reshape(good.shape).sum(1)
    good = good.sum(1)
    return float(np.mean((total > 0) & (good >= 0.5 * np.maximum(total, 1))))


def light_direction(image: np.ndarray, cx: float, cy: float, radius_pix: float, half_width_pix: float,
                    n_sectors: int, noise_sigma: float = 0.0, min_snr: float = 0.0) -> tuple[float, float]:
    """Mean direction (radians from +x) of the light within ``half_width_pix`` of ``radius_pix`` from (``cx``,
    ``cy``) and its mean resultant length: the ``n_sectors`` sectors' summed light weighting their unit direction
    vectors (common practice for weighted directions; Mardia & Jupp 2000, from memory), a sector counted only where
    its light stands above ``min_snr`` times its noise (``noise_sigma`` a pixel; 0: above zero), so that the noise of
    the empty sectors does not spread it. 1 for all the light in one direction, sin(x/2) / (x/2) for light spread
    evenly over an arc of x radians (0.90 for 90 degrees, 0.64 for half a ring), 0 for light all round; (NaN, NaN)
    for no light counted.

    Examples
    --------
    An arc of 90 degrees on the +x side (0.90 for a continuous one; the sectors at its ends are cut in pixels):

    >>> yy, xx = np.mgrid[0:61, 0:61]
    >>> phi = np.arctan2(yy - 30, xx - 30)
    >>> arc = np.exp(-0.5 * ((np.hypot(xx - 30, yy - 30) - 20) / 1.5) ** 2) * (np.abs(phi) < np.pi / 4)
    >>> angle, length = light_direction(arc, 30.0, 30.0, 20.0, 2.0, 24)
    >>> round(float(np.degrees(angle))), round(length, 2)
    (0, 0.91)
    """
    grid = _sector_grid(image.shape, cx, cy, max(radius_pix - half_width_pix, 0.0), radius_pix + half_width_pix,
                        n_sectors)
    sums, counts, _ = _sector_profiles(image, grid)
    light, noise = sums.sum(1), float(noise_sigma) * np.sqrt(counts.sum(1))
    light = np.where(light > min_snr * noise, light, 0.0)
    total = float(light.sum())
    if not total > 0:
        return float("nan"), float("nan")
    phi = -np.pi + (np.arange(n_sectors) + 0.5) * 2 * np.pi / n_sectors
    vec = np.sum(light * np.exp(1j * phi)) / total
    return float(np.angle(vec)), float(abs(vec))


def _smooth_profile(profile: np.ndarray) -> np.ndarray:
    """The profile smoothed over about one PSF width (3 bins) for the peak search; the ends are
    padded with their own values (zero padding would dent the first bin and fake a peak beside it)."""
    padded = np.pad(np.nan_to_num(profile), 1, mode="edge")
    return np.convolve(padded, [0.25, 0.5, 0.25], mode="valid")


def ring_pixels(shape: tuple[int, int], ring: RingResult, max_half_share: float | None = None) -> np.ndarray:
    """The pixels of a found ring, left out when the lens light is refitted: the annulus from its radius
    times sqrt(q) to its radius over sqrt(q) (its axis ratio), widened by :data:`MASK_HALF_WIDTHS` of its
    width either side (at least a pixel; at most ``max_half_share`` of the radius when given)."""
    half = max(1.0, MASK_HALF_WIDTHS * ring.ring_width_pix)
    if max_half_share is not None:
        half = min(half, max_half_share * ring.radius_pix)
    q = min(1.0, ring.axis_ratio) if np.isfinite(ring.axis_ratio) else 1.0
    return _annulus_mask(shape, ring.center_x, ring.center_y, ring.radius_pix * np.sqrt(q) - half,
                         ring.radius_pix / np.sqrt(q) + half)


def _annulus_mask(shape, cx, cy, r_in, r_out) -> np.ndarray:
    """Boolean image, True where r_in <= distance from (cx, cy) <= r_out (computed in its bounding box)."""
    ny, nx = shape
    mask = np.zeros(shape, bool)
    x0, x1 = max(0, int(np.floor(cx - r_out))), min(nx, int(np.ceil(cx + r_out)) + 1)
    y0, y1 = max(0, int(np.floor(cy - r_out))), min(ny, int(np.ceil(cy + r_out)) + 1)
    if x1 > x0 and y1 > y0:
        yy, xx = np.ogrid[y0:y1, x0:x1]
        rr = np.sqrt((xx - cx) ** 2 + (yy - cy) ** 2)
        mask[y0:y1, x0:x1] = (rr >= r_in) & (rr <= r_out)
    return mask


def _top_sectors_profile(smean, counts, good, sigma, n_sectors):
    """Mean of the brightest quarter of the sector means at each radius, and its pixel-noise error."""
    k = max(2, n_sectors // 4)
    vals = np.where(good, smean, -np.inf)
    idx = np.argsort(vals, axis=0)[-k:]
    top = np.take_along_axis(vals, idx, axis=0)
    cnt = np.take_along_axis(counts, idx, axis=0)
    ok = np.isfinite(top)
    with np.errstate(invalid="ignore", divide="ignore"):
        prof = np.where(ok.sum(0) > 0, np.where(ok, top, 0.0).sum(0) / ok.sum(0), np.nan)
        err = sigma * np.sqrt(np.where(ok, 1.0 / np.maximum(cnt, 1), 0.0).sum(0)) / np.maximum(ok.sum(0), 1)
    return prof, err
