"""The lens core's residual against a resolved ring: which of two answers of the ring finder's passes is the
lens-light model's mismatch at the centre.

A ring seen within :data:`CORE_FWHM` seeing FWHM of the lens centre is not resolved from the galaxy's core, where
the lens-light model's mismatch (a bulge+disc lens fitted with one Sersic, a PSF misfit) leaves a residual seen in
every direction. Such an answer does not replace a resolved ring another pass found (:func:`core_replaces_ring`),
and a resolved ring a better lens-light model reveals replaces it (:func:`ring_replaces_core`). That the light of
a galaxy's core is smeared over about a seeing FWHM is common practice (the PSF's width sets what is resolved).
The fitted FWHM can be far off (at its lower bound on a space PSF, or spread over the ring): an answer whose own
half-maximum band reaches inside the search's inner radius (:func:`unresolved_inward`) is not resolved from the
centre whatever the fit says, and a refit's answer so placed does not replace a first answer that is resolved, nor
stops a refit's resolved ring from replacing a first answer so placed (:func:`refit_answer_kept`); a final answer
so placed is not confident and its message says so (:func:`flag_core_answer`).
"""

from __future__ import annotations

import numpy as np

from lensmass.core.ring_confidence import CONFIDENT_SCORE, RING_COVERAGE
from lensmass.core.ring_message import CHECK_BY_EYE
from lensmass.core.ring_result import RingResult

#: An answer closer to the lens centre than this many fitted seeing FWHM lies in the lens core (h23b, stress tuning
#: seeds 685000-685699: the core residuals that won were at 0.9-1.5 fitted FWHM, 685092, 685231, 685378).
CORE_FWHM = 1.5
#: A ring is resolved from the core at this many fitted seeing FWHM or more (the issue's "hard rings" start at 2.5).
RESOLVED_FWHM = 2.0


def in_core(radius_pix: float, psf_fwhm_pix: float) -> bool:
    """``radius_pix`` lies within :data:`CORE_FWHM` seeing FWHM ``psf_fwhm_pix`` of the lens centre (False when
    the FWHM is unknown)."""
    return bool(psf_fwhm_pix > 0 and radius_pix < CORE_FWHM * psf_fwhm_pix)


def resolved(radius_pix: float, psf_fwhm_pix: float) -> bool:
    """``radius_pix`` is at least :data:`RESOLVED_FWHM` seeing FWHM ``psf_fwhm_pix`` (False when unknown)."""
    return bool(psf_fwhm_pix > 0 and radius_pix >= RESOLVED_FWHM * psf_fwhm_pix)


def unresolved_inward(answer: RingResult, rmin_pix: float, peak_pix: float | None = None) -> bool:
    """``answer``'s peak is not separated from the lens centre: its half-maximum band (radius -+ half its width in
    the azimuthal profile) starts inside ``rmin_pix``, the search's inner radius, so the profile there is above half
    the peak (a galaxy core's mismatch falling outwards, not a ring standing free of it). ``peak_pix``: the peak's
    radius when it is not the answer's (a lone arc's, whose answer is theta_E scaled from it).

    Examples
    --------
    A residual peaking at 3.6 pixels, 9 pixels wide, against a ring at 24 pixels, 6 wide (any object with the
    answer's attributes will do):

    >>> from types import SimpleNamespace
    >>> core = SimpleNamespace(found=True, radius_pix=3.6, ring_width_pix=9.0)
    >>> ring = SimpleNamespace(found=True, radius_pix=24.0, ring_width_pix=6.0)
    >>> unresolved_inward(core, 3.0), unresolved_inward(ring, 3.0)
    (True, False)
    """
    peak = answer.radius_pix if peak_pix is None else peak_pix
    return bool(answer.found and peak - 0.5 * answer.ring_width_pix < rmin_pix)


def refit_answer_kept(first: RingResult, second: RingResult, rmin_pix: float) -> bool | None:
    """Whether the refit's answer ``second`` replaces the first pass's ``first`` by where they lie against the lens
    centre (:func:`unresolved_inward`): False when ``second`` lies inside ``first`` and is not resolved from the
    centre while ``first`` is (a core residual moves the answer inwards; a broad band farther out is the ring's), True
    when ``first`` is not and ``second`` is a resolved ring (:data:`~lensmass.core.ring_confidence.RING_COVERAGE` of
    the directions) farther out, None (the usual rules decide) otherwise."""
    if not (first.found and second.found):
        return None
    first_core, second_core = unresolved_inward(first, rmin_pix), unresolved_inward(second, rmin_pix)
    if second_core and not first_core and second.radius_pix < first.radius_pix:
        return False
    if (first_core and not second_core and second.radius_pix > first.radius_pix
            and second.coverage >= RING_COVERAGE):
        return True
    return None


def flag_core_answer(result: RingResult, rmin_pix: float) -> RingResult:
    """Say so when the final answer's feature is not separated from the lens centre (:func:`unresolved_inward`; for a
    lone arc, the arc's own radius): it is more likely the lens-light model's residual at the core than a ring, so it
    is not confident and its message asks for a check by eye. The radius and its interval are left as measured.
    (Stress tuning seeds 1011000-1011599: the flag fell on 12 of 359 lens answers, all of them 0.14-0.79 of theta_E,
    and on 11 of 150 non-lens answers, none of them confident, six stated as rings with no warning; on no answer within
    5% of theta_E.)"""
    lone = result.lone_arc_radius_pix if np.isfinite(result.lone_arc_radius_pix) else None
    if not unresolved_inward(result, rmin_pix, lone) or CHECK_BY_EYE in result.message:
        return result
    result.confident = False
    result.warnings.append(
        f"The answer's azimuthal profile stays above half its peak down to the search's inner radius "
        f"({rmin_pix:.1f} pixels): it is not separated from the lens centre and may be the lens-light model's residual "
        "at the core rather than a ring; mark the arcs by hand, or give the lens centre.")
    result.message = (f"{result.message} It is not separated from the lens centre (it may be the lens light's "
                      f"residual): {CHECK_BY_EYE}")
    return result


def core_replaces_ring(first: RingResult, second: RingResult, psf_fwhm_pix: float) -> bool:
    """A later pass's answer ``second`` lies in the lens core while ``first`` is resolved from it: the later
    pass's lens-light fit lost its hold on the galaxy's centre, and ``second`` is that mismatch, not the ring."""
    return bool(first.found and second.found and resolved(first.radius_pix, psf_fwhm_pix)
                and in_core(second.radius_pix, psf_fwhm_pix))


def ring_replaces_core(core: RingResult, ring: RingResult, psf_fwhm_pix: float) -> bool:
    """``ring``, found after a better lens-light model, replaces ``core``, an answer in the lens core: it is resolved,
    seen as a ring (:data:`~lensmass.core.ring_confidence.RING_COVERAGE` of the directions) and surely real
    (:data:`~lensmass.core.ring_confidence.CONFIDENT_SCORE` sigma)."""
    return bool(core.found and ring.found and in_core(core.radius_pix, psf_fwhm_pix)
                and resolved(ring.radius_pix, psf_fwhm_pix) and ring.coverage >= RING_COVERAGE
                and ring.score >= CONFIDENT_SCORE)
