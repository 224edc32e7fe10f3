"""A companion galaxy overlapping the lens, fitted as a second, off-centre light profile.

A small galaxy seen through the lens's light at a fraction of the Einstein radius is a shoulder on the lens, not a
second peak: segmentation cannot split it, and after one Sersic is subtracted its light is left as a bright blob
that the ring search can take for the ring. Here the one-Sersic residual's brightest compact blob off the centre is
fitted by a PSF-blurred Sersic; it is kept only when

- the Bayesian information criterion (Schwarz 1978, Ann. Stat. 6, 461) prefers it by more than
  :data:`MIN_BIC_GAIN` ("very strong" evidence on the scale of Kass & Raftery 1995, JASA 90, 773, section 3.2);
- it is compact (half-light radius at most :data:`MAX_RE_OF_DISTANCE` of its distance from the lens) and
  round, or drawn out radially: an arc is tangentially elongated (common practice), so a blob longer along the
  tangent than :data:`MIN_TANGENTIAL_Q` allows is left to the ring search.

The caller subtracts the companion's model from the image and refits the lens light on what is left, so the lens
and the companion are fitted together by alternation (one round).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.ndimage import gaussian_filter
from scipy.optimize import least_squares

from lensmass.core.peak_finding import local_peaks
from lensmass.core.sersic_pixels import blurred_sersic

#: A blob is a candidate when its PSF-smoothed residual peak is this many noise sigma.
MIN_SNR = 10.0
#: Candidates lie at least this many PSF FWHM from the lens centre, and within this share of the fit radius.
MIN_DISTANCE_FWHM = 1.5
MAX_DISTANCE_OF_FIT = 0.6
#: Least BIC improvement for keeping the companion (Kass & Raftery 1995: above 10 is "very strong").
MIN_BIC_GAIN = 10.0
#: Largest half-light radius as a share of the distance from the lens centre (a compact galaxy).
MAX_RE_OF_DISTANCE = 1.0
#: A fitted axis ratio below this with the major axis nearer the tangent than the radius is arc-like.
MIN_TANGENTIAL_Q = 0.4
#: The fit uses the pixels within the larger of these of the peak (PSF FWHM; share of its distance from the lens).
WINDOW_FWHM = 2.0
WINDOW_OF_DISTANCE = 0.35
#: Scale (noise sigma) where the soft-L1 loss turns linear: the ring's light in the window pulls the fit little.
SOFT_SCALE = 3.0
#: Pixels within this many PSF FWHM of a blob are left out of the ring light at its distance.
BLOB_EXCLUDE_FWHM = 2.5
#: Free parameters of the companion (flux, R_e, n, q, angle, x, y).
N_PARAMS = 7


@dataclass
class Companion:
    """A fitted companion: its model image (PSF-blurred Sersic, image pixels) and parameters."""

    model: np.ndarray
    x: float
    y: float
    r_eff_pix: float
    axis_ratio: float
    distance_pix: float
    bic_gain: float


def _candidates(residual: np.ndarray, cx: float, cy: float, fwhm: float, noise: float, fit_radius: float
                ) -> np.ndarray:
    """Peaks (x, y, value) of the PSF-smoothed residual above :data:`MIN_SNR`, off the centre (searched in a box
    around the lens only: a large cutout is not smoothed whole)."""
    s = fwhm / 2.3548
    reach = int(np.ceil(MAX_DISTANCE_OF_FIT * fit_radius + 4 * s)) + 1
    ny, nx = residual.shape
    xa, xb = max(0, int(cx) - reach), min(nx, int(cx) + reach + 2)
    ya, yb = max(0, int(cy) - reach), min(ny, int(cy) + reach + 2)
    box = residual[ya:yb, xa:xb]
    smooth = gaussian_filter(np.nan_to_num(box), s)
    smooth_noise = noise / (2 * np.sqrt(np.pi) * s)  # white noise smoothed by a unit-area Gaussian of sigma s
    yy, xx = np.mgrid[ya:yb, xa:xb]
    d = np.hypot(xx - cx, yy - cy)
    valid = (d >= MIN_DISTANCE_FWHM * fwhm) & (d <= MAX_DISTANCE_OF_FIT * fit_radius) & np.isfinite(box)
    peaks = local_peaks(smooth, threshold=MIN_SNR * smooth_noise, radius_pix=max(1, int(fwhm)), max_peaks=1,
                        valid=valid)
    return peaks + np.array([xa, ya, 0.0]) if len(peaks) else peaks


def fit_companion(residual: np.ndarray, cx: float, cy: float, psf_fwhm_pix: float, noise_sigma: float,
                  fit_radius_pix: float, *, at: tuple[float, float] | None = None, judge: bool = True
                  ) -> Companion | None:
    """The companion galaxy in a lens-light ``residual`` (NaN = masked), or None when no blob passes the tests
    of the module docstring (only the BIC's when ``judge`` is False). ``cx, cy`` is the lens centre; the PSF is the
    lens fit's Gaussian; ``at`` starts the fit at a known position instead of the residual's brightest blob."""
    res = np.asarray(residual)
    if not (np.isfinite(psf_fwhm_pix) and noise_sigma > 0):
        return None
    if at is None:
        peaks = _candidates(res, cx, cy, psf_fwhm_pix, noise_sigma, fit_radius_pix)
        if len(peaks) == 0:
            return None
        x0, y0 = peaks[0][0], peaks[0][1]
    else:
        x0, y0 = at
    dist = float(np.hypot(x0 - cx, y0 - cy))
    half = int(np.ceil(max(0.5 * dist, 2 * psf_fwhm_pix)))
    ny, nx = res.shape
    xa, xb = max(0, int(x0) - half), min(nx, int(x0) + half + 2)
    ya, yb = max(0, int(y0) - half), min(ny, int(y0) + half + 2)
    win = np.asarray(res[ya:yb, xa:xb], float)
    wy, wx = np.mgrid[ya:yb, xa:xb]
    ok = np.isfinite(win) & (np.hypot(wx - x0, wy - y0) <= max(WINDOW_FWHM * psf_fwhm_pix, WINDOW_OF_DISTANCE * dist, 3.0))
    if ok.sum() < 4 * N_PARAMS:
        return None
    gx, gy = np.arange(xa, xb, dtype=float), np.arange(ya, yb, dtype=float)
    ln_psf = float(np.log(psf_fwhm_pix / 2.3548))
    re0 = max(psf_fwhm_pix / 2, 1.0)
    flux0 = max(float(np.nansum(np.clip(win, 0, None))), noise_sigma)

    def model(q):
        p = np.array([q[0], q[1], q[2], q[3], q[4], q[5], q[6], 0.0, ln_psf])
        with np.errstate(over="ignore", invalid="ignore"):
            return blurred_sersic(p, gx, gy)

    def residuals(q):
        return np.nan_to_num((win - model(q))[ok] / noise_sigma, nan=1e6)

    start = np.array([np.log(flux0), np.log(re0), 1.5, 0.9, 0.0, x0, y0])
    lo = [start[0] - 6, np.log(0.3), 0.5, 0.2, -180.0, x0 - psf_fwhm_pix, y0 - psf_fwhm_pix]
    hi = [start[0] + 3, np.log(max(dist, 1.0)), 6.0, 1.0, 180.0, x0 + psf_fwhm_pix, y0 + psf_fwhm_pix]
    try:
        fit = least_squares(residuals, start, bounds=(lo, hi), max_nfev=60, x_scale="jac", loss="soft_l1",
                            f_scale=SOFT_SCALE)
    except (ValueError, FloatingPointError):
        return None
    chi_without = float(np.sum((win[ok] / noise_sigma) ** 2))
    chi_with = float(np.sum(residuals(fit.x) ** 2))
    bic_gain = chi_without - chi_with - N_PARAMS * np.log(ok.sum())  # Schwarz (1978): BIC = chi^2 + k ln N
    q = fit.x
    re, axis, ang, x, y = float(np.exp(q[1])), float(q[3]), float(q[4]), float(q[5]), float(q[6])
    dist = float(np.hypot(x - cx, y - cy))
    radial_deg = np.degrees(np.arctan2(y - cy, x - cx))
    off_radial = abs((ang - radial_deg + 90.0) % 180.0 - 90.0)  # 0: major axis radial, 90: tangential
    tangential = axis < MIN_TANGENTIAL_Q and off_radial > 45.0
    if bic_gain < MIN_BIC_GAIN or (judge and (re > MAX_RE_OF_DISTANCE * dist or tangential)):
        return None
    reach = int(np.ceil(4 * re + 2 * psf_fwhm_pix))  # the model, not only the fitted window, is subtracted
    xa, xb = max(0, int(x) - reach), min(nx, int(x) + reach + 2)
    ya, yb = max(0, int(y) - reach), min(ny, int(y) + reach + 2)
    gx, gy = np.arange(xa, xb, dtype=float), np.arange(ya, yb, dtype=float)
    full = np.zeros(res.shape, np.float32)
    full[ya:yb, xa:xb] = model(q)
    return Companion(full, x, y, re, axis, dist, float(bic_gain))


def companion_candidate(residual: np.ndarray, cx: float, cy: float, psf_fwhm_pix: float, noise_sigma: float,
                        fit_radius_pix: float) -> tuple[float, float] | None:
    """The position of the residual's brightest compact blob off the centre (see :func:`_candidates`), or None."""
    if not (np.isfinite(psf_fwhm_pix) and noise_sigma > 0):
        return None
    peaks = _candidates(np.asarray(residual), cx, cy, psf_fwhm_pix, noise_sigma, fit_radius_pix)
    return (float(peaks[0][0]), float(peaks[0][1])) if len(peaks) else None


def ring_light_at_blob(residual: np.ndarray, at: tuple[float, float], cx: float, cy: float, psf_fwhm_pix: float,
                       reach_pix: float) -> tuple[float, float]:
    """The azimuthal-mean ``residual`` at the blob's distance, the pixels within :data:`BLOB_EXCLUDE_FWHM` FWHM of
    the blob left out, and its largest value from one FWHM past it out to ``reach_pix`` (means over the unmasked
    pixels of 1-pixel annuli, smoothed over a FWHM): a knot of a ring or a piece of an arc leaves ring light at its
    own distance, a companion inside the ring does not. Computed in a box around the lens only."""
    ny, nx = residual.shape
    r_out = int(np.ceil(reach_pix)) + 1
    xa, xb = max(0, int(cx) - r_out), min(nx, int(cx) + r_out + 2)
    ya, yb = max(0, int(cy) - r_out), min(ny, int(cy) + r_out + 2)
    box = np.asarray(residual[ya:yb, xa:xb], float)
    yy, xx = np.mgrid[ya:yb, xa:xb]
    k = np.rint(np.hypot(xx - cx, yy - cy)).astype(int)
    use = np.isfinite(box) & (k <= r_out) & (np.hypot(xx - at[0], yy - at[1]) > BLOB_EXCLUDE_FWHM * psf_fwhm_pix)
    sums = np.bincount(k[use], weights=box[use], minlength=r_out + 1)
    counts = np.bincount(k[use], minlength=r_out + 1).astype(float)
    s = psf_fwhm_pix / 2.3548
    prof = gaussian_filter(sums, s, mode="nearest") / np.maximum(gaussian_filter(counts, s, mode="nearest"), 1e-9)
    dist = float(np.hypot(at[0] - cx, at[1] - cy))
    outer = prof[int(np.ceil(dist + psf_fwhm_pix)):]
    return float(np.interp(dist, np.arange(prof.size), prof)), float(outer.max()) if outer.size else -np.inf
