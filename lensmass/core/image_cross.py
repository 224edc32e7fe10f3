"""Four compact images in a cross around the lens (a compact source near the axis of an elongated lens):
their radii give theta_E where the ring finder's circles see only the outer pair, or one pair and another object.

An isothermal lens has the potential psi = r F(phi); a source at the optical axis images where r = F(phi), a
ridge elongated across the mass (Kormann, Schneider & Bartelmann 1994, A&A 284 285). A compact source near the axis
of an SIE gives four images close to the ends of that ridge's axes: an inner pair along the mass's major axis and an
outer pair across it, at radii whose ratio is the ridge's axis ratio (0.75 for a mass axis ratio 0.4). The ridge's
sqrt(a b) falls short of theta_E by :func:`~lensmass.core.elliptical_annuli.sie_ring_factor`, applied in the share
:func:`~lensmass.core.elliptical_annuli.mass_alignment_weight` gives the mass (inner pair along the light's major
axis): the SIE end. An external shear elongates the cross too: an SIS with shear gamma images a source on the axis at
theta_E / (1 -+ gamma), so theta_E is the pairs' harmonic mean (:func:`shear_limit_theta_e`): the shear end, below the
SIE end. Four images of a source near the axis do not tell the mass's ellipticity from the shear (both add the same
quadrupole to the potential to lowest order: common practice; the project's SIE + shear fitter,
:mod:`lensmass.core.lens_model_fit`, returns either end when given the other's prior), so theta_E is the middle of the
two ends and the span joins the error as a rectangular distribution's standard deviation (its half-width / sqrt(3)).
Within a pair the images lie at theta_E -+ the source offset for an isothermal sphere (common practice), so each
pair's mean radius is taken.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations

import numpy as np
from scipy.ndimage import gaussian_filter

from lensmass.core.elliptical_annuli import mass_alignment_weight, sie_ring_factor
from lensmass.core.lenslight import robust_sigma
from lensmass.core.peak_finding import local_peaks

#: Smallest significance of an image (peak of the residual smoothed by the seeing, in units of that map's noise); the
#: four images of a cross stand at least :data:`MIN_CROSS_SIGMA` in quadrature (four of 5 sigma): the inner pair of an
#: elongated lens sits on the lens light's major axis, where the fit's misfit dims it. (Three images, one pair and one
#: of the other, were tried: stress tuning seeds 625000-626049, ring kinds, 33 answers, 14 within 5%, hard rings
#: 3 gained and 4 lost, truth inside 1/2 sigma 45%/58%.)
FAINTEST_IMAGE_SIGMA = 3.0
MIN_CROSS_SIGMA = 10.0
#: Only one image of the four may be fainter than this: one bright arc with three noise peaks of 3 sigma reaches
#: :data:`MIN_CROSS_SIGMA` too (tests/core/test_unpaired_arc.py's SIS arc at beta = 0.6 theta_E, seed 3, read as a
#: cross 40% too large).
SECOND_FAINTEST_SIGMA = 4.0
#: Brightest peaks among which the images are sought.
MAX_PEAKS = 10
#: Angles between neighbouring images of the cross, degrees (90 for a source on the axis).
GAP_RANGE_DEG = (45.0, 135.0)
#: An image and its opposite are this close to 180 degrees apart.
OPPOSITE_TOLERANCE_DEG = 40.0
#: The inner pair's mean radius is at least this share of the outer pair's: the ridge of the most elongated SIE
#: tabulated (mass axis ratio 0.3) has axis ratio 0.70 (:data:`~lensmass.core.elliptical_annuli.SIE_RIDGE_AXIS_RATIOS`),
#: and a shear of 0.15 along it multiplies that by (1 - gamma) / (1 + gamma) = 0.74 (an SIS with shear images a
#: source on the axis at theta_E / (1 -+ gamma): common practice), 0.52 in all.
MIN_PAIR_RATIO = 0.5
#: Within a pair, the nearer image's radius is at least this share of the farther one's (a source near the axis).
MIN_WITHIN_PAIR_RATIO = 0.75
#: Share of the SIE factor's shortfall taken as the span's half-width at least (as the ring finder does for elongated
#: rings), when half the span between the SIE and shear ends is smaller (the light's direction may be wrong about the
#: mass: the SIE end may lie anywhere over that shortfall).
SIE_FACTOR_ERROR_SHARE = 0.5
#: theta_E lies somewhere between the two ends and four images say nowhere where: a rectangular distribution over the
#: span, whose standard deviation is its half-width / sqrt(3) (JCGM 100:2008, the GUM, 4.3.7: common practice). The
#: half-width itself as one sigma held the truth in 19 of 24 stress crosses (79%; tuning seeds 823000-823419, h24c),
#: above the 68% a one-sigma interval should hold.
END_SPAN_SD_SHARE = 1.0 / np.sqrt(3.0)
#: Share of half the radius difference within each pair kept as a systematic error (ellipticity, shear).
PAIR_SYSTEMATIC = 0.3


@dataclass(frozen=True)
class ImageCross:
    """Four images: positions (pixels), their radius and direction from the centre, significance, and the pairs'
    mean radii (``inner_pix`` <= ``outer_pix``), the outer pair's direction (degrees from +x), theta_E and its error."""

    x: np.ndarray
    y: np.ndarray
    radius: np.ndarray
    angle_rad: np.ndarray
    sigma: np.ndarray
    inner_pix: float
    outer_pix: float
    outer_angle_deg: float
    theta_e_pix: float
    theta_e_err_pix: float


def image_peaks(residual: np.ndarray, cx: float, cy: float, r_lo: float, r_hi: float, fwhm_pix: float):
    """Compact peaks of the lens-subtracted ``residual`` (NaN = masked) smoothed by a Gaussian of the seeing, between
    radii ``r_lo`` and ``r_hi`` of (cx, cy): sub-pixel x, y (:func:`lensmass.core.peak_finding.local_peaks`, the
    project's one peak finder) and significance (units of the smoothed map's robust noise in that annulus), brightest
    first."""
    ny, nx = residual.shape
    pad = int(r_hi + 3 * fwhm_pix) + 2
    x0, x1, y0, y1 = max(0, int(cx) - pad), min(nx, int(cx) + pad + 1), max(0, int(cy) - pad), min(ny, int(cy) + pad + 1)
    cut = np.asarray(residual[y0:y1, x0:x1], float)
    good = np.isfinite(cut)
    sm = gaussian_filter(np.where(good, cut, 0.0), fwhm_pix / 2.355)
    yy, xx = np.mgrid[y0:y1, x0:x1]
    rr = np.hypot(xx - cx, yy - cy)
    ring = good & (rr >= r_lo) & (rr <= r_hi)
    if ring.sum() < 20:
        return np.array([]), np.array([]), np.array([])
    noise = robust_sigma(sm[ring])
    if not np.isfinite(noise) or noise <= 0:
        return np.array([]), np.array([]), np.array([])
    peaks = local_peaks(np.where(good, sm, np.nan), threshold=FAINTEST_IMAGE_SIGMA * noise,
                        radius_pix=max(1, int(round(fwhm_pix)) // 2), max_peaks=MAX_PEAKS, valid=ring)
    return peaks[:, 0] + x0, peaks[:, 1] + y0, peaks[:, 2] / noise


def shear_limit_theta_e(inner_pix: float, outer_pix: float) -> float:
    """theta_E of a cross elongated by an external shear alone: an SIS with shear gamma images a source on the axis
    at theta_E / (1 - gamma) and theta_E / (1 + gamma) (the lens equation beta = theta - alpha(theta), SIS deflection
    theta_E along the radius plus the shear's gamma theta; Narayan & Bartelmann 1996, eq. for the SIS; from memory),
    so theta_E is the harmonic mean of the pairs' radii.

    >>> round(shear_limit_theta_e(10.0 / 1.1, 10.0 / 0.9), 6)
    10.0
    """
    return float(2.0 * inner_pix * outer_pix / (inner_pix + outer_pix))


def _cross_of(ang: np.ndarray, rad: np.ndarray) -> tuple[float, float, int] | None:
    """For four images (angles, radii), the pairs' mean radii (inner, outer) and the index of an outer image when they
    form a cross (neighbours :data:`GAP_RANGE_DEG` apart, opposite images near 180 degrees apart, radii within
    :data:`MIN_WITHIN_PAIR_RATIO` in a pair and :data:`MIN_PAIR_RATIO` between pairs), else None."""
    order = np.argsort(ang)
    a, r = ang[order], rad[order]
    gaps = np.degrees(np.diff(np.concatenate([a, a[:1] + 2 * np.pi])))
    if gaps.min() < GAP_RANGE_DEG[0] or gaps.max() > GAP_RANGE_DEG[1]:
        return None
    for i in (0, 1):
        apart = np.degrees(abs((a[i + 2] - a[i] + np.pi) % (2 * np.pi) - np.pi))
        if abs(apart - 180.0) > OPPOSITE_TOLERANCE_DEG:
            return None
        if min(r[i], r[i + 2]) < MIN_WITHIN_PAIR_RATIO * max(r[i], r[i + 2]):
            return None
    m0, m1 = 0.5 * (r[0] + r[2]), 0.5 * (r[1] + r[3])
    inner, outer = min(m0, m1), max(m0, m1)
    if inner < MIN_PAIR_RATIO * outer:
        return None
    return float(inner), float(outer), int(order[0] if m0 >= m1 else order[1])


def find_image_cross(residual: np.ndarray, cx: float, cy: float, r_lo: float, r_hi: float, fwhm_pix: float,
                     light_angle_deg: float = float("nan"), light_axis_ratio: float = 1.0) -> ImageCross | None:
    """The four compact images forming a cross around (cx, cy) between radii ``r_lo`` and ``r_hi`` (the one whose
    faintest image is brightest), with theta_E the middle of the SIE end (sqrt(inner x outer) times the SIE factor of
    their ratio in the share the light's direction gives the mass) and the shear end (:func:`shear_limit_theta_e`),
    the larger of half their span and the SIE floor, / sqrt(3), in the error (:data:`END_SPAN_SD_SHARE`; see the
    module), or None.

    Examples
    --------
    Four Gaussian images at 9.0 and 11.0 pixels on the axes (an SIS with shear 0.1 puts them at theta_E / (1 -+ 0.1),
    theta_E = 9.9, the radii's harmonic mean: common practice; their geometric mean, 9.95, is 0.5% above it); a round
    light gives the SIE factor half weight:

    >>> yy, xx = np.mgrid[0:64, 0:64]
    >>> spots = [(32 + 11, 32), (32 - 11, 32), (32, 32 + 9), (32, 32 - 9)]
    >>> img = sum(20 * np.exp(-((xx - x) ** 2 + (yy - y) ** 2) / 4.5) for x, y in spots)
    >>> img = img + np.random.default_rng(2).normal(0, 1, img.shape)
    >>> c = find_image_cross(img, 32, 32, 4, 20, 3.0)
    >>> round(c.inner_pix, 1), round(c.outer_pix, 1), 9.9 < c.theta_e_pix < 10.2
    (9.0, 11.0, True)
    """
    if not (np.isfinite(fwhm_pix) and fwhm_pix > 0 and r_hi > r_lo):
        return None
    px, py, sig = image_peaks(residual, cx, cy, r_lo, r_hi, fwhm_pix)
    if px.size < 4:
        return None
    ang, rad = np.arctan2(py - cy, px - cx), np.hypot(px - cx, py - cy)
    best, best_key = None, -np.inf
    for idx in combinations(range(px.size), 4):
        k = np.array(idx)
        if np.sqrt(np.sum(sig[k] ** 2)) < MIN_CROSS_SIGMA or np.sort(sig[k])[1] < SECOND_FAINTEST_SIGMA:
            continue
        got = _cross_of(ang[k], rad[k])
        if got is not None and sig[k].min() > best_key:
            best, best_key = (k, got), float(sig[k].min())
    if best is None:
        return None
    k, (inner, outer, i_out) = best
    outer_deg = float(np.degrees(ang[k][i_out]))
    full = sie_ring_factor(inner / outer) - 1.0
    w = mass_alignment_weight(outer_deg, light_angle_deg, light_axis_ratio)
    root = float(np.sqrt(inner * outer))
    sie_end, shear_end = root * (1.0 + w * full), shear_limit_theta_e(inner, outer)
    theta = 0.5 * (sie_end + shear_end)
    split = END_SPAN_SD_SHARE * max(0.5 * abs(sie_end - shear_end), SIE_FACTOR_ERROR_SHARE * full * root)
    r = rad[k][np.argsort(ang[k])]
    within = 0.5 * max(abs(r[0] - r[2]), abs(r[1] - r[3]))
    position = fwhm_pix / 2.355 / float(np.sqrt(np.sum(sig[k] ** 2)))
    err = float(np.sqrt(position ** 2 + split ** 2 + (PAIR_SYSTEMATIC * within) ** 2))
    return ImageCross(px[k], py[k], rad[k], ang[k], sig[k], inner, outer, outer_deg, theta, err)
