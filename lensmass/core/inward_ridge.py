"""A candidate's ridge that left its profile peak for the lens core: the measurement inside the peak's basin replaces it.

When a candidate's ridge leaves its peak's basin (:mod:`lensmass.core.peak_extent`), the candidate is measured again
inside the basin and both measurements go to the candidate choice (:func:`lensmass.core.ring_shapes._choose`). A
ridge that left for a radius under :data:`CORE_SHARE` of the basin measurement's ran down to the lens core, where the
lens-light model's mismatch (a bulge+disc lens fitted with one Sersic, a sharp PSF core) leaves a residual falling
steadily outwards. That residual is no candidate of its own (the search keeps only prominent peaks), but measured in
place of the ring's peak it is seen in most directions and outranked the ring seen all round at the peak (h28g,
stress tuning seeds 947688 and 948066: "a ring" at 0.24-0.25 theta_E beside the basin's ring at 1.04-1.05 theta_E,
seen in 62-83% of the directions; the ridges that left inward all landed at 0.16-0.32 of the basin's radius). So the
basin measurement, a ring, replaces such a first measurement instead of joining it. A ridge that left outwards (a
star's or neighbour's brighter peak past the ring) is left to the usual choice.
"""

from __future__ import annotations

from lensmass.core.ring_result import RingResult

#: A first measurement under this share of the basin measurement's radius left the peak for the lens core (h28g: the
#: inward departures on stress tuning seeds 947000-948399 landed at 0.16-0.32; outward ones at 1.2 and beyond).
CORE_SHARE = 0.5


def left_for_core(first: RingResult, basin: RingResult) -> bool:
    """``first``, a candidate measured where its ridge left the peak, lies under :data:`CORE_SHARE` of the radius of
    ``basin``, the same candidate measured inside the peak's basin and found as a ring.

    >>> import numpy as np
    >>> def at(r, found=True, kind="ring"):
    ...     e = np.array([])
    ...     return RingResult(found, False, kind, r, 0.1, 9.0, 0.9, 0.0, 0.0, 1.0, 0.0, 2.0, e, e, e, e, e, 1.0, None,
    ...                       None, "", [])
    >>> left_for_core(at(4.0), at(16.0)), left_for_core(at(19.0), at(16.0)), left_for_core(at(4.0), at(16.0, kind="arcs"))
    (True, False, False)
    """
    return bool(basin.found and basin.kind == "ring" and first.radius_pix < CORE_SHARE * basin.radius_pix)
