"""Models used outside their range say so; the virial overdensity follows the right Bryan & Norman fit."""

import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM, LambdaCDM, Planck18

import lensmass
from lensmass.core.estimate_many import estimate_many
from lensmass.core.nfw import overdensity_density_msun_per_mpc3, virial_overdensity


@pytest.mark.parametrize("z", [0.0, 0.3, 1.0, 2.5])
def test_virial_overdensity_follows_bryan_norman_fit_for_the_cosmology(z):
    # Bryan & Norman (1998, ApJ 495, 80), eq. (6), x = Omega_m(z) - 1 with Omega_m(z) from astropy:
    # 18 pi^2 + 82 x - 39 x^2 (flat, Omega_Lambda + Omega_m = 1); 18 pi^2 + 60 x - 32 x^2 (Omega_Lambda = 0)
    flat, open_ = FlatLambdaCDM(70, 0.3), LambdaCDM(70, 0.3, 0.0)
    x_f, x_o = flat.Om(z) - 1, open_.Om(z) - 1
    assert virial_overdensity(z, flat)[0] == pytest.approx(18 * np.pi**2 + 82 * x_f - 39 * x_f**2, rel=1e-12)
    assert virial_overdensity(z, open_)[0] == pytest.approx(18 * np.pi**2 + 60 * x_o - 32 * x_o**2, rel=1e-12)
    assert "open" in virial_overdensity(z, open_)[1]
    rho = overdensity_density_msun_per_mpc3(z, open_, "vir")
    rho_c = open_.critical_density(z).to("Msun / Mpc3").value  # astropy
    assert rho / rho_c == pytest.approx(18 * np.pi**2 + 60 * x_o - 32 * x_o**2, rel=1e-9)


def test_both_fits_meet_the_einstein_de_sitter_value():
    # x = 0 (Omega_m = 1): the spherical-collapse overdensity 18 pi^2 = 177.65 (common practice)
    assert virial_overdensity(0.0, LambdaCDM(70, 1.0, 0.0))[0] == pytest.approx(18 * np.pi**2)
    # an open model at z = 0 differs from the flat formula by (60 - 82) x - (32 - 39) x^2 at x = -0.7: +18.7%
    open_ = LambdaCDM(70, 0.3, 0.0)
    assert virial_overdensity(0.0, open_)[0] / (18 * np.pi**2 - 82 * 0.7 - 39 * 0.49) == pytest.approx(1.186, abs=1e-3)


def test_curved_lambda_model_is_labelled_as_outside_the_fits():
    r = lensmass.estimate(8.0, 0.3, 1.2, cosmology=LambdaCDM(70, 0.3, 0.6), halo_definition="vir")
    assert any("outside its range" in n for n in r["notes"])
    assert "flat-Lambda fit used outside" in r["models"]["nfw_m200_msun"]


def test_duffy_relation_beyond_z2_is_noted():
    # Duffy et al. (2008) calibrate z <= 2 (from memory; shared/REFERENCES.md): the worked case
    r = lensmass.estimate(5.0, 2.5, 4.0)
    assert any("Duffy et al. (2008)" in n and "extrapolated" in n and "z_l = 2.5" in n for n in r["notes"])
    ok = lensmass.estimate(3.0, 0.3, 1.2)  # M200 ~ 1e15 Msun at z = 0.3: inside the calibration
    assert not any("extrapolated" in n for n in ok["notes"])
    d14 = lensmass.estimate(5.0, 2.5, 4.0, concentration="dutton14")  # Dutton & Maccio fit z <= 5
    assert not any("z_l = 2.5" in n for n in d14["notes"])


def test_halo_beyond_any_observed_and_tiny_dls_ds_are_flagged():
    # the worked case: z_s = 0.3 behind z_l = 0.25; D_ls/D_s from astropy's two-redshift distance
    r = lensmass.estimate(10.0, 0.25, 0.3)
    beta = (Planck18.angular_diameter_distance(0.25, 0.3) / Planck18.angular_diameter_distance(0.3)).value
    assert beta < 0.2 and r["nfw_m200_msun"] > 1e16
    assert any("above 1e16 Msun" in n for n in r["notes"])
    assert any(f"D_ls/D_s = {beta:.3g}" in n for n in r["notes"])
    # the batch route gives the same notes (one source for each caveat)
    many = estimate_many([10.0], [0.0], [0.25], [0.0], [0.3], [0.0], [1], samples=200)[0]
    assert many["notes"] == r["notes"]


def test_rejected_draws_are_blamed_on_the_input_that_caused_them():
    # theta_E error as large as theta_E, exact redshifts: a Gaussian N(1, 1) is <= 0 in 15.9% of draws
    # (scipy.stats.norm.cdf(-1)); the note blames theta_E, not the redshifts
    r = lensmass.estimate(1.0, 0.3, 1.0, theta_e_err=1.0, samples=4000)
    note = next(n for n in r["notes"] if "Monte Carlo draws" in n)
    assert "non-positive Einstein radius" in note and "z_s <= z_l" not in note
    assert r["mc_rejected"] / 4000 == pytest.approx(0.159, abs=0.02)
    # the Python API names the parameter (`theta_e_err`); the command line shows it as --theta-e-err
    with pytest.raises(lensmass.LensInputError, match="theta_e_err") as exc:
        lensmass.estimate(1.0, 0.3, 1.0, theta_e_err=20.0, samples=400)
    assert "redshift" not in str(exc.value)
    # a source redshift error crossing the lens: blamed on the redshifts
    r = lensmass.estimate(1.0, 0.5, 0.55, z_s_err=0.05, samples=2000)
    note = next(n for n in r["notes"] if "Monte Carlo draws" in n)
    assert "z_s <= z_l" in note and "Einstein radius" not in note
