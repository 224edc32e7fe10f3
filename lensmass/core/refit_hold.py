"""Which first-pass answers the ring-masked lens-light refit may not move.

The refit (:func:`lensmass.core.ringfinder._two_pass_search`) masks a whole annulus about the first answer
(:func:`lensmass.core.ring_sectors.ring_pixels`), whether that answer is a ring or arcs. With the annulus masked,
one Sersic profile is free to leave light under it that it cannot follow (a disc's, a PSF halo's), and that light
merges with the lensed light all round and moves its peak. The FITS route therefore keeps a first-pass ring that the
refit moved by more than :data:`lensmass.core.ringfinder.REFIT_MAX_MOVE`; arcs seen in at least
:data:`NEAR_RING_COVERAGE` of the directions, all but a ring, are kept the same way. Arcs seen in fewer directions
(compact images, a single arc) keep the refit's answer, which de-biases them.

Measured (h26a, stress fields of benchmarks/stress_fields.py, tuning seeds 855000-855699, hard rings): on 125 hard
rings, first-pass arcs seen in >= 50% of the directions that the refit moved by more than 2% were right (within 5%)
before the refit in 7 of 10 and after the whole chain in 4 of 10; the refit's answer was mostly the arcs turned into a
ring 6-13% inward or outward.
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
