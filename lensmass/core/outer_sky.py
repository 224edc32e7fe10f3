"""The sky level of a lens-subtracted image beyond the lens-light fit, measured there.

The lens-light fit (:func:`lensmass.core.lenslight.fit_lens_light`) fits its Sersic profile and a sky level inside
its fit radius only, where the sky trades against the profile's wings (a steeper or shallower profile with a lower or
higher sky fits as well), and its model is an extrapolation beyond. A sky a fraction of a noise sigma off lifts (or
sinks) the whole residual beyond the fit radius: a plateau tens of pixels wide on which a noise bump reads as a ring
of many sigma seen in every direction. Beyond the fit radius the sky is measured directly, as the median of the
residual there (the median of the search's sector means: a ring or arcs are a minority of them; common practice
for a local sky), and taken off the profiles, from nothing at the fit radius to all of it :data:`RAMP_SHARE` of the
fit radius (at least :data:`RAMP_MIN_PIX`) farther out.
"""
from __future__ import annotations

import numpy as np

#: The sky beyond the fit is taken off over a ramp this share of the fit radius wide...
RAMP_SHARE = 0.25
#: ... and at least this many pixels.
RAMP_MIN_PIX = 5.0
#: Fewest finite pixels beyond the ramp for a sky level.
MIN_PIXELS = 500
#: A level below this many of its errors is left alone (the error of a median of n values: sqrt(pi / 2) = 1.2533
#: times the noise sigma over sqrt(n), common practice; correlated noise makes it larger, so a level near the
#: threshold may be taken off where it is not significant: a shift of a fraction of that error beyond the fit).
MIN_SIGNIFICANCE = 3.0


def outer_sky_offset(sums: np.ndarray, counts: np.ndarray, radii: np.ndarray, fit_radius_pix: float,
                     noise_sigma: float) -> np.ndarray | None:
    """The sky beyond the fit, read from the sector profiles of the search (``sums`` and ``counts`` of pixels per
    sector and radius bin): the median of the sector means beyond the fit radius plus the ramp, ramped in from the fit
    radius, as an offset per radius bin to take off each pixel; None when the level is not significant or there are
    too few pixels (no pixel is touched, so a large image costs nothing more).

    Examples
    --------
    >>> radii = np.arange(0.25, 80, 0.5)
    >>> counts = np.tile(np.maximum(np.round(2 * np.pi * radii * 0.5 / 24), 1), (24, 1))
    >>> sums = 0.5 * (radii > 30) * counts                          # a sky 0.5 sigma off beyond 30 px, no noise
    >>> off = outer_sky_offset(sums, counts, radii, 30.0, 1.0)
    >>> float(off[radii > 40].min()), float(off[radii < 30].max())
    (0.5, 0.0)
    """
    rf = float(fit_radius_pix)
    if not (np.isfinite(rf) and rf > 0 and np.isfinite(noise_sigma) and noise_sigma > 0):
        return None
    ramp = max(RAMP_MIN_PIX, RAMP_SHARE * rf)
    beyond = (radii > rf + ramp)[None, :] & (counts > 0)
    n = float(counts[beyond].sum())
    if n < MIN_PIXELS:
        return None
    level = float(np.median(sums[beyond] / counts[beyond]))
    if abs(level) < MIN_SIGNIFICANCE * 1.2533 * noise_sigma / np.sqrt(n):
        return None
    return level * np.clip((radii - rf) / ramp, 0.0, 1.0)
