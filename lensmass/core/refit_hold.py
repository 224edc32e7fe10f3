"""Which first-pass answers the ring-masked lens-light refit may not move.

The refit (:func:`lensmass.core.ringfinder._two_pass_search`) masks a whole annulus about the first answer
(:func:`lensmass.core.ring_sectors.ring_pixels`), whether that answer is a ring or arcs. With the annulus masked,
one Sersic profile is free to leave light under it that it cannot follow (a disc's, a PSF halo's), and that light
merges with the lensed light all round and moves its peak. The FITS route therefore keeps a first-pass ring that the
refit moved by more than :data:`lensmass.core.ringfinder.REFIT_MAX_MOVE`; arcs seen in at least
:data:`NEAR_RING_COVERAGE` of the directions, all but a ring, are kept the same way. Arcs seen in fewer directions
(compact images, a single arc) keep the refit's answer, which de-biases them.

Measured (h26a, paired with main e3dab55 field by field): stress fields of benchmarks/stress_fields.py, hard rings
(a neighbour or a star, theta_E >= 2.5 FWHM) within 5%, tuning seeds 855000-855699 (ring kinds) 124 -> 127 of 165
(+4 -1), check seeds 858000-858379 (all kinds) 48 -> 52 of 63 (+4 -0), all lenses there +8 -2, inside 1 / 2 sigma
75.7% / 92.5% -> 77.6% / 92.9%, check seeds 858380-858729 (ring kinds) 75 -> 74 of 92 (+0 -1); lensmass.core.realistic_fields seeds 857000 (200 lenses, 200 non-lenses) unchanged
(within 5% +1 -1, confident non-lenses 2 -> 2). Threshold (tuning hard rings whose first-pass arcs the refit moved by
more than 2%): seen in half the directions or more, the first answer was right and main's final wrong in 5 of 13, the
reverse in 1; from 35% of the directions up, 6 and 5 of 24.
"""
from __future__ import annotations

from lensmass.core.ring_result import RingResult

#: Share of the directions in which first-pass arcs are seen from which the refit may not move them more than a ring
#: (half the directions; :data:`lensmass.core.ring_confidence.RING_COVERAGE` 0.6 calls a ring).
NEAR_RING_COVERAGE = 0.5


def arcs_hold_refit(first: RingResult) -> bool:
    """``first`` is arcs (not a ring) seen in at least :data:`NEAR_RING_COVERAGE` of the directions: the refit's move
    of them is its misfit, as for a ring (module docstring)."""
    return bool(first.found and first.kind != "ring" and first.coverage >= NEAR_RING_COVERAGE)
