"""Does one Sersic leave light inside a ring? A cheap test before the ring finder's bulge+disc refit.

One Sersic profile fitted to a bulge inside a disc (or to a galaxy seen through a PSF with a halo) leaves a smooth
leftover that falls outward; where it reaches a ring it raises the ring's inner flank above its outer one and pulls
the ring's peak inward. The two-component refit (:func:`~lensmass.core.bulge_disc.bulge_and_disc`) that can take
that leftover away costs about as much as the rest of the finder, so narrow rings are offered it only when the
one-Sersic residual, averaged in circles about the ring's centre, shows the leftover: its mean on the ring's inner
flank exceeds that on its outer flank, or its mean between the core and the ring's inner flank exceeds that just
inside the flank (a profile falling outward toward the ring), in both cases by :data:`LEFTOVER_SIGMA` standard
errors of the two means (pixel noise over the square root of the pixel count) and by :data:`LEFTOVER_PEAK_SHARE`
of the ring's own mean height. Both are azimuthal averages of a residual, the usual radial-profile reading of a
model's misfit (common practice).
"""

from __future__ import annotations

import numpy as np

#: Both differences must exceed this many standard errors (3 sigma, common practice).
LEFTOVER_SIGMA = 3.0
#: ... and this share of the ring's mean height in the residual (a leftover able to move the ring's peak visibly).
LEFTOVER_PEAK_SHARE = 0.2


def leftover_inside_ring(residual: np.ndarray, center_x: float, center_y: float, radius_pix: float,
                         width_pix: float, psf_fwhm_pix: float, noise_sigma: float) -> bool:
    """True when the residual's azimuthal means show light left inside a ring of ``radius_pix`` and FWHM
    ``width_pix`` centred on (``center_x``, ``center_y``): the inner flank (``r - w`` to ``r - w/2``) above the
    outer one (``r + w/2`` to ``r + w``), or the interior (from ``max(FWHM, 0.3 r)``, ``s = max(2, 0.25 r)``
    pixels wide) above the band just inside the flank (``r - w/2 - s`` to ``r - w/2``) where the two do not overlap;
    by :data:`LEFTOVER_SIGMA` standard errors and :data:`LEFTOVER_PEAK_SHARE` of the ring's mean (``r +- w/4``).
    False for a ring whose inner flank (``r - w``) comes within a seeing FWHM of the centre, where the flanks read
    the blurred core's misfit rather than a disc's."""
    r, w = float(radius_pix), max(float(width_pix), 1.0)
    if not (np.isfinite(r) and r > 0 and np.isfinite(noise_sigma) and noise_sigma > 0):
        return False
    if r - w < psf_fwhm_pix:  # the inner flank within a seeing width of the centre reads the core's misfit
        return False
    sums, counts = _radial_sums(np.asarray(residual), center_x, center_y, int(r + 2 * w + 3))

    def mean(a: float, b: float) -> tuple[float, float]:
        lo = int(max(0.0, np.floor(a)))
        hi = int(max(np.ceil(b), lo + 1))
        n = max(float(counts[lo:hi].sum()), 1.0)
        return float(sums[lo:hi].sum() / n), float(noise_sigma / np.sqrt(n))

    peak, _ = mean(r - 0.25 * w, r + 0.25 * w)
    if not peak > 0:
        return False

    def above(first: tuple[float, float], second: tuple[float, float]) -> bool:
        diff = first[0] - second[0]
        return bool(diff > LEFTOVER_SIGMA * np.hypot(first[1], second[1]) and diff > LEFTOVER_PEAK_SHARE * peak)

    if above(mean(r - w, r - 0.5 * w), mean(r + 0.5 * w, r + w)):
        return True
    start, span = max(psf_fwhm_pix, 0.3 * r), max(2.0, 0.25 * r)
    flank = r - 0.5 * w
    return start + span <= flank - span and above(mean(start, start + span), mean(flank - span, flank))


def _radial_sums(image: np.ndarray, cx: float, cy: float, reach: int) -> tuple[np.ndarray, np.ndarray]:
    """Sums and counts of the finite pixels of ``image`` in 1-pixel circular bins about (cx, cy) out to ``reach``."""
    ny, nx = image.shape
    y0, y1 = max(0, int(cy - reach)), min(ny, int(cy + reach) + 1)
    x0, x1 = max(0, int(cx - reach)), min(nx, int(cx + reach) + 1)
    yy, xx = np.mgrid[y0:y1, x0:x1]
    rr = np.hypot(xx - cx, yy - cy)
    values = np.asarray(image[y0:y1, x0:x1], float)
    use = np.isfinite(values) & (rr < reach)
    bins = rr[use].astype(int)
    return (np.bincount(bins, values[use], minlength=reach + 1), np.bincount(bins, minlength=reach + 1))
