"""Automatic Einstein-ring finder on the lens-subtracted image.

Method (our own):

1. Centre: given, or the brightest smoothed pixel near the image centre.
2. Lens light: an elliptical Sersic fit (:mod:`lensmass.core.lenslight`) is subtracted.
3. The residual around the centre is binned in radius (half-pixel bins) and in
   ``n_sectors`` equal sectors of azimuth. Two azimuthal profiles are tested: the mean of
   the sector means, with the larger of the pixel-noise error and the scatter between
   sectors over sqrt(n_sectors) (a single bright neighbour raises that scatter), and the
   median of the sector means with its pixel-noise error (x 1.2533, the efficiency of a
   median of Gaussian values), blind to one bright neighbour. Both errors include a 1%
   systematic floor on the lens-light model, so a bright core's misfit is no ring.
4. The ring is the most significant peak of that profile among those that stand out from
   their surroundings by 3 sigma (prominence; a galaxy core's residual falling steadily
   outwards is not a ring), located on the profile weighted by sqrt(r) to undo the inward
   shift of a blurred ring's peak (see :mod:`lensmass.core.ridge`). The lens light is then
   refitted with the ring masked and the search repeated; that second answer replaces the
   first only when it finds the ring at the same radius, and half of the shift between the
   two is added to the radius error (the lens model's pull on the ring, of which part may
   remain); a first answer kept alone carries a 5% systematic error.
5. In each sector where the ring is detected (3 sigma), the ridge radius is measured;
   those ridge points are fitted by an ellipse about the centre (theta_E = sqrt(a b)),
   or by a circle when they cover too little of the azimuth. The radius error is the
   fit's standard error, with the systematic terms of steps 4 and 6.
6. A ring the lens-light fit could not tell from the galaxy (fitted PSF wider than 0.9 of
   the ring radius, or the Sersic index at a bound) gets an 8% systematic radius error and
   is never confident: on such fields the radius came out 2-8% too large in our
   inject-and-recover runs.

``score`` is the significance of the ring peak in sigma; ``coverage`` the fraction
of sectors where it is detected. The result is ``confident`` only for score >=
:data:`CONFIDENT_SCORE` and coverage >= :data:`CONFIDENT_COVERAGE` (and step 6 passed).
"""

from __future__ import annotations

import warnings as warnings_module
from dataclasses import dataclass, field

import numpy as np
from scipy.ndimage import gaussian_filter
from scipy.signal import find_peaks

from lensmass.core.arcfit import fit_circle, fit_ellipse
from lensmass.core.errors import LensInputError
from lensmass.core.lenslight import SERSIC_N_BOUNDS, LensLightModel, fit_lens_light, robust_sigma
from lensmass.core.progress import ProgressCallback, StopCallback, check_stop, report
from lensmass.core.ridge import ridge_peak

#: Significance (sigma) of the azimuthal ring peak needed for a confident ring.
CONFIDENT_SCORE = 8.0
#: Fraction of azimuthal sectors in which the ring must be seen for a confident ring.
CONFIDENT_COVERAGE = 0.3
#: Coverage above which the feature is called a ring (below: arcs).
RING_COVERAGE = 0.6
#: Default largest search radius in pixels.
DEFAULT_MAX_RADIUS_PIX = 300.0
DEFAULT_MIN_RADIUS_PIX = 3.0
BIN_PIX = 0.5
#: Fractional accuracy assumed for the lens-light model (a systematic floor on the ring profile).
LENS_MODEL_SYSTEMATIC = 0.01
#: A fitted PSF FWHM above this fraction of the ring radius marks a ring not resolved from the galaxy.
UNRESOLVED_PSF_RATIO = 0.9
#: Systematic fractional error of the radius of such a ring (inject-and-recover runs: 2-8% biases).
UNRESOLVED_SYSTEMATIC = 0.08
#: Share of the refit's shift of the ring radius kept as a systematic error (inject-and-recover runs:
#: what remains after the refit is up to about a third of its shift for theta_E ~ 2 FWHM, half at ~3).
REFIT_SHIFT_SYSTEMATIC = 0.5
#: Systematic fractional error of a first-pass radius the refit did not confirm (first passes came out
#: 1.5-6% too large in inject-and-recover runs).
FIRST_PASS_SYSTEMATIC = 0.05
#: A ring candidate is a peak of the azimuthal profile standing out by this many sigma (prominence).
MIN_PROMINENCE_SIGMA = 3.0
#: Second pass: the ring is masked out to this many ring widths (FWHM) either side of its ridge.
MASK_HALF_WIDTHS = 1.5


@dataclass
class RingResult:
    """What the ring finder saw.

    ``radius_pix`` / ``radius_err_pix``: ring radius (sqrt(a b) of the ellipse through the
    ridge points, or the circle radius) and its 1-sigma error, in pixels. ``kind`` is
    "ring", "arcs" or "none". ``points_x``/``points_y`` are the per-sector ridge points.
    ``residual`` is the lens-subtracted image the finder searched.
    """

    found: bool
    confident: bool
    kind: str
    radius_pix: float
    radius_err_pix: float
    score: float
    coverage: float
    center_x: float
    center_y: float
    axis_ratio: float
    angle_deg: float
    fit_rms_pix: float
    points_x: np.ndarray
    points_y: np.ndarray
    profile_radius_pix: np.ndarray
    profile: np.ndarray
    profile_err: np.ndarray
    noise_sigma: float
    residual: np.ndarray | None
    lens_light: LensLightModel | None
    message: str = ""
    warnings: list[str] = field(default_factory=list)
    ring_width_pix: float = float("nan")


def find_center(image: np.ndarray, *, search_fraction: float = 0.25, smooth_pix: float = 2.0) -> tuple[float, float]:
    """The light peak near the image centre: brightest pixel of the smoothed image inside
    the central ``search_fraction`` of the field, refined by a 5 x 5 centroid.

    Examples
    --------
    >>> yy, xx = np.mgrid[0:50, 0:60]
    >>> img = np.exp(-((xx - 33.3) ** 2 + (yy - 21.6) ** 2) / 8.0)
    >>> x, y = find_center(img)
    >>> bool(np.hypot(x - 33.3, y - 21.6) < 0.2)  # the 5 x 5 centroid leans ~0.1 px toward the peak pixel
    True
    """
    img = np.asarray(image)
    ny, nx = img.shape
    hx, hy = max(2, int(nx * search_fraction)), max(2, int(ny * search_fraction))
    x0, x1, y0, y1 = nx // 2 - hx, nx // 2 + hx + 1, ny // 2 - hy, ny // 2 + hy + 1
    x0, y0 = max(0, x0), max(0, y0)
    pad = int(3 * smooth_pix) + 3
    ex0, ey0 = max(0, x0 - pad), max(0, y0 - pad)
    cut = np.asarray(img[ey0:min(ny, y1 + pad), ex0:min(nx, x1 + pad)], float)
    fill = np.nanmedian(cut)
    sm = gaussian_filter(np.where(np.isfinite(cut), cut, fill), smooth_pix)
    inner = sm[y0 - ey0:y1 - ey0, x0 - ex0:x1 - ex0]
    iy, ix = np.unravel_index(int(np.argmax(inner)), inner.shape)
    py, px = iy + y0 - ey0, ix + x0 - ex0
    win = sm[max(0, py - 2):py + 3, max(0, px - 2):px + 3]
    w = np.clip(win - win.min(), 0, None)
    gy, gx = np.mgrid[max(0, py - 2):py + 3, max(0, px - 2):px + 3][:, : win.shape[0], : win.shape[1]]
    if w.sum() > 0:
        return float((w * gx).sum() / w.sum() + ex0), float((w * gy).sum() / w.sum() + ey0)
    return float(px + ex0), float(py + ey0)


@dataclass
class _SectorGrid:
    """Which (sector, radius-bin) cell each pixel of the search box falls in, for one centre."""

    box: tuple[slice, slice]
    inside: np.ndarray
    cell: np.ndarray
    radii: np.ndarray
    n_sectors: int

    @property
    def n_cells(self) -> int:
        return self.n_sectors * self.radii.size


def _sector_grid(shape, cx, cy, rmin, rmax, n_sectors) -> _SectorGrid:
    ny, nx = shape
    x0, x1 = max(0, int(cx - rmax) - 1), min(nx, int(cx + rmax) + 2)
    y0, y1 = max(0, int(cy - rmax) - 1), min(ny, int(cy + rmax) + 2)
    dy = (np.arange(y0, y1) - cy)[:, None]
    dx = (np.arange(x0, x1) - cx)[None, :]
    r = np.sqrt(dx * dx + dy * dy)
    inside = (r >= rmin) & (r < rmax)
    phi = np.arctan2(np.broadcast_to(dy, r.shape)[inside], np.broadcast_to(dx, r.shape)[inside])
    nb = int(np.ceil((rmax - rmin) / BIN_PIX))
    rb = ((r[inside] - rmin) / BIN_PIX).astype(np.int64)
    sb = ((phi + np.pi) / (2 * np.pi) * n_sectors).astype(np.int64) % n_sectors
    radii = rmin + (np.arange(nb) + 0.5) * BIN_PIX
    return _SectorGrid((slice(y0, y1), slice(x0, x1)), inside, sb * nb + rb, radii, n_sectors)


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


def find_ring(
    image: np.ndarray,
    center_x: float | None = None,
    center_y: float | None = None,
    *,
    subtract_lens_light: bool = True,
    residual: np.ndarray | None = None,
    min_radius_pix: float = DEFAULT_MIN_RADIUS_PIX,
    max_radius_pix: float | None = None,
    n_sectors: int = 24,
    progress: ProgressCallback = None,
    should_stop: StopCallback = None,
) -> RingResult:
    """Find an Einstein ring (or arcs) around the lens centre.

    Parameters
    ----------
    image : 2-D array
        The image (NaN = masked).
    center_x, center_y : float, optional
        Lens centre; default the light peak near the image centre (:func:`find_center`).
    subtract_lens_light : bool
        Fit and subtract the lens light first (default). Ignored when ``residual`` is given.
    residual : 2-D array, optional
        An already lens-subtracted image to search instead.
    min_radius_pix, max_radius_pix : float
        Search annulus (default 3 pixels to min(300, distance to the nearest edge)).
    n_sectors : int
        Number of azimuthal sectors.
    progress, should_stop : callables, optional
        Progress fraction 0..1 and cancellation (raises ``OperationCancelled``).

    Returns
    -------
    RingResult
    """
    img = np.asarray(image)
    if img.ndim != 2 or min(img.shape) < 8:
        raise LensInputError("The ring finder needs a 2-D image of at least 8 x 8 pixels.")
    report(progress, 0.0)
    cx, cy = (find_center(img) if center_x is None or center_y is None else (float(center_x), float(center_y)))
    ny, nx = img.shape
    if not (0 <= cx < nx and 0 <= cy < ny):
        raise LensInputError(f"The lens centre ({cx:.1f}, {cy:.1f}) is outside the {nx} x {ny} image; "
                             "give a centre inside it.")
    check_stop(should_stop)
    warnings: list[str] = []
    edge = min(cx, cy, nx - 1 - cx, ny - 1 - cy)
    rmax = float(max_radius_pix) if max_radius_pix is not None else float(min(DEFAULT_MAX_RADIUS_PIX, edge))
    rmax = min(rmax, float(np.hypot(nx, ny)))
    rmin = float(min_radius_pix)
    if rmax <= rmin + 4 * BIN_PIX:
        raise LensInputError("The lens centre is too close to the image edge to search for a ring; "
                             "give a centre farther from the edge or a larger --max-radius.")
    if residual is not None:
        return _search(np.asarray(residual), cx, cy, rmin, rmax, n_sectors, None, warnings, progress, should_stop)
    if not subtract_lens_light:
        return _search(img, cx, cy, rmin, rmax, n_sectors, None, warnings, progress, should_stop)
    return _flag_unresolved(_two_pass_search(img, cx, cy, rmin, rmax, n_sectors, progress, should_stop))


def _two_pass_search(img, cx, cy, rmin, rmax, n_sectors, progress, should_stop) -> RingResult:
    """Fit and subtract the lens light, search; refit with the ring masked and search again."""
    light = fit_lens_light(img, cx, cy, progress=lambda f: report(progress, 0.3 * f), should_stop=should_stop)
    if light.ok:
        cx, cy = light.center_x, light.center_y
    first = _search(light.residual, cx, cy, rmin, rmax, n_sectors, light, list(light.notes), None, should_stop)
    report(progress, 0.45)
    if not first.found or not light.ok:
        report(progress, 1.0)
        return first
    # Second pass: the ring's own light biases the lens-light fit, so refit with the ring masked.
    half = max(1.0, MASK_HALF_WIDTHS * first.ring_width_pix)
    q_ring = min(1.0, first.axis_ratio) if np.isfinite(first.axis_ratio) else 1.0
    lo_r = first.radius_pix * np.sqrt(q_ring) - half
    hi_r = first.radius_pix / np.sqrt(q_ring) + half
    mask = _annulus_mask(img.shape, first.center_x, first.center_y, lo_r, hi_r)
    light2 = fit_lens_light(img, cx, cy, mask=mask, fit_radius_pix=light.fit_radius_pix,
                            progress=lambda f: report(progress, 0.45 + 0.3 * f), should_stop=should_stop)
    if not light2.ok:
        report(progress, 1.0)
        return first
    second = _search(light2.residual, light2.center_x, light2.center_y, rmin, rmax, n_sectors, light2,
                     list(light2.notes) + ["Lens light refitted with the ring masked."],
                     lambda f: report(progress, 0.75 + 0.25 * f), should_stop)
    # The refit only de-biases the lens light under the ring; with a broad ring masked it can lose
    # its hold on the galaxy and leave a core residual that outshines the ring. A second answer that
    # is no ring, or a ring elsewhere, is not trusted over the first.
    if not second.found or abs(second.radius_pix - first.radius_pix) > max(2.0, first.ring_width_pix):
        moved = f"put the peak at {second.radius_pix:.2f} pixels" if second.found else "found no ring"
        first.radius_err_pix = float(np.hypot(first.radius_err_pix, FIRST_PASS_SYSTEMATIC * first.radius_pix))
        first.warnings.append(f"Refitting the lens light with the ring masked {moved}; the first fit's ring at "
                              f"{first.radius_pix:.2f} pixels is kept, with a {FIRST_PASS_SYSTEMATIC:.0%} systematic "
                              "error (check the residual image).")
        report(progress, 1.0)
        return first
    # How far the refit moved the ring measures the lens-light model's pull on it: part of that
    # pull may remain, so a share of the move is added to the radius error.
    second.radius_err_pix = float(np.hypot(second.radius_err_pix,
                                           REFIT_SHIFT_SYSTEMATIC * (second.radius_pix - first.radius_pix)))
    return second


def _flag_unresolved(result: RingResult) -> RingResult:
    """A ring the lens-light fit could not tell from the galaxy gets a systematic error and no confidence.

    When the fitted PSF is wider than :data:`UNRESOLVED_PSF_RATIO` of the ring radius, or the
    Sersic index runs to a bound of the fit, the galaxy model has absorbed part of the ring
    (inject-and-recover runs: radii then come out 2-8% too large, against under 2% otherwise),
    so :data:`UNRESOLVED_SYSTEMATIC` of the radius is added in quadrature to its error.
    """
    light = result.lens_light
    if not result.found or light is None or not light.ok:
        return result
    n_lo, n_hi = SERSIC_N_BOUNDS
    wide_psf = light.psf_fwhm_pix > UNRESOLVED_PSF_RATIO * result.radius_pix
    n_at_bound = not (n_lo + 0.05 <= light.sersic_n <= n_hi - 0.05)
    if not (wide_psf or n_at_bound):
        return result
    why = (f"the fitted PSF FWHM ({light.psf_fwhm_pix:.1f} pixels) exceeds the ring radius" if wide_psf
           else f"the Sersic index ran to the bound of the fit ({light.sersic_n:.2f})")
    result.radius_err_pix = float(np.hypot(result.radius_err_pix, UNRESOLVED_SYSTEMATIC * result.radius_pix))
    result.confident = False
    result.warnings.append(
        f"The ring is barely resolved from the lens galaxy ({why}): the lens-light model has taken part of "
        f"the ring, so the radius carries an extra {UNRESOLVED_SYSTEMATIC:.0%} systematic error and is likely "
        "too large; mark the arcs by hand to check it.")
    result.message = (f"A {result.kind} at {result.radius_pix:.2f} +- {result.radius_err_pix:.2f} pixels, barely "
                      "resolved from the lens galaxy: check it by eye before trusting it.")
    return result


def _smooth_profile(profile: np.ndarray) -> np.ndarray:
    """The profile smoothed over about one PSF width (3 bins) for the peak search; the ends are
    padded with their own values (zero padding would dent the first bin and fake a peak beside it)."""
    padded = np.pad(np.nan_to_num(profile), 1, mode="edge")
    return np.convolve(padded, [0.25, 0.5, 0.25], mode="valid")


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


def _search(res, cx, cy, rmin, rmax, n_sectors, light, warnings, progress, should_stop) -> RingResult:
    """Profile analysis of a (lens-subtracted) image around (cx, cy)."""
    ny, nx = res.shape
    report(progress, 0.0)
    check_stop(should_stop)
    # Noise from the search region (a ring is a minority of its pixels).
    x0, x1 = max(0, int(cx - rmax)), min(nx, int(cx + rmax) + 1)
    y0, y1 = max(0, int(cy - rmax)), min(ny, int(cy + rmax) + 1)
    box = res[y0:y1, x0:x1]
    step = max(1, int(np.sqrt(box.size / 200_000)))
    sigma = robust_sigma(box[::step, ::step])
    if not np.isfinite(sigma) or sigma <= 0:
        sigma = float(np.nanstd(box)) or 1.0

    grid = _sector_grid(res.shape, cx, cy, rmin, rmax, n_sectors)
    sums, counts, radii = _sector_profiles(res, grid)
    report(progress, 0.5)
    with np.errstate(invalid="ignore", divide="ignore"):
        smean = sums / counts
    good = counts > 0
    n_good = good.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        prof = np.where(n_good > 0, np.nansum(np.where(good, smean, 0.0), axis=0) / n_good, np.nan)
        pix_err = sigma / np.sqrt(np.maximum(counts.sum(axis=0), 1))
        scatter = np.sqrt(np.nansum(np.where(good, (smean - prof) ** 2, 0.0), axis=0) / np.maximum(n_good - 1, 1))
        sec_err = scatter / np.sqrt(np.maximum(n_good, 1))
        # The median of the sector means: blind to a bright neighbour in one sector, and not
        # penalised by the real azimuthal brightness variation of a lopsided ring.
        with warnings_module.catch_warnings():  # radii with no pixel in any sector: NaN, said below
            warnings_module.simplefilter("ignore", RuntimeWarning)
            med = np.nanmedian(np.where(good, smean, np.nan), axis=0)
        med_err = 1.2533 * sigma * np.sqrt(np.nansum(np.where(good, 1.0 / counts, 0.0), axis=0)) / np.maximum(n_good, 1)
    err = np.maximum(pix_err, sec_err)
    if light is not None and light.ok:
        # The lens-light model is good to a few per cent at best: add that systematic floor, so
        # residuals of a bright galaxy's core cannot pass for a ring.
        msums, mcounts, _ = _sector_profiles(light.model, grid, offset=light.sky)
        with np.errstate(invalid="ignore", divide="ignore"):
            model_prof = msums.sum(axis=0) / np.maximum(mcounts.sum(axis=0), 1)
        err = np.hypot(err, LENS_MODEL_SYSTEMATIC * np.abs(model_prof))
        med_err = np.hypot(med_err, LENS_MODEL_SYSTEMATIC * np.abs(model_prof))
    enough = n_good >= max(3, n_sectors // 3)
    err = np.where(enough, err, np.inf)
    med_err = np.where(enough, med_err, np.inf)
    prof_s, med_s = _smooth_profile(prof), _smooth_profile(med)
    with np.errstate(invalid="ignore", divide="ignore"):
        snr = prof_s / err
        snr_med = med_s / med_err
    snr[~np.isfinite(snr)] = -np.inf
    snr_med[~np.isfinite(snr_med)] = -np.inf
    # Candidates are peaks of the mean profile that stand out from their surroundings (scipy
    # find_peaks prominence) by MIN_PROMINENCE_SIGMA: the residual of a bright galaxy's core falls
    # steadily outwards and is no ring however significant it is. The ring is the candidate where
    # the mean profile is most significant (robust to one bright sector); its score is the better
    # of the two significances there.
    peaks, props = find_peaks(prof_s, prominence=0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        prominence = props["prominences"] / err[peaks]
    prominence = np.where(np.isfinite(prominence), prominence, 0.0)
    candidates = peaks[prominence >= MIN_PROMINENCE_SIGMA]
    if candidates.size:
        k = int(candidates[np.argmax(snr[candidates])])
        best = max(snr[k], snr_med[k])
        score = float(max(best, 0.0)) if np.isfinite(best) else 0.0
    else:
        k, score = -1, float(prominence.max()) if prominence.size else 0.0
    empty = RingResult(False, False, "none", float("nan"), float("nan"), score, 0.0, cx, cy, float("nan"),
                       float("nan"), float("nan"), np.array([]), np.array([]), radii, prof, err, sigma, res, light,
                       "", warnings)
    if k < 0 or score < 3.0:
        empty.message = ("No ring: no peak of the azimuthal profile stands out by 3 sigma around the centre "
                         f"(best {score:.1f} sigma).")
        report(progress, 1.0)
        return empty

    # Ring width from the half-maximum of the smoothed profile around the peak.
    half = 0.5 * prof_s[k]
    lo_i, hi_i = k, k
    while lo_i > 0 and prof_s[lo_i - 1] > half:
        lo_i -= 1
    while hi_i < len(radii) - 1 and prof_s[hi_i + 1] > half:
        hi_i += 1
    width = max(1.5, (hi_i - lo_i + 1) * BIN_PIX)
    r0 = ridge_peak(radii, prof * np.sqrt(radii), float(radii[k]), width)

    # Per-sector detection and ridge points.
    band = np.abs(radii - r0) <= max(1.0, 0.5 * width)
    sec_sum = (sums[:, band]).sum(axis=1)
    sec_cnt = counts[:, band].sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        sec_snr = sec_sum / (sigma * np.sqrt(sec_cnt))
    detected = (sec_cnt > 0) & (sec_snr >= 3.0)
    coverage = float(detected.mean())
    window = np.abs(radii - r0) <= max(2.0, 1.5 * width)
    wi = np.flatnonzero(window)
    px, py = [], []
    for s in np.flatnonzero(detected):
        sp = np.where(counts[s, wi] > 0, smean[s, wi], np.nan) * np.sqrt(radii[wi])
        if np.isfinite(sp).sum() < 5:
            continue
        rr = ridge_peak(radii[wi], sp, r0, width)
        ang = -np.pi + (s + 0.5) * 2 * np.pi / n_sectors
        px.append(cx + rr * np.cos(ang))
        py.append(cy + rr * np.sin(ang))
    px, py = np.array(px), np.array(py)
    report(progress, 0.8)

    radius, radius_err, q, angle, rms = r0, width / 2.355 / np.sqrt(max(len(px), 1)), float("nan"), float("nan"), float("nan")
    if len(px) >= 6 and coverage >= 0.5:
        try:
            ef = fit_ellipse(px, py, center=(cx, cy), point_err=BIN_PIX / np.sqrt(12))
            if 0.4 <= ef.axis_ratio <= 1.0 and abs(ef.theta_e - r0) < 0.25 * r0:
                radius, radius_err, q, angle, rms = ef.theta_e, ef.theta_e_err, ef.axis_ratio, ef.angle_deg, ef.rms
        except LensInputError:
            pass
    if not np.isfinite(q) and len(px) >= 2:
        cf = fit_circle(px, py, center=(cx, cy), point_err=BIN_PIX / np.sqrt(12))
        radius, radius_err, rms = cf.radius, cf.radius_err, cf.rms
        q = 1.0
        if len(px) and coverage < 0.5:
            warnings.append(f"Arcs cover only {coverage:.0%} of the azimuth: the radius assumes the lens centre "
                            "is at the light centre.")
    confident = bool(score >= CONFIDENT_SCORE and coverage >= CONFIDENT_COVERAGE)
    kind = "ring" if coverage >= RING_COVERAGE else "arcs"
    found = bool(score >= 5.0 and coverage >= 0.15)
    if not found:
        kind = "none"
        msg = (f"No convincing ring: the best candidate at {r0:.1f} pixels is {score:.1f} sigma and seen in "
               f"{coverage:.0%} of directions.")
    elif confident:
        msg = f"A {kind} at {radius:.2f} +- {radius_err:.2f} pixels ({score:.0f} sigma, seen in {coverage:.0%} of directions)."
    else:
        msg = (f"A weak {kind} candidate at {radius:.2f} pixels ({score:.1f} sigma, {coverage:.0%} of directions): "
               "check it by eye before trusting it.")
    report(progress, 1.0)
    return RingResult(found, confident, kind, float(radius), float(radius_err), score, coverage, cx, cy, float(q),
                      float(angle), float(rms), px, py, radii, prof, err, sigma, res, light, msg, warnings,
                      float(width))
