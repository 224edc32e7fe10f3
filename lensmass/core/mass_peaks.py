"""Peaks of a weak-lensing convergence map, their positional uncertainty and significance.

The map is the Kaiser & Squires (1993, ApJ 404, 441) E-mode convergence of
:mod:`lensmass.core.mass_map`, Gaussian-smoothed with a stated kernel width. For each
peak above a signal-to-noise threshold:

- position: the sub-pixel local maximum (:mod:`lensmass.core.peak_finding`);
- uncertainty: the galaxies are resampled with the Poisson bootstrap (each galaxy kept
  k ~ Poisson(1) times; Hanley & MacGibbon 2006, Comput. Methods Programs Biomed. 83, 57),
  the map is remade and the local maximum nearest the peak (within ``search`` kernel widths)
  is recorded; the 68% / 95% ellipses hold those fractions of the bootstrap positions;
- significance: the noise of the map is the scatter of E-mode maps of the same galaxies
  with their ellipticities rotated by random angles (this keeps the shape noise and the
  galaxy positions and removes the lensing; common practice). The peak's S/N is kappa_E over
  that noise at the peak; its false-peak probability is the fraction of rotated-noise maps
  whose highest peak anywhere on the field is at least as high (peaks are the local maxima
  of kappa_E, and their S/N is read at the maximum) (a whole-field, "look
  elsewhere" probability), and the B-mode map (which lensing does not make) is searched
  the same way as a check.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.mass_map import MapGrid
from lensmass.core.peak_finding import (
    LocatedPeak,
    bootstrap_regions,
    local_peaks,
    nearest_peak,
    poisson_multiplicities,
)


@dataclass
class MassPeak(LocatedPeak):
    """One peak of the E-mode convergence map, with its height, S/N and false-peak probability."""

    kappa_e: float = np.nan
    snr: float = np.nan
    false_peak_probability: float = np.nan
    b_mode_peaks_as_high: int = 0


@dataclass
class MassPeakResult:
    """The map, its noise and its peaks; ``grid`` stays for later resampling."""

    kappa_e: np.ndarray
    kappa_b: np.ndarray
    noise: np.ndarray
    pixel_arcsec: float
    smoothing_arcsec: float
    n_galaxies: int
    n_resamples: int
    n_noise: int
    min_snr: float
    peaks: list[MassPeak]
    null_max_snr: np.ndarray
    b_mode_max_snr: float
    resampled_kappa_e: list[np.ndarray] = field(default_factory=list, repr=False)

    @property
    def n_pixels(self) -> int:
        return self.kappa_e.shape[0]

    def pixel_to_offset(self, x_pix, y_pix):
        """Map pixel (column, row) to offsets in arcsec from the map centre."""
        n = self.n_pixels
        return ((np.asarray(x_pix) - n / 2 + 0.5) * self.pixel_arcsec,
                (np.asarray(y_pix) - n / 2 + 0.5) * self.pixel_arcsec)

    def offset_to_pixel(self, x_arcsec, y_arcsec):
        n = self.n_pixels
        return (np.asarray(x_arcsec) / self.pixel_arcsec + n / 2 - 0.5,
                np.asarray(y_arcsec) / self.pixel_arcsec + n / 2 - 0.5)


def mass_peaks(
    x_arcsec,
    y_arcsec,
    e1,
    e2,
    weight=None,
    *,
    n_pixels: int = 128,
    extent_arcsec: float | None = None,
    smoothing_arcsec: float = 45.0,
    n_resamples: int = 200,
    n_noise: int = 32,
    min_snr: float = 3.0,
    max_peaks: int = 6,
    search: float = 1.5,
    keep_resampled_maps: bool = False,
    seed: int | None = 0,
    progress=None,
    cancelled=None,
) -> MassPeakResult:
    """Mass peaks with bootstrap positional regions and noise-based significance.

    Parameters
    ----------
    x_arcsec, y_arcsec, e1, e2, weight : array_like
        Galaxy offsets from the map centre (x east, y north), ellipticities, weights.
    n_pixels, extent_arcsec, smoothing_arcsec :
        The map (as :func:`lensmass.core.mass_map.mass_map`); ``smoothing_arcsec`` is the
        Gaussian sigma of the E-mode map.
    n_resamples : int
        Poisson-bootstrap resamplings of the galaxies.
    n_noise : int
        Rotated-ellipticity maps for the noise map and the false-peak probability.
    min_snr : float
        Peaks of the E-mode S/N map below this are not reported.
    search : float
        In a resampled map, the peak is the local maximum nearest the measured one within
        ``search`` x ``smoothing_arcsec``; resamplings without one are counted as not found.
    progress, cancelled : callables, optional
        ``progress(fraction)``; ``cancelled()`` returning True stops with LensInputError.
    """
    x = np.asarray(x_arcsec, float)
    y = np.asarray(y_arcsec, float)
    w = np.ones_like(x) if weight is None else np.asarray(weight, float)
    if x.size < 10:
        raise LensInputError(f"A mass map needs galaxies: only {x.size} were given; check the catalogue selection.")
    if extent_arcsec is None:
        extent_arcsec = 2.0 * float(max(np.max(np.abs(x)), np.max(np.abs(y))))
    if not (np.isfinite(smoothing_arcsec) and smoothing_arcsec > 0):
        raise LensInputError(f"The map smoothing must be a positive number of arcsec, got {smoothing_arcsec}.")
    if int(n_resamples) < 20 or int(n_noise) < 8:
        raise LensInputError("Peak regions need at least 20 resamplings and 8 noise maps; raise the numbers.")
    grid = MapGrid(x, y, e1, e2, w, n_pixels=n_pixels, extent_arcsec=extent_arcsec,
                   smoothing_arcsec=smoothing_arcsec)
    pix = grid.pixel_arcsec
    rng = np.random.default_rng(seed)
    total = int(n_noise) + int(n_resamples) + 1
    step = [0]

    def tick():
        step[0] += 1
        if cancelled is not None and cancelled():
            raise LensInputError("Peak search cancelled.")
        if progress is not None:
            progress(step[0] / total)

    kappa = grid.kappa()
    tick()
    kappa_e, kappa_b = kappa.real, kappa.imag
    rotated = []
    for _ in range(int(n_noise)):
        rotated.append(grid.kappa(rotation=np.exp(2j * np.pi * rng.random(grid.n_inside)), e_mode_only=True))
        tick()
    noise = np.array(rotated).std(axis=0, ddof=1)
    valid = noise > 0
    noise_safe = np.where(valid, noise, np.inf)
    radius = max(1, int(round(0.5 * smoothing_arcsec / pix)))
    snr_map = kappa_e / noise_safe
    # peaks are local maxima of kappa_E whose S/N passes the threshold (the S/N map's own maxima
    # can sit on a halo's flank where the noise estimate happens to dip)
    cand = local_peaks(kappa_e, threshold=-np.inf, radius_pix=radius, max_peaks=1000, valid=valid)
    snr_at = np.array([_value_at(snr_map, px, py) for px, py, _ in cand]) if cand.size else np.empty(0)
    found = cand[snr_at >= min_snr][: int(max_peaks)] if cand.size else cand
    null_max = np.array([_highest(r, noise_safe, radius, valid) for r in rotated])
    b_max = _highest(kappa_b, noise_safe, radius, valid)
    b_cand = local_peaks(kappa_b, threshold=-np.inf, radius_pix=radius, max_peaks=1000, valid=valid)
    b_snr_map = kappa_b / noise_safe
    b_snr = np.array([_value_at(b_snr_map, px, py) for px, py, _ in b_cand]) if b_cand.size else np.empty(0)
    measured = [np.array([px, py]) for px, py, _ in found]
    samples = np.full((int(n_resamples), len(measured), 2), np.nan)
    kept_maps = []
    for b in range(int(n_resamples)):
        kb = grid.kappa(multiplicity=poisson_multiplicities(rng, grid.n_inside), e_mode_only=True)
        if keep_resampled_maps:
            kept_maps.append(kb.astype(np.float32))
        for j, (mx, my) in enumerate(measured):
            samples[b, j] = _peak_near(kb, mx, my, search * smoothing_arcsec / pix, radius, valid)[:2]
        tick()
    n = kappa_e.shape[0]
    peaks = []
    for j, (mx, my) in enumerate(measured):
        xo, yo = (mx - n / 2 + 0.5) * pix, (my - n / 2 + 0.5) * pix
        s = (samples[:, j] - n / 2 + 0.5) * pix
        cov, regions, qs = bootstrap_regions((xo, yo), s)
        ix, iy = int(round(mx)), int(round(my))
        snr = _value_at(snr_map, mx, my)
        peaks.append(MassPeak(
            float(xo), float(yo), cov, regions, qs, int(np.count_nonzero(np.all(np.isfinite(samples[:, j]), axis=1))),
            s, kappa_e=float(kappa_e[iy, ix]), snr=snr,
            false_peak_probability=float((1 + np.count_nonzero(null_max >= snr)) / (1 + null_max.size)),
            b_mode_peaks_as_high=int(np.count_nonzero(b_snr >= snr))))
    return MassPeakResult(kappa_e, kappa_b, noise, pix, float(smoothing_arcsec), grid.n_inside, int(n_resamples),
                          int(n_noise), float(min_snr), peaks, null_max, float(b_max), kept_maps)


def _value_at(image, x: float, y: float) -> float:
    return float(image[int(round(y)), int(round(x))])


def _highest(kappa, noise, radius: int, valid) -> float:
    """Highest S/N among the local maxima of a map (the statistic the real peaks are compared with)."""
    p = local_peaks(kappa, threshold=-np.inf, radius_pix=radius, max_peaks=1000, valid=valid)
    if not p.size:
        return -np.inf
    iy, ix = np.round(p[:, 1]).astype(int), np.round(p[:, 0]).astype(int)
    return float(np.max(kappa[iy, ix] / noise[iy, ix]))


def _peak_near(image, x: float, y: float, reach: float, radius: int, valid) -> np.ndarray:
    """The local maximum of ``image`` nearest (x, y) within ``reach`` pixels, found in a window around it."""
    h = int(np.ceil(reach)) + radius + 2
    ny, nx = image.shape
    x0, x1 = max(0, int(round(x)) - h), min(nx, int(round(x)) + h + 1)
    y0, y1 = max(0, int(round(y)) - h), min(ny, int(round(y)) + h + 1)
    cand = local_peaks(image[y0:y1, x0:x1], threshold=-np.inf, radius_pix=radius, max_peaks=1000,
                       valid=valid[y0:y1, x0:x1])
    if cand.size:
        # a maximum on the window's edge may be a flank of something outside it: keep interior ones
        inner = ((cand[:, 0] > radius) & (cand[:, 0] < x1 - x0 - 1 - radius) & (cand[:, 1] > radius)
                 & (cand[:, 1] < y1 - y0 - 1 - radius)) | ((x0 == 0) | (y0 == 0) | (x1 == nx) | (y1 == ny))
        cand = cand[inner]
        cand[:, 0] += x0
        cand[:, 1] += y0
    return nearest_peak(cand, x, y, reach)
