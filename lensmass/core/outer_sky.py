"""The sky level of a lens-subtracted image beyond the lens-light fit, measured there.

The lens-light fit (:func:`lensmass.core.lenslight.fit_lens_light`) fits its Sersic profile and a sky level inside
its fit radius only, where the sky trades against the profile's wings (a steeper or shallower profile with a lower or
higher sky fits as well), and its model is an extrapolation beyond. A sky a fraction of a noise sigma off lifts (or
sinks) the whole residual beyond the fit radius: a plateau tens of pixels wide on which a noise bump reads as a ring
of many sigma seen in every direction. Beyond the fit radius the sky is measured directly, as the median of the
residual there (a ring or arcs are a minority of those pixels; common practice for a local sky), and taken off,
from nothing at the fit radius to all of it :data:`RAMP_SHARE` of the fit radius (at least :data:`RAMP_MIN_PIX`)
farther out.
"""
from __future__ import annotations

import numpy as np

#: The sky beyond the fit is taken off over a ramp this share of the fit radius wide...
RAMP_SHARE = 0.25
#: ... and at least this many pixels.
RAMP_MIN_PIX = 5.0
#: Fewest finite pixels beyond the ramp for a sky level.
MIN_PIXELS = 500
#: A level below this many of its errors (noise sigma times the correlation factor over sqrt(pixels)) is left alone.
MIN_SIGNIFICANCE = 3.0


def relevel_outer_sky(residual: np.ndarray, cx: float, cy: float, fit_radius_pix: float, noise_sigma: float,
                      correlation: float = 1.0) -> np.ndarray:
    """``residual`` with the median level of its pixels beyond the fit radius plus the ramp taken off outside the
    fit radius (ramped in linearly), when that level is significant; else ``residual`` itself.

    Examples
    --------
    >>> yy, xx = np.mgrid[0:121, 0:121]
    >>> r = np.hypot(xx - 60, yy - 60)
    >>> res = np.random.default_rng(1).normal(0, 1, r.shape) + 0.5 * (r > 30)   # a sky 0.5 sigma off beyond 30 px
    >>> out = relevel_outer_sky(res, 60, 60, 30.0, 1.0)
    >>> abs(float(np.median(out[r > 40]))) < 0.05, bool(np.array_equal(out[r < 30], res[r < 30]))
    (True, True)
    """
    rf = float(fit_radius_pix)
    if not (np.isfinite(rf) and rf > 0 and np.isfinite(noise_sigma) and noise_sigma > 0):
        return residual
    ramp = max(RAMP_MIN_PIX, RAMP_SHARE * rf)
    yy, xx = np.indices(residual.shape)
    r = np.hypot(xx - cx, yy - cy)
    outer = residual[(r > rf + ramp) & np.isfinite(residual)]
    if outer.size < MIN_PIXELS:
        return residual
    level = float(np.median(outer))
    if abs(level) < MIN_SIGNIFICANCE * 1.2533 * noise_sigma * max(correlation, 1.0) / np.sqrt(outer.size):
        return residual
    return residual - level * np.clip((r - rf) / ramp, 0.0, 1.0)
