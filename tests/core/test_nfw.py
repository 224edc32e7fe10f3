"""NFW formulas against direct numerical projection (scipy.integrate.quad) and definitions."""

import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM, Planck18
from scipy import integrate

from lensmass.core.concentration import concentration_relation, duffy08_concentration, dutton14_concentration
from lensmass.core.cosmology import angular_diameter_distances_mpc, critical_density_msun_per_mpc3
from lensmass.core.lensing import arcsec_to_mpc, einstein_mass_msun, sigma_crit_msun_per_mpc2
from lensmass.core.nfw import (
    nfw_convergence,
    nfw_density_msun_per_mpc3,
    nfw_einstein_radius_mpc,
    nfw_halo,
    nfw_mass_2d_msun,
    nfw_mass_3d_msun,
    nfw_mass_for_einstein_radius,
    nfw_mean_surface_density_msun_per_mpc2,
    nfw_reduced_shear,
    nfw_shear,
    nfw_surface_density_msun_per_mpc2,
    overdensity_density_msun_per_mpc3,
)

COSMO = FlatLambdaCDM(H0=70, Om0=0.3)
HALO = nfw_halo(1e14, 5.0, 0.3, COSMO)
R_MPC = HALO.r_s_mpc * np.array([0.01, 0.3, 0.97, 0.999, 1.0, 1.001, 1.04, 2.0, 10.0, 60.0])


def _projected_numerically(radius):
    # Sigma(R) = 2 int_0^inf rho(sqrt(R^2 + z^2)) dz; substitute z = R sinh(u) for a smooth integrand.
    def integrand(u):
        z = radius * np.sinh(u)
        return nfw_density_msun_per_mpc3(np.hypot(radius, z), HALO) * radius * np.cosh(u)

    value, _ = integrate.quad(integrand, 0, 40, epsabs=0, epsrel=1e-13, limit=400)
    return 2 * value


def test_surface_density_matches_line_of_sight_projection():
    # Bartelmann (1996), Wright & Brainerd (2000) eq. 11 against a direct quad projection of rho.
    ours = nfw_surface_density_msun_per_mpc2(R_MPC, HALO)
    numeric = np.array([_projected_numerically(r) for r in R_MPC])
    np.testing.assert_allclose(ours, numeric, rtol=1e-9)


def test_surface_density_at_x_equal_one():
    # Wright & Brainerd (2000): Sigma(x = 1) = 2 rho_s r_s / 3.
    value = nfw_surface_density_msun_per_mpc2(HALO.r_s_mpc, HALO)
    assert value == pytest.approx(2 * HALO.rho_s_msun_per_mpc3 * HALO.r_s_mpc / 3, rel=1e-14)


def test_mean_surface_density_matches_integral_of_sigma():
    # mean Sigma(<R) = (2 / R^2) int_0^R Sigma(R') R' dR' (definition), Wright & Brainerd (2000) eq. 13.
    for radius in R_MPC[[0, 1, 4, 7, 8]]:
        integral, _ = integrate.quad(
            lambda lr: nfw_surface_density_msun_per_mpc2(np.exp(lr), HALO) * np.exp(2 * lr),
            np.log(radius) - 40, np.log(radius), epsabs=0, epsrel=1e-13, limit=400,
        )
        expected = 2 * integral / radius**2
        assert nfw_mean_surface_density_msun_per_mpc2(radius, HALO) == pytest.approx(expected, rel=1e-9)


def test_shear_is_mean_minus_local_and_matches_derivative():
    # gamma_t = [mean Sigma(<R) - Sigma(R)] / Sigma_cr, and d(mean Sigma)/dR = -2 gamma_t Sigma_cr / R
    # (Bartelmann & Schneider 2001, Phys. Rep. 340, 291): checked by a central finite difference.
    sig_cr = 3e15
    g = nfw_shear(R_MPC, HALO, sig_cr)
    direct = (nfw_mean_surface_density_msun_per_mpc2(R_MPC, HALO) - nfw_surface_density_msun_per_mpc2(R_MPC, HALO)) / sig_cr
    np.testing.assert_allclose(g, direct, rtol=1e-10)
    h = 1e-4  # central difference: truncation error ~h^2
    d_mean = (nfw_mean_surface_density_msun_per_mpc2(R_MPC * (1 + h), HALO)
              - nfw_mean_surface_density_msun_per_mpc2(R_MPC * (1 - h), HALO)) / (2 * h * R_MPC)
    np.testing.assert_allclose(-d_mean * R_MPC / (2 * sig_cr), g, rtol=1e-6)
    kappa = nfw_convergence(R_MPC, HALO, sig_cr)
    np.testing.assert_allclose(nfw_reduced_shear(R_MPC, HALO, sig_cr), g / (1 - kappa))


def test_m3d_at_r200_is_m200_and_masses_are_consistent():
    # Definition: M200 = (4/3) pi 200 rho_crit(z) r200^3 and M_3D(<r200) = M200.
    assert nfw_mass_3d_msun(HALO.r_delta_mpc, HALO) == pytest.approx(1e14, rel=1e-12)
    rho_c = critical_density_msun_per_mpc3(0.3, COSMO)
    assert 4 / 3 * np.pi * 200 * rho_c * HALO.r_delta_mpc**3 == pytest.approx(1e14, rel=1e-12)
    # rho_s = (200/3) c^3 / [ln(1+c) - c/(1+c)] rho_crit (REFERENCES.md, NFW halo).
    c = 5.0
    assert HALO.rho_s_msun_per_mpc3 == pytest.approx(200 / 3 * c**3 / (np.log1p(c) - c / (1 + c)) * rho_c, rel=1e-12)
    np.testing.assert_allclose(nfw_mass_2d_msun(R_MPC, HALO),
                               np.pi * R_MPC**2 * nfw_mean_surface_density_msun_per_mpc2(R_MPC, HALO), rtol=1e-12)


def test_virial_overdensity_near_100_today():
    # Bryan & Norman (1998), eq. 6: Delta_vir = 18 pi^2 + 82 x - 39 x^2 with x = Omega_m(z) - 1;
    # for Omega_m = 0.3 today it is about 101 (common practice: "about 100 times critical").
    ratio = overdensity_density_msun_per_mpc3(0.0, COSMO, "vir") / critical_density_msun_per_mpc3(0.0, COSMO)
    assert ratio == pytest.approx(18 * np.pi**2 + 82 * (-0.7) - 39 * 0.49, rel=1e-12)
    assert 95 < ratio < 105


def test_duffy08_pivot_value():
    # Duffy et al. (2008), MNRAS 390, L64, Table 1 (full sample, 200c): c = 5.71 at M = 2e12 h^-1 Msun, z = 0.
    h = 0.7
    assert duffy08_concentration(2e12 / h, 0.0, h) == pytest.approx(5.71, rel=1e-12)
    assert duffy08_concentration(2e12 / h, 1.0, h) == pytest.approx(5.71 * 2**-0.47, rel=1e-12)


def test_dutton14_z0_coefficients():
    # Dutton & Maccio (2014), MNRAS 441, 3359 (from memory, REFERENCES.md): at z = 0,
    # a = 0.520 + 0.385 = 0.905 and b = -0.101; re-derived here from the log-linear form.
    h = 0.7
    c12 = dutton14_concentration(1e12 / h, 0.0, h)
    c13 = dutton14_concentration(1e13 / h, 0.0, h)
    assert np.log10(c12) == pytest.approx(0.905, abs=1e-12)
    assert np.log10(c13) - np.log10(c12) == pytest.approx(-0.101, abs=1e-12)


def test_inversion_reproduces_the_einstein_radius():
    # The inverted halo's own Einstein radius (mean convergence = 1, solved separately) must be the input,
    # and its projected mass inside R_E must be pi Sigma_cr R_E^2 (Narayan & Bartelmann 1996).
    zl, zs = np.array([0.3, 0.35, 0.5]), np.array([1.0, 1.8, 2.5])
    theta = np.array([8.0, 25.0, 40.0])  # group to cluster scale
    d_l, d_s, d_ls = angular_diameter_distances_mpc(zl, zs, Planck18)
    sig = sigma_crit_msun_per_mpc2(d_l, d_s, d_ls)
    r_e = arcsec_to_mpc(theta, d_l)
    m_e = einstein_mass_msun(theta, d_l, d_s, d_ls)
    c_of_m, _ = concentration_relation("duffy08")
    m200, c200 = nfw_mass_for_einstein_radius(r_e, m_e, zl, Planck18, c_of_m)
    halo = nfw_halo(m200, c200, zl, Planck18)
    np.testing.assert_allclose(nfw_einstein_radius_mpc(halo, sig), r_e, rtol=1e-8)
    np.testing.assert_allclose(nfw_mass_2d_msun(r_e, halo), m_e, rtol=1e-8)
    assert np.all((m200 > 1e13) & (m200 < 1e16))


def test_inversion_reports_impossible_radius_as_nan():
    # With a fixed very low concentration no halo below 1e18 Msun reaches a 1-arcminute-plus radius.
    zl = 0.3
    d_l, d_s, d_ls = angular_diameter_distances_mpc(zl, 0.35, Planck18)
    theta = 300.0
    c_of_m, _ = concentration_relation(1.0)
    m, c = nfw_mass_for_einstein_radius(arcsec_to_mpc(theta, d_l), einstein_mass_msun(theta, d_l, d_s, d_ls),
                                        zl, Planck18, c_of_m)
    assert np.isnan(m) and np.isnan(c)


@pytest.mark.parametrize("spec, definition", [("duffy08", "200c"), ("dutton14", "vir"), (6.0, "200m")])
def test_newton_inversion_matches_a_bracketed_root_on_many_lenses(spec, definition):
    # 2000 lenses from 0.3" to 60" and z_l 0.05-1.5: the projected NFW mass inside R_E must equal
    # pi Sigma_cr R_E^2 (Narayan & Bartelmann 1996), and scipy's brentq on the same equation (an
    # independent bracketed solver) must find the same mass; a plain function as c(M) (no power-law
    # form) gives the same halo.
    from scipy.optimize import brentq

    rng = np.random.default_rng(5)
    zl = rng.uniform(0.05, 1.5, 2000)
    zs = zl + rng.uniform(0.05, 3.0, 2000)
    theta = 10 ** rng.uniform(np.log10(0.3), np.log10(60.0), 2000)
    d_l, d_s, d_ls = angular_diameter_distances_mpc(zl, zs, Planck18)
    r_e, m_e = arcsec_to_mpc(theta, d_l), einstein_mass_msun(theta, d_l, d_s, d_ls)
    c_of_m, _ = concentration_relation(spec, definition)
    m, c = nfw_mass_for_einstein_radius(r_e, m_e, zl, Planck18, c_of_m, definition)
    ok = np.isfinite(m)
    assert ok.mean() > 0.95
    halo = nfw_halo(m[ok], c[ok], zl[ok], Planck18, definition)
    np.testing.assert_allclose(nfw_mass_2d_msun(r_e[ok], halo), m_e[ok], rtol=1e-8)
    # Where R_E << r_s (a sub-arcsecond lens given a 1e15 Msun halo) ln(X/2) + F(X) cancels to ~1e-8, so
    # two correct solvers agree to a few 1e-8 there.
    plain, _ = nfw_mass_for_einstein_radius(r_e, m_e, zl, Planck18, lambda mm, z, h: c_of_m(mm, z, h), definition)
    np.testing.assert_allclose(plain, m, rtol=5e-8)
    for i in np.flatnonzero(ok)[:5]:
        def excess(log10_m, i=i):
            h = nfw_halo(10**log10_m, c_of_m(10**log10_m, zl[i], 0.6766), zl[i], Planck18, definition)
            return float(nfw_mass_2d_msun(r_e[i], h)) / m_e[i] - 1.0
        assert 10 ** brentq(excess, 6.0, 18.0, xtol=1e-12) == pytest.approx(m[i], rel=5e-8)
