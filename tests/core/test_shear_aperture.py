"""Aperture densitometry, the zeta statistic (lensmass.core.aperture_mass)."""

import numpy as np
import pytest

from lensmass.core.aperture_mass import zeta_from_profile, zeta_mass_bound_msun, zeta_prefactor
from lensmass.core.cosmology import resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.nfw import nfw_halo, nfw_mass_2d_msun
from lensmass.core.shear_analysis import analyse_shear_catalog
from lensmass.core.shear_profile import radial_bin_edges, shear_profile
from lensmass.core.shear_simulation import simulate_shear_catalog

COSMO = resolve_cosmology("Planck18")


def test_zeta_of_analytic_sis_field_two_routes():
    # Fahlman et al. (1994), eq. (4): zeta = 2/(1 - t1^2/t2^2) int gamma_t dln theta.
    # Second route, from the definition: mean kappa(<t1) - mean kappa(t1..t2) with the SIS
    # kappa = theta_E / (2 theta) (Narayan & Bartelmann 1996): theta_E/t1 - theta_E/(t1 + t2).
    theta_e, t1, t2 = 12.0, 60.0, 300.0
    rng = np.random.default_rng(4)
    # galaxies uniform in area in the annulus, with the exact SIS shear
    theta = np.sqrt(rng.uniform(t1**2, t2**2, 200000))
    gamma = theta_e / (2 * theta)
    edges = radial_bin_edges(t1, t2, 32)
    p = shear_profile(theta, gamma, 0 * gamma, np.ones_like(theta), edges)
    zeta, err = zeta_from_profile(edges, p.g_t, p.g_t_err, t1, t2)
    expected = theta_e / t1 - theta_e / (t1 + t2)
    assert zeta == pytest.approx(expected, rel=2e-3)
    assert err < 1e-3 * zeta


def test_zeta_mass_is_a_lower_bound_for_nfw():
    # Fahlman et al. (1994): pi R1^2 Sigma_cr zeta <= M_2D(<R1), since the annulus kappa is >= 0;
    # the projected NFW mass is from Wright & Brainerd (2000) via the core.
    sim = simulate_shear_catalog(center_ra=141.372, center_dec=18.2705, z_l=0.35, cosmo=COSMO, n_galaxies=30000,
                                 model="nfw", m200_msun=8e14, z_s=1.5, shape_noise=0.0, seed=3)
    r = analyse_shear_catalog(sim["ra"], sim["dec"], sim["e1"], sim["e2"], z_l=0.35, z_s=1.5, center_ra=141.372,
                              center_dec=18.2705, cosmology=COSMO, r_min=2.0, r_max=9.0, n_bootstrap=0,
                              zeta_radii=(3.0, 9.0))
    halo = nfw_halo(8e14, sim["truth"]["c200"], 0.35, COSMO)
    true_m2d = float(nfw_mass_2d_msun(r["zeta_radius_kpc"] / 1e3, halo))
    assert 0.5 * true_m2d < r["zeta_mass_msun"] < true_m2d


def test_zeta_inputs_checked():
    with pytest.raises(LensInputError, match="inner < outer"):
        zeta_prefactor(5.0, 2.0)
    assert zeta_prefactor(1.0, 2.0) == pytest.approx(8.0 / 3.0)
    assert zeta_mass_bound_msun(1.0, 1.0 / np.pi) == pytest.approx(1.0)
