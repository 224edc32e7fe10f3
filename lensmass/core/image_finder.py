"""All images of a point source behind an SIE + external shear lens, robust near the critical curves.

For an isothermal lens the deflection of the SIE depends only on the direction from the centre
(it is homogeneous of degree 0), so along the ray theta = c + r n(phi) the lens equation reads

    beta - c + alpha_SIE(phi) = r (I - Gamma) n(phi),

with Gamma the external-shear matrix. An image is a direction phi where the left side is parallel
to (I - Gamma) n with r > 0: the roots of one smooth periodic function of phi (the 2-D cross
product of the two vectors). Roots are bracketed on a fine grid of angles and bisected, so images
that are about to merge on the critical curve are found as long as they are more than one grid step
apart in angle (0.09 deg by default), and nothing depends on a starting guess. The singular lens has
no finite central image (it is infinitely demagnified); none is returned.

References
----------
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001 (lens equation); Keeton (2001),
arXiv:astro-ph/0102341 (the SIE deflection, homogeneous of degree 0).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lensmass.core.sie import SIEShear, magnification, sie_deflection

DEFAULT_ANGLES = 4096


@dataclass(frozen=True)
class PointImages:
    """Images of one point source: positions (arcsec), signed magnifications, ray angles."""

    x: np.ndarray
    y: np.ndarray
    magnification: np.ndarray

    @property
    def n(self) -> int:
        return int(self.x.size)


def _cross_and_radius(lens: SIEShear, beta_x: float, beta_y: float, phi: np.ndarray):
    nx, ny = np.cos(phi), np.sin(phi)
    ax, ay = sie_deflection(lens, lens.x0 + nx, lens.y0 + ny)
    vx, vy = beta_x - lens.x0 + ax, beta_y - lens.y0 + ay
    bx = (1 - lens.gamma1) * nx - lens.gamma2 * ny
    by = -lens.gamma2 * nx + (1 + lens.gamma1) * ny
    cross = vx * by - vy * bx
    radius = (vx * bx + vy * by) / (bx * bx + by * by)
    return cross, radius


def find_images(lens: SIEShear, beta_x: float, beta_y: float, *, n_angles: int = DEFAULT_ANGLES,
                iterations: int = 50) -> PointImages:
    """All images of a point source at (beta_x, beta_y) arcsec (lens parameters scalar).

    Examples
    --------
    An SIS images a source at beta into theta_E + beta and theta_E - beta (Narayan & Bartelmann 1996):

    >>> im = find_images(SIEShear(1.0), 0.25, 0.0)
    >>> np.round(np.sort(im.x), 6).tolist()
    [-0.75, 1.25]
    """
    phi = np.linspace(0.0, 2 * np.pi, int(n_angles) + 1)
    cross, _ = _cross_and_radius(lens, beta_x, beta_y, phi)
    idx = np.flatnonzero(np.sign(cross[:-1]) * np.sign(cross[1:]) < 0)
    exact = phi[:-1][cross[:-1] == 0]  # a root falling exactly on a grid angle
    lo, hi = phi[idx], phi[idx + 1]
    f_lo = cross[idx]
    for _ in range(int(iterations)):  # bisection on every bracket at once
        mid = 0.5 * (lo + hi)
        f_mid, _ = _cross_and_radius(lens, beta_x, beta_y, mid)
        left = np.sign(f_mid) == np.sign(f_lo)
        lo = np.where(left, mid, lo)
        f_lo = np.where(left, f_mid, f_lo)
        hi = np.where(left, hi, mid)
    root = np.concatenate([0.5 * (lo + hi), exact])
    _, r = _cross_and_radius(lens, beta_x, beta_y, root)
    keep = r > 1e-9
    root, r = root[keep], r[keep]
    x = lens.x0 + r * np.cos(root)
    y = lens.y0 + r * np.sin(root)
    if x.size > 1:  # a root exactly on a grid node is bracketed twice
        order = np.argsort(root)
        x, y, root = x[order], y[order], root[order]
        distinct = np.concatenate([[True], np.hypot(np.diff(x), np.diff(y)) > 1e-9])
        x, y = x[distinct], y[distinct]
    return PointImages(x, y, magnification(lens, x, y))
