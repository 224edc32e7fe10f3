"""Grading: expected values against astropy, each classic mistake recognised on a crafted answer.

Every crafted wrong answer is computed here independently with astropy.cosmology and
astropy.constants (not through lensmass.core.grading's mistake functions).
"""

import numpy as np
import pytest
import astropy.units as u
from astropy.constants import G, c
from astropy.cosmology import FlatLambdaCDM

from lensmass.core.errors import LensInputError
from lensmass.core.grading import GRADABLE, MISTAKES, expected_quantities, grade_answer

COSMO = FlatLambdaCDM(H0=70, Om0=0.3)
THETA, ZL, ZS = 1.2, 0.3, 1.1


def astropy_answer(theta_rad, d_l, d_s, d_ls, c_val=c, g_val=G):
    """Textbook formulas (Narayan & Bartelmann 1996, eqs. 15-20, section 3.3) with astropy units."""
    sigma_cr = (c_val**2 / (4 * np.pi * g_val) * d_s / (d_l * d_ls)).to(u.Msun / u.pc**2)
    r_e = (d_l * theta_rad).to(u.kpc)
    # Second route to the Einstein mass: (c^2 / 4G) (D_l D_s / D_ls) theta_E^2 (shared/REFERENCES.md).
    mass = (c_val**2 / (4 * g_val) * d_l * d_s / d_ls * theta_rad**2).to(u.Msun)
    sigma_v = (c_val * np.sqrt(theta_rad * d_s / (4 * np.pi * d_ls))).to(u.km / u.s)
    return {"sigma_cr_msun_per_pc2": sigma_cr.value, "r_e_kpc": r_e.value, "mass_einstein_msun": mass.value,
            "sis_sigma_v_kms": sigma_v.value, "d_l_mpc": d_l.to_value(u.Mpc), "d_s_mpc": d_s.to_value(u.Mpc),
            "d_ls_mpc": d_ls.to_value(u.Mpc)}


def right_distances():
    # Hogg (1999) angular-diameter distances, two-redshift form for D_ls, via astropy.
    return (COSMO.angular_diameter_distance(ZL), COSMO.angular_diameter_distance(ZS),
            COSMO.angular_diameter_distance(ZL, ZS))


RIGHT = astropy_answer(np.deg2rad(THETA / 3600), *right_distances())


def test_expected_values_match_astropy():
    got = expected_quantities(THETA, ZL, ZS, COSMO)
    for key in GRADABLE:
        assert float(got[key]) == pytest.approx(RIGHT[key], rel=1e-6), key


def test_correct_answers_pass_and_carry_no_diagnosis():
    for key in GRADABLE:
        row = grade_answer(key, RIGHT[key] * 1.01, THETA, ZL, ZS, COSMO, tolerance=0.05)
        assert row["verdict"] == "pass" and row["diagnosis"] == "" and row["mistakes"] == []


def test_published_einstein_radius_in_kpc():
    # SLACS SDSSJ1205+4910: z_l = 0.215, theta_E = 1.22", R_E = 4.27 kpc in flat LCDM H0 = 70, Om = 0.3
    # (Auger et al. 2009, ApJ 705, 1099; Bolton et al. 2008, ApJ 682, 964); table rounding ~1%.
    r = expected_quantities(1.22, 0.215, 0.481, COSMO)["r_e_kpc"]
    assert float(r) == pytest.approx(4.27, rel=0.01)
    assert grade_answer("r_e_kpc", 4.27, 1.22, 0.215, 0.481, COSMO, tolerance=0.02)["verdict"] == "pass"


def crafted_wrong_answers():
    """(mistake key, quantity, wrong value) computed the way a student who made it would."""
    theta = np.deg2rad(THETA / 3600)
    d_l, d_s, d_ls = right_distances()
    h = COSMO.h
    dc_l, dc_s = COSMO.comoving_distance(ZL), COSMO.comoving_distance(ZS)
    dlum_l, dlum_s = COSMO.luminosity_distance(ZL), COSMO.luminosity_distance(ZS)
    si = dict(d_l=d_l.to(u.m).value, d_s=d_s.to(u.m).value, d_ls=d_ls.to(u.m).value)
    msun_kg = (1 * u.Msun).to_value(u.kg)
    # Sigma_cr in SI with a numeric G taken from the cgs system (6.674e-8): kg/m^2 -> Msun/pc^2.
    pc_m = (1 * u.pc).to_value(u.m)
    sigma_g_cgs = c.si.value**2 / (4 * np.pi * G.cgs.value) * si["d_s"] / (si["d_l"] * si["d_ls"]) * pc_m**2 / msun_kg
    sigma_g_in_cgs = (c.cgs.value**2 / (4 * np.pi * G.si.value)
                      * (d_s / (d_l * d_ls)).to_value(1 / u.cm)) * (1 * u.pc).to_value(u.cm) ** 2 / (1 * u.Msun).to_value(u.g)
    # sigma_SIS = c sqrt(theta D_s / (4 pi D_ls)) with c typed as 2.998e8 into a km/s formula.
    sigma_v_c_ms = c.si.value * np.sqrt(theta * (d_s / d_ls).value / (4 * np.pi))
    mass_c_kms_si = (c.to_value(u.km / u.s)) ** 2 / (4 * G.si.value) * si["d_l"] * si["d_s"] / si["d_ls"] * theta**2 / msun_kg
    return [
        ("ds_for_dls", "sigma_cr_msun_per_pc2", astropy_answer(theta, d_l, d_s, d_s)["sigma_cr_msun_per_pc2"]),
        ("ds_for_dls", "sis_sigma_v_kms", astropy_answer(theta, d_l, d_s, d_s)["sis_sigma_v_kms"]),
        ("ds_for_dls", "d_ls_mpc", d_s.to_value(u.Mpc)),
        # Hogg (1999) eq. 19: D_ls is not D_s - D_l; the subtraction is a classic slip (common practice).
        ("dls_as_difference", "d_ls_mpc", (d_s - d_l).to_value(u.Mpc)),
        ("dls_as_difference", "mass_einstein_msun", astropy_answer(theta, d_l, d_s, d_s - d_l)["mass_einstein_msun"]),
        ("comoving_distance", "mass_einstein_msun", astropy_answer(theta, dc_l, dc_s, dc_s - dc_l)["mass_einstein_msun"]),
        ("comoving_distance", "d_l_mpc", dc_l.to_value(u.Mpc)),
        ("luminosity_distance", "mass_einstein_msun",
         astropy_answer(theta, dlum_l, dlum_s, dlum_s - dlum_l)["mass_einstein_msun"]),
        ("luminosity_distance", "d_s_mpc", dlum_s.to_value(u.Mpc)),
        ("diameter_for_radius", "r_e_kpc", 2 * RIGHT["r_e_kpc"]),
        ("diameter_for_radius", "mass_einstein_msun", 4 * RIGHT["mass_einstein_msun"]),
        ("arcsec_without_pi_over_180", "r_e_kpc", (d_l * (THETA / 3600)).to_value(u.kpc)),
        ("arcsec_as_degrees", "mass_einstein_msun",
         astropy_answer(np.deg2rad(THETA), d_l, d_s, d_ls)["mass_einstein_msun"]),
        ("arcsec_as_radians", "r_e_kpc", (d_l * THETA).to_value(u.kpc)),
        # h^-1 units dropped: a mass in h^-1 Msun reads h times the Msun value; Sigma_cr in h Msun/pc^2 reads 1/h.
        ("h_dropped", "mass_einstein_msun", RIGHT["mass_einstein_msun"] * h),
        ("h_dropped", "d_l_mpc", d_l.to_value(u.Mpc) * h),
        ("h_dropped", "sigma_cr_msun_per_pc2", RIGHT["sigma_cr_msun_per_pc2"] / h),
        ("g_cgs_in_si", "sigma_cr_msun_per_pc2", sigma_g_cgs),
        ("g_si_in_cgs", "sigma_cr_msun_per_pc2", sigma_g_in_cgs),
        ("c_in_m_per_s", "sis_sigma_v_kms", sigma_v_c_ms),
        ("c_in_km_per_s", "mass_einstein_msun", mass_c_kms_si),
    ]


@pytest.mark.parametrize("key,quantity,wrong", crafted_wrong_answers(), ids=lambda v: str(v)[:24])
def test_each_mistake_is_recognised(key, quantity, wrong):
    row = grade_answer(quantity, wrong, THETA, ZL, ZS, COSMO, tolerance=0.05)
    assert row["verdict"] == "fail"
    assert key in row["mistakes"], row
    assert row["diagnosis"].startswith("matches the answer of someone who")


def test_every_mistake_is_crafted_in_a_test():
    assert {k for k, _, _ in crafted_wrong_answers()} == {m.key for m in MISTAKES}


def test_unrelated_wrong_answer_is_not_diagnosed():
    row = grade_answer("r_e_kpc", RIGHT["r_e_kpc"] * 1.37, THETA, ZL, ZS, COSMO)
    assert row["verdict"] == "fail" and row["mistakes"] == [] and "no known mistake" in row["diagnosis"]


def test_bad_tolerance_and_quantity_are_one_sentence_errors():
    with pytest.raises(LensInputError, match="tolerance"):
        grade_answer("r_e_kpc", 1.0, THETA, ZL, ZS, COSMO, tolerance=2)
    with pytest.raises(LensInputError, match="gradable"):
        grade_answer("nonsense", 1.0, THETA, ZL, ZS, COSMO)
