"""Critical curve, caustic and cut of an SIE + external shear lens, in closed form.

With the SIE Hessian K(phi) / r (K = theta_E t t^T / sqrt(q cos^2 phi' + sin^2 phi' / q), t the unit
tangent; :func:`lensmass.core.sie.hessian`) and B = I - Gamma for the shear,
det(I - Hessian) = det B - tr(adj(B) K) / r because det K = 0. So the tangential critical curve is
r(phi) = tr(adj(B) K(phi)) / det B, one point per direction; for no shear it is the ellipse
q x'^2 + y'^2 / q = theta_E^2. The caustic is its image under the lens equation; the cut (the
pseudo-caustic of a singular lens, where the central image would vanish) is beta = c - alpha_SIE(phi)
as r -> 0 (Kormann, Schneider & Bartelmann 1994, sec. 4).
"""

from __future__ import annotations

import numpy as np

from lensmass.core.sie import SIEShear, convergence, sie_deflection, source_position


def critical_curve(lens: SIEShear, n: int = 721) -> tuple[np.ndarray, np.ndarray]:
    """Tangential critical curve, ``n`` points closed (first = last), arcsec.

    Examples
    --------
    >>> x, y = critical_curve(SIEShear(1.5))
    >>> bool(np.allclose(np.hypot(x, y), 1.5))
    True
    """
    phi = np.linspace(0, 2 * np.pi, int(n))
    nx, ny = np.cos(phi), np.sin(phi)
    k = 2 * convergence(lens, lens.x0 + nx, lens.y0 + ny)  # K = 2 kappa(r = 1) t t^T
    tx, ty = -ny, nx
    b11, b22, b12 = 1 - lens.gamma1, 1 + lens.gamma1, -lens.gamma2
    trace = k * (b22 * tx * tx + b11 * ty * ty - 2 * b12 * tx * ty)
    r = trace / (b11 * b22 - b12 * b12)
    return lens.x0 + r * nx, lens.y0 + r * ny


def caustic(lens: SIEShear, n: int = 721) -> tuple[np.ndarray, np.ndarray]:
    """The tangential caustic: the critical curve mapped to the source plane (arcsec)."""
    return source_position(lens, *critical_curve(lens, n))


def cut(lens: SIEShear, n: int = 721) -> tuple[np.ndarray, np.ndarray]:
    """The cut (pseudo-caustic): sources inside it have an extra pair of images (arcsec)."""
    phi = np.linspace(0, 2 * np.pi, int(n))
    ax, ay = sie_deflection(lens, lens.x0 + np.cos(phi), lens.y0 + np.sin(phi))
    return lens.x0 - ax, lens.y0 - ay


def polygon_area(x, y) -> float:
    """Area of a closed polygon (shoelace formula)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    return float(0.5 * abs(np.dot(x[:-1], y[1:]) - np.dot(x[1:], y[:-1])))
