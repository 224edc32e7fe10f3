"""Inject-and-recover cases for lens-model tests and benchmarks: lensed systems made with the project's
own ray tracer (lensmass.core.raytrace: its SIELens/ExternalShear deflections and grid image search are
a separate implementation from lensmass.core.sie and image_finder), clicked with Gaussian click noise.

Truths: SIE + external shear lenses with theta_E 0.8-2.0", axis ratio 0.5-0.9, shear up to 0.1, random
angles (the ranges the issue's practitioner trials used); pixels of 0.05" (space-telescope-like).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lensmass.core.raytrace import (
    ClumpySource,
    ExternalShear,
    SIELens,
    arc_ridge_points,
    point_images,
)

PIXEL_ARCSEC = 0.05


@dataclass
class Case:
    x: np.ndarray
    y: np.ndarray
    system: np.ndarray
    kind: np.ndarray
    theta_e: float
    q: float
    center: tuple[float, float, float]
    lenses: list
    source: tuple[float, float] | None = None  # the true source of a point case (arcsec)
    true_x: np.ndarray | None = None  # the unclicked image positions of a point case
    true_y: np.ndarray | None = None


def random_lens(rng):
    te, q, ang = rng.uniform(0.8, 2.0), rng.uniform(0.5, 0.9), rng.uniform(0, 180)
    g, ga = rng.uniform(0, 0.1), rng.uniform(0, np.pi)
    return te, q, [SIELens(te, q, ang), ExternalShear(g * np.cos(2 * ga), g * np.sin(2 * ga))]


def _clicks(rng, x, y, click_pix):
    return (np.asarray(x) + rng.normal(0, click_pix * PIXEL_ARCSEC, len(x)),
            np.asarray(y) + rng.normal(0, click_pix * PIXEL_ARCSEC, len(y)))


def _same_count(lenses, bx, by, n):
    """The exact finder of lensmass.core.image_finder must agree on the number of images (a grid search can
    miss an image close to the critical curve)."""
    from lensmass.core.image_finder import find_images
    from lensmass.core.sie import SIEShear

    sie, shear = lenses
    lens = SIEShear(sie.theta_e_arcsec, sie.axis_ratio, np.radians(sie.angle_deg), 0.0, 0.0, shear.gamma1,
                    shear.gamma2)
    return find_images(lens, bx, by).n == n


def point_case(seed: int, n_images: int, click_pix: float = 1.0) -> Case:
    """A quad (n_images=4) or a double (2) of a compact knot, clicked with ``click_pix`` noise."""
    rng = np.random.default_rng(seed)
    while True:
        te, q, lenses = random_lens(rng)
        for _ in range(40):
            r = te * (0.35 if n_images == 4 else 0.9) * np.sqrt(rng.uniform(0, 1))
            t = rng.uniform(0, 2 * np.pi)
            if not _same_count(lenses, r * np.cos(t), r * np.sin(t), n_images):
                continue
            found = point_images(lenses, r * np.cos(t), r * np.sin(t), search_radius_arcsec=2.5 * te,
                                 grid_step_arcsec=0.02)
            if len(found) == n_images:  # the two finders agree; the ray tracer's positions are the truth
                x, y = _clicks(rng, [f[0] for f in found], [f[1] for f in found], click_pix)
                cx, cy = rng.normal(0, click_pix * PIXEL_ARCSEC, 2)
                return Case(x, y, np.full(n_images, "A"), np.full(n_images, "image"), te, q,
                            (float(cx), float(cy), click_pix * PIXEL_ARCSEC), lenses,
                            (float(r * np.cos(t)), float(r * np.sin(t))),
                            np.array([f[0] for f in found]), np.array([f[1] for f in found]))


def arc_case(seed: int, lone: bool = False, click_pix: float = 1.0, max_points: int = 30) -> Case:
    """Points along the arcs of a clumpy extended source near the caustic (ridge from the ray tracer);
    ``lone`` keeps only the longest arc (its counter-image is not marked)."""
    rng = np.random.default_rng(seed)
    while True:
        te, q, lenses = random_lens(rng)
        r, t = te * 0.25 * np.sqrt(rng.uniform(0, 1)), rng.uniform(0, 2 * np.pi)
        src = ClumpySource(1.0, rng.uniform(0.1, 0.3), 4, 0.4, 0.05, 1.0, 0.0, r * np.cos(t), r * np.sin(t),
                           seed=int(rng.integers(1 << 30)))
        pts = np.array(arc_ridge_points(lenses, src, theta_max_arcsec=2.5 * te, n_directions=180,
                                        min_fraction=0.2))
        if len(pts) < 8:
            continue
        ang = np.mod(np.arctan2(pts[:, 1], pts[:, 0]), 2 * np.pi)
        order = np.argsort(ang)
        pts, ang = pts[order], ang[order]
        # split into arcs at gaps wider than 6 deg
        gaps = np.diff(np.r_[ang, ang[0] + 2 * np.pi])
        cuts = np.flatnonzero(gaps > np.radians(6))
        if len(cuts) == 0:
            groups = [np.arange(len(pts))]
        else:
            start = (cuts[-1] + 1) % len(pts)
            idx = np.r_[np.arange(start, len(pts)), np.arange(0, start)]
            groups, cur = [], [idx[0]]
            for a, b in zip(idx[:-1], idx[1:]):
                if (ang[b] - ang[a]) % (2 * np.pi) > np.radians(6):
                    groups.append(np.array(cur))
                    cur = []
                cur.append(b)
            groups.append(np.array(cur))
        if lone:
            big = max(groups, key=len)
            span = (ang[big[-1]] - ang[big[0]]) % (2 * np.pi)
            if len(groups) < 2 or span > np.radians(150):
                continue  # a ring or a single huge arc is not the lone-arc case
            keep = big
        else:
            if len(groups) < 2:
                continue
            keep = np.concatenate(groups)
        if len(keep) > max_points:
            keep = np.sort(rng.choice(keep, max_points, replace=False))
        if len(keep) < 5:
            continue
        x, y = _clicks(rng, pts[keep, 0], pts[keep, 1], click_pix)
        cx, cy = rng.normal(0, click_pix * PIXEL_ARCSEC, 2)
        return Case(x, y, np.full(len(keep), "A"), np.full(len(keep), "arc"), te, q,
                    (float(cx), float(cy), click_pix * PIXEL_ARCSEC), lenses)


def fit_case(case: Case, *, use_center: bool = True, click_pix: float = 1.0, seed: int = 1):
    from lensmass.core.lens_model import fit_lens_model_arcsec

    fit, _ = fit_lens_model_arcsec(case.x, case.y, case.system, case.kind,
                                   point_err_arcsec=click_pix * PIXEL_ARCSEC,
                                   center=case.center if use_center else None, seed=seed, summary=False,
                                   draws=2000)
    return fit


def coverage(fits_and_truths):
    """Fractions of cases whose 68% / 95% central intervals of theta_E contain the truth, and the
    fractional errors of the medians."""
    in68 = in95 = 0
    rel = []
    for fit, truth in fits_and_truths:
        p = np.percentile(fit.draws[:, 0], [2.5, 16, 50, 84, 97.5])
        in68 += p[1] <= truth <= p[3]
        in95 += p[0] <= truth <= p[4]
        rel.append(p[2] / truth - 1)
    n = len(fits_and_truths)
    return in68 / n, in95 / n, np.array(rel)
