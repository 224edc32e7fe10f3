"""The ring finder's companion pass: a galaxy on the lens's light, or a neighbour's light first taken for arcs,
fitted as a second Sersic and subtracted before the ring is searched again.

The fit itself is :mod:`lensmass.core.companion_light`; this module decides when to try it and whether the new
search's ring is kept (:func:`companion_pass`, called by :func:`lensmass.core.ringfinder._two_pass_search` with the
finder's own ``_search`` passed in, as :mod:`lensmass.core.ring_pictures` is).
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from lensmass.core.companion_light import companion_candidate, fit_companion, ring_light_at_blob
from lensmass.core.core_residual import unresolved_inward
from lensmass.core.inner_neighbour import SUBTRACTED_END
from lensmass.core.lenslight import fit_lens_light
from lensmass.core.ring_confidence import CONFIDENT_COVERAGE, RING_COVERAGE
from lensmass.core.ring_result import RingResult

#: Rounds of refitting the lens with the companion subtracted and the companion on the lens's residual.
COMPANION_ROUNDS = 1
#: Largest azimuthal-mean residual at the companion's distance, as a share of that on the ring found past it.
COMPANION_RING_SHARE = 0.5
#: Smallest radius, in seeing FWHM, of a ring found inside a blob the first search took for arcs.
INSIDE_MIN_FWHM = 2.0
#: Smallest share of the directions in which that ring must be seen when the first answer was arcs away from the blob.
INSIDE_RING_COVERAGE = 0.5
#: Smallest inward move, in seeing FWHM, from the first answer of a ring found a FWHM inside the companion.
INWARD_MIN_FWHM = 0.5
#: Least distance, in seeing FWHM, past the companion of the ring found once it is subtracted, when the first search took
#: the companion's blob for arcs (h33c, stress tuning seeds 1035151 and 1035200: arcs at 0.92 and 0.85 theta_E on the
#: blob, rings at 1.00 found 1.0 FWHM past it but under a FWHM past those arcs).
TAKEN_PAST_FWHM = 0.75
#: Largest distance, in seeing FWHM, of a blob outside the first answer that is fitted as a neighbour pulling it out.
NEAR_OUTSIDE_FWHM = 3.0


def companion_pass(img, light, first, rmin, rmax, n_sectors, should_stop, ring_search: Callable[..., RingResult]):
    """``img``, ``light`` and ``first``, or, when a companion galaxy overlaps the lens
    (:func:`~lensmass.core.companion_light.fit_companion`), the image less the companion's model, the lens light
    refitted on it and the search of its residual. The companion is kept only when that search's ring lies a
    seeing FWHM past both the companion and the first answer, and the azimuthal-mean residual at the companion's
    distance is under :data:`COMPANION_RING_SHARE` of that on the ring (a compact blob on the ring may be a knot of
    it, and a piece of an arc leaves the rest of the arc at its distance). The same fit is tried for a blob the first
    search took for arcs (:func:`_answer_at_blob`: a neighbour's light left in the lens's segment, outside the ring),
    kept when the ring then found lies a FWHM inside the blob and those arcs, :data:`INSIDE_MIN_FWHM` FWHM out or
    more, seen in more directions, under the same light share, and not its counter-image (:func:`_counter_image_of`)
    (h22a, stress tuning seeds 655247 and 655386: arcs at 1.67 and 1.82 theta_E, a star's wing and a neighbour's,
    now rings at 0.97 and 1.04). Arcs at another distance than the blob (on the tuning seeds, its wing's inner side,
    1-2 FWHM nearer the lens than its fitted centre) give way the same way to a ring seen in
    :data:`INSIDE_RING_COVERAGE` of the directions or more (h25a, stress tuning seeds 835386 and 835441: 1.32 and 1.25 theta_E, now 1.03 and 1.00).
    A ring found a FWHM inside the companion and :data:`INWARD_MIN_FWHM` or more inside the first answer (or where
    the first search found none) is kept too, under the same light share (:func:`_pulled_out`)."""
    blob = companion_candidate(light.residual, light.center_x, light.center_y, light.psf_fwhm_pix,
                               light.noise_sigma, light.fit_radius_pix)
    if blob is None:
        return img, light, first
    at_blob, beyond = ring_light_at_blob(light.residual, blob, light.center_x, light.center_y, light.psf_fwhm_pix,
                                         min(rmax, light.fit_radius_pix))
    overlapping = at_blob < COMPANION_RING_SHARE * beyond  # before the costly fits: a knot of the ring is left alone
    blob_taken = _answer_at_blob(first, blob, light)
    near = not (overlapping or blob_taken) and _just_outside(first, blob, light)
    if not (overlapping or blob_taken or near):
        return img, light, first
    comp = fit_companion(light.residual, light.center_x, light.center_y, light.psf_fwhm_pix, light.noise_sigma,
                         light.fit_radius_pix, at=blob, judge=False)
    refit = light
    for _ in range(COMPANION_ROUNDS):  # the lens and the companion fitted together, by alternation
        if comp is None:
            return img, light, first
        refit = fit_lens_light(img - comp.model, light.center_x, light.center_y, fit_radius_pix=light.fit_radius_pix,
                               initial=refit, should_stop=should_stop)
        if not refit.ok:
            return img, light, first
        comp = fit_companion(img - refit.model, refit.center_x, refit.center_y, refit.psf_fwhm_pix,
                             refit.noise_sigma, refit.fit_radius_pix, at=(comp.x, comp.y))
    if comp is None:
        return img, light, first
    less = img - comp.model
    refit = fit_lens_light(less, light.center_x, light.center_y, fit_radius_pix=light.fit_radius_pix, initial=refit,
                           should_stop=should_stop)
    if not refit.ok:
        return img, light, first
    note = (f"A companion galaxy overlapping the lens (at {comp.x:.1f}, {comp.y:.1f}; R_e {comp.r_eff_pix:.1f} pixels) "
            f"was fitted as a second {SUBTRACTED_END}")
    again = ring_search(refit.residual, refit.center_x, refit.center_y, rmin, rmax, n_sectors, refit,
                        list(refit.notes) + [note], None, should_stop, elliptical=False)
    if not again.found:
        return img, light, first
    # Kept only when the ring found moved out past the companion (the first search took the companion's light) and
    # the companion's distance carries little ring light once it is subtracted (a knot of the ring does).
    past = overlapping and (max(comp.distance_pix, first.radius_pix if first.found else 0.0) + refit.psf_fwhm_pix
                            <= again.radius_pix)
    # When those first arcs were the blob itself, their radius mixes the blob's and the ring's: the ring need only lie
    # outward of them and TAKEN_PAST_FWHM seeing widths past the companion (h33c).
    past = past or (overlapping and blob_taken and again.radius_pix > first.radius_pix
                    and comp.distance_pix + TAKEN_PAST_FWHM * refit.psf_fwhm_pix <= again.radius_pix)
    # Or the first search took the blob itself for arcs (a neighbour's own light left in the lens's segment, outside
    # the ring): the ring found a FWHM inside both the blob and those arcs, in more directions, is the lens's. (Inside
    # the blob only, h22a's stress tuning seed 655212 lost its ring at 1.02 theta_E: the blob was its own knot.)
    # That ring must lie INSIDE_MIN_FWHM seeing widths out: nearer, the lens's own residual replaces a real arc
    # taken away as a blob (h22a, check seed 657005, two arcs: 1.74 -> 0.46 theta_E through a ring at 1.2 FWHM).
    # A blob overlapping the lens's light whose wing lifted arcs elsewhere (h25a): the ring found once it is
    # subtracted must then be seen in INSIDE_RING_COVERAGE of the directions or more.
    arcs_first = first.found and first.coverage < RING_COVERAGE and again.coverage >= INSIDE_RING_COVERAGE
    inside = not near and ((blob_taken or arcs_first) and again.radius_pix + refit.psf_fwhm_pix <= min(comp.distance_pix, first.radius_pix)
              and again.coverage > first.coverage and again.radius_pix >= INSIDE_MIN_FWHM * refit.psf_fwhm_pix
              and not _counter_image_of(again, comp.x, comp.y))
    pulled = (not (past or inside) and _pulled_out(first, again, comp, refit.psf_fwhm_pix, rmin)
              and not (near and again.coverage < INSIDE_RING_COVERAGE))
    at_comp, at_ring = np.interp([comp.distance_pix, again.radius_pix], again.profile_radius_pix, again.profile)
    if not ((past or inside or pulled) and at_comp < COMPANION_RING_SHARE * at_ring):
        return img, light, first
    if pulled or not past:
        where = f"A galaxy just outside the ring (at {comp.x:.1f}, {comp.y:.1f}; R_e {comp.r_eff_pix:.1f} pixels), "
        outside = where + ("whose light had moved the first search's answer outward or hidden the ring, was fitted as "
                           f"a {SUBTRACTED_END}" if pulled else
                           f"its light left in the lens's and first taken for arcs, was fitted as a {SUBTRACTED_END}")
        again.warnings = [outside if w == note else w for w in again.warnings]
        note = outside
    refit.notes.append(note)
    return less, refit, again


def _pulled_out(first: RingResult, again: RingResult, comp, fwhm: float, rmin: float) -> bool:
    """The ring found with the companion subtracted lies a seeing FWHM inside the companion, INSIDE_MIN_FWHM FWHM
    out or more, and INWARD_MIN_FWHM or more inside the first answer (or the first search found none, or only the lens
    core's residual: an answer whose band reaches inside the search's inner radius ``rmin``,
    :func:`~lensmass.core.core_residual.unresolved_inward`; h32b, stress tuning seed 1016553: 0.18 -> 1.01 theta_E),
    and is not the counter-image of a lensed image at the companion (:func:`_counter_image_of`): the companion's wing lifted the
    first search's profile on its side, pulling its peak outward (or hid the ring under a wing taken for the lens's
    light). (h28a, stress tuning seeds 903000-903699, ring kinds: 11 answers changed, 6 brought within 5% (903288:
    2.04 -> 1.04 theta_E, 903603: 1.64 -> 1.02), none lost; the ring found need not be seen in more directions than
    the first answer: in 2 of the 6 it was seen in fewer, in 1 in as many.)"""
    inward = (not first.found or unresolved_inward(first, rmin)
              or first.radius_pix - again.radius_pix >= INWARD_MIN_FWHM * fwhm)
    return bool(inward and again.radius_pix + fwhm <= comp.distance_pix and again.radius_pix >= INSIDE_MIN_FWHM * fwhm
                and not _counter_image_of(again, comp.x, comp.y))


def _answer_at_blob(first: RingResult, blob: tuple[float, float], light) -> bool:
    """The first search's answer is arcs (seen in under RING_COVERAGE of the directions) at the residual blob's
    distance from the lens, within a seeing FWHM: it took the blob's light for a lensed image."""
    dist = float(np.hypot(blob[0] - light.center_x, blob[1] - light.center_y))
    return bool(first.found and first.coverage < RING_COVERAGE
                and abs(first.radius_pix - dist) <= light.psf_fwhm_pix)


def _counter_image_of(inner: RingResult, x: float, y: float) -> bool:
    """``inner`` is one compact image (seen in under CONFIDENT_COVERAGE of the directions; the test's faint ring,
    partly seen, is in 58%) whose ridge points lie, on the mean, on the far side of the lens from (x, y): the
    counter-image of a lensed image there (a source off the axis gives an
    outer image and an inner one across the lens, common practice), so the blob at (x, y) was an arc, not a galaxy.
    (h22a, our generator's arcs with a counter-image, sample 656000: 0.97 and 1.05 theta_E read as 0.46 and 0.37.)"""
    if inner.coverage >= CONFIDENT_COVERAGE or not len(inner.points_x):  # one compact image, not a partial ring
        return False
    to_blob = np.arctan2(y - inner.center_y, x - inner.center_x)
    ang = np.arctan2(np.asarray(inner.points_y) - inner.center_y, np.asarray(inner.points_x) - inner.center_x)
    return bool(np.mean(np.cos(ang - to_blob)) < 0.0)


def _just_outside(first: RingResult, blob: tuple[float, float], light) -> bool:
    """The residual blob lies outside the first search's answer, from a seeing FWHM inside it to
    :data:`NEAR_OUTSIDE_FWHM` FWHM past it: a neighbour whose wing may have pulled that answer outward (kept only
    through :func:`_pulled_out`, its ring then seen in INSIDE_RING_COVERAGE of the directions or more). (h29f,
    stress tuning seed 987006: 1.17 -> 0.985 theta_E; 987064 and 987242, rings seen in 21% and 46% of the
    directions, would have gone from 0.98 and 0.985 to 0.85 and 0.92 without that condition.)"""
    dist = float(np.hypot(blob[0] - light.center_x, blob[1] - light.center_y))
    return bool(first.found and -light.psf_fwhm_pix <= dist - first.radius_pix <= NEAR_OUTSIDE_FWHM * light.psf_fwhm_pix)
