"""The counter-image of a single arc: a search of the lens-subtracted image on the far side of the lens.

For an isothermal sphere a source at beta behind the lens has its bright image at theta_E + beta and its
counter-image at theta_E - beta on the opposite side (common practice; Narayan & Bartelmann 1996, eq. 29), so the two
radii give theta_E = (r_arc + r_counter) / 2 however far the source is from the axis. The ring finder's profile search
often misses the counter-image, which is fainter and lies inside the arc, on the lens light's residual. Here the
residual is averaged in a wedge opposite the arc and, at the same radii, in the two wedges at right angles to it
(their mean removes what is round: the lens light's leftover), and a peak standing :data:`COUNTER_MIN_SNR` above
that is the counter-image. Beyond 0.6 of the arc's radius (to 0.9) a peak is taken only when the main search found
none and its light matches the isothermal flux ratio's band (:data:`COUNTER_FAR_SHARE`).
"""

from __future__ import annotations

import numpy as np

#: Half opening of the wedges, degrees.
WEDGE_HALF_DEG = 30.0
#: Significance of the wedge-minus-sides peak (its mean over one seeing FWHM of radius) to count as a counter-image.
COUNTER_MIN_SNR = 5.0
#: The counter-image is searched from this many seeing FWHM from the centre (the lens core's residual inside) ...
COUNTER_MIN_FWHM = 1.0
#: ... to this share of the arc's radius. For an isothermal sphere the counter-image lies at (1 - b) / (1 + b) of the
#: arc's radius (b = beta / theta_E) and is as much fainter and shorter (|mu-| / mu+ = (1 - b) / (1 + b): common
#: practice): one farther out than 0.6 of it (b < 0.25, the arc stretched over five times) is a counter-arc nearly as
#: bright, which the profile search pairs itself (ring_shapes._pair_of_arcs); a faint peak there is other light. (0.9
#: before h32c: stress tuning seeds 1019000-1019419, the four pairs made with a counter-image at 0.65-0.86 of the arc's
#: radius put theta_E at 1.26-2.37 of the truth, outside their 2-sigma intervals.)
COUNTER_MAX_SHARE = 0.6


#: Beyond :data:`COUNTER_MAX_SHARE`, up to this share of the arc's radius, a peak is the counter-image only when its light
#: over the arc's is at least :data:`COUNTER_FLUX_BAND_LOW` of the isothermal ratio r_in / r_arc: a counter-image there
#: is nearly as bright as the arc, a peak far fainter is other light (h32d: stress tuning seeds 1022000-1022399, the
#: peaks at 0.65-0.80 of the arc's radius whose pair was right measured 0.47-0.52 of the ratio, the wrong ones 0.07-0.36;
#: inside 0.6 the ratio did not separate right from wrong pairs, 0.22-0.89 against 0.10-1.33). Rarely reached: h33b,
#: paired with main: folds/quads/arcs 1030000-1030799, 1031100-1031899 (1600) and non-lenses 1030800-1031099, 9 far
#: peaks, 1 taken (a fold 0.80 -> 0.91 theta_E, 0.91 of the ratio); refused: wrong ones 0.08-0.20 of the ratio, folds
#: whose pair would be 0.86-0.97 theta_E 0.33-0.38 (h32d's wrong one 0.36); check 1033000-1033569 (all kinds,
#: 150 non-lenses) and arcs 1033600-1033999, 2 taken of 970: a fold 0.80 -> 0.97 theta_E (0.64 of the ratio) and a
#: two-arc field whose arc lies at 3.0 theta_E, 2.20 -> 2.84 (0.48): within 5% +1 -0, no non-lens paired.
COUNTER_FAR_SHARE = 0.9
#: The wedge sums measure about half the isothermal ratio on right pairs (the counter-image's light spreads beyond
#: one FWHM of its radius); see :data:`COUNTER_FAR_SHARE`.
COUNTER_FLUX_BAND_LOW = 0.4


def find_counter_image(residual: np.ndarray, cx: float, cy: float, arc_radius_pix: float, arc_angle_rad: float,
                       noise_sigma: float, fwhm_pix: float) -> float:
    """Radius (pixels) of the counter-image of an arc at ``arc_radius_pix`` in direction ``arc_angle_rad`` (from +x,
    radians) about (``cx``, ``cy``) in the lens-subtracted ``residual`` (NaN = masked), or NaN when none stands out.

    It is sought inside :data:`COUNTER_MAX_SHARE` of the arc's radius, then, if none is there, out to
    :data:`COUNTER_FAR_SHARE` of it where its light must match the isothermal flux ratio's band.

    Examples
    --------
    >>> yy, xx = np.mgrid[0:81, 0:81]
    >>> img = 10 * np.exp(-0.5 * (np.hypot(xx - 64, yy - 40) / 2) ** 2)   # the arc, 24 pixels to the right
    >>> img = img + 4 * np.exp(-0.5 * (np.hypot(xx - 30, yy - 40) / 2) ** 2)  # a counter-image 10 pixels left
    >>> img = img + np.random.default_rng(1).normal(0, 0.3, img.shape)
    >>> round(find_counter_image(img, 40.0, 40.0, 24.0, 0.0, 0.3, 4.0))
    10
    """
    fwhm = max(float(fwhm_pix), 1.0) if np.isfinite(fwhm_pix) else 2.0
    if not np.isfinite(noise_sigma) or noise_sigma <= 0:
        return float("nan")
    arc = float(arc_radius_pix)
    lo = max(COUNTER_MIN_FWHM * fwhm, 2.0)
    inner, ratio = _peak(residual, cx, cy, arc, arc_angle_rad, noise_sigma, fwhm, lo, COUNTER_MAX_SHARE * arc)
    if np.isfinite(inner):
        return inner
    inner, ratio = _peak(residual, cx, cy, arc, arc_angle_rad, noise_sigma, fwhm, max(lo, COUNTER_MAX_SHARE * arc),
                         COUNTER_FAR_SHARE * arc)
    if np.isfinite(inner) and ratio >= COUNTER_FLUX_BAND_LOW * inner / arc:
        return inner
    return float("nan")


def _peak(residual, cx, cy, arc_radius, arc_angle_rad, noise_sigma, fwhm, lo, hi) -> tuple[float, float]:
    """The far wedge's most significant peak between radii ``lo`` and ``hi`` and its light over the arc's, or NaNs."""
    none = (float("nan"), float("nan"))
    if hi <= lo + fwhm:
        return none
    r0 = int(np.ceil(arc_radius + fwhm)) + 2  # the arc too: its light is compared below
    ny, nx = residual.shape
    y0, y1 = max(0, int(cy) - r0), min(ny, int(cy) + r0 + 1)
    x0, x1 = max(0, int(cx) - r0), min(nx, int(cx) + r0 + 1)
    cut = residual[y0:y1, x0:x1]
    yy, xx = np.mgrid[y0:y1, x0:x1]
    rr = np.hypot(xx - cx, yy - cy)
    off = np.abs((np.arctan2(yy - cy, xx - cx) - arc_angle_rad + np.pi) % (2 * np.pi) - np.pi)  # 0 at the arc
    half = np.radians(WEDGE_HALF_DEG)
    ok = np.isfinite(cut) & (rr >= lo) & (rr <= hi)
    far = ok & (off >= np.pi - half)
    side = ok & (np.abs(off - np.pi / 2) <= half)
    edges = np.arange(lo, hi + fwhm, fwhm / 2)
    idx = np.digitize(rr, edges) - 1
    n_bins = len(edges) - 1
    if n_bins < 2:
        return none

    def profile(sel):
        k = idx[sel]
        good = (k >= 0) & (k < n_bins)
        s = np.bincount(k[good], weights=cut[sel][good], minlength=n_bins)
        n = np.bincount(k[good], minlength=n_bins)
        return s, n

    fs, fn = profile(far)
    ss, sn = profile(side)
    # Sums over one FWHM of radius (two half-FWHM bins): the counter-image's light, not one bin's noise.
    fs, fn, ss, sn = (a[:-1] + a[1:] for a in (fs, fn, ss, sn))
    with np.errstate(invalid="ignore", divide="ignore"):
        diff = fs / fn - ss / sn
        err = noise_sigma * np.sqrt(1.0 / fn + 1.0 / sn)
        snr = np.where((fn >= 3) & (sn >= 3), diff / err, -np.inf)
    k = int(np.argmax(snr))
    if not np.isfinite(snr[k]) or snr[k] < COUNTER_MIN_SNR:
        return none
    inner = float(edges[k + 1])  # the middle of the two bins summed
    # The counter-image is the fainter one (|mu-| < mu+ for an isothermal sphere; common practice): its light in the
    # far wedge within a FWHM of its radius, less the sides', must be below the arc's in its own wedge.
    sides = np.isfinite(cut) & (np.abs(off - np.pi / 2) <= half)
    arc = np.isfinite(cut) & (off <= half)
    arc_light = _excess(cut, rr, arc, sides, arc_radius, fwhm)
    if _excess(cut, rr, far, sides, inner, fwhm) >= arc_light:
        return none
    if not arc_light > 0:
        return inner, float("nan")
    # its light over the arc's, the far wedge not cut at the searched radii
    return inner, _excess(cut, rr, np.isfinite(cut) & (off >= np.pi - half), sides, inner, fwhm) / arc_light


def _excess(cut, rr, wedge, side, radius, fwhm) -> float:
    """Light in ``wedge`` within one ``fwhm`` of ``radius`` above the mean of ``side`` at those radii."""
    ring = np.abs(rr - radius) <= fwhm
    w, s = wedge & ring, side & ring
    if not w.any() or not s.any():
        return float("nan")
    return float(np.sum(cut[w]) - w.sum() * np.mean(cut[s]))


__all__ = ["COUNTER_FAR_SHARE", "COUNTER_FLUX_BAND_LOW", "COUNTER_MAX_SHARE", "COUNTER_MIN_FWHM", "COUNTER_MIN_SNR", "WEDGE_HALF_DEG", "find_counter_image"]
