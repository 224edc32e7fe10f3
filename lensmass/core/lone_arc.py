"""One rule for the Einstein radius of a lone arc (an arc seen without its counter-image), used by the lens-model
fit of marked points and by the ring finder.

A lone arc lies outside the critical curve by the unknown offset of its source (for an isothermal sphere the bright
image is at theta_E + beta: common practice), so its radius r_arc bounds theta_E without measuring it. The rule
gives theta_E as r_arc times the spread of theta_E / r_arc seen in inject-and-recover trials, tabulated as
quantiles of ln(theta_E / r_arc) at :data:`LONE_ARC_PROBABILITIES`. What r_arc is depends on who measures it, so
there is one table for each measure (:data:`LONE_ARC_LOG_RATIO_QUANTILES`):

- ``"points"``: the median distance of points marked along the arc from the lens centre (the lens-model fit);
- ``"ridge"``: the radius of the arc's azimuthal-profile peak as the ring finder measures it, for the arcs the
  finder itself calls lone (one-sided, unpaired; its counter-image not found), whose sources lie further from the
  axis than those of marked arcs with a counter-image hidden;
- ``"unpaired"``: the same radius for the finder's other single arcs (no counter-arc, but ridge points on other
  sides too), which are as often parts of rings, quads and folds (theta_E at the radius) as lone arcs outside it;
  the finder keeps their radius and states this table's spread around it
  (:func:`lensmass.core.ring_shapes._unpaired_arc`).
"""

from __future__ import annotations

import numpy as np

from lensmass.core.ring_interval import SIGMA_PROBABILITIES

#: Probabilities of the tabulated quantiles (0 and 1: the extremes seen).
LONE_ARC_PROBABILITIES = (0.0, 0.01, 0.025, 0.05, 0.1, 0.16, 0.25, 0.5, 0.75, 0.84, 0.9, 0.95, 0.975, 0.99, 1.0)

#: Quantiles of ln(theta_E / r_arc) for each measure of r_arc.
#:
#: ``"points"``: 1400 inject-and-recover lone arcs made with the ray tracer (seeds 3000-4399 of
#: tests/core/lens_injection.arc_case: SIE + shear, axis ratio 0.5-0.9, shear up to 0.1, clumpy sources, 1-pixel
#: clicks, the longest arc marked; mean +0.019, sd 0.127, flatter than a Gaussian: its 68% range is wider and its 95%
#: range narrower than the Gaussian of that sd would give, which is why a Gaussian covered 57.5% at 68%).
#: ``benchmarks/calibrate_lone_arc.py --calibrate`` re-derives it, ``--check`` checks its coverage on other seeds.
#:
#: ``"ridge"``: see :data:`RIDGE_CALIBRATION` (``benchmarks/calibrate_lone_arc.py --finder``).
LONE_ARC_LOG_RATIO_QUANTILES: dict[str, tuple[float, ...]] = {
    "points": (-0.3032, -0.2383, -0.2014, -0.1842, -0.1506, -0.1148, -0.0758, +0.0117, +0.1140, +0.1619, +0.1951,
               +0.2308, +0.2660, +0.2967, +0.4428),
    "unpaired": (-1.0262, -0.8873, -0.7433, -0.5499, -0.4607, -0.4048, -0.2943, -0.0633, +0.0341, +0.0722, +0.2057,
                 +0.3330, +0.6760, +1.1132, +1.6548),
    "ridge": (-1.4829, -1.1109, -1.0601, -0.9777, -0.5970, -0.5202, -0.3999, -0.3102, +0.2698, +0.3851, +0.4855,
              +0.7726, +0.8468, +0.8810, +1.0487),
}
#: Where the ``"ridge"`` table comes from: the ring finder (lensmass.core.ringfinder.find_ring) on lenses of both
#: field makers, all lens kinds in equal shares (``benchmarks/calibrate_ring_floors.py record``, 315 lenses of each
#: maker, tuning seeds 620700-621329 and 623400-624029); the 130 arcs it called lone (74 ours, 56 stress), their
#: profile-peak radius r_arc against the true theta_E: ln(theta_E / r_arc) median -0.298 (ours) and -0.320 (stress),
#: 16-84% -0.39 to +0.30 and -0.60 to +0.48; pooled theta_E / r_arc median 0.733, 1 sigma 0.59-1.47. Remade (h15b)
#: once arcs with a counter-image found on the far side are paired instead (ring_shapes._counter_pair): the lone arcs
#: left have sources further out or are features that are no arc (a counter-image inside theta_E, a neighbour's
#: residual), hence the wide upper side. The former table (h14o, 119 lone arcs, seeds 630000-634119, median 0.745,
#: 1 sigma 0.60-1.26) covered these 56%/88% (tuning) and 39%/95% (check seeds 627000-627629) inside 1/2 sigma; this one
#: 68%/94% and 59%/98%. Made by ``benchmarks/calibrate_lone_arc.py --finder-table``.
RIDGE_CALIBRATION = "find_ring on 130 lone arcs of both field makers, tuning seeds 620700-624029"
#: Where the ``"unpaired"`` table comes from (h15b): the ring finder on 630 lenses of each field maker, all lens kinds
#: in equal shares (``benchmarks/calibrate_ring_floors.py record``, tuning seeds 620700-621329 and 623400-624029);
#: the 291 single arcs it did not call lone or paired (99 ours, 192 stress), ln(theta_E / radius) pooled: median
#: -0.063, 16-84% -0.405 to +0.072 (theta_E / radius 0.67-1.07), per maker 0.68-1.06 (ours) and 0.66-1.09 (stress):
#: one arcs (stress: 0.45-0.75 of the radius) and ring parts (0.95-1.05) alike, which nothing tried told apart
#: (the arc's azimuthal extent, its length over its width, the light on the far side, the ridge points' mean
#: direction). Made by ``benchmarks/calibrate_lone_arc.py --unpaired-table``. Upper tail: features inside theta_E.
UNPAIRED_CALIBRATION = "find_ring on 291 unpaired single arcs of both field makers, tuning seeds 620700-624029"
MEASURES = tuple(LONE_ARC_LOG_RATIO_QUANTILES)
#: The ``"unpaired"`` interval's 1-sigma lower side reaches down to at least this share of the radius
#: (:func:`unpaired_sigma_ratios`). The table pools ring parts (theta_E at the radius) with lone arcs outside theta_E,
#: whose ratio an isothermal lens puts between 1/2 and 1 (the bright image at theta_E + beta, beta < theta_E for a
#: multiply imaged source: common practice); its 15.87% quantile (0.67) lay above most lone arcs of one field maker
#: (stress fields: unpaired one-arc lenses' median 0.66). This value is the 15.87% quantile of ln(theta_E / radius)
#: over the unpaired answers on arc lenses alone, each field maker weighted alike, never below the isothermal 1/2
#: (``benchmarks/calibrate_arc_intervals.py floor`` on ``benchmarks/record_arc_intervals.py`` records, h21c, tuning
#: seeds 645000-645489 and 646000-646139: 78 unpaired arcs, 56 stress and 22 ours, 0.577).
UNPAIRED_1SIGMA_LOW_RATIO = 0.58
UNPAIRED_FLOOR_CALIBRATION = "h21c: 15.87% quantile of unpaired arc-lens answers, seeds 645000-645489, 646000-646139"
#: The ``"ridge"`` interval's 1-sigma lower side reaches down to at least this share of the arc's radius
#: (:func:`lone_sigma_ratios`): the isothermal bound. For an isothermal sphere the bright image lies at theta_E + beta
#: and the counter-image at theta_E - beta, |mu-| / mu+ = (1 - b) / (1 + b) for b = beta / theta_E < 1 (common
#: practice; Narayan & Bartelmann 1996, eq. 29 and the SIS magnification), so the counter-image is lost (a tenth of
#: the arc's brightness or less) when b > 0.82, where theta_E / r_arc = 1 / (1 + b) lies between 1/2 and 0.55: the arcs
#: seen alone crowd just above 1/2, under the table's 15.87% quantile (0.594). h23d, stress tuning seeds
#: 695000-695419: 7 of the 16 lone answers outside 1 sigma had theta_E / r_arc 0.52-0.58. Lone answers inside 1 sigma,
#: table -> this bound: stress tuning 695000-695419 + 696000-696699 52.8% -> 75.0% (36), check 697000-697419 +
#: 698000-698699 60.6% -> 78.8% (33); our generator 699000-699299 and 699400-699699 unchanged (76.5%, 85.3% of 34);
#: 2 sigma unchanged.
LONE_1SIGMA_LOW_RATIO = 0.5


def _table(measure: str) -> np.ndarray:
    if measure not in LONE_ARC_LOG_RATIO_QUANTILES:
        raise ValueError(f"measure must be one of {MEASURES}, got {measure!r}")
    return np.asarray(LONE_ARC_LOG_RATIO_QUANTILES[measure], float)


def lone_arc_ratio_quantiles(probabilities, measure: str = "points") -> np.ndarray:
    """theta_E / r_arc at the given probabilities (interpolated in the table of ``measure``).

    Examples
    --------
    >>> lo, mid, hi = lone_arc_ratio_quantiles([0.025, 0.5, 0.975])
    >>> bool(0.8 < lo < mid < hi < 1.35)
    True
    """
    return np.exp(np.interp(probabilities, LONE_ARC_PROBABILITIES, _table(measure)))


def _sigma_ratios(measure: str, low_1sigma: float) -> np.ndarray:
    """The ``measure`` table's ratios at the -2, -1, +1, +2 sigma probabilities, the 1-sigma lower side no higher
    than ``low_1sigma`` and the 2-sigma one no higher than the 1-sigma one."""
    q = lone_arc_ratio_quantiles(SIGMA_PROBABILITIES, measure)
    q[1] = min(q[1], low_1sigma)
    q[0] = min(q[0], q[1])
    return q


def unpaired_sigma_ratios() -> np.ndarray:
    """theta_E / radius of an unpaired arc at the -2, -1, +1, +2 sigma probabilities
    (:data:`lensmass.core.ring_interval.SIGMA_PROBABILITIES`): the ``"unpaired"`` table's quantiles, the 1-sigma lower
    side no higher than :data:`UNPAIRED_1SIGMA_LOW_RATIO` and the 2-sigma one no higher than the 1-sigma one.

    Examples
    --------
    >>> lo2, lo1, hi1, hi2 = unpaired_sigma_ratios()
    >>> bool(lo2 <= lo1 <= 0.58 < 1.0 < hi1 < hi2)
    True
    """
    return _sigma_ratios("unpaired", UNPAIRED_1SIGMA_LOW_RATIO)


def lone_sigma_ratios() -> np.ndarray:
    """theta_E / r_arc of a lone arc at the -2, -1, +1, +2 sigma probabilities
    (:data:`lensmass.core.ring_interval.SIGMA_PROBABILITIES`): the ``"ridge"`` table's quantiles, the 1-sigma lower
    side no higher than the isothermal bound :data:`LONE_1SIGMA_LOW_RATIO` and the 2-sigma one no higher than it.

    Examples
    --------
    >>> lo2, lo1, hi1, hi2 = lone_sigma_ratios()
    >>> bool(lo2 <= lo1 == 0.5 < 1.0 < hi1 < hi2)
    True
    """
    return _sigma_ratios("ridge", LONE_1SIGMA_LOW_RATIO)


def lone_arc_theta_e(r_arc: float, measure: str = "ridge") -> tuple[float, float]:
    """theta_E of a lone arc of radius ``r_arc`` (any unit) and its 1-sigma error, from the table of ``measure``:
    the median of theta_E / r_arc times r_arc, and half the central 68% range of the ratio times r_arc.

    Examples
    --------
    >>> te, err = lone_arc_theta_e(1.0, "points")
    >>> bool(abs(te - 1.012) < 0.002 and 0.1 < err < 0.2)
    True
    """
    lo, mid, hi = lone_arc_ratio_quantiles([0.16, 0.5, 0.84], measure)
    return float(r_arc * mid), float(r_arc * 0.5 * (hi - lo))


def lone_arc_theta_e_draws(x, y, center_x: float, center_y: float, n: int = 4000, seed: int = 1,
                           measure: str = "points") -> np.ndarray:
    """Draws of theta_E (arcsec) for an arc marked without its counter-image: r_arc, the median distance of the
    points (arcsec) from the lens centre, times exp of the tabulated spread of ``measure``
    (inverse-CDF sampling). A range, not a measurement: the source's offset behind the lens is unknown.

    Examples
    --------
    >>> d = lone_arc_theta_e_draws([1.0, 0.9, 1.1, 0.95, 1.05], [0.1, 0.4, -0.3, 0.25, -0.15], 0.0, 0.0)
    >>> lo, hi = np.percentile(d, [2.5, 97.5])
    >>> bool(0.7 < lo < 1.0 < hi < 1.5)
    True
    """
    r_arc = float(np.median(np.hypot(np.asarray(x, float) - center_x, np.asarray(y, float) - center_y)))
    u = np.random.default_rng(seed).uniform(0, 1, int(n))
    return r_arc * lone_arc_ratio_quantiles(u, measure)


__all__ = ["LONE_1SIGMA_LOW_RATIO", "LONE_ARC_LOG_RATIO_QUANTILES", "LONE_ARC_PROBABILITIES", "MEASURES",
           "UNPAIRED_1SIGMA_LOW_RATIO",
           "UNPAIRED_CALIBRATION", "UNPAIRED_FLOOR_CALIBRATION", "lone_arc_ratio_quantiles", "lone_arc_theta_e",
           "lone_arc_theta_e_draws", "lone_sigma_ratios", "unpaired_sigma_ratios"]
