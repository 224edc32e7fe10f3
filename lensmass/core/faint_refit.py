"""A ring candidate too faint to report, looked at again with the lens light refitted around it.

The lens-light model is fitted to every pixel, the ring's included: a faint ring's light is partly taken into the
galaxy's model (its Sersic grows wider or flatter) and what is left of the ring in the residual falls under the
finder's significance threshold. The first pass only refits the lens light with the ring masked when it found a
ring; a candidate that stayed below the threshold is given the same refit here, and is reported only when the
refit's search finds it at the same radius, by the usual thresholds (no threshold is lowered), and then never as a
confident ring (the first fit did not see it).
"""
from __future__ import annotations

from typing import Callable

import numpy as np

from lensmass.core.lenslight import LensLightModel, fit_lens_light
from lensmass.core.progress import StopCallback
from lensmass.core.ring_confidence import RING_COVERAGE
from lensmass.core.ring_message import CHECK_BY_EYE, quote, weak_opening
from lensmass.core.ring_result import RingResult, answer_noun
from lensmass.core.ring_sectors import ring_pixels

# Only a ring seen all round (RING_COVERAGE of the directions) is given back: a fit made through the middle of a ring
# takes in light that is symmetric about the lens, whereas arcs on one side pull it little (and a non-lens's
# refitted residual gave arcs and a counter-image, stress tuning seed 893043).

#: The refit's ring must lie within this many of the candidate's widths (at least two pixels) of the candidate's
#: radius: a ring elsewhere is the refit's own leftover, not the candidate made visible.
SAME_RADIUS_WIDTHS = 1.0
#: Systematic fractional error of a ring given back by the refit: its radius rests on a mask placed by a candidate the
#: first fit did not confirm (the size of ringfinder.FIRST_PASS_SYSTEMATIC, main's error for a first-pass radius the
#: refit did not confirm; stress tuning seeds 891000-893999: rings given back at 0.95-1.10 of the truth).
REFIT_CANDIDATE_SYSTEMATIC = 0.05


def refit_under_candidate(img: np.ndarray, first: RingResult, light: LensLightModel, rmin: float, rmax: float,
                          n_sectors: int, should_stop: StopCallback,
                          search: Callable[..., RingResult]) -> tuple[RingResult, LensLightModel] | None:
    """(ring, light fit) from the lens light refitted with the unfound candidate ``first``'s annulus masked, or None
    when ``first`` holds no measured candidate, the refit fails, or its search does not find a ring at the
    candidate's radius seen all round (``search`` is the finder's profile search, :func:`lensmass.core.ringfinder._search`)."""
    if first.found or not light.ok or not (np.isfinite(first.radius_pix) and np.isfinite(first.ring_width_pix)):
        return None
    if first.radius_pix <= 0 or first.ring_width_pix <= 0:
        return None
    mask = ring_pixels(img.shape, first)
    light2 = fit_lens_light(img, light.center_x, light.center_y, mask=mask, fit_radius_pix=light.fit_radius_pix,
                            initial=light, should_stop=should_stop)
    if not light2.ok:
        return None
    second = search(light2.residual, light2.center_x, light2.center_y, rmin, rmax, n_sectors, light2,
                    list(light2.notes) + ["Lens light refitted with the faint ring candidate masked."], None,
                    should_stop, elliptical=False)
    near = abs(second.radius_pix - first.radius_pix) <= max(2.0, SAME_RADIUS_WIDTHS * first.ring_width_pix)
    all_round = second.kind == "ring" and second.coverage >= RING_COVERAGE
    return (second, light2) if second.found and near and all_round else None


def mark_refitted(ring: RingResult) -> RingResult:
    """``ring``, found only after the refit (:func:`refit_under_candidate`), as a weak candidate with a warning that
    says so: never confident, with :data:`REFIT_CANDIDATE_SYSTEMATIC` of its radius in its error."""
    if not ring.found:
        return ring
    ring.confident = False
    ring.radius_err_pix = float(np.hypot(ring.radius_err_pix, REFIT_CANDIDATE_SYSTEMATIC * ring.radius_pix))
    ring.message = quote(ring, f"{weak_opening(ring.kind, ring.score, ring.coverage)}, seen only after refitting the "
                               f"lens light with it masked: {CHECK_BY_EYE}")
    ring.warnings.append(f"{answer_noun(ring.kind)} below the significance threshold on the first lens-light fit: with "
                         "the candidate masked, the refitted lens light left it above (a faint ring's light goes into "
                         "a fit made through it).")
    return ring
