"""Convergence maps from shear: Kaiser & Squires (1993) inversion with Gaussian smoothing.

Kaiser & Squires (1993, ApJ 404, 441), eqs. (2.1)-(2.4), in Fourier space with
wave vector k = (k1, k2) along (x east, y north):
  gamma_hat = D_hat kappa_hat,  D_hat = (k1^2 - k2^2 + 2 i k1 k2) / |k|^2,
so kappa_hat = conj(D_hat) gamma_hat (|D_hat| = 1). The real part of the inverse
transform is the E mode (lensing), the imaginary part the B mode (should be noise).
The k = 0 mode is unknown (mass-sheet degeneracy): the maps have zero mean on the
padded grid. The shear field is the Gaussian-kernel weighted mean of the galaxies'
ellipticities (normalised convolution), on a grid zero-padded to twice its size to
limit the wrap-around of the periodic transform. The noise map is the standard
deviation of E-mode maps in which every galaxy's ellipticity is rotated by a random
angle, which destroys the lensing signal but keeps the shape noise (common practice).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import fft as sfft

from lensmass.core.errors import LensInputError

#: Pixels whose smoothed weight is below this fraction of the maximum are left empty (0 shear).
WEIGHT_FLOOR = 1e-3
#: Margin, in Gaussian kernel widths, around the map on the grid where the shear is smoothed.
SMOOTH_MARGIN_SIGMA = 6.0


def kaiser_squires(gamma1, gamma2) -> tuple[np.ndarray, np.ndarray]:
    """E- and B-mode convergence of a gridded shear field (axis 0 = y north, axis 1 = x east).

    Examples
    --------
    >>> k = np.zeros((32, 32)); k[16, 16] = 1.0
    >>> ke, kb = kaiser_squires(*forward_shear(k))
    >>> bool(np.allclose(ke, k - k.mean(), atol=1e-12)), bool(np.allclose(kb, 0, atol=1e-12))
    (True, True)
    """
    g = np.asarray(gamma1, float) + 1j * np.asarray(gamma2, float)
    d = _d_hat(g.shape)
    kappa = sfft.ifft2(np.conj(d) * sfft.fft2(g, workers=-1), workers=-1)
    return kappa.real, kappa.imag


def forward_shear(kappa) -> tuple[np.ndarray, np.ndarray]:
    """Shear of a gridded convergence field, gamma_hat = D_hat kappa_hat (periodic grid)."""
    k = np.asarray(kappa, float)
    g = sfft.ifft2(_d_hat(k.shape) * sfft.fft2(k, workers=-1), workers=-1)
    return g.real, g.imag


def _d_hat(shape) -> np.ndarray:
    k2 = sfft.fftfreq(shape[0])[:, None]  # y
    k1 = sfft.fftfreq(shape[1])[None, :]  # x
    ksq = k1 * k1 + k2 * k2
    with np.errstate(invalid="ignore", divide="ignore"):
        d = (k1 * k1 - k2 * k2 + 2j * k1 * k2) / ksq
    d[0, 0] = 0.0
    return d


def _gaussian_hat(shape, sigma_pix: float) -> np.ndarray:
    k2 = sfft.fftfreq(shape[0])[:, None]
    k1 = sfft.fftfreq(shape[1])[None, :]
    return np.exp(-2.0 * np.pi**2 * sigma_pix**2 * (k1 * k1 + k2 * k2))


@dataclass
class MassMap:
    """Convergence maps on a grid (axis 0 = y north, axis 1 = x east), offsets in arcsec.

    ``noise`` is None when no rotated realisations were made. ``x_centers_arcsec`` and
    ``y_centers_arcsec`` are the pixel centres relative to the map centre.
    """

    kappa_e: np.ndarray
    kappa_b: np.ndarray
    noise: np.ndarray | None
    x_centers_arcsec: np.ndarray
    y_centers_arcsec: np.ndarray
    pixel_arcsec: float
    smoothing_arcsec: float
    n_galaxies: int
    n_noise: int

    @property
    def signal_to_noise(self) -> np.ndarray | None:
        if self.noise is None:
            return None
        with np.errstate(invalid="ignore", divide="ignore"):
            return self.kappa_e / self.noise


def mass_map(
    x_arcsec,
    y_arcsec,
    e1,
    e2,
    weight=None,
    *,
    n_pixels: int = 128,
    extent_arcsec: float | None = None,
    smoothing_arcsec: float = 60.0,
    n_noise: int = 0,
    seed: int | None = 0,
) -> MassMap:
    """Kaiser-Squires E/B convergence maps (and a noise map) from a shape catalogue.

    Parameters
    ----------
    x_arcsec, y_arcsec : array_like
        Tangent-plane offsets of the galaxies from the map centre (x east, y north).
    e1, e2, weight : array_like
        Ellipticities (east/north frame) and weights of galaxies already selected.
    n_pixels : int
        Pixels along each side of the square map.
    extent_arcsec : float, optional
        Side of the map; default twice the largest |x| or |y| of the galaxies.
    smoothing_arcsec : float
        Gaussian kernel sigma.
    n_noise : int
        Rotated-galaxy realisations for the noise map (0 to skip).

    Examples
    --------
    4000 galaxies sheared by a 1e15 Msun NFW halo at the centre (the simulator of
    :mod:`lensmass.core.shear_simulation`): the E-mode peak lies near the centre.

    >>> from astropy.cosmology import Planck18
    >>> from lensmass.core.shear_simulation import simulate_shear_catalog
    >>> sim = simulate_shear_catalog(center_ra=150.0, center_dec=2.0, z_l=0.3, cosmo=Planck18,
    ...                              n_galaxies=4000, z_s=1.0, m200_msun=1e15, seed=3)
    >>> m = mass_map(sim["x_arcsec"], sim["y_arcsec"], sim["e1"], sim["e2"], n_pixels=32, smoothing_arcsec=90.0)
    >>> m.kappa_e.shape
    (32, 32)
    >>> iy, ix = np.unravel_index(np.argmax(m.kappa_e), m.kappa_e.shape)
    >>> bool(np.hypot(m.x_centers_arcsec[ix], m.y_centers_arcsec[iy]) < 120)
    True
    """
    x = np.asarray(x_arcsec, float)
    y = np.asarray(y_arcsec, float)
    w = np.ones_like(x) if weight is None else np.asarray(weight, float)
    n_pixels = int(n_pixels)
    if n_pixels < 8 or n_pixels > 4096:
        raise LensInputError(f"The map needs between 8 and 4096 pixels per side, got {n_pixels}.")
    if x.size == 0:
        raise LensInputError("No galaxies to make a mass map from: check the catalogue selection.")
    if extent_arcsec is None:
        extent_arcsec = 2.0 * float(max(np.max(np.abs(x)), np.max(np.abs(y))))
    if not (np.isfinite(extent_arcsec) and extent_arcsec > 0):
        raise LensInputError(f"The map extent must be a positive number of arcsec, got {extent_arcsec}.")
    if not (np.isfinite(smoothing_arcsec) and smoothing_arcsec > 0):
        raise LensInputError(f"The map smoothing must be a positive number of arcsec, got {smoothing_arcsec}.")
    grid = MapGrid(x, y, e1, e2, w, n_pixels=n_pixels, extent_arcsec=extent_arcsec,
                   smoothing_arcsec=smoothing_arcsec)
    kappa = grid.kappa()
    noise = None
    if n_noise:
        rng = np.random.default_rng(seed)
        acc = np.zeros((n_pixels, n_pixels))
        acc2 = np.zeros((n_pixels, n_pixels))
        for _ in range(int(n_noise)):  # loop over realisations, not galaxies
            k = grid.kappa(rotation=np.exp(2j * np.pi * rng.random(grid.n_inside)), e_mode_only=True)
            acc += k
            acc2 += k * k
        n = int(n_noise)
        noise = np.sqrt(np.maximum(acc2 / n - (acc / n) ** 2, 0.0) * n / max(n - 1, 1))
    pix = grid.pixel_arcsec
    centers = (np.arange(n_pixels) - n_pixels / 2 + 0.5) * pix
    return MassMap(kappa.real, kappa.imag, noise, centers, centers.copy(), pix, float(smoothing_arcsec),
                   grid.n_inside, int(n_noise))


class MapGrid:
    """The galaxies of a catalogue binned on a map's grid, ready for repeated inversions.

    :func:`mass_map` makes one of these; bootstrap resampling and rotated-noise maps
    (:mod:`lensmass.core.mass_peaks`) reuse it: each call of :meth:`kappa` bins the
    galaxies with new per-galaxy multiplicities or rotations and inverts, without
    recomputing the galaxies' pixels. The estimator is the same in every case: the
    Gaussian-kernel weighted mean of the ellipticities (normalised convolution), then
    the Kaiser & Squires (1993) inversion on a grid padded to twice the map's size.
    The smoothing runs on a smaller grid with a margin of ``SMOOTH_MARGIN_SIGMA`` kernel
    widths on each side (the Gaussian's wrap-around there is below 1e-8 of the signal,
    and pixels beyond about 3.7 widths from every galaxy fall under ``WEIGHT_FLOOR`` and
    are empty on the padded grid too); galaxies are sorted by pixel so binning is cache-friendly.
    """

    def __init__(self, x_arcsec, y_arcsec, e1, e2, weight, *, n_pixels: int, extent_arcsec: float,
                 smoothing_arcsec: float):
        x = np.asarray(x_arcsec, float)
        y = np.asarray(y_arcsec, float)
        n = int(n_pixels)
        pix = extent_arcsec / n
        ix = np.floor(x / pix + n / 2).astype(np.int64)
        iy = np.floor(y / pix + n / 2).astype(np.int64)
        inside = (ix >= 0) & (ix < n) & (iy >= 0) & (iy < n)
        sigma_pix = smoothing_arcsec / pix
        small = min(2 * n, sfft.next_fast_len(n + 2 * int(np.ceil(SMOOTH_MARGIN_SIGMA * sigma_pix)), real=True))
        off = (small - n) // 2
        flat = (iy[inside] + off) * small + (ix[inside] + off)
        order = np.argsort(flat, kind="stable")
        self.n_pixels, self.pixel_arcsec, self.smoothing_arcsec = n, float(pix), float(smoothing_arcsec)
        self.inside = inside
        #: positions (in the input order of the galaxies on the map) of the sorted galaxies
        self.order = order
        self.n_inside = int(np.count_nonzero(inside))
        self.flat = flat[order].astype(np.intp)
        self.weight = np.asarray(weight, float)[inside][order]
        self.we = ((np.asarray(e1, float) + 1j * np.asarray(e2, float))[inside][order] * self.weight
                   ).astype(np.complex64)
        self.small_shape = (small, small)
        self.shape = (2 * n, 2 * n)
        # single precision for the transforms (about twice as fast; 1e-7 relative is far below shape noise)
        self._kernel = _gaussian_hat(self.small_shape, sigma_pix).astype(np.float32)
        self._kernel_ks = np.conj(_d_hat(self.shape)).astype(np.complex64)
        start = n // 2 - off
        self._embed = (slice(start, start + small),) * 2
        self._inv_w_fixed = self._inverse_weight(self.weight)
        self.crop = (slice(n // 2, n // 2 + n),) * 2

    def _inverse_weight(self, weight) -> np.ndarray:
        s = self.small_shape[0]
        wgrid = np.bincount(self.flat, weights=weight, minlength=s * s).astype(np.float32).reshape(self.small_shape)
        wsmooth = sfft.irfft2(sfft.rfft2(wgrid, workers=-1) * self._kernel[:, : s // 2 + 1], s=self.small_shape,
                              workers=-1)
        floor = np.float32(WEIGHT_FLOOR * np.max(wsmooth))
        empty = wsmooth < floor
        wsmooth[empty] = np.inf  # 1 / inf = 0: empty pixels carry no shear
        return np.reciprocal(wsmooth, out=wsmooth)

    def kappa(self, *, multiplicity=None, rotation=None, e_mode_only: bool = False) -> np.ndarray:
        """Complex convergence (E + i B) on the map's pixels, or only E (real) with ``e_mode_only``.

        ``multiplicity`` (one count per galaxy on the map, in the order of :attr:`order`,
        e.g. a bootstrap draw) scales each galaxy's weight; ``rotation`` (unit complex
        numbers) rotates its ellipticity. The E mode alone is the real part of the inverse
        transform, i.e. the inverse of the spectrum's Hermitian part, which a real inverse
        transform computes at half the cost.
        """
        we = self.we
        inv_w = self._inv_w_fixed
        if multiplicity is not None:
            m = np.asarray(multiplicity, np.float32)
            we = we * m
            inv_w = self._inverse_weight(self.weight * m)
        if rotation is not None:
            we = we * np.asarray(rotation, np.complex64)
        size = self.small_shape[0] * self.small_shape[1]
        grid = np.empty(self.small_shape, np.complex64)
        grid.real = np.bincount(self.flat, weights=we.real, minlength=size).reshape(self.small_shape)
        grid.imag = np.bincount(self.flat, weights=we.imag, minlength=size).reshape(self.small_shape)
        smooth = sfft.ifft2(sfft.fft2(grid, workers=-1, overwrite_x=True) * self._kernel, workers=-1,
                            overwrite_x=True)
        smooth *= inv_w
        # the padded transform in two passes that skip the rows known to be zero on the way in and
        # the rows outside the map on the way out (same numbers as fft2/ifft2 on the whole grid)
        rows, cols = self._embed
        band = np.zeros((smooth.shape[0], self.shape[1]), np.complex64)
        band[:, cols] = smooth
        half = np.zeros(self.shape, np.complex64)
        half[rows] = sfft.fft(band, axis=1, workers=-1, overwrite_x=True)
        spectrum = sfft.fft(half, axis=0, workers=-1, overwrite_x=True)
        spectrum *= self._kernel_ks
        if e_mode_only:
            n2 = self.shape[1]
            m_half = n2 // 2 + 1
            mirror_rows = (-np.arange(self.shape[0])) % self.shape[0]
            mirror_cols = (-np.arange(m_half)) % n2
            herm = 0.5 * (spectrum[:, :m_half] + np.conj(spectrum[np.ix_(mirror_rows, mirror_cols)]))
            back = sfft.ifft(herm, axis=0, workers=-1, overwrite_x=True)[self.crop[0]]
            return sfft.irfft(back, n=n2, axis=1, workers=-1)[:, self.crop[1]].astype(np.float64)
        back = sfft.ifft(spectrum, axis=0, workers=-1, overwrite_x=True)[self.crop[0]]
        kappa = sfft.ifft(back, axis=1, workers=-1, overwrite_x=True)[:, self.crop[1]]
        return kappa.astype(np.complex128)
