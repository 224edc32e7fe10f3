"""Directions of a partial ring's ridge points about the lens centre: one arc on one side, and whether the arcs
constrain an ellipse about the centre.

An ellipse centred on the lens, r^-2 = A + B cos 2phi + C sin 2phi (in the points' direction phi), has three
parameters that are told apart only by how the doubled directions 2phi spread (the ellipse is the same on opposite
sides of its centre). The spread is measured by the mean resultant length of the doubled directions,
R2 = |mean exp(2 i phi)| (axial data are doubled so; Mardia & Jupp 2000, Directional Statistics, from memory;
common practice): 0 for directions all round, 2/pi = 0.64 for two opposite arcs of a quarter ring each,
sin(x)/x for one arc spanning x radians (0.90 for 45 degrees), 1 for a single direction. Arcs whose doubled directions spread so little (R2 above :data:`ARC_ELLIPSE_MAX_R2`)
leave the axis ratio and the angle trading with the size, and are fitted by a circle.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import directional_stats

#: A lone arc's ridge points have a mean direction (unit vectors) at least this long (0 = all round, 1 = one
#: direction). Tuning seeds 570000-570209 (stress fields) and 570000-570149 (ours), arcs seen in under 60% of the
#: directions and unpaired: mean direction 0.85-1 -> radius / theta_E median 1.58 (stress) and 1.38 (ours), 0.7-0.85
#: -> 0.99 and 1.25, under 0.5 (quads, folds, rings cut by a mask) 1.06-1.23 and 1.01-1.02.
LONE_ARC_DIRECTEDNESS = 0.7
#: ... or the light at the arc's radius is this concentrated on one side (the mean resultant length of its
#: directions, :func:`lensmass.core.ring_sectors.light_direction`; 0.75 is light spread evenly over an arc of about
#: 145 degrees), counted in the sectors where it stands :data:`LONE_ARC_LIGHT_MIN_SNR` times their noise: the ridge
#: points of a faint lone arc include the noise's in other directions, its light does not. h32c, stress tuning seeds
#: 1019000-1019419, main e7517a3's 113 unpaired single arcs: 12 of the 22 at 1.4 theta_E or more (lone arcs of one-arc
#: and two-arc lenses) reached it, 2 of the 66 within 15% of theta_E (ring parts, folds, quads).
LONE_ARC_LIGHT_CONCENTRATION = 0.75
LONE_ARC_LIGHT_MIN_SNR = 1.0
#: ... as long as the ridge points still lean to one side this much: a ring seen in part all round (its ridge's
#: directions balanced, 0.22 for tests/core/test_companion_near.py's faint ring in half the directions) whose light
#: one bright leftover dominates (a neighbour's) is no lone arc. (Tuning seeds above: the lone arcs' 0.33-0.65.)
LONE_ARC_LIGHT_MIN_DIRECTEDNESS = 0.3
#: Largest mean resultant length of the doubled directions for which arcs are fitted by an ellipse: one arc of
#: 45 degrees (sin(pi/4) / (pi/4) = 0.90) is the shortest so fitted. (Stress tuning seeds 827000-828719: of 87 arcs
#: answers with 6 or more ridge points under half the directions, none was above 0.9.)
ARC_ELLIPSE_MAX_R2 = 0.9
#: Fewest ridge points for an ellipse about a held centre (three parameters and their scatter).
ARC_ELLIPSE_MIN_POINTS = 6
#: Smallest axis ratio of an ellipse through arcs that is kept (else the circle): the ring of the most elongated SIE
#: tabulated (mass axis ratio 0.3) has axis ratio 0.70 (Kormann, Schneider & Bartelmann 1994;
#: :data:`~lensmass.core.elliptical_annuli.SIE_RIDGE_AXIS_RATIOS`), and a strong external shear of 0.15 flattens a
#: circle by (1 - gamma) / (1 + gamma) = 0.74 (common practice): 0.70 x 0.74 = 0.52. A flatter ellipse through
#: arcs is their noise trading the axis ratio with the size (an SIE ring of mass axis ratio 0.5 made of arcs in 42%
#: of the directions: an ellipse of axis ratio 0.40 put theta_E 28% out, the circle 10%).
ARC_ELLIPSE_MIN_AXIS_RATIO = 0.5


def mean_direction(x, y, center: tuple[float, float], fold: int = 1) -> tuple[float, float]:
    """Mean direction (radians) of points about ``center`` and its mean resultant length (0 spread all round, 1 one
    direction; nan for no points), by scipy.stats.directional_stats on the unit vectors of ``fold`` times their
    directions (``fold=2``: axial data, a direction and its opposite alike; Mardia & Jupp 2000, from memory).

    Examples
    --------
    >>> angle, length = mean_direction([1.0, 0.0], [0.0, 1.0], (0.0, 0.0))
    >>> round(float(np.degrees(angle)), 6), round(length, 4)
    (45.0, 0.7071)
    """
    phi = fold * np.arctan2(np.asarray(y, float) - center[1], np.asarray(x, float) - center[0])
    if phi.size == 0:
        return float("nan"), float("nan")
    with np.errstate(invalid="ignore"):  # directions balanced all round: no mean direction (taken as 0, arctan2(0, 0))
        stats = directional_stats(np.column_stack([np.cos(phi), np.sin(phi)]))
    angle = float(np.arctan2(stats.mean_direction[1], stats.mean_direction[0]))
    return (angle if np.isfinite(angle) else 0.0) / fold, float(stats.mean_resultant_length)


def doubled_direction_spread(x, y, center: tuple[float, float]) -> float:
    """Mean resultant length of the doubled directions 2 phi of points about ``center`` (0 spread all round, 1 one
    direction or its opposite).

    Examples
    --------
    Points on two opposite quarter arcs (directions -45..45 and 135..225 degrees): 2 / pi for a continuous arc
    (the end points weigh a little more in 201 samples).

    >>> phi = np.radians(np.r_[np.linspace(-45, 45, 201), np.linspace(135, 225, 201)])
    >>> round(doubled_direction_spread(np.cos(phi), np.sin(phi), (0.0, 0.0)), 2), round(2 / np.pi, 2)
    (0.63, 0.64)
    """
    return mean_direction(x, y, center, fold=2)[1]


def arcs_constrain_ellipse(x, y, center: tuple[float, float]) -> bool:
    """Arcs' ridge points pose an ellipse about ``center``: at least :data:`ARC_ELLIPSE_MIN_POINTS` of them, their
    doubled directions spread to a mean resultant length of at most :data:`ARC_ELLIPSE_MAX_R2`, and they are no lone
    arc (the mean of their unit direction vectors shorter than
    :data:`LONE_ARC_DIRECTEDNESS`, the finder's own test for one arc on one side: an
    ellipse through one side's arc trades its shape with its size; tests/core/test_unpaired_arc.py's SIS arcs and
    counter-images: through them too, 8 of 16 within 5%, under the 10 the test asks).

    Examples
    --------
    >>> phi = np.radians(np.linspace(0, 40, 9))  # one arc of 40 degrees: R2 = 0.92
    >>> arcs_constrain_ellipse(np.cos(phi), np.sin(phi), (0.0, 0.0))
    False
    >>> phi = np.radians(np.r_[np.linspace(-40, 40, 6), np.linspace(140, 220, 6)])
    >>> arcs_constrain_ellipse(np.cos(phi), np.sin(phi), (0.0, 0.0))
    True
    >>> phi = np.radians(np.linspace(0, 120, 9))  # one arc of 120 degrees: a lone arc
    >>> arcs_constrain_ellipse(np.cos(phi), np.sin(phi), (0.0, 0.0))
    False
    """
    if np.size(x) < ARC_ELLIPSE_MIN_POINTS or doubled_direction_spread(x, y, center) > ARC_ELLIPSE_MAX_R2:
        return False
    return bool(mean_direction(x, y, center)[1] < LONE_ARC_DIRECTEDNESS)
