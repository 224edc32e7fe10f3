"""The clipped plateaus of an 8-bit picture: connected regions at the top value, with the holes lossy
compression punches in them closed.

A stretch that clips a bright lens core leaves a plateau at the top value (255). JPEG's quantisation
rings inside such a plateau (ISO/IEC 10918-1: each 8 x 8 block's cosine coefficients are rounded), so
part of it comes back a few levels below the top and the plateau breaks into pieces and holes. The
picture route lets a clipped core rise to its middle to place the lens centre there
(:func:`lensmass.core.ring_pictures.colour_mask_image`); on the broken plateau the middle of the largest
piece, not of the core, was taken. Stress_pictures tuning seeds 670000-670079 (hard rings): 10 of 80 lens
centres more than 2 pixels off, all JPEG, 9 of them make_lupton_rgb clipped cores coming back at 240-255 (h22d).

Everything here is our own method; scipy.ndimage.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from lensmass.core.ring_result import RingResult

#: Levels below the top value (of 255) within which a pixel counts towards a plateau: JPEG brought clipped cores back at
#: 240-255 (stress_pictures tuning seeds 670002, 670046: make_lupton_rgb cores, JPEG q92 and q72).
NEAR_TOP_LEVELS = 16
#: Pixels of a plateau's clipped core: a connected region with at least this many clipped pixels.
PLATEAU_MIN_PIX = 9
#: Gaps (pixels) inside a clipped region that a morphological closing fills (JPEG's holes are 1-3 pixels).
HOLE_CLOSE_PIX = 2
#: ... a closed region counts as a plateau only when at least this share of it is near the top value (scattered
#: clipped sky pixels, which a strong stretch leaves, do not close into a plateau).
PLATEAU_MIN_DENSITY = 0.8


def near_top(rgb: np.ndarray, levels: float = NEAR_TOP_LEVELS) -> np.ndarray:
    """True where a picture's brightest band lies within ``levels`` (of 255) of its top value.

    Examples
    --------
    >>> near_top(np.array([[[250, 10, 0], [200, 238, 100]]], np.uint8)).tolist()
    [[True, False]]
    """
    raw = np.asarray(rgb)
    top = 255.0 if raw.dtype == np.uint8 or np.nanmax(raw) > 1.0 else 1.0
    v = raw.astype(float)
    return np.asarray(v.max(axis=-1) >= top * (1.0 - float(levels) / 255.0))


def clipped_plateaus(clipped: np.ndarray, near: np.ndarray | None = None) -> np.ndarray:
    """True on the plateaus of a picture's clipped pixels ``clipped``: each connected region of them closed over gaps
    of :data:`HOLE_CLOSE_PIX` (scipy.ndimage ``binary_closing``, holes filled) that holds at least
    :data:`PLATEAU_MIN_PIX` clipped pixels and of which at least :data:`PLATEAU_MIN_DENSITY` is ``near`` the top
    (:func:`near_top`; without it, clipped), and each connected clipped piece of that many pixels as it stands.

    Examples
    --------
    A clipped disc with JPEG-like holes just below the top is one plateau, holes included; scattered clipped pixels
    are not:

    >>> yy, xx = np.mgrid[0:41, 0:41]
    >>> r = np.hypot(xx - 20, yy - 20)
    >>> holes = np.random.default_rng(1).uniform(size=r.shape) < 0.4
    >>> sky = np.zeros_like(holes); sky[2:40:6, 2:40:7] = True; sky &= r > 10
    >>> p = clipped_plateaus(((r <= 6) & ~holes) | sky, near=(r <= 6) | sky)
    >>> bool(p[r <= 5].all()), int(p[r > 11].sum())  # a closing bridges gaps of up to 4 pixels
    (True, 0)
    """
    from scipy.ndimage import binary_closing, binary_fill_holes, label

    clipped = np.asarray(clipped, bool)
    near = clipped if near is None else np.asarray(near, bool) | clipped
    structure, g = np.ones((3, 3), bool), HOLE_CLOSE_PIX
    closed = binary_closing(np.pad(clipped, g), structure, iterations=g)[g:-g, g:-g]  # the outside is not clipped
    closed = binary_fill_holes(closed | clipped)
    labels, n = label(closed, structure)
    n_clipped = np.bincount(labels.ravel(), weights=clipped.ravel(), minlength=n + 1)
    n_near = np.bincount(labels.ravel(), weights=near.ravel(), minlength=n + 1)
    n_all = np.bincount(labels.ravel(), minlength=n + 1)
    keep = (n_clipped >= PLATEAU_MIN_PIX) & (n_near >= PLATEAU_MIN_DENSITY * np.maximum(n_all, 1))
    keep[0] = False
    pieces, m = label(clipped)  # a connected clipped piece of that size is a plateau as it stands
    return np.asarray(keep[labels] | (np.bincount(pieces.ravel(), minlength=m + 1) >= PLATEAU_MIN_PIX)[pieces] & clipped)


#: A ring found on a JPEG picture within this many times the radius of the clipped, colour-kept lens core about its
#: centre (:func:`lossy_core_radius`) ...
CORE_EDGE_RATIO = 1.3
#: ... carries this share of its radius as an extra error (:func:`widen_near_lossy_core`). Stress_pictures tuning
#: seeds 671000-671104 + 672000-672069 (every kind), make_lupton_rgb JPEG, with the plateau closed: 15 rings found
#: within 1.3 times the core's radius, none within 5% (-54% to +54%, 10 too small: the core's edge, where JPEG's
#: half-resolution colour fringes, read as the ring), 9 outside 1 sigma; beyond 1.3 times, 32 found, 17 within 5% (h22d).
CORE_EDGE_SYSTEMATIC = 0.3


def lossy_core_radius(rgb: np.ndarray, cx: float, cy: float) -> float:
    """The radius (of a disc of its area) of the clipped plateau (:func:`clipped_plateaus`) covering (cx, cy) on a
    picture that keeps colour where it clips; 0 when none covers it or the picture loses colour wherever it clips.

    Examples
    --------
    >>> pic = np.full((41, 41, 3), 60, np.uint8)
    >>> yy, xx = np.mgrid[0:41, 0:41]
    >>> pic[np.hypot(xx - 20, yy - 20) <= 8] = (255, 200, 120)   # 200 pixels clipped in red only: colour kept
    >>> round(lossy_core_radius(pic, 20, 20), 1), lossy_core_radius(pic, 3, 3)
    (7.9, 0.0)
    """
    from scipy.ndimage import label

    from lensmass.core.colour_separation import colour_lost, saturated

    v = np.asarray(rgb, float)
    clipped = saturated(v)
    if np.array_equal(colour_lost(v), clipped):
        return 0.0
    labels, _ = label(clipped_plateaus(clipped, near_top(v)))
    piece = labels[int(np.clip(round(cy), 0, v.shape[0] - 1)), int(np.clip(round(cx), 0, v.shape[1] - 1))]
    return float(np.sqrt(np.count_nonzero(labels == piece) / np.pi)) if piece else 0.0


def widen_near_lossy_core(out: RingResult, rgb: np.ndarray) -> None:
    """Add :data:`CORE_EDGE_SYSTEMATIC` of the radius to the error of a ring found on a JPEG colour picture within
    :data:`CORE_EDGE_RATIO` times its clipped lens core's radius (:func:`lossy_core_radius`), saying why."""
    if not out.found or not np.isfinite(out.radius_pix):
        return
    core = lossy_core_radius(rgb, out.center_x, out.center_y)
    if core <= 0 or out.radius_pix > CORE_EDGE_RATIO * core:
        return
    out.radius_err_pix = float(np.hypot(out.radius_err_pix, CORE_EDGE_SYSTEMATIC * out.radius_pix))
    out.warnings.append(f"The ring lies near the edge of the lens's clipped core ({core:.1f} pixels) on a JPEG "
                        f"picture, where compression fringes the colours: {CORE_EDGE_SYSTEMATIC:.0%} of the radius is "
                        "in the error.")


#: On a lossless (PNG) picture, a ring found inside the clipped, colour-kept core's radius (ratio 1 of
#: :func:`lossy_core_radius`) from arcs seen in fewer than this share of the directions is the core's residual, not a
#: ring (:func:`refuse_partial_in_lossless_core`). Stress_pictures tuning seeds 867000-867419 (every kind), PNG: 18
#: answers inside the core, 7 below 0.62 of the truth, 5 within 5%; the 4 seen in < 50% of directions were 0.31-0.81
#: of the truth (1 outside 2 sigma); check seeds 870000-870199: 3 refused (0.35, 0.81, 1.14 of the truth; PNG inside 2
#: sigma 88.5% -> 89.7%). Out to 1.3 core radii (the JPEG rule's reach) 7 were refused on tuning (2 more outside 2
#: sigma), but on our generator's strongly clipped Lupton pictures (bench_ring_realism route 4, seeds 868000-868039)
#: 9 of 40 then, 1 of them within 5% and all inside 2 sigma; inside the core 4, all below 0.55 of the truth (h26d).
LOSSLESS_CORE_MIN_COVERAGE = 0.5
#: The reach of that refusal, in clipped-core radii.
LOSSLESS_CORE_RATIO = 1.0


def refuse_partial_in_lossless_core(out: RingResult, rgb: np.ndarray) -> None:
    """Report no ring when a lossless colour picture's answer lies within :data:`LOSSLESS_CORE_RATIO` times its clipped
    lens core's radius (:func:`lossy_core_radius`) and its arcs cover fewer than
    :data:`LOSSLESS_CORE_MIN_COVERAGE` of the directions: pieces of the core's residual at its clipped edge, saying
    why. (The PNG twin of :func:`widen_near_lossy_core`.)"""
    if not out.found or not np.isfinite(out.radius_pix) or out.coverage >= LOSSLESS_CORE_MIN_COVERAGE:
        return
    core = lossy_core_radius(rgb, out.center_x, out.center_y)
    if core <= 0 or out.radius_pix > LOSSLESS_CORE_RATIO * core:
        return
    out.refuse(f"The arcs at {out.radius_pix:.1f} pixels, seen in {out.coverage:.0%} of the directions, lie inside "
               f"the lens's clipped core ({core:.1f} pixels), where pieces of the core's residual look like arcs: not "
               "taken as a ring.",
               "No ring outside the lens's clipped core on this picture: mark the arcs by hand, or measure a FITS band "
               "or a picture with a softer stretch.")
