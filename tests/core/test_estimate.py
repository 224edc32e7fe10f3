"""lensmass.estimate: keys, Monte Carlo against linear propagation, unknown z_s, validation."""

import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM, Planck18

import lensmass
from lensmass.core.errors import LensInputError
from lensmass.core.estimate import DERIVED_KEYS, estimate

KEYS = [
    "theta_e_arcsec", "z_l", "z_s", "cosmology", "d_l_mpc", "d_s_mpc", "d_ls_mpc", "sigma_cr_msun_per_pc2",
    "r_e_kpc", "mass_einstein_msun", "sis_sigma_v_kms", "nfw_m200_msun", "nfw_c200", "nfw_r200_kpc", "notes",
]


def test_keys_and_values_against_astropy():
    r = lensmass.estimate(1.2, 0.2, 0.6, cosmology="Planck18")
    assert set(KEYS) <= set(r)
    # astropy as the distance reference
    assert r["d_l_mpc"] == pytest.approx(Planck18.angular_diameter_distance(0.2).value, rel=1e-6)
    assert r["d_ls_mpc"] == pytest.approx(Planck18.angular_diameter_distance(0.2, 0.6).value, rel=1e-6)
    assert "medians" not in r  # no uncertainty given, no intervals
    assert any("Galaxy-scale lens" in n for n in r["notes"])
    assert "NFW halo alone" in r["models"]["nfw_m200_msun"]


def test_array_input_matches_scalar_calls_and_is_vectorised():
    rng = np.random.default_rng(3)
    theta = rng.uniform(0.5, 30, 50)
    zl = rng.uniform(0.1, 0.6, 50)
    zs = zl + rng.uniform(0.3, 2.0, 50)
    arr = estimate(theta, zl, zs)
    for i in (0, 17, 49):
        one = estimate(theta[i], zl[i], zs[i])
        for key in DERIVED_KEYS:
            assert arr[key][i] == pytest.approx(one[key], rel=1e-9, nan_ok=True)


def test_monte_carlo_matches_linear_propagation_for_small_errors():
    # Linear error propagation (common practice): M_E ∝ theta_E^2, so sigma_M / M = 2 sigma_theta / theta;
    # sigma_SIS ∝ theta_E^(1/2), so its relative error is half that of theta_E.
    theta, err = 1.5, 0.015  # 1%
    r = estimate(theta, 0.3, 1.0, theta_e_err=err, samples=40000, seed=1)
    lo, hi = r["intervals68"]["mass_einstein_msun"]
    rel_half_width = (hi - lo) / 2 / r["medians"]["mass_einstein_msun"]
    assert rel_half_width == pytest.approx(2 * err / theta, rel=0.03)
    lo95, hi95 = r["intervals95"]["mass_einstein_msun"]
    assert lo95 < lo < hi < hi95
    assert r["medians"]["mass_einstein_msun"] == pytest.approx(r["mass_einstein_msun"], rel=2e-3)
    s_lo, s_hi = r["intervals68"]["sis_sigma_v_kms"]
    assert (s_hi - s_lo) / 2 / r["medians"]["sis_sigma_v_kms"] == pytest.approx(0.5 * err / theta, rel=0.03)


def test_redshift_error_propagates_through_sigma_cr():
    # Linear propagation through d ln Sigma_cr / d z_s, the derivative taken numerically with astropy.
    cosmo = FlatLambdaCDM(H0=70, Om0=0.3)
    zl, zs, dz = 0.4, 1.2, 0.01

    def sigma_cr_ratio(z):
        return cosmo.angular_diameter_distance(z).value / cosmo.angular_diameter_distance(zl, z).value

    slope = (np.log(sigma_cr_ratio(zs + 1e-4)) - np.log(sigma_cr_ratio(zs - 1e-4))) / 2e-4
    r = estimate(2.0, zl, zs, z_s_err=dz, cosmology=cosmo, samples=40000, seed=2)
    lo, hi = r["intervals68"]["mass_einstein_msun"]
    assert (hi - lo) / 2 / r["mass_einstein_msun"] == pytest.approx(abs(slope) * dz, rel=0.05)


def test_samples_behind_lens_are_rejected_and_counted():
    r = estimate(1.0, 0.5, 0.55, z_s_err=0.05, samples=5000, seed=4)
    assert 0 < r["mc_rejected"] < 5000 * 0.3
    assert any("rejected" in n for n in r["notes"])


def test_unknown_source_redshift_range_and_curve():
    r = estimate(1.0, 0.3, z_s_range=(0.8, 3.0), samples=4000, seed=5)
    curve = r["versus_zs"]
    assert len(curve) >= 10
    masses = [p["mass_einstein_msun"] for p in curve]
    # A more distant source needs less mass for the same radius (Sigma_cr falls with z_s): physics of D_ls/D_s.
    assert all(a > b for a, b in zip(masses, masses[1:]))
    lo, hi = r["intervals68"]["mass_einstein_msun"]
    assert masses[-1] < lo < hi < masses[0]
    assert any("Source redshift unknown" in n for n in r["notes"])


def test_unknown_source_redshift_from_table_matches_fixed_for_narrow_table():
    z = np.array([0.999, 1.0, 1.001])
    w = np.array([0.0, 1.0, 0.0])
    r = estimate(1.0, 0.3, z_s_distribution=(z, w), samples=2000, seed=6)
    fixed = estimate(1.0, 0.3, 1.0)
    assert r["mass_einstein_msun"] == pytest.approx(fixed["mass_einstein_msun"], rel=1e-3)


def test_cluster_scale_has_nfw_and_no_galaxy_caveat():
    r = estimate(30.0, 0.35, 1.8)
    assert 1e14 < r["nfw_m200_msun"] < 1e16
    assert 2 < r["nfw_c200"] < 8
    assert not any("Galaxy-scale" in n for n in r["notes"])


@pytest.mark.parametrize(
    "args, kwargs, fragment",
    [
        ((1.0, 0.6, 0.3), {}, "source must lie behind the lens"),
        ((1.0, 0.6, 0.6), {}, "source must lie behind the lens"),
        ((-1.0, 0.2, 0.6), {}, r"Einstein radius \(`theta_e_arcsec`\) must be a positive"),
        ((float("nan"), 0.2, 0.6), {}, r"Einstein radius \(`theta_e_arcsec`\) must be a positive"),
        ((1.0, 0.0, 0.6), {}, r"lens redshift \(`z_l`\) must be a positive"),
        ((1.0, 0.2, 0.6), {"cosmology": "nonsense"}, "Unknown cosmology"),
        ((1.0, 0.2, 0.6), {"concentration": "wibble"}, "Unknown concentration"),
        ((1.0, 0.2, 0.6), {"theta_e_err": -1}, "zero or positive"),
        ((1.0, 0.2, None), {}, "No source redshift"),
        ((1.0, 0.2, 0.6), {"z_s_range": (1, 2)}, "one way only"),
        ((1.0, 0.9, None), {"z_s_range": (0.5, 0.8)}, "source must lie behind the lens"),
    ],
)
def test_validation_messages(args, kwargs, fragment):
    with pytest.raises(LensInputError, match=fragment) as info:
        estimate(*args, **kwargs)
    assert "\n" not in str(info.value)


def test_array_input_names_the_lens_with_its_source_in_front():
    with pytest.raises(LensInputError, match=r"z_l = 0.6, z_s = 0.4"):
        estimate(np.array([1.0, 1.0]), np.array([0.2, 0.6]), np.array([0.5, 0.4]))
