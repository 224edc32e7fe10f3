"""Results export to ECSV and JSON.

Outside references: astropy.table's ECSV reader (the ECSV 1.0 standard) reads our files back;
Python's json module (RFC 8259, strict: no NaN); the Einstein mass (c^2 / 4G) (D_l D_s / D_ls) theta_E^2
of Narayan & Bartelmann (1996, arXiv:astro-ph/9606001) with astropy distances and constants; the
SLACS lens SDSSJ0912+0029 of Auger et al. (2009, ApJ 705, 1099), Einstein radius from Bolton et al.
(2008, ApJ 682, 964), in flat LCDM H0 = 70, Omega_m = 0.3.
"""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u
from astropy.cosmology import FlatLambdaCDM
from astropy.table import Table

from lensmass.core.errors import LensInputError
from lensmass.core.estimate import DERIVED_KEYS, estimate
from lensmass.io.export import results_table, write_results, write_results_ecsv, write_results_json

# Auger et al. (2009) table row: name z_lens z_source ... theta_E_arcsec R_E_kpc
# SDSSJ0912+0029 0.164 0.324 4.15 11.69 1.63 4.58 ...
SLACS_J0912 = {"z_l": 0.164, "z_s": 0.324, "theta_e_arcsec": 1.63, "r_e_kpc": 4.58}
COSMO = FlatLambdaCDM(H0=70, Om0=0.3)


@pytest.fixture(scope="module")
def systems():
    a = estimate(SLACS_J0912["theta_e_arcsec"], SLACS_J0912["z_l"], SLACS_J0912["z_s"], cosmology=COSMO,
                 theta_e_err=0.05, z_l_err=0.001, samples=400, seed=3)
    b = estimate(4.0, 0.35, 1.8, cosmology=COSMO)  # an invented group-scale arc, no uncertainties
    c = estimate(300.0, 0.05, 0.1, cosmology=COSMO)  # no NFW halo gives this: NaN NFW numbers
    return {"J0912": a, "kestrel-B": b, "wide": c}


def test_ecsv_read_back_by_astropy_gives_the_same_numbers(tmp_path, systems):
    path = write_results_ecsv(tmp_path / "results.ecsv", systems)
    t = Table.read(path, format="ascii.ecsv")
    assert list(t["system"]) == list(systems)
    for row, (name, r) in zip(t, systems.items()):
        for key in DERIVED_KEYS:
            if np.isfinite(r[key]):
                assert row[key] == r[key], (name, key)  # exact: ECSV stores full precision
            else:
                assert np.isnan(row[key])
    a = systems["J0912"]
    for key in DERIVED_KEYS:
        assert t[key + "_p16"][0] == a["intervals68"][key][0]
        assert t[key + "_p84"][0] == a["intervals68"][key][1]
        assert t[key + "_p2p5"][0] == a["intervals95"][key][0]
        assert t[key + "_p97p5"][0] == a["intervals95"][key][1]
    assert np.isnan(t["mass_einstein_msun_p16"][1])  # no uncertainty propagated for that system
    assert list(t["mc_samples"]) == [400, 0, 0]


def test_ecsv_units_and_meta(tmp_path, systems):
    path = write_results_ecsv(tmp_path / "results.ecsv", systems, inputs={"J0912": {"theta_e_err": 0.05}})
    t = Table.read(path, format="ascii.ecsv")
    assert t["mass_einstein_msun"].unit == u.Msun
    assert t["mass_einstein_msun_p84"].unit == u.Msun
    assert t["sigma_cr_msun_per_pc2"].unit == u.Msun / u.pc**2
    assert t["sis_sigma_v_kms"].unit == u.km / u.s
    assert t["d_ls_mpc"].unit == u.Mpc and t["r_e_kpc"].unit == u.kpc and t["theta_e_arcsec"].unit == u.arcsec
    assert t["nfw_c200"].unit is None and t["z_l"].unit is None
    assert t.meta["format"] == "lensmass-results"
    assert t.meta["models"][t["models_set"][0]] == systems["J0912"]["models"]
    assert len(t.meta["models"]) == 1  # one cosmology and halo model: the text is stored once
    for row, name in zip(t, systems):
        assert t.meta["notes"][row["notes_set"]] == systems[name]["notes"]
    assert t.meta["inputs"] == {"J0912": {"theta_e_err": 0.05}}
    assert "68%" in t.meta["intervals"]


def test_exported_numbers_match_published_values(systems):
    t = results_table(systems)
    row = t[0]
    # Auger et al. (2009) R_E = 4.58 kpc for theta_E = 1.63" (their rounding, about 1%).
    assert row["r_e_kpc"] == pytest.approx(SLACS_J0912["r_e_kpc"], rel=0.01)
    # Narayan & Bartelmann (1996): M(<theta_E) = (c^2/4G) (D_l D_s / D_ls) theta_E^2, astropy distances.
    d_l = COSMO.angular_diameter_distance(0.164)
    d_s = COSMO.angular_diameter_distance(0.324)
    d_ls = COSMO.angular_diameter_distance(0.164, 0.324)
    theta = (1.63 * u.arcsec).to_value(u.rad)
    mass = (const.c**2 / (4 * const.G) * d_l * d_s / d_ls * theta**2).to_value(u.Msun)
    assert row["mass_einstein_msun"] == pytest.approx(mass, rel=1e-6)


def test_json_export_is_strict_and_complete(tmp_path, systems):
    path = write_results_json(tmp_path / "results.json", systems, inputs={"J0912": {"theta_e_arcsec": 1.63}})
    text = path.read_text()
    doc = json.loads(text, parse_constant=lambda c: pytest.fail(f"non-standard JSON constant {c}"))
    assert doc["format"] == "lensmass-results"
    entries = {e["name"]: e for e in doc["systems"]}
    a = entries["J0912"]["result"]
    assert a["mass_einstein_msun"] == systems["J0912"]["mass_einstein_msun"]
    assert a["intervals68"]["nfw_m200_msun"] == systems["J0912"]["intervals68"]["nfw_m200_msun"]
    assert a["models"] == systems["J0912"]["models"] and a["notes"] == systems["J0912"]["notes"]
    assert "_samples" not in a
    assert entries["J0912"]["inputs"] == {"theta_e_arcsec": 1.63}
    assert entries["wide"]["result"]["nfw_m200_msun"] is None  # NaN becomes null


def test_write_results_picks_the_format_by_suffix(tmp_path, systems):
    assert Table.read(write_results(tmp_path / "r.ECSV", systems), format="ascii.ecsv")
    assert json.loads(write_results(tmp_path / "r.json", systems).read_text())
    with pytest.raises(LensInputError, match="name the file .json or .ecsv"):
        write_results(tmp_path / "r.xlsx", systems)


def test_failed_write_keeps_the_previous_export(tmp_path, systems, monkeypatch):
    path = write_results_ecsv(tmp_path / "r.ecsv", systems)
    before = hashlib.sha256(path.read_bytes()).hexdigest()

    def broken_replace(src, dst):
        raise OSError(13, "Permission denied")

    monkeypatch.setattr("lensmass.io.atomic.os.replace", broken_replace)
    with pytest.raises(LensInputError, match="choose another folder"):
        write_results_ecsv(path, {"only": systems["kestrel-B"]})
    with pytest.raises(LensInputError):
        write_results_json(tmp_path / "r.ecsv", systems)
    assert hashlib.sha256(path.read_bytes()).hexdigest() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.ecsv"]


def test_bad_export_requests(systems):
    with pytest.raises(LensInputError, match="no results to export"):
        results_table({})
    with pytest.raises(LensInputError, match="share a name"):
        results_table([("A", systems["J0912"]), ("A", systems["wide"])])
    many = estimate(np.array([1.0, 1.5]), 0.3, 1.0)
    with pytest.raises(LensInputError, match="several lenses"):
        results_table({"both": many})
