"""Peaks of a smoothed map and bootstrap confidence regions of their positions.

Shared by the mass map (:mod:`lensmass.core.mass_peaks`) and the gas and light maps
(:mod:`lensmass.core.map_alignment`), so every map's peaks are found the same way:
local maxima over a (2 r + 1)^2 window (``scipy.ndimage.maximum_filter``), refined to
sub-pixel precision by a parabola through the three values along each axis (common
practice). A confidence region is the ellipse of the bootstrap positions' second
moments about the measured position, scaled to hold 68% / 95% of the bootstrap
positions (the percentile bootstrap in Mahalanobis distance; Efron & Tibshirani 1993,
An Introduction to the Bootstrap, ch. 13).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import ndimage

#: Poisson(1) multiplicities by table look-up of 16-bit random numbers (resolution 1/65536):
#: the "Poisson bootstrap", each galaxy / member / photon kept k times with probability e^-1 / k!.
_POISSON_TABLE = np.repeat(np.arange(9, dtype=np.uint8),
                           np.diff(np.round(65536 * np.concatenate(
                               [[0.0], np.cumsum(np.exp(-1.0) / np.cumprod([1, 1, 2, 3, 4, 5, 6, 7, 8]))])
                           ).astype(int).clip(0, 65536)))
_POISSON_TABLE = np.concatenate([_POISSON_TABLE, np.zeros(65536 - _POISSON_TABLE.size, np.uint8)])


def poisson_multiplicities(rng: np.random.Generator, n: int) -> np.ndarray:
    """n draws of Poisson(1) (uint8), for the Poisson bootstrap (Hanley & MacGibbon 2006).

    Examples
    --------
    >>> m = poisson_multiplicities(np.random.default_rng(1), 200_000)
    >>> round(float(m.mean()), 2), round(float(m.var()), 2)
    (1.0, 1.0)
    """
    return _POISSON_TABLE[rng.integers(0, 65536, int(n), dtype=np.uint16)]


def local_peaks(image, *, threshold: float, radius_pix: int = 2, max_peaks: int = 20,
                valid=None) -> np.ndarray:
    """Sub-pixel local maxima above ``threshold``, highest first: array of rows (x, y, value).

    ``x``, ``y`` are fractional column and row indices; ``valid`` (bool image) excludes pixels.

    Examples
    --------
    >>> yy, xx = np.mgrid[0:32, 0:32]
    >>> img = np.exp(-((xx - 10.3) ** 2 + (yy - 20.6) ** 2) / 18.0)
    >>> np.round(local_peaks(img, threshold=0.5)[0, :2], 1)
    array([10.3, 20.6])
    """
    a = np.asarray(image, float)
    finite = np.isfinite(a)
    work = np.where(finite, a, -np.inf)
    r = max(1, int(radius_pix))
    is_max = (work == ndimage.maximum_filter(work, size=2 * r + 1, mode="constant", cval=-np.inf))
    is_max &= finite & (work > threshold)
    if valid is not None:
        is_max &= np.asarray(valid, bool)
    # a peak on the edge cannot be refined and may be the flank of something outside
    is_max[0, :] = is_max[-1, :] = is_max[:, 0] = is_max[:, -1] = False
    iy, ix = np.nonzero(is_max)
    if iy.size == 0:
        return np.empty((0, 3))
    order = np.argsort(-work[iy, ix])[: int(max_peaks)]
    iy, ix = iy[order], ix[order]
    c = work[iy, ix]
    dx = _vertex(work[iy, ix - 1], c, work[iy, ix + 1])
    dy = _vertex(work[iy - 1, ix], c, work[iy + 1, ix])
    return np.column_stack([ix + dx, iy + dy, c])


def _vertex(left, centre, right) -> np.ndarray:
    """Offset of the vertex of the parabola through (-1, left), (0, centre), (1, right), within +-0.5."""
    with np.errstate(invalid="ignore", divide="ignore"):
        curv = left - 2 * centre + right
        d = np.where(curv < 0, 0.5 * (left - right) / curv, 0.0)
    return np.clip(np.nan_to_num(d), -0.5, 0.5)


def nearest_peak(peaks: np.ndarray, x: float, y: float, max_distance: float) -> np.ndarray:
    """The row (x, y, value) of ``peaks`` nearest to (x, y) within ``max_distance``, else NaNs."""
    if peaks.size == 0:
        return np.full(3, np.nan)
    d = np.hypot(peaks[:, 0] - x, peaks[:, 1] - y)
    i = int(np.argmin(d))
    return peaks[i] if d[i] <= max_distance else np.full(3, np.nan)


@dataclass
class ConfidenceRegion:
    """An ellipse around a measured 2-D position, holding 68% or 95% of the bootstrap positions.

    Offsets in arcsec (x east, y north). ``semi_axes`` are (major, minor) and ``angle_deg``
    is the major axis' angle from +x (east) toward +y (north).
    """

    level: float
    semi_axes: tuple[float, float]
    angle_deg: float

    def as_dict(self) -> dict:
        return {"level": self.level, "semi_major_arcsec": self.semi_axes[0],
                "semi_minor_arcsec": self.semi_axes[1], "angle_deg_east_of_x": self.angle_deg}


#: Widening (in squared Mahalanobis radius) of bootstrap position regions. Over 100 seeded
#: two-halo shear simulations the plain bootstrap ellipses held the true halo centre 59-64% / 92.5%
#: of the time instead of 68% / 95%: a peak picked out of a noisy map is sharper than the true
#: one, so resampled maps move it too little. Widening by 1.2 (1.095 in radius) was calibrated on
#: those runs and is checked on other configurations in tests and benchmarks/bench_cluster.py.
PEAK_REGION_WIDENING = 1.2


@dataclass
class LocatedPeak:
    """A peak's measured position (arcsec from the map centre, x east, y north) and its bootstrap regions."""

    x_arcsec: float
    y_arcsec: float
    covariance_arcsec2: np.ndarray
    regions: list[ConfidenceRegion]
    region_quantiles: list[float]
    n_found: int
    samples_xy_arcsec: np.ndarray = field(repr=False)


def bootstrap_regions(measured_xy, samples_xy, levels=(0.68, 0.95), widening: float = PEAK_REGION_WIDENING):
    """Confidence ellipses of a measured position from its bootstrap positions.

    Returns (covariance 2x2, [ConfidenceRegion per level], mahalanobis_quantiles). Samples with
    NaN (the peak was not found in that resampling) are left out; fewer than 5 give NaNs.
    """
    s = np.asarray(samples_xy, float)
    s = s[np.all(np.isfinite(s), axis=1)]
    if s.shape[0] < 5:
        nan = ConfidenceRegion(0.0, (np.nan, np.nan), np.nan)
        return np.full((2, 2), np.nan), [nan for _ in levels], [np.nan for _ in levels]
    d = s - np.asarray(measured_xy, float)[None, :]
    cov = d.T @ d / d.shape[0]
    cov += np.eye(2) * 1e-12 * max(np.trace(cov), 1e-30)
    r2 = np.einsum("ni,ij,nj->n", d, np.linalg.inv(cov), d)
    evals, evecs = np.linalg.eigh(cov)
    angle = float(np.degrees(np.arctan2(evecs[1, 1], evecs[0, 1])))
    regions, qs = [], []
    for level in levels:
        q = float(np.quantile(r2, level)) * widening
        qs.append(q)
        regions.append(ConfidenceRegion(level, (float(np.sqrt(q * evals[1])), float(np.sqrt(q * evals[0]))),
                                        angle))
    return cov, regions, qs


def inside_region(offset_xy, cov, q) -> bool:
    """Whether the offset (truth - measured) lies in the ellipse d^T C^-1 d <= q."""
    d = np.asarray(offset_xy, float)
    return bool(d @ np.linalg.solve(cov, d) <= q)
