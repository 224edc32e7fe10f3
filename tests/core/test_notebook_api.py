"""The Python API as a notebook user meets it: Quantities in, tables out, a reason per bad lens.

Outside sources: astropy.units for every unit conversion (1 arcmin = 60 arcsec, 1 rad =
206264.806 arcsec); astropy.table for the table protocol; the scalar estimate (itself checked
against astropy's distances in test_estimate.py) for the array and Monte Carlo forms.
"""

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable, Table

import lensmass
from lensmass.core.errors import LensInputError, in_words
from lensmass.core.estimate import estimate


def test_quantities_of_any_angle_unit_give_the_same_masses():
    plain = estimate(1.2, 0.25, 0.9)
    for theta in (1.2 * u.arcsec, (1.2 * u.arcsec).to(u.rad), 0.02 * u.arcmin, (1.2 / 3600) * u.deg):
        r = estimate(theta, 0.25, 0.9)
        assert r["mass_einstein_msun"] == pytest.approx(plain["mass_einstein_msun"], rel=1e-9)
    # An error given as a Quantity is converted too (0.05 arcsec = 0.05/60 arcmin, astropy).
    a = estimate(1.2, 0.25, 0.9, theta_e_err=0.05, samples=500)
    b = estimate(1.2 * u.arcsec, 0.25, 0.9, theta_e_err=(0.05 / 60) * u.arcmin, samples=500)
    assert a["intervals68"]["mass_einstein_msun"] == pytest.approx(b["intervals68"]["mass_einstein_msun"], rel=1e-9)
    r = estimate(1.2, 0.25 * u.dimensionless_unscaled, 0.9)
    assert r["z_l"] == 0.25


@pytest.mark.parametrize("theta, z_l, fragment", [
    (1.2 * u.kpc, 0.25, r"Einstein radius \(`theta_e_arcsec`\) must be an angle"),
    (1.2, 0.25 * u.km, r"lens redshift \(`z_l`\) is a pure number"),
])
def test_a_wrong_dimension_is_one_sentence(theta, z_l, fragment):
    with pytest.raises(LensInputError, match=fragment) as info:
        estimate(theta, z_l, 0.9)
    assert "\n" not in str(info.value)


def test_result_converts_to_a_qtable_with_units_and_no_working_data():
    r = estimate(1.2, 0.25, 0.9, theta_e_err=0.05, samples=500)
    assert "_samples" in r  # the window's plots still have their draws ...
    for table in (r.to_table(), QTable(r), Table(r)):
        assert len(table) == 1
        assert not [c for c in table.colnames if c.startswith("_")]  # ... which never reach a table
        assert table["mass_einstein_msun"].unit == u.Msun
        assert table["sigma_cr_msun_per_pc2"].unit == u.Msun / u.pc**2
        assert table["mass_einstein_msun_p84"].unit == u.Msun
    t = QTable(r)
    assert t["mass_einstein_msun"][0].to_value(u.Msun) == pytest.approx(r["mass_einstein_msun"])
    assert "mass_einstein_msun" in t.meta["models"] and t.meta["notes"]
    assert r.quantity("r_e_kpc").to_value(u.pc) == pytest.approx(1000 * r["r_e_kpc"])
    html = r._repr_html_()
    assert "M(&lt;θ<sub>E</sub>)" in html and "68% interval" in html and "_samples" not in html
    assert "M(<theta_E) =" in repr(r) and "_samples" not in repr(r)


def test_arrays_give_a_reason_per_bad_lens_and_compute_the_rest():
    theta = [1.2, -1.0, 2.0, 1.5]
    z_l = [0.25, 0.3, 0.8, 0.4]
    z_s = [0.9, 1.0, 0.5, 1.2]
    with pytest.raises(LensInputError, match=r"Lens 1 of 4: The Einstein radius .* strict=False"):
        estimate(theta, z_l, z_s)
    r = estimate(theta, z_l, z_s, strict=False)
    assert r["problems"][0] is None and r["problems"][3] is None
    assert "theta_e_arcsec" in r["problems"][1]
    assert "behind the lens" in r["problems"][2]
    assert np.isnan(r["mass_einstein_msun"][[1, 2]]).all()
    for i in (0, 3):  # the good lenses are what a call per lens gives
        assert r["mass_einstein_msun"][i] == pytest.approx(estimate(theta[i], z_l[i], z_s[i])["mass_einstein_msun"],
                                                           rel=1e-12)
    table = r.to_table()
    assert len(table) == 4 and table["problem"][0] == "" and "behind" in table["problem"][2]


def test_monte_carlo_over_arrays_equals_one_call_per_lens():
    theta, err = np.array([1.2, 3.0]), np.array([0.05, 0.2])
    r = estimate(theta, [0.25, 0.4], [0.9, 1.5], theta_e_err=err, samples=400, seed=7)
    for i in range(2):
        one = estimate(theta[i], [0.25, 0.4][i], [0.9, 1.5][i], theta_e_err=err[i], samples=400, seed=7 + i)
        lo, hi = (b[i] for b in r["intervals68"]["mass_einstein_msun"])
        assert [lo, hi] == pytest.approx(one["intervals68"]["mass_einstein_msun"], rel=1e-12)
        assert r["medians"]["nfw_m200_msun"][i] == pytest.approx(one["medians"]["nfw_m200_msun"], rel=1e-12)
    assert len(r.to_table()) == 2 and "mass_einstein_msun_p16" in r.to_table().colnames


def test_core_messages_name_quantities_and_the_command_line_names_its_flags(capsys):
    from lensmass.cli import main

    with pytest.raises(LensInputError) as info:
        estimate(1.2, -0.3, 0.9)
    assert "--" not in str(info.value) and "(`z_l`)" in str(info.value)
    assert main(["estimate", "--theta-e", "1.2", "--zl", "-0.3", "--zs", "0.9"]) == 2
    err = capsys.readouterr().err
    assert "(--zl)" in err and "`" not in err
    assert in_words("The lens redshift (`z_l`) must be positive.") == "The lens redshift (z_l) must be positive."


def test_the_public_api_is_listed_and_importable():
    names = dir(lensmass)
    for name in ("estimate", "estimate_many", "LensResult", "fit_circle", "fit_ellipse", "measure_from_points",
                 "find_ring", "measure_auto_ring", "load_image", "add_light", "read_shear_catalog",
                 "analyse_shear_catalog", "mass_map", "grade_answers", "run_batch", "LensInputError", "register_key", "__version__"):
        assert name in names, name
        assert getattr(lensmass, name) is not None
