"""Synthetic data of a merging cluster: several NFW halos, their galaxies, hot gas and X-ray counts.

For tests and the demo (pure arrays, seeded). The lensing is exact for the sum of the
halos: convergences and complex shears add (Bartelmann & Schneider 2001, Phys. Rep. 340,
291, sec. 3), each NFW halo from Wright & Brainerd (2000, ApJ 534, 34) via
:mod:`lensmass.core.nfw`, and the ellipticities take the reduced shear g = gamma / (1 - kappa)
with the exact mapping of Seitz & Schneider (1997) (:mod:`lensmass.core.shear_simulation`).
The gas is a sum of beta models, n_e ~ (1 + r^2/r_c^2)^(-3 beta / 2) (Cavaliere &
Fusco-Femiano 1976, A&A 49, 137), whose X-ray surface brightness is
S(R) ~ (1 + R^2/r_c^2)^(-3 beta + 1/2); the counts image is Poisson.
"""

from __future__ import annotations

import numpy as np

from lensmass.core.concentration import concentration_relation
from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.cosmology import little_h
from lensmass.core.lensing import sigma_crit_msun_per_mpc2
from lensmass.core.nfw import nfw_convergence, nfw_halo, nfw_shear
from lensmass.core.shear_profile import lensing_efficiency
from lensmass.core.shear_simulation import apply_reduced_shear, intrinsic_ellipticities, smail_redshifts


def halos_kappa_gamma(x_arcsec, y_arcsec, halos, beta, z_l: float, cosmo, d_l_mpc: float,
                      concentration: str = "duffy08", halo_definition: str = "200c"):
    """Convergence and complex shear (east/north frame) of a sum of NFW halos at each position.

    ``halos`` is a sequence of mappings with ``x_arcsec``, ``y_arcsec``, ``m200_msun`` and optionally
    ``c200``; ``beta`` = D_ls / D_s per position (scalar or array).
    """
    x = np.asarray(x_arcsec, float)
    y = np.asarray(y_arcsec, float)
    sigma_cr = sigma_crit_msun_per_mpc2(d_l_mpc, 1.0, 1.0) / np.asarray(beta, float)
    kappa = np.zeros(np.broadcast(x, y).shape)
    gamma = np.zeros_like(kappa, dtype=complex)
    for h in halos:
        c = halo_concentration(h, z_l, cosmo, concentration, halo_definition)
        halo = nfw_halo(h["m200_msun"], c, z_l, cosmo, halo_definition)
        dx, dy = x - h["x_arcsec"], y - h["y_arcsec"]
        r2 = dx * dx + dy * dy
        r_mpc = np.sqrt(r2) * ARCSEC_RAD * d_l_mpc
        kappa = kappa + nfw_convergence(r_mpc, halo, sigma_cr)
        with np.errstate(invalid="ignore", divide="ignore"):
            phase = np.where(r2 > 0, (dx + 1j * dy) ** 2 / np.where(r2 > 0, r2, 1.0), 1.0)
        gamma = gamma - nfw_shear(r_mpc, halo, sigma_cr) * phase
    return kappa, gamma


def halo_concentration(h, z_l: float, cosmo, concentration: str = "duffy08", halo_definition: str = "200c") -> float:
    if h.get("c200") is not None:
        return float(h["c200"])
    c_of_m, _ = concentration_relation(concentration, halo_definition)
    return float(c_of_m(h["m200_msun"], z_l, little_h(cosmo)))


def simulate_multi_halo_shear(halos, *, z_l: float, cosmo, field_arcsec: float = 1200.0,
                              density_per_arcmin2: float = 30.0, shape_noise: float = 0.25,
                              z_s: float | None = None, concentration: str = "duffy08",
                              halo_definition: str = "200c", seed: int | None = 0) -> dict:
    """A lensed shape catalogue (offsets from the field centre) behind several NFW halos.

    Returns ``x_arcsec``, ``y_arcsec``, ``e1``, ``e2``, ``weight``, ``z`` (true source redshifts,
    Smail et al. 1994 n(z) unless ``z_s`` is fixed) and ``beta``.
    """
    rng = np.random.default_rng(seed)
    n = int(rng.poisson(density_per_arcmin2 * (field_arcsec / 60.0) ** 2))
    half = 0.5 * field_arcsec
    x = rng.uniform(-half, half, n)
    y = rng.uniform(-half, half, n)
    z = np.full(n, float(z_s)) if z_s is not None else smail_redshifts(n, rng)
    behind = z > z_l
    beta, _, d_l = lensing_efficiency(z_l, np.where(behind, z, z_l + 1.0), cosmo)
    beta = np.where(behind, beta, 0.0)
    kappa, gamma = halos_kappa_gamma(x, y, halos, np.where(behind, beta, 1.0), z_l, cosmo, d_l,
                                     concentration, halo_definition)
    g = np.where(behind, gamma / (1.0 - kappa), 0.0)
    e = apply_reduced_shear(intrinsic_ellipticities(n, shape_noise, rng), g)
    return {"x_arcsec": x, "y_arcsec": y, "e1": e.real, "e2": e.imag, "weight": np.ones(n), "z": z,
            "beta": beta, "d_l_mpc": float(d_l)}


def beta_model_image(shape, components, pixel_arcsec: float, center_xy) -> np.ndarray:
    """Sum of beta-model surface brightnesses on a pixel grid (counts per pixel per unit exposure).

    ``components``: mappings with ``x_arcsec``, ``y_arcsec`` (from ``center_xy``, the pixel at offset 0,
    x along +columns, y along +rows), ``core_arcsec``, ``beta``, ``peak`` (per pixel).
    """
    yy, xx = np.mgrid[0:shape[0], 0:shape[1]].astype(float)
    out = np.zeros(shape)
    for c in components:
        dx = (xx - center_xy[0]) * pixel_arcsec - c["x_arcsec"]
        dy = (yy - center_xy[1]) * pixel_arcsec - c["y_arcsec"]
        out += c["peak"] * (1.0 + (dx * dx + dy * dy) / c["core_arcsec"] ** 2) ** (-3.0 * c["beta"] + 0.5)
    return out
