"""Ray-tracing synthetic lens fields: deflection fields, sources, PSF and noise.

Angles are arcsec in the lens plane, measured from the image's reference point;
``x`` runs along the array's columns and ``y`` along its rows. The lens equation
is beta = theta - alpha(theta) (Narayan & Bartelmann 1996, eq. 21).

Lens deflectors and ray shooting live in :mod:`lensmass.core.deflectors`, re-exported here.

References
----------
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001: lens equation, SIS (alpha = theta_E),
magnification mu = 1 / det(d beta / d theta), external shear potential.
Kormann, Schneider & Bartelmann (1994), A&A 284, 285 and Keeton (2001), astro-ph/0102341, eq. (27)
(s = 0): deflection of the singular isothermal ellipsoid (SIE). Here kappa = theta_E /
(2 sqrt(q x'^2 + y'^2 / q)) with x' along the major axis, so the critical curve is the ellipse
of semi-axes theta_E / sqrt(q), theta_E sqrt(q) and equal area to the circle of radius theta_E.
Bartelmann (1996), A&A 313, 697: NFW deflection alpha = mean_Sigma(<R) R / Sigma_cr (via lensmass.core.nfw).
Graham & Driver (2005), PASA 22, 118, eqs. (1), (4): Sersic profile and its total flux.
Moffat (1969), A&A 3, 455: the Moffat PSF profile.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
from scipy.signal import fftconvolve

from lensmass.core.deflectors import (
    ExternalShear,
    NFWLens,
    SIELens,
    SISLens,
    convergence,
    deflection_arcsec,
    magnification,
    point_images,
    source_positions,
)
from lensmass.core.sersic import sersic_b, sersic_intensity_at_re, sersic_surface_brightness

__all__ = ["SISLens", "SIELens", "NFWLens", "ExternalShear", "deflection_arcsec", "convergence", "source_positions",
           "magnification", "point_images", "sersic_b", "sersic_intensity_at_re", "sersic_surface_brightness",
           "SersicSource", "ClumpySource", "psf_profile", "psf_kernel", "convolve_psf", "pixel_grid_arcsec", "render_lensed",
           "render_unlensed", "render_points", "add_noise", "noise_sigma_counts_per_s", "SimulatedField",
           "arc_ridge_points", "simulate_field", "flux_from_mag"]


@dataclass(frozen=True)
class SersicSource:
    """A Sersic light distribution (source or lens galaxy); flux in counts/s, sizes in arcsec."""

    total_flux: float
    r_eff_arcsec: float
    n: float = 1.0
    axis_ratio: float = 1.0
    angle_deg: float = 0.0
    x0: float = 0.0
    y0: float = 0.0

    def surface_brightness(self, x, y):
        return sersic_surface_brightness(x, y, total_flux=self.total_flux, r_eff_arcsec=self.r_eff_arcsec,
                                         n=self.n, axis_ratio=self.axis_ratio, angle_deg=self.angle_deg,
                                         x0=self.x0, y0=self.y0)

    def describe(self) -> dict:
        return {"profile": "Sersic", "total_flux": self.total_flux, "r_eff_arcsec": self.r_eff_arcsec,
                "n": self.n, "axis_ratio": self.axis_ratio, "angle_deg": self.angle_deg,
                "x0_arcsec": self.x0, "y0_arcsec": self.y0}


@dataclass(frozen=True)
class ClumpySource:
    """A smooth Sersic disc plus Gaussian star-forming clumps (seeded, reproducible)."""

    total_flux: float
    r_eff_arcsec: float
    n_clumps: int = 5
    clump_fraction: float = 0.4
    clump_sigma_arcsec: float = 0.05
    axis_ratio: float = 1.0
    angle_deg: float = 0.0
    x0: float = 0.0
    y0: float = 0.0
    seed: int = 1
    _clumps: tuple = field(default=(), compare=False, repr=False)

    def _clump_list(self):
        rng = np.random.default_rng(self.seed)
        r = self.r_eff_arcsec * np.sqrt(rng.uniform(0, 1, self.n_clumps))
        t = rng.uniform(0, 2 * np.pi, self.n_clumps)
        w = rng.uniform(0.5, 1.5, self.n_clumps)
        w = w / w.sum() * self.clump_fraction * self.total_flux
        return self.x0 + r * np.cos(t), self.y0 + r * np.sin(t), w

    def surface_brightness(self, x, y):
        x = np.asarray(x, float)
        y = np.asarray(y, float)
        smooth = sersic_surface_brightness(x, y, total_flux=(1 - self.clump_fraction) * self.total_flux,
                                           r_eff_arcsec=self.r_eff_arcsec, n=1.0, axis_ratio=self.axis_ratio,
                                           angle_deg=self.angle_deg, x0=self.x0, y0=self.y0)
        s2 = self.clump_sigma_arcsec**2
        for cx, cy, w in zip(*self._clump_list()):
            smooth = smooth + w / (2 * np.pi * s2) * np.exp(-((x - cx) ** 2 + (y - cy) ** 2) / (2 * s2))
        return smooth

    def describe(self) -> dict:
        return {"profile": "clumpy (exponential disc + Gaussian clumps)", "total_flux": self.total_flux,
                "r_eff_arcsec": self.r_eff_arcsec, "n_clumps": self.n_clumps, "clump_fraction": self.clump_fraction,
                "x0_arcsec": self.x0, "y0_arcsec": self.y0, "seed": self.seed}


# ------------------------------------------------------------------------------------------------ PSF
def psf_profile(r_arcsec, fwhm_arcsec: float, kind: str = "gaussian", moffat_beta: float = 3.0) -> np.ndarray:
    """Normalised PSF (per arcsec^2) at radius r: Gaussian, or Moffat (1969) with index beta."""
    r = np.asarray(r_arcsec, float)
    if kind == "gaussian":
        sigma = fwhm_arcsec / (2 * np.sqrt(2 * np.log(2)))
        return np.exp(-0.5 * (r / sigma) ** 2) / (2 * np.pi * sigma**2)
    if kind == "moffat":
        alpha = fwhm_arcsec / (2 * np.sqrt(2 ** (1 / moffat_beta) - 1))
        return (moffat_beta - 1) / (np.pi * alpha**2) * (1 + (r / alpha) ** 2) ** (-moffat_beta)
    raise ValueError(f"unknown PSF kind {kind!r}")


def psf_kernel(fwhm_arcsec: float, pixel_scale_arcsec: float, kind: str = "gaussian", moffat_beta: float = 3.0,
               oversample: int = 5) -> np.ndarray:
    """The PSF integrated over pixels (odd-sized square kernel summing to 1)."""
    half = int(np.ceil(3 * fwhm_arcsec / pixel_scale_arcsec)) + 1
    if kind == "moffat":
        half = int(np.ceil(6 * fwhm_arcsec / pixel_scale_arcsec)) + 1
    k = oversample
    sub = (np.arange((2 * half + 1) * k) - ((2 * half + 1) * k - 1) / 2) / k * pixel_scale_arcsec
    xx, yy = np.meshgrid(sub, sub)
    fine = psf_profile(np.hypot(xx, yy), fwhm_arcsec, kind, moffat_beta)
    kern = fine.reshape(2 * half + 1, k, 2 * half + 1, k).sum(axis=(1, 3))
    return kern / kern.sum()


def convolve_psf(image: np.ndarray, kernel: np.ndarray) -> np.ndarray:
    """Convolve with the PSF kernel (FFT; same size as the input)."""
    return fftconvolve(image, kernel, mode="same")


# ----------------------------------------------------------------------------------------- rendering
def pixel_grid_arcsec(shape: tuple[int, int], pixel_scale_arcsec: float, center_x: float, center_y: float,
                      oversample: int = 1) -> tuple[np.ndarray, np.ndarray]:
    """Angles (arcsec) of pixel (or sub-pixel) centres relative to pixel (center_x, center_y)."""
    ny, nx = shape
    k = int(oversample)
    sx = (np.arange(nx * k) + 0.5) / k - 0.5
    sy = (np.arange(ny * k) + 0.5) / k - 0.5
    xx, yy = np.meshgrid((sx - center_x) * pixel_scale_arcsec, (sy - center_y) * pixel_scale_arcsec)
    return xx, yy


def _bin(fine: np.ndarray, k: int) -> np.ndarray:
    ny, nx = fine.shape[0] // k, fine.shape[1] // k
    return fine.reshape(ny, k, nx, k).mean(axis=(1, 3))


def render_lensed(lenses: Sequence, sources: Sequence, shape: tuple[int, int], pixel_scale_arcsec: float,
                  center_x: float, center_y: float, oversample: int = 4) -> np.ndarray:
    """Lensed surface brightness of extended sources, as counts/s per pixel (before PSF).

    Each sub-pixel ray is traced to the source plane, where the source's surface
    brightness is read (surface brightness is conserved by lensing).
    """
    xx, yy = pixel_grid_arcsec(shape, pixel_scale_arcsec, center_x, center_y, oversample)
    bx, by = source_positions(lenses, xx, yy)
    sb = np.zeros_like(xx)
    for src in sources:
        sb += src.surface_brightness(bx, by)
    return _bin(sb, oversample) * pixel_scale_arcsec**2


def render_unlensed(light: Sequence, shape: tuple[int, int], pixel_scale_arcsec: float, center_x: float,
                    center_y: float, oversample: int = 4) -> np.ndarray:
    """Foreground light (e.g. the lens galaxy) as counts/s per pixel (before PSF)."""
    xx, yy = pixel_grid_arcsec(shape, pixel_scale_arcsec, center_x, center_y, oversample)
    sb = np.zeros_like(xx)
    for comp in light:
        sb += comp.surface_brightness(xx, yy)
    return _bin(sb, oversample) * pixel_scale_arcsec**2


def render_points(points: Sequence[tuple[float, float, float]], shape: tuple[int, int], pixel_scale_arcsec: float,
                  center_x: float, center_y: float, fwhm_arcsec: float, kind: str = "gaussian",
                  moffat_beta: float = 3.0, oversample: int = 4) -> np.ndarray:
    """Point sources (x_arcsec, y_arcsec, flux) already blurred by the PSF, counts/s per pixel."""
    xx, yy = pixel_grid_arcsec(shape, pixel_scale_arcsec, center_x, center_y, oversample)
    out = np.zeros_like(xx)
    for px, py, flux in points:
        out += flux * psf_profile(np.hypot(xx - px, yy - py), fwhm_arcsec, kind, moffat_beta)
    return _bin(out, oversample) * pixel_scale_arcsec**2


def add_noise(image_counts_per_s: np.ndarray, *, sky_counts_per_s: float, exptime_s: float,
              read_noise_e: float = 5.0, rng: np.random.Generator) -> np.ndarray:
    """Poisson noise of source + sky, Gaussian read noise; returns sky-subtracted counts/s (gain 1)."""
    expected = np.clip(image_counts_per_s + sky_counts_per_s, 0, None) * exptime_s
    counts = rng.poisson(expected).astype(float) + rng.normal(0, read_noise_e, expected.shape)
    return counts / exptime_s - sky_counts_per_s


def noise_sigma_counts_per_s(sky_counts_per_s: float, exptime_s: float, read_noise_e: float = 5.0) -> float:
    """Per-pixel 1-sigma noise of an empty, sky-subtracted pixel in counts/s."""
    return float(np.sqrt(sky_counts_per_s * exptime_s + read_noise_e**2) / exptime_s)


# ------------------------------------------------------------------------------------ whole fields
@dataclass
class SimulatedField:
    """A synthetic field: the noisy image, its noise-free parts, and where the arcs and images are.

    Pixel positions are 0-based (column, row); ``arc_points_xy`` lie on the ridge of each
    lensed extended source where it is bright (see :func:`arc_ridge_points`), and
    ``image_points_xy`` are the images of the point sources.
    """

    image: np.ndarray
    noiseless: np.ndarray
    lensed: np.ndarray
    foreground: np.ndarray
    noise_sigma: float
    arc_points_xy: list
    arc_points_by_source: list
    image_points_xy: list
    image_magnifications: list


def arc_ridge_points(lenses: Sequence, source, *, theta_max_arcsec: float, n_directions: int = 72,
                     min_fraction: float = 0.3, min_magnification: float = 2.0) -> list[tuple[float, float]]:
    """Points (arcsec) on the ridge of a lensed source: in each direction from the lens centre,
    the radius whose ray lands nearest the source centre, kept where the unblurred surface
    brightness there is at least ``min_fraction`` of the brightest such point and the
    magnification at least ``min_magnification`` (the bright, stretched parts of the arcs).

    Computed from the lens equation alone (no image), so tests can use them as truth.
    """
    from scipy.optimize import minimize_scalar

    phis = np.arange(n_directions) * 2 * np.pi / n_directions
    radii = np.linspace(0.05, 1.0, 200) * theta_max_arcsec
    out = []
    for phi in phis:
        c, s = np.cos(phi), np.sin(phi)
        bx, by = source_positions(lenses, radii * c, radii * s)
        d = np.hypot(bx - source.x0, by - source.y0)
        k = int(np.argmin(d))
        lo, hi = radii[max(k - 1, 0)], radii[min(k + 1, len(radii) - 1)]

        def dist(r):
            sx, sy = source_positions(lenses, np.array([r * c]), np.array([r * s]))
            return float(np.hypot(sx[0] - source.x0, sy[0] - source.y0))

        r = minimize_scalar(dist, bounds=(lo, hi), method="bounded", options={"xatol": 1e-6}).x
        sx, sy = source_positions(lenses, np.array([r * c]), np.array([r * s]))
        mu = abs(float(magnification(lenses, np.array([r * c]), np.array([r * s]))[0]))
        out.append((r * c, r * s, float(source.surface_brightness(sx, sy)[0]) if mu >= min_magnification else 0.0))
    peak = max(v for _, _, v in out) if out else 0.0
    return [(x, y) for x, y, v in out if peak > 0 and v >= min_fraction * peak]


def simulate_field(
    *,
    shape: tuple[int, int],
    pixel_scale_arcsec: float,
    center_x: float,
    center_y: float,
    lenses: Sequence,
    sources: Sequence = (),
    point_sources: Sequence[tuple[float, float, float]] = (),
    foreground: Sequence = (),
    psf_fwhm_arcsec: float = 0.8,
    psf_kind: str = "gaussian",
    moffat_beta: float = 3.0,
    sky_mag_per_arcsec2: float = 21.0,
    zeropoint_mag: float = 30.0,
    exptime_s: float = 1800.0,
    read_noise_e: float = 5.0,
    seed: int = 1,
    oversample: int = 4,
    arc_directions: int = 72,
) -> SimulatedField:
    """Ray-trace a whole field: lensed extended sources + lensed point sources + foreground light,
    blurred by the PSF, with sky and Poisson noise; image in counts/s (gain 1, sky subtracted).

    ``point_sources`` are (beta_x, beta_y, flux) in the source plane; ``foreground`` are
    unlensed light components (the lens galaxy, cluster members). The zeropoint is the AB
    magnitude giving 1 count/s (flux = 10^(-0.4 (m - zeropoint))).
    """
    kern = psf_kernel(psf_fwhm_arcsec, pixel_scale_arcsec, psf_kind, moffat_beta)
    lensed = render_lensed(lenses, sources, shape, pixel_scale_arcsec, center_x, center_y, oversample)
    fg = render_unlensed(foreground, shape, pixel_scale_arcsec, center_x, center_y, oversample)
    blurred = convolve_psf(lensed + fg, kern)
    lensed_blurred = convolve_psf(lensed, kern)
    ny, nx = shape
    theta_max = float(np.hypot(nx, ny) * pixel_scale_arcsec / 2)
    images, mags, pts = [], [], []
    for bx, by, flux in point_sources:
        found = point_images(lenses, bx, by, search_radius_arcsec=min(theta_max, 60.0),
                             grid_step_arcsec=max(0.02, pixel_scale_arcsec / 5))
        for ix, iy, mu in found:
            pts.append((ix, iy, flux * abs(mu)))
            images.append([center_x + ix / pixel_scale_arcsec, center_y + iy / pixel_scale_arcsec])
            mags.append(mu)
    if pts:
        pimg = render_points(pts, shape, pixel_scale_arcsec, center_x, center_y, psf_fwhm_arcsec, psf_kind,
                             moffat_beta, oversample)
        blurred = blurred + pimg
        lensed_blurred = lensed_blurred + pimg
    sky = pixel_scale_arcsec**2 * 10 ** (-0.4 * (sky_mag_per_arcsec2 - zeropoint_mag))
    rng = np.random.default_rng(seed)
    noisy = add_noise(blurred, sky_counts_per_s=sky, exptime_s=exptime_s, read_noise_e=read_noise_e, rng=rng)
    by_source = []
    for src in sources:
        ridge = arc_ridge_points(lenses, src, theta_max_arcsec=theta_max, n_directions=arc_directions)
        by_source.append([[center_x + x / pixel_scale_arcsec, center_y + y / pixel_scale_arcsec] for x, y in ridge])
    flat = [p for group in by_source for p in group]
    return SimulatedField(noisy, blurred, lensed_blurred, convolve_psf(fg, kern),
                          noise_sigma_counts_per_s(sky, exptime_s, read_noise_e), flat, by_source, images, mags)


def flux_from_mag(mag_ab: float, zeropoint_mag: float = 30.0) -> float:
    """Counts/s of a source of AB magnitude ``mag_ab`` for the given 1-second zeropoint."""
    return float(10 ** (-0.4 * (mag_ab - zeropoint_mag)))
