"""Synthetic shape catalogues lensed by an SIS or NFW halo (pure arrays; for demos and tests).

Galaxies are placed uniformly on the tangent plane around the lens, given redshifts
(fixed, or drawn from n(z) ~ z^a exp[-(z/z0)^b], Smail et al. 1994, MNRAS 270, 245),
intrinsic ellipticities (a Gaussian per component, truncated at |e| < 1), and then the
exact reduced-shear distortion of Seitz & Schneider (1997, A&A 318, 687), eq. (3.2):
  e = (e_s + g) / (1 + conj(g) e_s)            for |g| <= 1,
  e = (1 + g conj(e_s)) / (conj(e_s) + conj(g)) for |g| > 1,
with g = gamma / (1 - kappa) from the core SIS/NFW functions and each galaxy's Sigma_cr.
A tangential shear about the centre is gamma = -gamma_t exp(2 i phi) in the east/north
convention of :mod:`lensmass.core.shear_profile`. Galaxies in front of the lens are not lensed.
"""

from __future__ import annotations

import numpy as np

from lensmass.core.concentration import concentration_relation
from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.cosmology import little_h
from lensmass.core.errors import LensInputError
from lensmass.core.nfw import nfw_convergence, nfw_halo, nfw_shear
from lensmass.core.shear_profile import lensing_efficiency, radius_arcsec, tangent_plane_to_sky
from lensmass.core.sis import sis_convergence, sis_shear, sis_theta_e_arcsec


def smail_redshifts(n: int, rng: np.random.Generator, z0: float = 0.7, a: float = 2.0, b: float = 1.5) -> np.ndarray:
    """Draws from n(z) ~ z^a exp[-(z/z0)^b] (Smail et al. 1994): (z/z0)^b is Gamma((a+1)/b)-distributed."""
    return z0 * rng.gamma((a + 1.0) / b, 1.0, int(n)) ** (1.0 / b)


def intrinsic_ellipticities(n: int, sigma: float, rng: np.random.Generator) -> np.ndarray:
    """Complex ellipticities, Gaussian of width ``sigma`` per component, redrawn until |e| < 1."""
    e = rng.normal(0, sigma, n) + 1j * rng.normal(0, sigma, n)
    bad = np.abs(e) >= 1
    while np.any(bad):
        e[bad] = rng.normal(0, sigma, bad.sum()) + 1j * rng.normal(0, sigma, bad.sum())
        bad = np.abs(e) >= 1
    return e


def apply_reduced_shear(e_source, g) -> np.ndarray:
    """Lensed complex ellipticity from the intrinsic one (Seitz & Schneider 1997, eq. 3.2).

    Examples
    --------
    >>> complex(apply_reduced_shear(0j, 0.1 + 0.05j))  # a round source takes the shear itself
    (0.1+0.05j)
    """
    es = np.asarray(e_source, complex)
    g = np.asarray(g, complex)
    with np.errstate(invalid="ignore", divide="ignore"):
        weak = (es + g) / (1 + np.conj(g) * es)
        strong = (1 + g * np.conj(es)) / (np.conj(es) + np.conj(g))
    return np.where(np.abs(g) <= 1, weak, strong)


def halo_reduced_shear(theta_arcsec, beta, sigma_cr_msun_per_mpc2, d_l_mpc: float, *, model: str,
                       z_l: float, cosmo, sigma_v_kms: float | None = None, m200_msun: float | None = None,
                       concentration: float | None = None, halo_definition: str = "200c") -> np.ndarray:
    """Tangential reduced shear g_t of the halo at each galaxy (real array)."""
    theta = np.asarray(theta_arcsec, float)
    if model == "sis":
        theta_e = sis_theta_e_arcsec(sigma_v_kms, 1.0, beta)
        kappa, gamma = sis_convergence(theta, theta_e), sis_shear(theta, theta_e)
    elif model == "nfw":
        halo = nfw_halo(m200_msun, concentration, z_l, cosmo, halo_definition)
        r = theta * ARCSEC_RAD * d_l_mpc
        kappa = nfw_convergence(r, halo, sigma_cr_msun_per_mpc2)
        gamma = nfw_shear(r, halo, sigma_cr_msun_per_mpc2)
    else:
        raise LensInputError(f"Unknown halo model '{model}': use 'sis' or 'nfw'.")
    return gamma / (1.0 - kappa)


def simulate_shear_catalog(
    *,
    center_ra: float,
    center_dec: float,
    z_l: float,
    cosmo,
    field_arcsec: float = 1200.0,
    density_per_arcmin2: float = 30.0,
    n_galaxies: int | None = None,
    model: str = "nfw",
    m200_msun: float = 8e14,
    concentration: str | float = "duffy08",
    halo_definition: str = "200c",
    sigma_v_kms: float = 1000.0,
    shape_noise: float = 0.25,
    z_s: float | None = None,
    photo_z_scatter: float = 0.0,
    measurement_noise: tuple[float, float] | None = None,
    hole_arcsec: float = 0.0,
    seed: int | None = 0,
) -> dict:
    """A lensed shape catalogue around a halo, as arrays, plus the truth.

    Returns a dict with ``ra``, ``dec``, ``e1``, ``e2``, ``weight``, ``z`` (observed:
    true z plus photometric scatter ``photo_z_scatter`` (1 + z), or None with a fixed
    ``z_s``), ``z_true``, ``g1``, ``g2`` (true reduced shear) and ``truth`` (model parameters).
    ``measurement_noise=(lo, hi)`` adds Gaussian noise of a per-galaxy width drawn
    uniformly in [lo, hi] and sets weight = 1 / (shape_noise^2 + width^2).
    """
    rng = np.random.default_rng(seed)
    n = int(n_galaxies) if n_galaxies is not None else int(rng.poisson(density_per_arcmin2 * (field_arcsec / 60.0) ** 2))
    half = 0.5 * field_arcsec
    x = rng.uniform(-half, half, n)
    y = rng.uniform(-half, half, n)
    if hole_arcsec > 0:
        out = np.hypot(x, y) < hole_arcsec
        while np.any(out):
            x[out] = rng.uniform(-half, half, out.sum())
            y[out] = rng.uniform(-half, half, out.sum())
            out = np.hypot(x, y) < hole_arcsec
    z_true = np.full(n, float(z_s)) if z_s is not None else smail_redshifts(n, rng)
    behind = z_true > z_l
    beta, sigma_cr, d_l = lensing_efficiency(z_l, np.where(behind, z_true, z_l + 1.0), cosmo)
    c_value = None
    truth = {"model": model, "z_l": z_l, "center_ra": center_ra, "center_dec": center_dec}
    if model == "nfw":
        if isinstance(concentration, str):
            c_of_m, label = concentration_relation(concentration, halo_definition)
            c_value = float(c_of_m(m200_msun, z_l, little_h(cosmo)))
        else:
            c_value, label = float(concentration), f"fixed c = {float(concentration):g}"
        truth.update(m200_msun=float(m200_msun), c200=c_value, concentration_relation=label,
                     halo_definition=halo_definition)
    else:
        truth.update(sigma_v_kms=float(sigma_v_kms))
    theta = radius_arcsec(x, y)
    g_t = halo_reduced_shear(theta, beta, sigma_cr, d_l, model=model, z_l=z_l, cosmo=cosmo, sigma_v_kms=sigma_v_kms,
                             m200_msun=m200_msun, concentration=c_value, halo_definition=halo_definition)
    g_t = np.where(behind, g_t, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        phase = (x + 1j * y) ** 2 / (x * x + y * y)  # exp(2 i phi)
    g = -g_t * np.where(np.isfinite(phase), phase, 1.0)
    e_s = intrinsic_ellipticities(n, shape_noise, rng) if shape_noise > 0 else np.zeros(n, complex)
    e = apply_reduced_shear(e_s, g)
    weight = np.ones(n)
    if measurement_noise is not None:
        width = rng.uniform(measurement_noise[0], measurement_noise[1], n)
        e = e + width * (rng.normal(size=n) + 1j * rng.normal(size=n))
        weight = 1.0 / (shape_noise**2 + width**2)
    z_obs = None
    if z_s is None:
        z_obs = z_true + photo_z_scatter * (1 + z_true) * rng.normal(size=n) if photo_z_scatter else z_true.copy()
        z_obs = np.maximum(z_obs, 0.0)
    ra, dec = tangent_plane_to_sky(x, y, center_ra, center_dec)
    return {"ra": ra, "dec": dec, "e1": e.real, "e2": e.imag, "weight": weight, "z": z_obs, "z_true": z_true,
            "g1": g.real, "g2": g.imag, "x_arcsec": x, "y_arcsec": y, "truth": truth}
