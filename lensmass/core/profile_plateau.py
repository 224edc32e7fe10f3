"""A profile peak on a plateau is no ring: its significance is how far it stands above the light outside it.

A sky level left in the cutout (a pedestal or plane measured a fraction of a noise sigma off), or a lens-light model
whose wings fall short, lifts the azimuthal profile over tens of pixels; on that plateau a bump of the noise is a
profile peak whose level, in the profile's small error over so many pixels, reads as a ring of many sigma seen in
every direction. A lensed ring is as narrow as the seeing and its source allow, and outside it the profile falls
back to the sky (common practice). A peak whose outer base (the lowest point of the profile between it and the next
higher peak outward, or the end of the profile: scipy.signal.peak_prominences' right base) stays above
:data:`PLATEAU_BASE_SHARE` of its level is scored by its height above that base instead of its level.
"""
from __future__ import annotations

import numpy as np
from scipy.signal import peak_prominences

#: Outer base, as a share of the peak's level, from which a profile peak stands on a plateau.
PLATEAU_BASE_SHARE = 0.5


def plateau_score(score: float, profile: np.ndarray, err: np.ndarray, k: int) -> float:
    """The significance of the peak ``k`` of the smoothed ``profile`` (error ``err``): ``score`` (its level over its
    error), or, when its outer base stays above :data:`PLATEAU_BASE_SHARE` of its level (a plateau), the smaller of
    that and its height above the outer base over ``err[k]``.

    Examples
    --------
    >>> r = np.arange(100.0)
    >>> ring = np.exp(-0.5 * ((r - 12) / 1.5) ** 2)
    >>> plateau = 0.5 * (r > 35) + 0.2 * np.exp(-0.5 * ((r - 70) / 2) ** 2)
    >>> err = np.full(100, 0.05)
    >>> round(plateau_score(14.0, ring + plateau, err, 70), 1)  # level 0.7, 0.2 above its outer base
    4.0
    >>> plateau_score(20.0, ring + plateau, err, 12)  # the ring falls to the sky outside it
    20.0
    """
    p = np.nan_to_num(np.asarray(profile, float))
    level = p[k]
    if not (np.isfinite(level) and level > 0 and np.isfinite(err[k]) and err[k] > 0):
        return float(score)
    _, _, right = peak_prominences(p, [k])
    base = p[int(right[0])]
    if base <= PLATEAU_BASE_SHARE * level:
        return float(score)
    return float(min(score, (level - base) / err[k]))
