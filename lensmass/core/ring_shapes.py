"""The ring finder following the ring's shape: elliptical annuli for a partial ring, a lone arc's radius
scaled to theta_E, an unpaired arc's calibrated interval, arc pairs, the SIE correction of an elongated ring, and their tuned constants. The search
itself is passed in by :mod:`lensmass.core.ringfinder`."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from lensmass.core.arc_directions import (LONE_ARC_DIRECTEDNESS, LONE_ARC_LIGHT_CONCENTRATION,
                                          LONE_ARC_LIGHT_MIN_DIRECTEDNESS, LONE_ARC_LIGHT_MIN_SNR, mean_direction)
from lensmass.core.counter_image import find_counter_image
from lensmass.core.elliptical_annuli import (ROUND_LIGHT, SIE_RIDGE_AXIS_RATIOS, mass_alignment_weight, ring_shape,
                                             sie_ring_axis_ratio, sie_ring_factor)
from lensmass.core.image_cross import find_image_cross
from lensmass.core.lone_arc import lone_arc_theta_e, lone_sigma_ratios, unpaired_sigma_ratios
from lensmass.core.ring_confidence import CONFIDENT_SCORE, RING_COVERAGE
from lensmass.core.ring_interval import PAIR_REASON, hold_shape
from lensmass.core.ring_message import CHECK_BY_EYE, RADIUS, STATED, STATED_BOUNDS, quote, weak_opening
from lensmass.core.ring_result import RingResult
from lensmass.core.ring_sectors import BIN_PIX, light_direction, unmasked_sector_share

#: Share of half the radius difference of an arc pair kept as a systematic error (ellipticity, shear).
PAIR_SYSTEMATIC = 0.3
#: Elliptical pass (:func:`_elliptical_pass`): the best shape's profile peak must be this many times more
#: prominent than the circle's, ...
ELLIPSE_GAIN = 1.15
#: ... its shape is sought among axis ratios of at least this, the ring of the most elongated SIE tabulated (mass
#: axis ratio 0.3; Kormann, Schneider & Bartelmann 1994): no lens makes its ring more elongated (see
#: :func:`_elliptical_pass`), ...
ELLIPSE_MIN_AXIS_RATIO = min(SIE_RIDGE_AXIS_RATIOS)
#: ... its elliptical radii are searched between these fractions of the circular candidate's radius, ...
ELLIPSE_RHO_SPAN = (0.5, 1.8)
#: ... and its radius may differ from the circular one by at most this fraction.
ELLIPSE_MAX_MOVE = 0.35
#: Smallest circular radius (pixels) for which a shape is sought (a smaller ring has too few pixels across).
ELLIPSE_MIN_RADIUS_PIX = 4.0
#: A candidate seen in this share of the directions is measured in circles only: its ridge points already follow
#: the ring all round, and the ellipse fitted to them gives its shape (the elliptical pass is for partial rings).
ELLIPSE_MAX_COVERAGE = 0.9
#: Candidates measured in the elliptical pass (it searches a narrow range of radii around one ring).
ELLIPSE_CANDIDATES = 2
#: Among candidates measuring one feature, significance counts up to this many sigma (:func:`_choose`; the finder's
#: cap for all candidates before h16a).
SAME_FEATURE_SCORE_CAP = 30.0
#: Mass axis ratios whose SIE rings are searched across the lens light's major axis (:func:`_across_light_pass`):
#: the elongated lenses (q < 0.6) the circular search sees in pieces; their rings' axis ratios are
#: :func:`~lensmass.core.elliptical_annuli.sie_ring_axis_ratio` of these (0.85 and 0.75).
ACROSS_LIGHT_MASS_AXIS_RATIOS = (0.6, 0.4)
#: ... whose answer replaces the circular one when it ranks at least as high (:func:`_strength`) and its significance
#: times coverage (:func:`_feature_strength`) is this many times the circular answer's.
ACROSS_LIGHT_GAIN = 1.1
#: Radii, as shares of the answer's radius, between which four images in a cross are sought (:func:`_image_cross`):
#: a cross's inner pair lies at 0.70-0.8 of its outer pair's radius (:mod:`lensmass.core.image_cross`), which the
#: circles may have measured with another object's light farther out; not inside this many seeing FWHM.
CROSS_RADIUS_SPAN = (0.45, 1.5)
CROSS_MIN_FWHM = 1.5
#: Share of an elongated ring's SIE shortfall (sqrt(a b) below theta_E, up to 5% at ring axis ratio 0.75) added to
#: its radius error (:func:`_sie_ring_correction`).
SIE_FACTOR_ERROR_SHARE = 0.5


def _follow_shape(best, res, cx, cy, rmin, rmax, n_sectors, light, warnings, should_stop, *,
                  ring_search: Callable[..., RingResult]) -> RingResult:
    """The FITS route's answer for the ring's shape: a partial ring re-measured in elliptical annuli
    (:func:`_elliptical_pass`), a lone arc's radius scaled to theta_E (:func:`_lone_arc`), another single arc's
    interval (:func:`_unpaired_arc`). (The grey picture route keeps its calibrated circular answers: with it,
    tests/core/test_colour_cutouts.py's square-root pictures had 7 of 12 hard rings within 5%, under the 8 it asks; the
    colour route runs the elliptical pass and the lone-arc rule itself, :func:`lensmass.core.ring_pictures._colour_search`.)
    ``ring_search`` is the finder's search
    (:func:`lensmass.core.ringfinder._search`, passed in: it calls this)."""
    if not best.found:
        return best
    shaped = _elliptical_pass(best, res, cx, cy, rmin, rmax, n_sectors, light, warnings, should_stop,
                              ring_search=ring_search)
    shaped = _across_light_pass(shaped, res, cx, cy, rmin, rmax, n_sectors, light, warnings, should_stop,
                                ring_search=ring_search)
    return _unpaired_arc(_lone_arc(_image_cross(shaped, res, rmin, light), n_sectors, by_light=True))


def _image_cross(best: RingResult, res, rmin: float, light) -> RingResult:
    """Four compact images in a cross around the lens (:func:`lensmass.core.image_cross.find_image_cross`, between
    :data:`CROSS_RADIUS_SPAN` times the answer's radius) replace an answer that is no ring (seen in under
    :data:`~lensmass.core.ring_confidence.RING_COVERAGE` of the directions) or a ring outside the images' radii by more
    than half its width (tests/core/test_false_rings.py's thin ring's own peaks at 15 pixels met it at 15.0x): the
    circles see a cross's outer pair, or one pair and another object's light, as arcs at one radius. The answer is a
    pair of image pairs, never confident. (h20b, stress fields, ring kinds, FITS route: hard rings within 5% on tuning
    seeds 625000-626049 69.2% -> 73.8% of 263, masses of axis ratio under 0.6 48.8% -> 62.5% of 80; check seeds
    628000-629049 75.0% -> 75.8% of 248; our generator unchanged.)"""
    if not best.found or light is None or not light.ok or not np.isfinite(best.radius_pix):
        return best
    lo = max(rmin, CROSS_RADIUS_SPAN[0] * best.radius_pix, CROSS_MIN_FWHM * light.psf_fwhm_pix)
    cross = find_image_cross(res, best.center_x, best.center_y, lo, CROSS_RADIUS_SPAN[1] * best.radius_pix,
                             light.psf_fwhm_pix, light.angle_deg, light.axis_ratio)
    if cross is None:
        return best
    half = 0.5 * best.ring_width_pix if np.isfinite(best.ring_width_pix) else 0.0
    if best.coverage >= RING_COVERAGE and cross.radius.min() - half <= best.radius_pix <= cross.radius.max() + half:
        return best  # a ring through the images (a ring's own brightness peaks pass as a cross too)
    best.radius_pix, best.radius_err_pix = cross.theta_e_pix, cross.theta_e_err_pix
    best.points_x, best.points_y = cross.x, cross.y
    best.kind, best.paired, best.confident = "arcs", True, False
    best.error_from_images = True  # the replaced candidate's ridge scatter and width say nothing of the cross
    best.axis_ratio, best.angle_deg = float(cross.inner_pix / cross.outer_pix), float(cross.outer_angle_deg % 180.0)
    best.message = quote(best, f"Four images in a cross around the lens, pairs at {cross.inner_pix:.2f} and "
                               f"{cross.outer_pix:.2f} pixels: theta_E = {STATED} pixels.")
    best.warnings.append("Four compact images in a cross around the lens (a compact source near the axis of an "
                         "elongated lens or of a lens in an external shear): theta_E is the middle between an SIE's "
                         "value (Kormann, Schneider & Bartelmann 1994: the geometric mean of the two pairs' radii, "
                         "scaled as far as the light's direction says the mass elongated it) and an isothermal sphere "
                         "with external shear's (the pairs' harmonic mean), with theta_E anywhere between them (half "
                         "their difference / sqrt(3) in the error): four images do not tell the mass's elongation "
                         "from the shear's. A lens-model fit of the four "
                         "positions with a stated shear prior narrows it.")
    return best


def _unmasked_share(best: RingResult, n_sectors: int) -> float:
    """Share of the ``n_sectors`` directions in which at least half the pixels within 2 pixels of the candidate's
    radius are unmasked (a ring cut by a star's mask is no lone arc):
    :func:`lensmass.core.ring_sectors.unmasked_sector_share` on the residual it was found in."""
    if best.residual is None:
        return 1.0
    return unmasked_sector_share(best.residual, best.center_x, best.center_y, best.radius_pix, n_sectors)


def _lone_arc(best: RingResult, n_sectors: int, by_light: bool = False) -> RingResult:
    """A lone arc on one side of the lens (seen in under :data:`~lensmass.core.ring_confidence.RING_COVERAGE` of
    the directions, no counter-arc, its ridge points' mean direction at least :data:`LONE_ARC_DIRECTEDNESS` long
    or, with ``by_light`` (the FITS route), at least
    :data:`~lensmass.core.arc_directions.LONE_ARC_LIGHT_MIN_DIRECTEDNESS` long with the light at its radius at least
    :data:`~lensmass.core.arc_directions.LONE_ARC_LIGHT_CONCENTRATION` on one side (:func:`_arc_light`), and not
    seen in :data:`~lensmass.core.ring_confidence.RING_COVERAGE` of the unmasked directions, as a ring cut
    by a mask is) lies outside theta_E by its source's offset: theta_E and its error come from the project's one
    lone-arc rule (:func:`lensmass.core.lone_arc.lone_arc_theta_e`, its ``"ridge"`` table for the profile-peak
    radius the finder measures); :func:`~lensmass.core.ring_confidence._calibrate` adds no floor to it."""
    if not best.found or best.paired or best.coverage >= RING_COVERAGE or best.points_x.size < 2:
        return best
    direction = None
    leaning = _mean_direction(best)[1]
    if leaning < LONE_ARC_DIRECTEDNESS:
        if not by_light or leaning < LONE_ARC_LIGHT_MIN_DIRECTEDNESS:  # a ring seen in part all round
            return best
        angle, length = _arc_light(best, n_sectors)
        if not length >= LONE_ARC_LIGHT_CONCENTRATION:
            return best
        direction = angle  # the ridge points' mean direction is the noise's too: the light's is the arc's
    if best.coverage >= RING_COVERAGE * _unmasked_share(best, n_sectors):  # a ring seen wherever it is not masked
        return best
    if _counter_pair(best, direction):
        return best
    arc = best.radius_pix
    theta_e, spread = lone_arc_theta_e(arc, "ridge")
    measured = best.radius_err_pix * theta_e / arc
    best.lone_arc_radius_pix = float(arc)
    best.radius_pix = theta_e
    best.radius_err_pix = float(np.hypot(measured, spread))
    # The spread is skewed (theta_E / r_arc 0.5-1.47 for 1 sigma about 0.733, its lower side at the isothermal
    # bound: lone_arc.LONE_1SIGMA_LOW_RATIO): the interval keeps its shape.
    q = arc * lone_sigma_ratios()
    hold_shape(best, [theta_e + np.sign(b - theta_e) * np.hypot(b - theta_e, k * measured)
                      for b, k in zip(q, (2, 1, 1, 2))])
    best.warnings.append(quote(best, f"A lone arc at {arc:.2f} pixels on one side of the lens: an arc lies outside "
                                     f"the Einstein radius by its source's offset, which one arc does not measure, so "
                                     f"theta_E is {theta_e / arc:.2f} times its radius, {STATED_BOUNDS}: the spread "
                                     "of theta_E / radius over calibrated lone arcs with the arc's measured error, "
                                     "wider above than below; mark a counter-image to measure it."))
    best.message = quote(best, f"A lone arc at {arc:.2f} pixels: theta_E about {STATED_BOUNDS} ({best.score:.1f} "
                               f"sigma, {best.coverage:.0%} of directions).")
    return best


def _arc_light(best: RingResult, n_sectors: int) -> tuple[float, float]:
    """Mean direction of the light at a candidate's radius in its residual and how concentrated it is
    (:func:`lensmass.core.ring_sectors.light_direction`, within half the candidate's width, at least half the
    seeing FWHM and a pixel, of its radius, in the sectors where it stands
    :data:`~lensmass.core.arc_directions.LONE_ARC_LIGHT_MIN_SNR` times their noise); (NaN, NaN) without a residual."""
    if best.residual is None or not np.isfinite(best.radius_pix):
        return float("nan"), float("nan")
    light = best.lens_light
    fwhm = float(light.psf_fwhm_pix) if light is not None and light.ok else 0.0
    half = max(0.5 * float(best.ring_width_pix) if np.isfinite(best.ring_width_pix) else 0.0, 0.5 * fwhm, 1.0)
    return light_direction(best.residual, best.center_x, best.center_y, best.radius_pix, half, n_sectors,
                           best.noise_sigma if np.isfinite(best.noise_sigma) else 0.0, LONE_ARC_LIGHT_MIN_SNR)


def _counter_pair(best: RingResult, direction: float | None = None) -> bool:
    """Pair a one-sided arc with its counter-image found on the far side of the lens
    (:func:`lensmass.core.counter_image.find_counter_image`): theta_E is their mean radius (exact for an isothermal
    sphere, theta_E + beta and theta_E - beta; common practice), with :data:`PAIR_SYSTEMATIC` of half their difference
    in the error, as :func:`_pair_of_arcs` states it; ``direction`` (radians from +x), the arc's when its ridge
    points' mean direction is not. Returns whether it paired."""
    if best.residual is None:
        return False
    light = best.lens_light
    fwhm = float(light.psf_fwhm_pix) if light is not None and light.ok else float(best.ring_width_pix)
    arc = best.radius_pix
    toward = _mean_direction(best)[0] if direction is None else direction
    inner = find_counter_image(best.residual, best.center_x, best.center_y, arc, toward, best.noise_sigma, fwhm)
    if not np.isfinite(inner):
        return False
    best.radius_pix = float(0.5 * (arc + inner))
    best.radius_err_pix = float(np.hypot(best.radius_err_pix, PAIR_SYSTEMATIC * 0.5 * (arc - inner)))
    best.pair_arc_radius_pix = float(arc)
    best.paired = True
    best.confident = False  # one arc and a faint feature inside it: never a confident ring
    best.axis_ratio, best.angle_deg = float("nan"), float("nan")
    best.message = quote(best, f"An arc at {arc:.2f} pixels and its counter-image at {inner:.2f} pixels on the far "
                               f"side of the lens: theta_E = their mean, {STATED} pixels.")
    best.warnings.append("An arc and a fainter counter-image inside it on the far side of the lens: the Einstein radius "
                         "is their mean radius (exact for an isothermal sphere); a lens-model fit of the two is better. "
                         f"{PAIR_REASON[0].upper()}{PAIR_REASON[1:]}, so the interval reaches down to about half the "
                         "arc's radius.")
    return True


def _unpaired_arc(best: RingResult) -> RingResult:
    """An arc seen on one side without a counter-arc that :func:`_lone_arc` does not take (its ridge points spread
    to other sides): part of a ring whose other parts are faint (theta_E at its radius), or a lone arc outside
    theta_E by its source's offset (for an isothermal sphere the bright image lies at theta_E + beta: common
    practice), which one arc does not tell apart. Its radius is kept (the ring part's answer) and the interval takes
    the calibrated spread of theta_E / radius over both (:func:`lensmass.core.lone_arc.lone_arc_ratio_quantiles`,
    the ``"unpaired"`` table, its 1-sigma lower side reaching at least
    :data:`~lensmass.core.lone_arc.UNPAIRED_1SIGMA_LOW_RATIO` of the radius,
    :func:`~lensmass.core.lone_arc.unpaired_sigma_ratios`):
    wide below the radius, narrow above it. The message states that interval and why (the arc's radius alone read
    as theta_E, as a weak candidate's message gave it, was 1.5-1.9 times it for lone arcs)."""
    if (not best.found or best.paired or best.coverage >= RING_COVERAGE or np.isfinite(best.lone_arc_radius_pix)
            or best.interval_shape_pix is not None):
        return best
    arc = best.radius_pix
    measured = best.radius_err_pix
    q = arc * unpaired_sigma_ratios()
    best.radius_err_pix = float(np.hypot(measured, 0.5 * (q[2] - q[1])))
    hold_shape(best, [arc + np.sign(b - arc) * np.hypot(b - arc, k * measured) for b, k in zip(q, (2, 1, 1, 2))])
    best.warnings.append(quote(best, f"An arc at {arc:.2f} pixels with no counter-arc found: it may be part of a ring "
                                     "(theta_E at its radius) or a lone arc outside the Einstein radius by its "
                                     f"source's offset, so theta_E is stated as {STATED_BOUNDS}, the spread of "
                                     "theta_E / radius over calibrated unpaired arcs with the arc's measured error, "
                                     "wider below than above; mark a counter-image to measure it."))
    # as the search's message began and ended (single arcs are made unconfident later, and ring_message.
    # close_unconfident then ends a confident-sounding message with a check by eye; core_residual reads the end)
    opening, end = weak_opening(best.kind, best.score, best.coverage), f"; {CHECK_BY_EYE}"
    if best.confident:
        opening, end = f"Arcs at {RADIUS} pixels ({best.score:.1f} sigma, {best.coverage:.0%} of directions)", "."
    best.message = quote(best, f"{opening} with no counter-arc: theta_E {STATED_BOUNDS}, at the arc's radius if it is "
                               f"part of a ring, down to about half of it if it is a lone arc outside theta_E{end}")
    return best


def _strength(r: RingResult) -> tuple:
    """How candidates are ranked: found, then significance times coverage, the significance capped at
    :data:`~lensmass.core.ring_confidence.CONFIDENT_SCORE`: beyond the level at which a feature is surely real,
    more sigma says how bright it is, not that it is the ring (a neighbour's or a star's leftover light, bright in
    a few directions, outshines a faint ring); an Einstein ring's light lies at one radius in many directions, so
    among surely real candidates the one seen in more directions ranks higher. (Being confident, which asks for that
    significance, no longer ranks first: it let a bright feature seen in 30% of the directions beat a fainter ring
    seen in 75%.)"""
    return (r.found, min(r.score, CONFIDENT_SCORE) * r.coverage)


def _choose(tried: list[RingResult]) -> RingResult:
    """The kept candidate: the feature that ranks first (:func:`_strength`), then, among the candidates measuring that
    same feature (:func:`_same_feature`), the one with the largest significance times coverage, the
    significance capped at :data:`SAME_FEATURE_SCORE_CAP` (the profiles measure one arc or ring with different
    coverages; the capped ranking, meant to tell features apart, would take the widest-seeming of them: in the
    elliptical pass, tests/core/test_unpaired_arc.py's SIS arcs, seen in 54% of the directions, were measured in 62%
    and called rings)."""
    best = max(tried, key=_strength)
    same = [t for t in tried if t.found == best.found and _same_feature(t, best)]
    return max(same, key=_feature_strength)


def _same_feature(a: RingResult, b: RingResult) -> bool:
    """``a`` and ``b`` measure one feature: their radii differ by at most 2 profile bins, as the search merges peaks
    of its profiles into one candidate (:func:`lensmass.core.ringfinder._search`). (Half the ring's width was tried:
    stress tuning seeds 670093 and 670271 then took a neighbour's leftover 14-30% away for the ring.)"""
    return bool(abs(a.radius_pix - b.radius_pix) <= 2 * BIN_PIX)


def _feature_strength(r: RingResult) -> float:
    """Significance (capped at :data:`SAME_FEATURE_SCORE_CAP`) times coverage: ranks measurements of one feature."""
    return min(r.score, SAME_FEATURE_SCORE_CAP) * r.coverage


def _elliptical_pass(best, res, cx, cy, rmin, rmax, n_sectors, light, warnings, should_stop, *,
                     ring_search: Callable[..., RingResult]) -> RingResult:
    """Search again in elliptical annuli of the shape that makes ``best`` sharpest
    (:func:`lensmass.core.elliptical_annuli.ring_shape`), between :data:`ELLIPSE_RHO_SPAN` times its radius.
    The shape is sought among the shapes a lens gives its ring, axis ratios of at least :data:`ELLIPSE_MIN_AXIS_RATIO`:
    an SIE ring's light lies on r = F(phi), whose axis ratio is 0.70 for a mass of axis ratio 0.3 and rounder for
    rounder masses (:func:`~lensmass.core.elliptical_annuli.sie_ring_axis_ratio`). A more elongated ellipse made
    sharpest is one through a partial ring's arcs on its minor axis and another object's leftover light on its major
    axis; its sqrt(a b) put the ring 7-30% too far out (stress tuning seeds 615392, 615721, 615763; 616134, 616750,
    616953; tests/core/test_ellipse_shape_bound.py).
    The elliptical answer replaces the circular one only when its profile peak is :data:`ELLIPSE_GAIN` times
    more prominent and the candidate it measures ranks higher (:func:`_feature_strength` for the same feature,
    :func:`_strength` for another) within
    :data:`ELLIPSE_MAX_MOVE` of the circular radius; it is confident only if the circular answer was."""
    if best.radius_pix < ELLIPSE_MIN_RADIUS_PIX or best.coverage >= ELLIPSE_MAX_COVERAGE:
        return best
    shape = ring_shape(res, cx, cy, best.radius_pix, best.noise_sigma, min_axis_ratio=ELLIPSE_MIN_AXIS_RATIO)
    if shape.axis_ratio >= 1.0 or shape.score < ELLIPSE_GAIN * shape.circular_score:
        return best
    lo = max(rmin, ELLIPSE_RHO_SPAN[0] * best.radius_pix)
    hi = min(rmax, ELLIPSE_RHO_SPAN[1] * best.radius_pix)
    if hi <= lo + 8 * BIN_PIX:
        return best
    ell = ring_search(res, cx, cy, lo, hi, n_sectors, light, list(warnings), None, should_stop,
                      shape=(shape.axis_ratio, shape.angle_rad))
    if not ell.found or abs(ell.radius_pix / best.radius_pix - 1) > ELLIPSE_MAX_MOVE:
        return best
    # The same feature measured in ellipses is compared as measurements of one feature are (:func:`_choose`); another
    # feature within the radii searched must rank higher as a feature.
    if (_feature_strength(ell) <= _feature_strength(best) if _same_feature(ell, best)
            else _strength(ell)[-1] <= _strength(best)[-1]):
        return best
    ell.confident = bool(ell.confident and best.confident)
    ell.warnings.append(f"The ring is elongated: it was measured in elliptical annuli of axis ratio "
                        f"{shape.axis_ratio:.2f} (major axis at {np.degrees(shape.angle_rad):.0f} degrees from +x), "
                        f"which made it {shape.score / max(shape.circular_score, 1e-9):.1f} times sharper than circles; "
                        "the radius is sqrt(a b) of that ellipse, close to the circular Einstein radius (an SIE's "
                        "intermediate-axis theta_E is up to 5% larger for a mass of axis ratio 0.4).")
    return ell


def _across_light_pass(best, res, cx, cy, rmin, rmax, n_sectors, light, warnings, should_stop, *,
                       ring_search: Callable[..., RingResult]) -> RingResult:
    """Search the whole radius range again in elliptical annuli of an elongated SIE's ring, its major axis across the
    lens light's: an SIE's ring of a source near its axis lies on r = F(phi), elongated across the mass (axis ratio
    :func:`~lensmass.core.elliptical_annuli.sie_ring_axis_ratio`, 0.75 for a mass of axis ratio 0.4; Kormann,
    Schneider & Bartelmann 1994), and the mass's major axis follows the light's within 10-20 degrees (Koopmans et al.
    2006 ApJ 649 599, from memory; common practice to take the light's direction as the prior). In circles such a ring
    falls apart into pieces at 0.85-1.15 theta_E that the refinement of :func:`_elliptical_pass` cannot leave. Radii
    from :data:`ELLIPSE_RHO_SPAN`'s lower share of the circular one outwards are searched (not down into a lens-light
    misfit's core residual, which elliptical annuli can show as a ring all round); an answer farther out than
    :data:`ELLIPSE_MAX_MOVE` beyond the circular radius is another feature (the ring's inner pieces lie at 0.87-0.92 of
    its radius; our generator's seed 603128: a neighbour's leftover at 1.7 theta_E), while one far inside is kept (a
    circular answer far out is often a neighbour's leftover light). The shapes' answers are chosen among as the circular candidates are (:func:`_choose`); the chosen one replaces ``best``
    when it ranks at least as high (:func:`_strength`) and measures the ring :data:`ACROSS_LIGHT_GAIN` times better
    (:func:`_feature_strength`); it is confident only if ``best`` was."""
    if light is None or not light.ok or not light.axis_ratio < ROUND_LIGHT or best.coverage >= ELLIPSE_MAX_COVERAGE:
        return best
    angle = np.radians(light.angle_deg + 90.0)
    shapes = [(sie_ring_axis_ratio(mass_q), angle) for mass_q in ACROSS_LIGHT_MASS_AXIS_RATIOS]
    lo = max(rmin, ELLIPSE_RHO_SPAN[0] * best.radius_pix)  # not down into the lens light's core residual
    tried = [ring_search(res, cx, cy, lo, rmax, n_sectors, light, list(warnings), None, should_stop, shape=shape)
             for shape in shapes]
    found = [t for t in tried if t.found]
    if not found:
        return best
    ell = _choose(found)
    if _strength(ell)[-1] < _strength(best)[-1] or _feature_strength(ell) <= ACROSS_LIGHT_GAIN * _feature_strength(best):
        return best
    if ell.radius_pix > (1 + ELLIPSE_MAX_MOVE) * best.radius_pix:  # another feature farther out, not this ring
        return best
    ring_q = shapes[tried.index(ell)][0]
    ell.confident = bool(ell.confident and best.confident)
    ell.warnings.append(f"The ring was measured in elliptical annuli of axis ratio {ring_q:.2f} across the lens light's "
                        "major axis (an elongated SIE's ring), where it stands out better than in circles; the radius "
                        "is sqrt(a b), close to the circular Einstein radius (an SIE's intermediate-axis theta_E is up to "
                        "5% larger for a mass of axis ratio 0.4).")
    return ell


def _mean_direction(r: RingResult) -> tuple[float, float]:
    """Unit-vector mean of the directions of a candidate's ridge points, and its length (0..1)."""
    return mean_direction(r.points_x, r.points_y, (r.center_x, r.center_y))


def _pair_of_arcs(best: RingResult, tried: list[RingResult]) -> RingResult:
    """An arc and a counter-arc on the far side of the lens at another radius: the Einstein radius is
    their mean radius (exact for an SIS, theta_1 + theta_2 = 2 theta_E; common practice for doubles),
    with half their difference times :data:`PAIR_SYSTEMATIC` added to the error for ellipticity and shear."""
    if best.points_x.size == 0:
        return best
    a0, l0 = _mean_direction(best)
    for other in tried:
        if other is best or other.score < 5.0 or other.coverage >= RING_COVERAGE or other.points_x.size < 2:
            continue
        a1, l1 = _mean_direction(other)
        apart = abs((a1 - a0 + np.pi) % (2 * np.pi) - np.pi)
        if apart < np.radians(120) or min(l0, l1) < 0.5:
            continue
        if abs(other.radius_pix - best.radius_pix) < 1.0:
            continue
        r1, r2 = best.radius_pix, other.radius_pix
        radius = 0.5 * (r1 + r2)
        err = float(np.hypot(0.5 * np.hypot(best.radius_err_pix, other.radius_err_pix),
                             PAIR_SYSTEMATIC * 0.5 * abs(r1 - r2)))
        best.radius_pix, best.radius_err_pix = float(radius), err
        best.points_x = np.concatenate([best.points_x, other.points_x])
        best.points_y = np.concatenate([best.points_y, other.points_y])
        best.coverage = float(min(1.0, best.coverage + other.coverage))
        best.axis_ratio, best.angle_deg = float("nan"), float("nan")
        best.kind = "arcs"
        best.paired = True
        best.message = quote(best, f"Arcs on opposite sides of the lens at {r1:.2f} and {r2:.2f} pixels: theta_E = "
                                   f"their mean, {STATED} pixels.")
        best.warnings.append("Two arcs on opposite sides of the lens at different radii: the Einstein radius is their "
                             "mean radius (exact for an isothermal sphere); a lens-model fit of the arc points is better.")
        return best
    return best


def _sie_ring_correction(radius, radius_err, axis_ratio, angle_deg, light) -> tuple[float, float]:
    """The error an elongated ring's radius carries for its shape: sqrt(a b) of the ridge of an SIE's ring falls
    short of theta_E by :func:`lensmass.core.elliptical_annuli.sie_ring_factor` (up to 5% at ring axis ratio 0.75),
    while a shear's ring is about 1% long; which one elongated it is judged only from the light's direction
    (:func:`~lensmass.core.elliptical_annuli.mass_alignment_weight`), so the radius is left as measured and
    :data:`SIE_FACTOR_ERROR_SHARE` of that shortfall, in the share the light gives the mass, joins the error.
    (Applying the factor to the radius was tried: stress lenses 570000-570209, plain rings within 5% 63% -> 47%;
    measured ring axis ratios run low with noise and seeing. Tried again with the clipped ridge ellipse, h16b: half
    the factor, stress check seeds 686000-686119, hard rings within 5% 72% -> 69% of 90, all of it 62%; gated on the
    axis ratio's error from the fit, the ridge points, the ring's size in seeing widths or a strong alignment with the
    light, no variant raised hard rings within 5% on check seeds of either generator. On clean SIE rings the measured
    radius is the ridge's (tests/core/test_elliptical_rings.py: 0.957 theta_E at mass q 0.4), but on stress fields the rings of
    masses with q < 0.6 fall short by a median 1.5% (2.5% expected), round masses' rings measure 0.1 flatter than
    their mass makes them (shear, noise), and the losses are scatter, not this bias.)"""
    full = sie_ring_factor(min(axis_ratio, 1.0)) - 1.0
    if full <= 0:
        return radius, radius_err
    ok = light is not None and light.ok
    w = mass_alignment_weight(angle_deg, light.angle_deg if ok else float("nan"), light.axis_ratio if ok else 1.0)
    return float(radius), float(np.hypot(radius_err, SIE_FACTOR_ERROR_SHARE * w * full * radius))
