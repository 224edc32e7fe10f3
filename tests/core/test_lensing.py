"""Sigma_cr, Einstein mass, point-mass and SIS numbers against published worked examples."""

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM

from lensmass.core.lensing import (
    einstein_mass_msun,
    einstein_radius_kpc,
    point_mass_theta_e_arcsec,
    sigma_crit_msun_per_pc2,
)
from lensmass.core.sis import (
    sis_convergence,
    sis_mass_2d_msun,
    sis_mass_3d_msun,
    sis_reduced_shear,
    sis_shear,
    sis_sigma_v_kms,
    sis_theta_e_arcsec,
)


def test_sigma_cr_is_035_g_per_cm2_for_d_of_1_gpc():
    # Narayan & Bartelmann (1996), arXiv:astro-ph/9606001: Sigma_cr = 0.35 g cm^-2 (D / 1 Gpc)^-1,
    # D = D_l D_s / D_ls. Choose D_l = D_ls = 1 Gpc, D_s = 1 Gpc: D = 1 Gpc.
    sigma = sigma_crit_msun_per_pc2(1000.0, 1000.0, 1000.0) * u.Msun / u.pc**2
    assert sigma.to_value(u.g / u.cm**2) == pytest.approx(0.35, rel=0.015)  # 0.35 is rounded to 2 digits


def test_sigma_cr_against_astropy_constants():
    # Definition c^2 D_s / (4 pi G D_l D_ls) evaluated independently with astropy units.
    d_l, d_s, d_ls = 700.0, 1400.0, 900.0
    ref = (const.c**2 / (4 * np.pi * const.G) * (d_s / (d_l * d_ls)) / u.Mpc).to_value(u.Msun / u.pc**2)
    assert sigma_crit_msun_per_pc2(d_l, d_s, d_ls) == pytest.approx(ref, rel=1e-12)


def test_point_mass_einstein_radius_worked_number():
    # Narayan & Bartelmann (1996): theta_E = (M / 10^11.09 Msun)^(1/2) (D / Gpc)^(-1/2) arcsec.
    theta = point_mass_theta_e_arcsec(10**11.09, 1000.0, 1000.0, 1000.0)
    assert theta == pytest.approx(1.0, rel=0.01)  # 11.09 is rounded: 0.6% in theta
    theta4 = point_mass_theta_e_arcsec(4 * 10**11.09, 4000.0, 4000.0, 4000.0)  # D = 4 Gpc
    assert theta4 == pytest.approx(2.0 / 2.0, rel=0.01)


def test_einstein_mass_is_pi_sigma_cr_r_squared_and_equals_point_mass():
    # Any axisymmetric lens: M(<theta_E) = pi Sigma_cr (D_l theta_E)^2 (Narayan & Bartelmann 1996);
    # for a point mass this must return the mass itself.
    d_l, d_s, d_ls = 800.0, 1600.0, 1100.0
    m = 3e11
    theta = point_mass_theta_e_arcsec(m, d_l, d_s, d_ls)
    assert einstein_mass_msun(theta, d_l, d_s, d_ls) == pytest.approx(m, rel=1e-12)


def test_sis_28_8_arcsec_for_1000_kms():
    # Narayan & Bartelmann (1996): theta_E = 28.8" (sigma_v / 1000 km/s)^2 D_ls / D_s.
    assert sis_theta_e_arcsec(1000.0, 1.0, 1.0) == pytest.approx(28.8, rel=0.002)
    assert sis_theta_e_arcsec(500.0, 2.0, 1.0) == pytest.approx(28.8 / 8, rel=0.002)


def test_sis_round_trip_and_profiles():
    theta_e = sis_theta_e_arcsec(250.0, 1500.0, 900.0)
    assert sis_sigma_v_kms(theta_e, 1500.0, 900.0) == pytest.approx(250.0, rel=1e-12)
    theta = np.array([0.7, 1.5, 4.0])
    # kappa = gamma = theta_E / (2 theta) (Narayan & Bartelmann 1996, SIS section).
    np.testing.assert_allclose(sis_convergence(theta, 2.0), 1.0 / theta)
    np.testing.assert_allclose(sis_shear(theta, 2.0), 1.0 / theta)
    np.testing.assert_allclose(sis_reduced_shear(theta, 2.0), (1 / theta) / (1 - 1 / theta))


def test_sis_masses_against_astropy_constants():
    # M_2D(<R) = pi sigma^2 R / G, M_3D(<r) = 2 sigma^2 r / G (REFERENCES.md, SIS).
    sigma = 250 * u.km / u.s
    r = 0.01 * u.Mpc
    m2d = (np.pi * sigma**2 * r / const.G).to_value(u.Msun)
    m3d = (2 * sigma**2 * r / const.G).to_value(u.Msun)
    assert sis_mass_2d_msun(0.01, 250.0) == pytest.approx(m2d, rel=1e-12)
    assert sis_mass_3d_msun(0.01, 250.0) == pytest.approx(m3d, rel=1e-12)


def test_sis_mass_inside_einstein_radius_equals_einstein_mass():
    # Consistency of two published formulas: pi sigma^2 R_E / G = pi Sigma_cr R_E^2 for the SIS.
    d_l, d_s, d_ls = 700.0, 1400.0, 900.0
    theta_e = 1.3
    sigma = sis_sigma_v_kms(theta_e, d_s, d_ls)
    r_e_mpc = einstein_radius_kpc(theta_e, d_l) / 1e3
    assert sis_mass_2d_msun(r_e_mpc, sigma) == pytest.approx(einstein_mass_msun(theta_e, d_l, d_s, d_ls), rel=1e-10)


# Published galaxy-scale lenses (SLACS): Auger et al. 2009, ApJ 705, 1099 (Einstein radii from
# Bolton et al. 2008, ApJ 682, 964); flat LCDM H0 = 70, Omega_m = 0.3. Rows copied from
# shared/data/published_lenses.txt: name, z_lens, z_source, theta_E_arcsec, R_E_kpc, sigma_star_kms.
SLACS = [
    ("SDSSJ0029-0055", 0.227, 0.931, 0.96, 3.48, 229),
    ("SDSSJ0044+0113", 0.120, 0.197, 0.80, 1.72, 266),
    ("SDSSJ0252+0039", 0.280, 0.982, 1.04, 4.40, 164),
    ("SDSSJ0728+3835", 0.206, 0.688, 1.25, 4.21, 214),
    ("SDSSJ0819+4534", 0.194, 0.446, 0.85, 2.73, 225),
    ("SDSSJ0912+0029", 0.164, 0.324, 1.63, 4.58, 326),
    ("SDSSJ0936+0913", 0.190, 0.588, 1.09, 3.45, 243),
    ("SDSSJ0956+5100", 0.241, 0.470, 1.33, 5.05, 334),
    ("SDSSJ0959+4416", 0.237, 0.531, 0.96, 3.61, 244),
    ("SDSSJ1020+1122", 0.282, 0.553, 1.20, 5.12, 282),
    ("SDSSJ1029+0420", 0.104, 0.615, 1.01, 1.92, 210),
    ("SDSSJ1112+0826", 0.273, 0.629, 1.49, 6.19, 320),
    ("SDSSJ1142+1001", 0.222, 0.504, 0.98, 3.52, 221),
    ("SDSSJ1153+4612", 0.180, 0.875, 1.05, 3.18, 226),
    ("SDSSJ1205+4910", 0.215, 0.481, 1.22, 4.27, 281),
    ("SDSSJ1218+0830", 0.135, 0.717, 1.45, 3.47, 219),
    ("SDSSJ1306+0600", 0.173, 0.472, 1.32, 3.87, 237),
    ("SDSSJ1318-0313", 0.240, 1.300, 1.58, 6.01, 213),
    ("SDSSJ1402+6321", 0.205, 0.481, 1.35, 4.53, 267),
    ("SDSSJ1416+5136", 0.299, 0.811, 1.37, 6.08, 240),
    ("SDSSJ1430+4105", 0.285, 0.575, 1.52, 6.53, 322),
    ("SDSSJ1443+0304", 0.134, 0.419, 0.81, 1.93, 209),
    ("SDSSJ1525+3327", 0.358, 0.717, 1.31, 6.55, 264),
    ("SDSSJ1538+5817", 0.143, 0.531, 1.00, 2.50, 189),
    ("SDSSJ1621+3931", 0.245, 0.602, 1.29, 4.97, 236),
    ("SDSSJ1630+4520", 0.248, 0.793, 1.78, 6.91, 276),
    ("SDSSJ1644+2625", 0.137, 0.610, 1.27, 3.07, 229),
    ("SDSSJ2238-0754", 0.137, 0.713, 1.27, 3.08, 198),
    ("SDSSJ2303+1422", 0.155, 0.517, 1.62, 4.35, 255),
    ("SDSSJ2341+0000", 0.186, 0.807, 1.44, 4.50, 207),
]


def _slacs_columns():
    cols = list(zip(*SLACS))
    return [np.array(c, dtype=float) if i else np.array(c) for i, c in enumerate(cols)]


def test_published_einstein_radii_in_kpc():
    # Auger et al. (2009) table: R_E = theta_E D_l within the table's rounding (theta_E to 0.01",
    # R_E to 0.01 kpc: at most ~1% for the smallest radii).
    _, zl, zs, theta, r_e_kpc, _ = _slacs_columns()
    from lensmass.core.cosmology import angular_diameter_distances_mpc

    d_l, _, _ = angular_diameter_distances_mpc(zl, zs, FlatLambdaCDM(H0=70, Om0=0.3))
    ours = einstein_radius_kpc(theta, d_l)
    assert np.max(np.abs(ours / r_e_kpc - 1)) < 0.012


def test_sis_dispersion_tracks_measured_stellar_dispersion():
    # Published result (Bolton et al. 2008; Auger et al. 2009): the SIS dispersion from theta_E agrees
    # with the measured stellar dispersion on average (median ratio near 1, scatter about 10%).
    _, zl, zs, theta, _, sigma_star = _slacs_columns()
    from lensmass.core.cosmology import angular_diameter_distances_mpc

    _, d_s, d_ls = angular_diameter_distances_mpc(zl, zs, FlatLambdaCDM(H0=70, Om0=0.3))
    ratio = sis_sigma_v_kms(theta, d_s, d_ls) / sigma_star
    assert 0.9 < np.median(ratio) < 1.1
    assert np.std(np.log(ratio)) < 0.2
