"""SIS and NFW fits to reduced-shear profiles (lensmass.core.shear_fit)."""

import numpy as np
import pytest
from scipy import integrate

from lensmass.core.concentration import duffy08_concentration
from lensmass.core.cosmology import little_h, resolve_cosmology
from lensmass.core.nfw import (
    nfw_halo,
    nfw_mean_surface_density_msun_per_mpc2,
    nfw_shear,
    nfw_surface_density_msun_per_mpc2,
)
from lensmass.core.shear_fit import cross_shear_test, expected_ellipticity, fit_nfw, fit_sis
from lensmass.core.shear_profile import (
    lensing_efficiency,
    radial_bin_edges,
    radius_arcsec,
    shear_profile,
    tangential_cross,
)
from lensmass.core.shear_simulation import simulate_shear_catalog
from lensmass.core.sis import sis_theta_e_arcsec

COSMO = resolve_cosmology("Planck18")
Z_L = 0.3


def _profile(sim, z_s=None, edges=(60.0, 600.0), n_bins=6):
    x, y = sim["x_arcsec"], sim["y_arcsec"]
    th = radius_arcsec(x, y)
    et, ex = tangential_cross(sim["e1"], sim["e2"], x, y)
    z = sim["z_true"] if z_s is None else z_s
    beta, sc, d_l = lensing_efficiency(Z_L, z, COSMO)
    keep = np.broadcast_to(beta > 0, th.shape)
    bsel = np.broadcast_to(beta, th.shape)[keep]
    ssel = np.broadcast_to(sc, th.shape)[keep]
    return shear_profile(th[keep], et[keep], ex[keep], sim["weight"][keep], radial_bin_edges(*edges, n_bins),
                         beta=bsel, sigma_cr_msun_per_mpc2=ssel, d_l_mpc=d_l)


def test_nfw_shear_equals_numerical_derivative_of_mean_surface_density():
    # Wright & Brainerd (2000), eqs. (11)-(16): gamma_t Sigma_cr = mean Sigma(<R) - Sigma(R).
    # Second route: d(mean Sigma)/dR = (2/R)(Sigma - mean Sigma), so gamma_t Sigma_cr = -(R/2) d(mean Sigma)/dR,
    # with the derivative taken numerically; and mean Sigma itself by quad of 2 pi R Sigma(R).
    halo = nfw_halo(8e14, 3.1, 0.35, COSMO)
    sigma_cr = 3.0e15
    for r in (0.05, 0.3, 0.62, 1.0, 3.0):
        h = 1e-4 * r
        d_mean = (nfw_mean_surface_density_msun_per_mpc2(r + h, halo)
                  - nfw_mean_surface_density_msun_per_mpc2(r - h, halo)) / (2 * h)
        assert nfw_shear(r, halo, sigma_cr) * sigma_cr == pytest.approx(-0.5 * r * d_mean, rel=1e-6)
        inner, _ = integrate.quad(lambda s: 2 * s * nfw_surface_density_msun_per_mpc2(s, halo), 0, r,
                                  points=[float(halo.r_s_mpc)] if halo.r_s_mpc < r else None, limit=200)
        assert inner / r**2 == pytest.approx(float(nfw_mean_surface_density_msun_per_mpc2(r, halo)), rel=1e-8)


def test_expected_ellipticity_of_strong_shear_is_inverse():
    # Seitz & Schneider (1997): <e> = g for |g| <= 1, 1/g* otherwise.
    np.testing.assert_allclose(expected_ellipticity([0.3, -0.5, 2.0, -4.0]), [0.3, -0.5, 0.5, -0.25])


@pytest.mark.parametrize("z_s", [1.2, None])
def test_noiseless_sis_recovered_to_1e3(z_s):
    # Truth is the simulator's input; the model uses the same SIS formulas of the core
    # (Narayan & Bartelmann 1996), checked against them in tests/core.
    sim = simulate_shear_catalog(center_ra=10, center_dec=5, z_l=Z_L, cosmo=COSMO, n_galaxies=6000, model="sis",
                                 sigma_v_kms=900.0, z_s=z_s, shape_noise=0.0, field_arcsec=1400, seed=11)
    fit = fit_sis(_profile(sim, z_s))
    assert fit.best["sis_sigma_v_kms"] == pytest.approx(900.0, rel=1e-3)
    assert fit.median("sis_sigma_v_kms") == pytest.approx(900.0, rel=1e-3)
    assert fit.chi2 < 1.0


@pytest.mark.parametrize("z_s", [1.0, None])
def test_noiseless_nfw_recovered_to_1e3(z_s):
    sim = simulate_shear_catalog(center_ra=10, center_dec=5, z_l=Z_L, cosmo=COSMO, n_galaxies=6000, model="nfw",
                                 m200_msun=6e14, shape_noise=0.0, z_s=z_s, field_arcsec=1400, seed=12)
    fit = fit_nfw(_profile(sim, z_s), Z_L, COSMO)
    assert fit.best["nfw_m200_msun"] == pytest.approx(6e14, rel=1e-3)
    assert fit.median("nfw_m200_msun") == pytest.approx(6e14, rel=1e-3)
    # c follows Duffy et al. (2008), Table 1 full 200c: 5.71 (M / 2e12 h^-1)^-0.084 (1 + z)^-0.47.
    h = little_h(COSMO)
    assert fit.best["nfw_c200"] == pytest.approx(5.71 * (6e14 * h / 2e12) ** -0.084 * 1.3**-0.47, rel=1e-3)


def test_noiseless_nfw_with_free_concentration():
    sim = simulate_shear_catalog(center_ra=10, center_dec=5, z_l=Z_L, cosmo=COSMO, n_galaxies=8000, model="nfw",
                                 m200_msun=6e14, concentration=6.0, shape_noise=0.0, z_s=1.1, field_arcsec=1400,
                                 seed=13)
    fit = fit_nfw(_profile(sim, 1.1, edges=(30.0, 650.0), n_bins=10), Z_L, COSMO, free_concentration=True)
    assert fit.best["nfw_m200_msun"] == pytest.approx(6e14, rel=1e-2)
    assert fit.best["nfw_c200"] == pytest.approx(6.0, rel=2e-2)
    assert fit.dof == 8


def test_coverage_of_95_percent_intervals():
    # A 95% interval must contain the truth in about 95 of 100 independent realisations
    # (binomial: at least 90 with probability > 0.98); truth = the simulator's inputs.
    hits_sis = hits_nfw = 0
    for seed in range(100):
        sis_sim = simulate_shear_catalog(center_ra=10, center_dec=5, z_l=Z_L, cosmo=COSMO, n_galaxies=1500,
                                         model="sis", sigma_v_kms=900.0, z_s=1.0, field_arcsec=1000, seed=seed)
        lo, hi = fit_sis(_profile(sis_sim, 1.0, edges=(40.0, 500.0))).interval("sis_sigma_v_kms", 95)
        hits_sis += lo <= 900.0 <= hi
        nfw_sim = simulate_shear_catalog(center_ra=10, center_dec=5, z_l=Z_L, cosmo=COSMO, n_galaxies=1500,
                                         model="nfw", m200_msun=8e14, z_s=1.0, field_arcsec=1000, seed=1000 + seed)
        lo, hi = fit_nfw(_profile(nfw_sim, 1.0, edges=(40.0, 500.0)), Z_L, COSMO).interval("nfw_m200_msun", 95)
        hits_nfw += lo <= 8e14 <= hi
    assert hits_sis >= 90, hits_sis
    assert hits_nfw >= 90, hits_nfw


def test_cross_shear_test_is_uniform_under_noise():
    # Under the null, the chi^2 p-value is uniform (common practice): about 5% below 0.05.
    pvalues = []
    for seed in range(60):
        sim = simulate_shear_catalog(center_ra=10, center_dec=5, z_l=Z_L, cosmo=COSMO, n_galaxies=1500,
                                     model="sis", sigma_v_kms=900.0, z_s=1.0, field_arcsec=1000, seed=seed)
        pvalues.append(cross_shear_test(_profile(sim, 1.0, edges=(40.0, 500.0)))[2])
    assert 0.3 < np.median(pvalues) < 0.7
    assert np.mean(np.array(pvalues) < 0.05) < 0.15


def test_sis_theta_e_is_for_the_mean_beta():
    sim = simulate_shear_catalog(center_ra=10, center_dec=5, z_l=Z_L, cosmo=COSMO, n_galaxies=3000, model="sis",
                                 sigma_v_kms=700.0, z_s=None, shape_noise=0.0, seed=14)
    p = _profile(sim)
    fit = fit_sis(p)
    # theta_E = 4 pi (sigma/c)^2 D_ls/D_s (Narayan & Bartelmann 1996) at the sample's mean D_ls/D_s.
    assert fit.best["sis_theta_e_arcsec"] == pytest.approx(
        float(sis_theta_e_arcsec(fit.best["sis_sigma_v_kms"], 1.0, p.beta_mean)), rel=1e-12)
    # Duffy et al. (2008) helper agrees with its published pivot value (5.71 at 2e12 / h, z = 0).
    assert float(duffy08_concentration(2e12 / 0.7, 0.0, 0.7)) == pytest.approx(5.71)
