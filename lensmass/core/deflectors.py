"""Lens deflectors and ray shooting: SIS, SIE, NFW and external shear; deflection, convergence,
source positions, magnification and the images of a point source.

Angles are arcsec in the lens plane, measured from the image's reference point;
``x`` runs along the array's columns and ``y`` along its rows. The lens equation
is beta = theta - alpha(theta) (Narayan & Bartelmann 1996, eq. 21).

References
----------
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001: lens equation, SIS (alpha = theta_E),
magnification mu = 1 / det(d beta / d theta), external shear potential.
Kormann, Schneider & Bartelmann (1994), A&A 284, 285 and Keeton (2001), astro-ph/0102341, eq. (27)
(s = 0): deflection of the singular isothermal ellipsoid (SIE). Here kappa = theta_E /
(2 sqrt(q x'^2 + y'^2 / q)) with x' along the major axis, so the critical curve is the ellipse
of semi-axes theta_E / sqrt(q), theta_E sqrt(q) and equal area to the circle of radius theta_E.
Bartelmann (1996), A&A 313, 697: NFW deflection alpha = mean_Sigma(<R) R / Sigma_cr (via lensmass.core.nfw).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np

from lensmass.core.constants import ARCSEC_RAD


# ----------------------------------------------------------------------------------------------- lenses
@dataclass(frozen=True)
class SISLens:
    """Singular isothermal sphere of Einstein radius ``theta_e_arcsec`` centred at (x0, y0)."""

    theta_e_arcsec: float
    x0: float = 0.0
    y0: float = 0.0

    def deflection(self, x, y):
        dx, dy = x - self.x0, y - self.y0
        r = np.hypot(dx, dy)
        with np.errstate(invalid="ignore", divide="ignore"):
            f = np.where(r > 0, self.theta_e_arcsec / r, 0.0)
        return f * dx, f * dy

    def convergence(self, x, y):
        r = np.hypot(x - self.x0, y - self.y0)
        with np.errstate(divide="ignore"):
            return self.theta_e_arcsec / (2 * r)

    def describe(self) -> dict:
        return {"model": "SIS", "theta_e_arcsec": self.theta_e_arcsec, "x0_arcsec": self.x0, "y0_arcsec": self.y0}


@dataclass(frozen=True)
class SIELens:
    """Singular isothermal ellipsoid: axis ratio q = b/a, major axis at ``angle_deg`` from +x towards +y."""

    theta_e_arcsec: float
    axis_ratio: float
    angle_deg: float = 0.0
    x0: float = 0.0
    y0: float = 0.0

    def _rotate(self, x, y):
        c, s = np.cos(np.radians(self.angle_deg)), np.sin(np.radians(self.angle_deg))
        dx, dy = x - self.x0, y - self.y0
        return c * dx + s * dy, -s * dx + c * dy, c, s

    def deflection(self, x, y):
        q = float(self.axis_ratio)
        if abs(1 - q) < 1e-6:
            return SISLens(self.theta_e_arcsec, self.x0, self.y0).deflection(x, y)
        xp, yp, c, s = self._rotate(x, y)
        qp = np.sqrt(1 - q * q)
        psi = np.hypot(q * xp, yp)
        amp = self.theta_e_arcsec * np.sqrt(q) / qp
        with np.errstate(invalid="ignore", divide="ignore"):
            ax = amp * np.arctan(np.where(psi > 0, qp * xp / psi, 0.0))
            ay = amp * np.arctanh(np.where(psi > 0, qp * yp / psi, 0.0))
        return c * ax - s * ay, s * ax + c * ay

    def convergence(self, x, y):
        xp, yp, _, _ = self._rotate(x, y)
        q = float(self.axis_ratio)
        with np.errstate(divide="ignore"):
            return self.theta_e_arcsec / (2 * np.sqrt(q * xp**2 + yp**2 / q))

    def describe(self) -> dict:
        return {"model": "SIE", "theta_e_arcsec": self.theta_e_arcsec, "axis_ratio": self.axis_ratio,
                "angle_deg": self.angle_deg, "x0_arcsec": self.x0, "y0_arcsec": self.y0,
                "normalisation": "kappa = theta_E / (2 sqrt(q x'^2 + y'^2/q)); critical curve area = pi theta_E^2"}


@dataclass(frozen=True)
class NFWLens:
    """NFW halo (see :func:`lensmass.core.nfw.nfw_halo`) at lens/source distances in Mpc."""

    halo: Any
    d_l_mpc: float
    sigma_cr_msun_per_mpc2: float
    x0: float = 0.0
    y0: float = 0.0

    def _kappa_mean_and_r(self, x, y):
        from lensmass.core.nfw import nfw_mean_surface_density_msun_per_mpc2

        dx, dy = x - self.x0, y - self.y0
        r = np.hypot(dx, dy)
        r_mpc = np.maximum(r, 1e-6) * ARCSEC_RAD * self.d_l_mpc
        kbar = nfw_mean_surface_density_msun_per_mpc2(r_mpc, self.halo) / self.sigma_cr_msun_per_mpc2
        return kbar, r, dx, dy

    def deflection(self, x, y):
        kbar, r, dx, dy = self._kappa_mean_and_r(x, y)
        # alpha(theta) = theta * mean kappa(<theta), radial (Bartelmann 1996)
        return kbar * dx, kbar * dy

    def convergence(self, x, y):
        from lensmass.core.nfw import nfw_surface_density_msun_per_mpc2

        r = np.hypot(x - self.x0, y - self.y0)
        r_mpc = np.maximum(r, 1e-6) * ARCSEC_RAD * self.d_l_mpc
        return nfw_surface_density_msun_per_mpc2(r_mpc, self.halo) / self.sigma_cr_msun_per_mpc2

    def describe(self) -> dict:
        h = self.halo
        return {"model": "NFW", "m200_msun": float(h.m_delta_msun), "c200": float(h.concentration),
                "r200_mpc": float(h.r_delta_mpc), "r_s_mpc": float(h.r_s_mpc),
                "x0_arcsec": self.x0, "y0_arcsec": self.y0}


@dataclass(frozen=True)
class ExternalShear:
    """Constant external shear (gamma1, gamma2): alpha = (g1 x + g2 y, g2 x - g1 y)."""

    gamma1: float
    gamma2: float
    x0: float = 0.0
    y0: float = 0.0

    def deflection(self, x, y):
        dx, dy = x - self.x0, y - self.y0
        return self.gamma1 * dx + self.gamma2 * dy, self.gamma2 * dx - self.gamma1 * dy

    def convergence(self, x, y):
        return np.zeros(np.broadcast(x, y).shape)

    def describe(self) -> dict:
        return {"model": "external shear", "gamma1": self.gamma1, "gamma2": self.gamma2}


def deflection_arcsec(lenses: Sequence, x, y) -> tuple[np.ndarray, np.ndarray]:
    """Total deflection (arcsec) of several lens components at angles (x, y) in arcsec.

    Examples
    --------
    >>> ax, ay = deflection_arcsec([SISLens(1.5)], np.array([3.0]), np.array([0.0]))
    >>> float(ax[0]), float(ay[0])
    (1.5, 0.0)
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    ax = np.zeros(np.broadcast(x, y).shape)
    ay = np.zeros_like(ax)
    for lens in lenses:
        dx, dy = lens.deflection(x, y)
        ax += dx
        ay += dy
    return ax, ay


def convergence(lenses: Sequence, x, y) -> np.ndarray:
    """Total convergence kappa of the lens components at (x, y) arcsec."""
    return np.asarray(sum(np.asarray(lens.convergence(np.asarray(x, float), np.asarray(y, float))) for lens in lenses))


def source_positions(lenses: Sequence, x, y) -> tuple[np.ndarray, np.ndarray]:
    """beta = theta - alpha(theta)."""
    ax, ay = deflection_arcsec(lenses, x, y)
    return np.asarray(x, float) - ax, np.asarray(y, float) - ay


def magnification(lenses: Sequence, x, y, step_arcsec: float = 1e-4) -> np.ndarray:
    """Signed magnification 1 / det(d beta / d theta), by central differences."""
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    bxp, byp = source_positions(lenses, x + step_arcsec, y)
    bxm, bym = source_positions(lenses, x - step_arcsec, y)
    bxq, byq = source_positions(lenses, x, y + step_arcsec)
    bxn, byn = source_positions(lenses, x, y - step_arcsec)
    a11 = (bxp - bxm) / (2 * step_arcsec)
    a21 = (byp - bym) / (2 * step_arcsec)
    a12 = (bxq - bxn) / (2 * step_arcsec)
    a22 = (byq - byn) / (2 * step_arcsec)
    with np.errstate(divide="ignore"):
        return 1.0 / (a11 * a22 - a12 * a21)


def point_images(lenses: Sequence, beta_x: float, beta_y: float, *, search_radius_arcsec: float,
                 grid_step_arcsec: float = 0.02, tol_arcsec: float = 1e-7) -> list[tuple[float, float, float]]:
    """All images (x, y, signed magnification) of a point source at (beta_x, beta_y).

    A grid search for minima of |beta(theta) - beta_s| seeds a root-finder
    (scipy ``root``) on the lens equation; duplicates are merged. Images inside
    ``grid_step`` of a singular centre (the central image of a singular lens) are dropped.
    """
    from scipy.ndimage import minimum_filter
    from scipy.optimize import root

    n = int(np.ceil(2 * search_radius_arcsec / grid_step_arcsec)) + 1
    g = np.linspace(-search_radius_arcsec, search_radius_arcsec, n)
    gx, gy = np.meshgrid(g, g)
    bx, by = source_positions(lenses, gx, gy)
    d = np.hypot(bx - beta_x, by - beta_y)
    cand = (d == minimum_filter(d, size=3, mode="nearest")) & (d < 4 * grid_step_arcsec)
    found: list[tuple[float, float, float]] = []
    for iy, ix in zip(*np.nonzero(cand)):
        def equation(p):
            sx, sy = source_positions(lenses, np.array([p[0]]), np.array([p[1]]))
            return [sx[0] - beta_x, sy[0] - beta_y]

        sol = root(equation, [gx[iy, ix], gy[iy, ix]], method="hybr", options={"xtol": 1e-12})
        if not sol.success or np.hypot(*equation(sol.x)) > tol_arcsec:
            continue
        px, py = (float(v) for v in sol.x)
        if any(np.hypot(px - fx, py - fy) < 1e-4 for fx, fy, _ in found):
            continue
        mu = float(magnification(lenses, np.array([px]), np.array([py]))[0])
        if not np.isfinite(mu) or abs(mu) < 1e-3:
            continue
        found.append((px, py, mu))
    return found
