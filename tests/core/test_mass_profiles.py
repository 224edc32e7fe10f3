"""Enclosed-mass curves of the SIS and NFW models behind an estimate.

Outside references: Narayan & Bartelmann (1996, arXiv:astro-ph/9606001) sec. 3.3 for the SIS
(M_2D = pi sigma^2 R / G) and the Einstein mass (c^2 / 4G) (D_l D_s / D_ls) theta_E^2; Navarro, Frenk &
White (1997, ApJ 490, 493) for the NFW density, projected here numerically with scipy.integrate.quad;
astropy.constants and astropy.cosmology for G, c and the distances.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u
from astropy.cosmology import FlatLambdaCDM, Planck18
from scipy.integrate import quad

from lensmass.core.errors import LensInputError
from lensmass.core.estimate import estimate
from lensmass.core.mass_profiles import (
    einstein_point,
    enclosed_mass_curves,
    radius_grid_kpc,
    sample_histogram,
)


@pytest.fixture(scope="module")
def lens():
    # An invented cluster-scale arc (theta_E 6", z_l 0.3, z_s 1.5) with errors, few draws to stay fast.
    return estimate(6.0, 0.3, 1.5, cosmology="Planck18", theta_e_err=0.3, z_l_err=0.01, samples=600, seed=7)


def _at(curves, values, radius_kpc):
    i = int(np.argmin(np.abs(curves.radius_kpc - radius_kpc)))
    assert curves.radius_kpc[i] == radius_kpc  # the grid holds R_E exactly
    return values[i]


def test_both_curves_pass_through_the_einstein_point(lens):
    c = enclosed_mass_curves(lens, Planck18)
    # Definition of the estimate: the SIS and the NFW halo are chosen so their mean convergence inside
    # theta_E is one, i.e. M_2D(<R_E) = M(<theta_E) (Narayan & Bartelmann 1996, eq. 20).
    assert _at(c, c.sis_msun, c.einstein_radius_kpc) == pytest.approx(lens["mass_einstein_msun"], rel=1e-10)
    assert _at(c, c.nfw_msun, c.einstein_radius_kpc) == pytest.approx(lens["mass_einstein_msun"], rel=1e-8)
    assert einstein_point(lens) == (lens["r_e_kpc"], lens["mass_einstein_msun"])


def test_einstein_mass_matches_the_published_formula_with_astropy(lens):
    # Narayan & Bartelmann (1996): M(<theta_E) = (c^2 / 4G) (D_l D_s / D_ls) theta_E^2, distances from astropy.
    d_l = Planck18.angular_diameter_distance(0.3)
    d_s = Planck18.angular_diameter_distance(1.5)
    d_ls = Planck18.angular_diameter_distance(0.3, 1.5)
    theta = (6.0 * u.arcsec).to_value(u.rad)
    m = (const.c**2 / (4 * const.G) * d_l * d_s / d_ls * theta**2).to_value(u.Msun)
    c = enclosed_mass_curves(lens, Planck18)
    assert c.einstein_mass_msun == pytest.approx(m, rel=1e-6)
    assert _at(c, c.sis_msun, c.einstein_radius_kpc) == pytest.approx(m, rel=1e-6)


def test_sis_curve_is_pi_sigma_squared_r_over_g(lens):
    c = enclosed_mass_curves(lens, Planck18)
    # Narayan & Bartelmann (1996) sec. 3.3: M_2D(<R) = pi sigma_v^2 R / G, with G from astropy.
    sigma = lens["sis_sigma_v_kms"] * u.km / u.s
    expected = (np.pi * sigma**2 * (c.radius_kpc * u.kpc) / const.G).to_value(u.Msun)
    np.testing.assert_allclose(c.sis_msun, expected, rtol=1e-10)
    # Linear in R: the ratio M / R is the same at every radius.
    ratio = c.sis_msun / c.radius_kpc
    np.testing.assert_allclose(ratio, ratio[0], rtol=1e-12)


def test_nfw_curve_against_numerical_projection_of_the_density(lens):
    radii = np.array([0.3, 1.0, 1.0 * lens["r_e_kpc"], 80.0, 600.0])
    c = enclosed_mass_curves(lens, Planck18, radius_kpc=radii)
    # NFW (1997) density with r200 = c r_s and M200 = (4/3) pi 200 rho_crit(z_l) r200^3 (common practice),
    # rho_crit from astropy; then the mass in a cylinder of radius R by quad (independent of our formulas):
    # M_2D(<R) = M_3D(<R) + int_R^inf 4 pi r^2 rho(r) [1 - sqrt(1 - R^2/r^2)] dr.
    rho_c = Planck18.critical_density(0.3).to_value(u.Msun / u.kpc**3)
    m200, c200 = lens["nfw_m200_msun"], lens["nfw_c200"]
    r200 = (3 * m200 / (4 * np.pi * 200 * rho_c)) ** (1 / 3)
    assert r200 == pytest.approx(lens["nfw_r200_kpc"], rel=1e-9)
    r_s = r200 / c200
    rho_s = m200 / (4 * np.pi * r_s**3 * (np.log1p(c200) - c200 / (1 + c200)))

    def rho(r):
        x = r / r_s
        return rho_s / (x * (1 + x) ** 2)

    for R, mine in zip(radii, c.nfw_msun):
        inner = quad(lambda r: 4 * np.pi * r**2 * rho(r), 0, R, epsabs=0, epsrel=1e-12, limit=200)[0]
        outer = quad(lambda r: 4 * np.pi * r**2 * rho(r) * (1 - np.sqrt(1 - (R / r) ** 2)), R, np.inf,
                     epsabs=0, epsrel=1e-10, limit=400)[0]
        assert mine == pytest.approx(inner + outer, rel=1e-7)


def test_radius_axis_in_arcsec_uses_the_lens_distance(lens):
    c = enclosed_mass_curves(lens, Planck18)
    d_l_kpc = Planck18.angular_diameter_distance(0.3).to_value(u.kpc)
    # theta = R / D_l (small angles, common practice), checked with astropy's distance.
    np.testing.assert_allclose(c.radius_arcsec, np.rad2deg(c.radius_kpc / d_l_kpc) * 3600, rtol=1e-6)


def test_bands_bracket_the_central_curves(lens):
    c = enclosed_mass_curves(lens, Planck18)
    for lo, mid, hi in ((c.sis_p16, c.sis_msun, c.sis_p84), (c.nfw_p16, c.nfw_msun, c.nfw_p84)):
        assert lo is not None and np.all(lo < hi)
        i = int(np.argmin(np.abs(c.radius_kpc - c.einstein_radius_kpc)))
        assert lo[i] < mid[i] < hi[i]


def test_no_bands_without_uncertainty():
    r = estimate(6.0, 0.3, 1.5)
    c = enclosed_mass_curves(r)  # the preset name in the result resolves to the same cosmology
    assert c.sis_p16 is None and c.nfw_p16 is None
    assert np.all(np.isfinite(c.nfw_msun))


def test_custom_cosmology_needs_the_object_and_a_wrong_definition_is_caught():
    cosmo = FlatLambdaCDM(H0=70, Om0=0.3)
    r = estimate(6.0, 0.3, 1.5, cosmology=cosmo, halo_definition="200c")
    enclosed_mass_curves(r, cosmo, "200c")
    with pytest.raises(LensInputError, match="pass that cosmology object"):
        enclosed_mass_curves(r)
    with pytest.raises(LensInputError, match="differs from the estimate"):
        enclosed_mass_curves(r, cosmo, "200m")


def test_missing_nfw_halo_gives_an_empty_nfw_curve():
    r = estimate(300.0, 0.05, 0.1)  # no halo below 1e18 Msun makes a 300" ring this close
    c = enclosed_mass_curves(r)
    assert np.all(np.isnan(c.nfw_msun)) and np.all(np.isfinite(c.sis_msun))
    assert "no halo" in c.labels["nfw"]


def test_radius_grid_contains_r_e_and_rejects_nonsense():
    g = radius_grid_kpc(5.0, n=50)
    assert 5.0 in g and np.all(np.diff(g) > 0)
    with pytest.raises(LensInputError):
        radius_grid_kpc(-1.0)


def test_sample_histogram_matches_the_estimate_intervals(lens):
    h = sample_histogram(lens, "mass_einstein_msun", bins=30)
    assert h.counts.sum() == h.n_finite == len(lens["_samples"]["mass_einstein_msun"])
    # The same percentiles as the estimate's (numpy.percentile, common practice for 68%/95% intervals).
    assert h.median == pytest.approx(lens["medians"]["mass_einstein_msun"], rel=1e-12)
    assert list(h.interval68) == pytest.approx(lens["intervals68"]["mass_einstein_msun"], rel=1e-12)
    assert h.edges[0] <= h.interval95[0] and h.interval95[1] <= h.edges[-1]
    assert sample_histogram(estimate(6.0, 0.3, 1.5)) is None
