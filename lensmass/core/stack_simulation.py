"""Synthetic lens populations for stacked galaxy-galaxy lensing (pure arrays; for tests and benchmarks).

Lenses are NFW haloes (Wright & Brainerd 2000 via :mod:`lensmass.core.nfw`, c from a c(M)
relation) placed uniformly on a patch of sky with redshifts uniform in a range; sources are
uniform on the same patch with redshifts from n(z) ~ z^2 exp[-(z/z0)^1.5] (Smail et al. 1994).
Every source feels the shear and convergence of every lens in front of it within
``truncate_mpc`` (summed: the weak-field superposition; the field's mean convergence is
subtracted, since convergence is measured against the mean density), is given the reduced shear
g = gamma / (1 - kappa) exactly (Seitz & Schneider 1997, via
:func:`lensmass.core.shear_simulation.apply_reduced_shear`), and optionally an additive shear
systematic (c1, c2) such as an uncorrected PSF leaves (common practice).
"""

from __future__ import annotations

from itertools import chain

import numpy as np

from lensmass.core.concentration import concentration_relation
from lensmass.core.cosmology import distance_grid, little_h
from lensmass.core.shear_simulation import (
    apply_reduced_shear,
    intrinsic_ellipticities,
    smail_redshifts,
)
from lensmass.core.stacking import pair_offsets, pair_sigma_cr, unit_vectors


def uniform_sky(n: int, ra_range, dec_range, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Points uniform on the sphere inside an RA/Dec box (uniform in RA and in sin Dec)."""
    ra = rng.uniform(ra_range[0], ra_range[1], n)
    s = rng.uniform(np.sin(np.radians(dec_range[0])), np.sin(np.radians(dec_range[1])), n)
    return ra, np.degrees(np.arcsin(s))


def simulate_stack(*, n_lenses: int, n_sources: int, m200_msun: float, cosmo, ra_range=(30.0, 32.0),
                   dec_range=(-1.0, 1.0), z_lens_range=(0.2, 0.4), sigma_e: float = 0.25, z0: float = 0.7,
                   additive=(0.0, 0.0), concentration="duffy08", halo_definition: str = "200c",
                   truncate_mpc: float = 4.0, point_mass_msun: float = 0.0, seed: int = 0) -> dict[str, np.ndarray]:
    """Lenses (``lens_ra``, ``lens_dec``, ``lens_z``) and lensed sources (``ra``, ``dec``, ``e1``, ``e2``,
    ``weight``, ``z``) of one realisation; ``point_mass_msun`` adds a point mass at each lens centre
    (the galaxy's stars: gamma_t = M / (pi R^2 Sigma_cr), no convergence off the centre; common practice)."""
    from scipy.spatial import cKDTree

    from lensmass.core.nfw import nfw_convergence, nfw_halo, nfw_shear

    rng = np.random.default_rng(seed)
    lra, ldec = uniform_sky(n_lenses, ra_range, dec_range, rng)
    lz = rng.uniform(z_lens_range[0], z_lens_range[1], n_lenses)
    sra, sdec = uniform_sky(n_sources, ra_range, dec_range, rng)
    sz = smail_redshifts(n_sources, rng, z0=z0)
    e_int = intrinsic_ellipticities(n_sources, sigma_e, rng) if sigma_e > 0 else np.zeros(n_sources, complex)
    c_of_m, _ = concentration_relation(concentration, halo_definition)
    h = little_h(cosmo)
    grid = distance_grid(cosmo)
    dc_l = grid.comoving_mpc(lz)
    d_l = grid.transverse_mpc(dc_l) / (1 + lz)
    dc_s = grid.comoving_mpc(sz)
    gamma = np.zeros(n_sources, complex)
    kappa = np.zeros(n_sources)
    tree = cKDTree(unit_vectors(sra, sdec))
    found = tree.query_ball_point(unit_vectors(lra, ldec), 2 * np.sin(truncate_mpc / d_l / 2), return_sorted=False)
    counts = np.fromiter(map(len, found), np.intp, n_lenses)
    j_all = np.fromiter(chain.from_iterable(found), np.intp, int(counts.sum()))
    i_all = np.repeat(np.arange(n_lenses), counts)
    m = np.full(n_lenses, float(m200_msun))
    c_l = c_of_m(m, lz, h)
    for start in range(0, j_all.size, 1 << 20):  # pairs in chunks
        j, i = j_all[start:start + (1 << 20)], i_all[start:start + (1 << 20)]
        behind = sz[j] > lz[i]
        j, i = j[behind], i[behind]
        dl_, ds_ = np.radians(ldec[i]), np.radians(sdec[j])
        x, y, theta = pair_offsets(np.radians(lra[i]), np.sin(dl_), np.cos(dl_), np.radians(sra[j]), np.sin(ds_),
                                   np.cos(ds_))
        r = d_l[i] * theta
        sigma_cr = pair_sigma_cr(grid, dc_l[i], d_l[i], dc_s[j], sz[j])
        halo = nfw_halo(m[i], c_l[i], lz[i], cosmo, halo_definition)
        g_t = nfw_shear(r, halo, sigma_cr)
        if point_mass_msun:
            g_t = g_t + point_mass_msun / (np.pi * r * r * sigma_cr)
        phi = np.arctan2(y, x)
        np.add.at(gamma, j, -g_t * np.exp(2j * phi))  # tangential shear in the east/north convention
        np.add.at(kappa, j, nfw_convergence(r, halo, sigma_cr))
    # convergence is relative to the mean density: without this a dense population adds a positive mass sheet
    # that raises every g = gamma / (1 - kappa) (common practice)
    behind_any = sz > lz.min()
    kappa[behind_any] -= kappa[behind_any].mean()
    e = apply_reduced_shear(e_int, gamma / (1 - kappa)) + complex(*additive)
    return {"lens_ra": lra, "lens_dec": ldec, "lens_z": lz, "ra": sra, "dec": sdec, "e1": e.real, "e2": e.imag,
            "weight": np.ones(n_sources), "z": sz}
