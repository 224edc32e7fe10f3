"""A neighbour galaxy inside the lens's own segment, fitted and subtracted before the ring is searched again.

A neighbour a little outside the ring that segmentation leaves joined to the lens (a disc's light bridges them) is
neither masked nor deblended: its light stays in the lens-light residual beside the ring and pulls the ring's
profile outward in its directions. Masking it cuts the ring where the two touch; here it is modelled instead.

The lens-light residual's compact peaks off the core (:func:`round_blobs`) are fitted one by one as a PSF-blurred
Sersic (:func:`~lensmass.core.companion_light.fit_companion`, which keeps a fit only when the Bayesian information
criterion prefers it strongly). A blob is taken for a galaxy, not a piece of the ring, when

- it lies near enough the ring to pull it: within :data:`REACH_FWHM` seeing FWHM outside the first answer's radius;
- it is not drawn out along the tangent, as a lensed image is (common practice): its light's second moment along
  the tangent is at most :data:`MAX_TANGENTIAL_STRETCH` squared times that along the radius (measured on the
  residual under a Gaussian window of one FWHM; a fitted Sersic's axis ratio means little for a blob not larger
  than the seeing, nor with the lens fit's Gaussian standing in for the PSF);
- it is compact: a fitted half-light radius of at most :data:`MAX_RE_FWHM` seeing FWHM or :data:`MAX_RE_OF_DISTANCE`
  of its distance from the lens;
- it stands alone at its distance: the azimuthal-mean residual there, the blob left out, is under
  :data:`MAX_RING_SHARE` of the ring's peak (a knot of a ring leaves ring light at its own distance all round).

The first such blob's model is subtracted, the lens light refitted on what is left (as
:mod:`lensmass.core.companion_pass` does for a neighbour the first search took for arcs) and the ring searched on the
new residual; that search is kept when its ring lies a seeing FWHM inside the blob (a neighbour outside the ring
pulled it outward; a ring found beyond the blob is another object's light, not the lens's ring) and is seen in as
many directions as the first answer or more (a knot of an elongated ring, seen round, takes ring light with it),
and in :data:`~lensmass.core.ring_confidence.CONFIDENT_COVERAGE` of them at least (more than one compact image: a
lone arc, compact and round enough, is itself such a blob, and what is left once it is taken away is not the ring).
The thresholds were set on stress tuning seeds 910000-910699 and our generator's 915000 (h28b); the blob search
follows :mod:`lensmass.core.companion_light`'s (which keeps only the brightest blob, often a field galaxy or a star
farther out).
"""

from __future__ import annotations

from typing import Callable

import numpy as np
from scipy.ndimage import gaussian_filter

from lensmass.core.companion_light import fit_companion, ring_light_at_blob
from lensmass.core.lenslight import PSF_SIGMA_MIN_PIX, fit_lens_light
from lensmass.core.peak_finding import local_peaks
from lensmass.core.ring_confidence import CONFIDENT_COVERAGE
from lensmass.core.ring_result import RingResult

#: A blob is a candidate when its PSF-smoothed residual peak is this many noise sigma.
MIN_SNR = 10.0
#: Candidates lie at least this many seeing FWHM from the lens centre...
MIN_DISTANCE_FWHM = 1.5
#: ... and no nearer the centre than this share of the first answer's radius (the neighbour lies outside the ring).
MIN_DISTANCE_OF_RING = 0.9
#: At most this many candidate blobs are fitted, brightest first.
MAX_BLOBS = 2
#: Candidates lie at most this many seeing FWHM outside the first answer's radius.
REACH_FWHM = 3.0
#: Largest ratio of the blob's tangential to radial extent (square root of the second moments' ratio).
MAX_TANGENTIAL_STRETCH = 1.4
#: Largest half-light radius of the blob, in seeing FWHM.
MAX_RE_FWHM = 1.5
#: ... or this share of its distance from the lens.
MAX_RE_OF_DISTANCE = 0.3
#: How every note of a subtracted galaxy ends, this module's and :mod:`lensmass.core.companion_pass`'s ("... was
#: fitted as a (second) Sersic and subtracted."): :func:`subtraction_notes` finds them by it.
SUBTRACTED_END = "Sersic and subtracted."
#: How the note of a subtracted neighbour begins (carried over to later lens-light fits by :func:`subtraction_notes`).
NOTE_START = "A neighbour galaxy joined to the lens's light"
#: The lens-light fit's PSF FWHM at its lower bound (pixels): the seeing was not measured, and a lensed arc's own
#: compact image passed the blob tests in its place (tests/core/test_ring_interval.py's lone arc, subtracted as a
#: "neighbour" at 1.3 theta_E until this guard).
PSF_FWHM_FLOOR_PIX = 1.01 * 2 * np.sqrt(2 * np.log(2)) * PSF_SIGMA_MIN_PIX
#: Largest azimuthal-mean residual at the blob's distance (the blob left out), as a share of the ring's peak.
MAX_RING_SHARE = 0.5


def round_blobs(residual: np.ndarray, cx: float, cy: float, fwhm: float, noise: float, r_min: float,
                r_max: float) -> np.ndarray:
    """Peaks (x, y, value) of the PSF-smoothed ``residual`` above :data:`MIN_SNR` between ``r_min`` and ``r_max``
    pixels of the centre, brightest first (searched in a box around the lens only)."""
    s = fwhm / 2.3548
    reach = int(np.ceil(r_max + 4 * s)) + 1
    ny, nx = residual.shape
    xa, xb = max(0, int(cx) - reach), min(nx, int(cx) + reach + 2)
    ya, yb = max(0, int(cy) - reach), min(ny, int(cy) + reach + 2)
    box = np.asarray(residual[ya:yb, xa:xb], float)
    smooth = gaussian_filter(np.nan_to_num(box), s)
    smooth_noise = noise / (2 * np.sqrt(np.pi) * s)  # white noise smoothed by a unit-area Gaussian of sigma s
    yy, xx = np.mgrid[ya:yb, xa:xb]
    d = np.hypot(xx - cx, yy - cy)
    valid = (d >= r_min) & (d <= r_max) & np.isfinite(box)
    peaks = local_peaks(smooth, threshold=MIN_SNR * smooth_noise, radius_pix=max(1, int(fwhm)), max_peaks=MAX_BLOBS,
                        valid=valid)
    return peaks + np.array([xa, ya, 0.0]) if len(peaks) else peaks


def subtract_inner_neighbour(img, light, first: RingResult, rmin: float, rmax: float, n_sectors: int, should_stop,
                             ring_search: Callable[..., RingResult]):
    """``img``, ``light`` and ``first``, or, when a round compact blob outside the first answer's ring passes the
    module's tests, the image less its Sersic model, the lens light refitted on it and the search of its residual."""
    if not (first.found and light.ok and np.isfinite(light.psf_fwhm_pix) and light.noise_sigma > 0):
        return img, light, first
    if light.psf_fwhm_pix <= PSF_FWHM_FLOOR_PIX:  # no measured seeing: "compact" and "round" mean nothing
        return img, light, first
    fwhm, cx, cy = light.psf_fwhm_pix, light.center_x, light.center_y
    r_min = max(MIN_DISTANCE_FWHM * fwhm, MIN_DISTANCE_OF_RING * first.radius_pix)
    r_max = min(light.fit_radius_pix, rmax, first.radius_pix + REACH_FWHM * fwhm)
    if r_min >= r_max:
        return img, light, first
    ring_peak = float(np.interp(first.radius_pix, first.profile_radius_pix, first.profile))
    for x0, y0, _ in round_blobs(light.residual, cx, cy, fwhm, light.noise_sigma, r_min, r_max):
        at_blob, _beyond = ring_light_at_blob(light.residual, (x0, y0), cx, cy, fwhm, r_max)
        if not at_blob < MAX_RING_SHARE * ring_peak:
            continue
        if tangential_stretch(light.residual, x0, y0, cx, cy, fwhm) > MAX_TANGENTIAL_STRETCH:
            continue
        comp = fit_companion(light.residual, cx, cy, fwhm, light.noise_sigma, light.fit_radius_pix, at=(x0, y0),
                             judge=False)
        if comp is None or comp.r_eff_pix > max(MAX_RE_FWHM * fwhm, MAX_RE_OF_DISTANCE * comp.distance_pix):
            continue
        less = img - comp.model
        refit = fit_lens_light(less, cx, cy, fit_radius_pix=light.fit_radius_pix, initial=light,
                               should_stop=should_stop)
        if not refit.ok:
            return img, light, first
        note = (f"{NOTE_START} (at {comp.x:.1f}, {comp.y:.1f}; R_e "
                f"{comp.r_eff_pix:.1f} pixels) was fitted as a {SUBTRACTED_END}")
        refit.notes.append(note)
        again = ring_search(refit.residual, refit.center_x, refit.center_y, rmin, rmax, n_sectors, refit,
                            list(refit.notes), None, should_stop, elliptical=False)
        if not (again.found and again.radius_pix + refit.psf_fwhm_pix <= comp.distance_pix
                and again.coverage >= max(first.coverage, CONFIDENT_COVERAGE)):
            return img, light, first
        return less, refit, again
    return img, light, first


def subtraction_notes(light) -> list[str]:
    """The notes of ``light`` saying a neighbour was subtracted, by this module or by
    :mod:`lensmass.core.companion_pass` (a refit of the lens light starts its own notes; the answer must still name
    every model taken off the image it searched)."""
    return [n for n in light.notes if n.startswith(NOTE_START) or n.endswith(SUBTRACTED_END)]


def tangential_stretch(residual: np.ndarray, x0: float, y0: float, cx: float, cy: float, fwhm: float) -> float:
    """Square root of the ratio of the blob's second moments along the tangent and along the radius (seen from the
    lens centre ``cx, cy``), of the positive ``residual`` under a Gaussian window of sigma one ``fwhm`` about
    ``(x0, y0)``: 1 for a round blob, above 1 for one drawn out along the tangent as an arc is."""
    half = int(np.ceil(3 * fwhm)) + 1
    ny, nx = residual.shape
    xa, xb = max(0, int(x0) - half), min(nx, int(x0) + half + 2)
    ya, yb = max(0, int(y0) - half), min(ny, int(y0) + half + 2)
    yy, xx = np.mgrid[ya:yb, xa:xb]
    dx, dy = xx - x0, yy - y0
    w = np.clip(np.nan_to_num(np.asarray(residual[ya:yb, xa:xb], float)), 0, None)
    w = w * np.exp(-0.5 * (dx * dx + dy * dy) / fwhm**2)
    phi = np.arctan2(y0 - cy, x0 - cx)
    rad = dx * np.cos(phi) + dy * np.sin(phi)
    tan = -dx * np.sin(phi) + dy * np.cos(phi)
    m_rr, m_tt = float(np.sum(w * rad * rad)), float(np.sum(w * tan * tan))
    return float(np.sqrt(m_tt / m_rr)) if m_rr > 0 else float("inf")
