"""The basin of one peak of the ring finder's radial profile: the bins between the valleys that part it from the
nearest brighter bins, so that a candidate's ridge is not measured on a brighter peak beside it.

A bright star or neighbour left unmasked beside a ring (its segment joined to the ring's light, so the cutout masks
took it for an arc or for part of the lens) stands as a brighter peak of the azimuthal mean profile a few seeing
widths past the ring. The ridge of a candidate is fitted in a window of twice its width either side
(:func:`lensmass.core.ridge.ridge_peak`), which reaches that peak: the ring's candidate was measured at the star's
radius, in a few per cent of the directions, and the ring seen all round in the residual was answered "no convincing
ring" (h25c, stress tuning seeds 843002 and 843581: stars at 1.6-1.7 theta_E). When the ridge leaves its peak's basin
(bounded at the lowest point between the peak and the nearer side of a brighter one, as the bases of
:func:`scipy.signal.peak_prominences` are, but at the profile's end where no bin is brighter, where scipy takes the
lowest bin), the candidate is measured again inside the basin, and that measurement
joins the candidates beside the first one when it is a ring or the first found nothing
(:func:`lensmass.core.ringfinder._search`; arcs on a basin cut at a neighbour's rising wing replaced the ring in
tests/core/test_neighbour_outside_ring.py, h25f). A ridge that stays in its basin is left as it was.
"""

from __future__ import annotations

import numpy as np


def peak_basin(profile: np.ndarray, k: int) -> tuple[int, int]:
    """Indices ``lo``, ``hi`` (inclusive) about ``k``: each side ends at the lowest bin between ``k`` and the first
    bin brighter than ``profile[k]`` on that side, or at the profile's end when none is brighter.

    >>> peak_basin(np.array([12, 1, 4, 10, 6, 5.5, 8, 20, 3, 0.0]), 3)
    (1, 5)
    >>> peak_basin(np.array([0, 1, 4, 10, 6, 5.5, 8, 9, 3, 0.0]), 3)
    (0, 9)
    """
    p = np.asarray(profile, float)
    lo, hi = 0, p.size - 1
    right = np.flatnonzero(p[k + 1:] > p[k])
    if right.size:
        j = k + 1 + int(right[0])
        hi = k + int(np.argmin(p[k:j + 1]))
    left = np.flatnonzero(p[:k] > p[k])
    if left.size:
        j = int(left[-1])
        lo = j + int(np.argmin(p[j:k + 1]))
    return lo, hi

