"""Tangential/cross shear, projection, selection and binned profiles (lensmass.core.shear_profile)."""

import numpy as np
import pytest
from astropy.coordinates import SkyCoord
import astropy.units as u

from lensmass.core.cosmology import angular_diameter_distances_mpc, resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.lensing import sigma_crit_msun_per_mpc2
from lensmass.core.shear_profile import (
    lensing_efficiency,
    radial_bin_edges,
    radius_arcsec,
    select_sources,
    shear_profile,
    tangent_plane_offsets_arcsec,
    tangent_plane_to_sky,
    tangential_cross,
)
from lensmass.core.shear_simulation import simulate_shear_catalog

COSMO = resolve_cosmology("Planck18")


def test_projection_matches_astropy_separation_and_position_angle():
    # Reference: astropy SkyCoord.separation / position_angle (PA east of north), so our
    # angle from east toward north is 90 deg - PA.
    rng = np.random.default_rng(1)
    ra0, dec0 = 141.372, 18.2705
    ra = ra0 + rng.uniform(-0.3, 0.3, 200)
    dec = dec0 + rng.uniform(-0.3, 0.3, 200)
    x, y = tangent_plane_offsets_arcsec(ra, dec, ra0, dec0)
    c0 = SkyCoord(ra0 * u.deg, dec0 * u.deg)
    c = SkyCoord(ra * u.deg, dec * u.deg)
    sep = c0.separation(c).to_value(u.arcsec)
    np.testing.assert_allclose(radius_arcsec(x, y), sep, rtol=1e-9)
    phi = np.arctan2(y, x)
    pa = c0.position_angle(c).to_value(u.rad)
    np.testing.assert_allclose(np.cos(phi - (np.pi / 2 - pa)), 1.0, atol=1e-9)


def test_projection_round_trip():
    # Self-consistency of the gnomonic pair (the inverse formulas are the standard ones,
    # Calabretta & Greisen 2002, zenithal TAN).
    x = np.array([0.0, 100.0, -700.0, 1500.0])
    y = np.array([0.0, -50.0, 300.0, 1200.0])
    ra, dec = tangent_plane_to_sky(x, y, 359.99, -45.0)
    x2, y2 = tangent_plane_offsets_arcsec(ra, dec, 359.99, -45.0)
    np.testing.assert_allclose(x2, x, atol=1e-7)
    np.testing.assert_allclose(y2, y, atol=1e-7)


def test_tangential_cross_convention():
    # shared/REFERENCES.md: e_t = -(e1 cos 2phi + e2 sin 2phi), e_x = e1 sin 2phi - e2 cos 2phi,
    # phi from east toward north, e1 > 0 east-west.
    # Due north (phi = 90 deg), stretched east-west (e1 > 0): tangential.
    et, ex = tangential_cross(0.2, 0.0, 0.0, 5.0)
    assert et == pytest.approx(0.2) and ex == pytest.approx(0.0, abs=1e-15)
    # North-east (phi = 45 deg), e2 < 0 is stretched along the NW-SE line: tangential.
    et, ex = tangential_cross(0.0, -0.3, 3.0, 3.0)
    assert et == pytest.approx(0.3) and ex == pytest.approx(0.0, abs=1e-15)
    # Rotating a tangential ellipticity by 45 degrees makes it pure cross.
    et, ex = tangential_cross(0.0, 0.2, 0.0, 5.0)
    assert et == pytest.approx(0.0, abs=1e-15) and abs(ex) == pytest.approx(0.2)


def test_cross_shear_of_pure_tangential_field_is_zero():
    # Bartelmann & Schneider (2001), sec. 5.3: lensing by an axisymmetric mass gives no cross shear.
    sim = simulate_shear_catalog(center_ra=30.0, center_dec=-10.0, z_l=0.3, cosmo=COSMO, n_galaxies=3000,
                                 model="sis", sigma_v_kms=800, z_s=1.2, shape_noise=0.0, seed=2)
    x, y = tangent_plane_offsets_arcsec(sim["ra"], sim["dec"], 30.0, -10.0)
    et, ex = tangential_cross(sim["e1"], sim["e2"], x, y)
    assert np.max(np.abs(ex)) < 1e-9
    assert np.all(et > 0)


def test_noiseless_sis_profile_is_theta_e_over_2theta():
    # Narayan & Bartelmann (1996): SIS gamma_t = kappa = theta_E / (2 theta); g = gamma / (1 - kappa).
    sim = simulate_shear_catalog(center_ra=30.0, center_dec=-10.0, z_l=0.3, cosmo=COSMO, n_galaxies=20000,
                                 model="sis", sigma_v_kms=800, z_s=1.2, shape_noise=0.0, seed=3)
    beta, sc, d_l = lensing_efficiency(0.3, 1.2, COSMO)
    theta_e = 4 * np.pi * (800 / 299792.458) ** 2 * float(beta) * 206264.80624709636
    x, y = sim["x_arcsec"], sim["y_arcsec"]
    th = radius_arcsec(x, y)
    et, ex = tangential_cross(sim["e1"], sim["e2"], x, y)
    weak = th > theta_e  # |g| < 1 (outside theta_E the ellipticity is g itself)
    gamma = et[weak] * (1 - theta_e / (2 * th[weak]))  # undo the reduced shear per galaxy
    np.testing.assert_allclose(gamma, theta_e / (2 * th[weak]), rtol=1e-9)
    # Inside theta_E, |g| > 1 and the mean ellipticity is 1/g (Seitz & Schneider 1997).
    g_in = theta_e / (2 * th[~weak] - theta_e)
    np.testing.assert_allclose(et[~weak], 1 / g_in, rtol=1e-9)


def test_lensing_efficiency_matches_astropy():
    # Reference: astropy angular_diameter_distance(z1, z2) (Hogg 1999); interpolated grid to 1e-6.
    z = np.array([0.5, 1.0, 2.5])
    beta, sc, d_l = lensing_efficiency(0.35, z, COSMO)
    d_s = COSMO.angular_diameter_distance(z).to_value(u.Mpc)
    d_ls = COSMO.angular_diameter_distance(0.35, z).to_value(u.Mpc)
    np.testing.assert_allclose(beta, d_ls / d_s, rtol=1e-6)
    np.testing.assert_allclose(d_l, COSMO.angular_diameter_distance(0.35).to_value(u.Mpc), rtol=1e-6)
    np.testing.assert_allclose(sc, sigma_crit_msun_per_mpc2(d_l, d_s, d_ls), rtol=1e-6)


def test_select_sources_counts_each_reason_once():
    e1 = np.array([0.1, np.nan, 0.9, 0.1, 0.1, 0.2, 0.0])
    e2 = np.array([0.0, 0.0, 0.9, 0.0, 0.0, 0.0, 0.0])
    w = np.array([1.0, 1.0, 1.0, 0.0, 1.0, 1.0, -1.0])
    z = np.array([1.0, 1.0, 1.0, 1.0, 0.3, 0.42, 1.0])
    ok, counts = select_sources(e1, e2, w, z, 0.35, z_margin=0.1)
    assert ok.tolist() == [True, False, False, False, False, False, False]
    assert counts == {"non_finite": 1, "ellipticity_ge_1": 1, "weight_not_positive": 2, "source_not_behind_lens": 2}


def test_bin_edges():
    np.testing.assert_allclose(radial_bin_edges(1.0, 1000.0, 3), [1, 10, 100, 1000])
    np.testing.assert_allclose(radial_bin_edges(0.0, 3.0, 3, log=False), [0, 1, 2, 3])
    with pytest.raises(LensInputError, match="rmin > 0"):
        radial_bin_edges(0.0, 3.0, 3)
    with pytest.raises(LensInputError, match="rmin < rmax"):
        radial_bin_edges(5.0, 3.0, 3)


def test_shape_noise_and_bootstrap_errors_agree_with_sigma_e_over_sqrt_n():
    # Common practice: the error of a mean of N unit-weight ellipticities is sigma_e / sqrt(N).
    rng = np.random.default_rng(5)
    n = 40000
    theta = rng.uniform(10, 100, n)
    et = rng.normal(0, 0.3, n)
    ex = rng.normal(0, 0.3, n)
    p = shear_profile(theta, et, ex, np.ones(n), [10, 40, 100], n_bootstrap=300, seed=1)
    expect = 0.3 / np.sqrt(p.n_galaxies)
    np.testing.assert_allclose(p.g_t_err, expect, rtol=0.03)
    np.testing.assert_allclose(p.g_t_err_boot, expect, rtol=0.15)
    np.testing.assert_allclose(p.g_x_err_boot, expect, rtol=0.15)


def test_delta_sigma_is_sigma_cr_times_shear_for_one_redshift():
    # Delta Sigma = Sigma_cr gamma_t (Bartelmann & Schneider 2001, eq. 5.8 with one Sigma_cr).
    rng = np.random.default_rng(6)
    theta = rng.uniform(10, 100, 1000)
    et = rng.normal(0.05, 0.1, 1000)
    d_l, d_s, d_ls = angular_diameter_distances_mpc(0.3, 1.0, COSMO)
    sc = sigma_crit_msun_per_mpc2(d_l, d_s, d_ls)
    p = shear_profile(theta, et, et * 0, np.ones(1000), [10, 50, 100], sigma_cr_msun_per_mpc2=sc, d_l_mpc=float(d_l))
    np.testing.assert_allclose(p.delta_sigma_msun_per_mpc2, sc * p.g_t, rtol=1e-12)


def test_delta_sigma_ignores_sources_in_front_of_the_lens():
    # A source not behind the lens has Sigma_cr = infinity and no lensing weight (w / Sigma_cr^2 = 0),
    # common practice; the inverse-variance weighted mean of the rest is (1e14, 1.2e14) Msun/Mpc^2 by hand.
    th = np.array([10.0, 20, 30, 40])
    e = np.full(4, 0.1)
    sc = np.array([1e15, np.inf, 2e15, 1e15])
    p = shear_profile(th, e, 0 * e, np.ones(4), [5, 25, 50], sigma_cr_msun_per_mpc2=sc, d_l_mpc=1000.0)
    np.testing.assert_allclose(p.delta_sigma_msun_per_mpc2, [1e14, 1.2e14], rtol=1e-12)
    assert np.all(np.isfinite(p.delta_sigma_err_msun_per_mpc2))


def test_projection_in_blocks_matches_astropy_for_a_large_catalogue():
    # More rows than one block of the element-wise passes (2 x 2^15), a field around the pole and one
    # across RA = 0; reference: astropy SkyCoord.separation and position_angle (as in the test above).
    from lensmass.core.shear_profile import sky_offsets_and_radius

    rng = np.random.default_rng(11)
    n = 70_000
    for ra0, dec0 in ((0.05, -30.0), (141.372, 89.9)):
        dec = np.clip(dec0 + rng.uniform(-0.4, 0.4, n), -90, 90)
        ra = (ra0 + rng.uniform(-0.4, 0.4, n) / np.cos(np.radians(dec0))) % 360.0
        x, y, theta, placed = sky_offsets_and_radius(ra, dec, ra0, dec0)
        c0 = SkyCoord(ra0 * u.deg, dec0 * u.deg)
        c = SkyCoord(ra * u.deg, dec * u.deg)
        assert placed.all()
        np.testing.assert_allclose(theta, c0.separation(c).to_value(u.arcsec), rtol=1e-9)
        pa = c0.position_angle(c).to_value(u.rad)
        np.testing.assert_allclose(np.cos(np.arctan2(y, x) - (np.pi / 2 - pa)), 1.0, atol=1e-9)
        np.testing.assert_array_equal(tangent_plane_offsets_arcsec(ra, dec, ra0, dec0)[0], x)


def test_block_engine_sums_match_astropy_distances_and_numpy_rotations():
    # More galaxies than one cache-sized piece, so the engine works in pieces. References: astropy
    # angular_diameter_distance(z1, z2) for D_ls / D_s and Sigma_cr (the engine's table is good to 1e-6),
    # astropy separations, and the tangential/cross formulas of shared/REFERENCES.md with numpy's arctan2.
    from astropy.coordinates import SkyCoord
    import astropy.constants as const

    from lensmass.core.shear_sums import BETA_CELLS, RADIAL_SUBBINS, SumLayout, catalog_block_sums

    rng = np.random.default_rng(12)
    n = 90_000
    ra0, dec0 = 141.0, 18.0
    ra, dec = ra0 + rng.uniform(-0.25, 0.25, n), dec0 + rng.uniform(-0.25, 0.25, n)
    e1, e2 = rng.normal(0, 0.25, (2, n))
    w = rng.uniform(0.2, 1.0, n)
    z = rng.uniform(0.2, 3.0, n)
    edges = radial_bin_edges(30.0, 880.0, 5)
    layout = SumLayout(ra0, dec0, 0.35, COSMO, tuple(edges))
    sums = catalog_block_sums(layout, ra, dec, e1, e2, w, z)
    c, g = SkyCoord(ra0 * u.deg, dec0 * u.deg), SkyCoord(ra * u.deg, dec * u.deg)
    theta = c.separation(g).arcsec
    phi = np.pi / 2 - c.position_angle(g).rad
    e_t = -(e1 * np.cos(2 * phi) + e2 * np.sin(2 * phi))
    e_x = e1 * np.sin(2 * phi) - e2 * np.cos(2 * phi)
    use = (z > 0.45) & (theta >= edges[0]) & (theta < edges[-1]) & (e1 * e1 + e2 * e2 < 1)  # |e| < 1 kept
    d_l = COSMO.angular_diameter_distance(0.35)
    d_s, d_ls = COSMO.angular_diameter_distance(z[use]), COSMO.angular_diameter_distance(0.35, z[use])
    beta = (d_ls / d_s).value
    sigma_cr = (const.c**2 / (4 * np.pi * const.G) * d_s / (d_l * d_ls)).to_value(u.Msun / u.Mpc**2)
    per_bin = lambda key: sums.cells[key].reshape(edges.size - 1, RADIAL_SUBBINS * BETA_CELLS).sum(axis=1)  # noqa: E731
    b = np.searchsorted(edges, theta[use], side="right") - 1
    ref = lambda v: np.bincount(b, weights=v, minlength=edges.size - 1)  # noqa: E731
    np.testing.assert_array_equal(per_bin("n"), ref(np.ones(b.size)))
    np.testing.assert_allclose(per_bin("st"), ref(w[use] * e_t[use]), rtol=1e-9)
    np.testing.assert_allclose(per_bin("sx"), ref(w[use] * e_x[use]), rtol=1e-9)
    np.testing.assert_allclose(per_bin("wbeta"), ref(w[use] * beta), rtol=1e-6)
    wd = w[use] / sigma_cr**2
    np.testing.assert_allclose(per_bin("dt"), ref(wd * sigma_cr * e_t[use]), rtol=1e-6)
    assert sums.n_in_bins == use.sum()


def test_profile_summed_in_blocks_equals_direct_weighted_means():
    # Several blocks of galaxies; reference: numpy.average per bin (the weighted-mean definition of g_t,
    # common practice) and the pooled shape-noise error written out per bin.
    rng = np.random.default_rng(13)
    n = 150_000
    theta = rng.uniform(5, 120, n)
    et, ex = rng.normal(0.02, 0.3, (2, n))
    w = rng.uniform(0.1, 1.0, n)
    edges = [10, 30, 60, 100]
    p = shear_profile(theta, et, ex, w, edges, beta=rng.uniform(0.3, 0.7, n))
    for i in range(3):
        inb = (theta >= edges[i]) & (theta < edges[i + 1])
        mt, mx = np.average(et[inb], weights=w[inb]), np.average(ex[inb], weights=w[inb])
        assert p.n_galaxies[i] == np.count_nonzero(inb)
        np.testing.assert_allclose([p.g_t[i], p.g_x[i]], [mt, mx], rtol=1e-10)
        scatter = np.sum(w[inb] ** 2 * ((et[inb] - mt) ** 2 + (ex[inb] - mx) ** 2)) / 2
        np.testing.assert_allclose(p.g_t_err[i], np.sqrt(scatter) / w[inb].sum(), rtol=1e-9)


@pytest.mark.parametrize("one_redshift", [False, True])
def test_catalogue_engine_equals_the_profile_of_the_selected_galaxies(one_redshift):
    # The engine straight from catalogue columns (catalog_block_sums) against shear_profile of the galaxies
    # selected and rotated here with numpy and astropy distances (D_ls / D_s to 1e-6 in the engine's table),
    # bootstrap on (rows hashed into the same groups by their index).
    from astropy.coordinates import SkyCoord

    from lensmass.core.shear_sums import SumLayout, catalog_block_sums, profile_from_sums

    rng = np.random.default_rng(14)
    n = 60_000
    ra0, dec0 = 141.0, 18.0
    ra, dec = ra0 + rng.uniform(-0.25, 0.25, n), dec0 + rng.uniform(-0.25, 0.25, n)
    e1, e2 = rng.normal(0, 0.25, (2, n)).clip(-0.7, 0.7)  # all |e| < 1: the two routes select the same rows
    w = rng.uniform(0.2, 1.0, n)
    z = np.full(n, 1.2) if one_redshift else rng.uniform(0.5, 3.0, n)
    edges = radial_bin_edges(40.0, 850.0, 6)
    layout = SumLayout(ra0, dec0, 0.35, COSMO, tuple(edges), z_s=1.2 if one_redshift else None, bootstrap=True, seed=3)
    one = profile_from_sums(catalog_block_sums(layout, ra, dec, e1, e2, w, None if one_redshift else z),
                            layout, n_bootstrap=50)
    c, g = SkyCoord(ra0 * u.deg, dec0 * u.deg), SkyCoord(ra * u.deg, dec * u.deg)
    theta = c.separation(g).arcsec
    phi = np.pi / 2 - c.position_angle(g).rad
    e_t = -(e1 * np.cos(2 * phi) + e2 * np.sin(2 * phi))
    e_x = e1 * np.sin(2 * phi) - e2 * np.cos(2 * phi)
    d_l = COSMO.angular_diameter_distance(0.35).to_value(u.Mpc)
    d_s = COSMO.angular_diameter_distance(z).to_value(u.Mpc)
    d_ls = COSMO.angular_diameter_distance(0.35, z).to_value(u.Mpc)
    two = shear_profile(theta, e_t, e_x, w, edges, beta=d_ls / d_s, sigma_cr_msun_per_mpc2=sigma_crit_msun_per_mpc2(
        d_l, d_s, d_ls), d_l_mpc=d_l, n_bootstrap=50, seed=3)
    np.testing.assert_array_equal(one.n_galaxies, two.n_galaxies)
    for name in ("g_t", "g_t_err", "g_x", "r_mean_arcsec", "g_t_err_boot"):
        np.testing.assert_allclose(getattr(one, name), getattr(two, name), rtol=1e-8, err_msg=name)
    np.testing.assert_allclose(one.delta_sigma_msun_per_mpc2, two.delta_sigma_msun_per_mpc2, rtol=1e-6)
    assert one.beta_mean == pytest.approx(two.beta_mean, rel=1e-6)
    for i in range(edges.size - 1):
        inb = (theta >= edges[i]) & (theta < edges[i + 1])
        assert one.g_t[i] == pytest.approx(np.average(e_t[inb], weights=w[inb]), rel=1e-9, abs=1e-12)
