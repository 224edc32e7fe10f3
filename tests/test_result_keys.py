"""The key registry: every key a result can hold is registered once, and a new key reaches every output.

Outside sources: astropy.units parses every registered unit; the unit suffixes of key names
(``_msun``, ``_kpc``, ``_arcsec``, ...) follow the project's naming rule (DEVELOPERS.md "Units in
names", common practice in astropy-style code).
"""

import io
import json
from contextlib import redirect_stdout
from pathlib import Path

import numpy as np
import pytest

from lensmass.cli import main
from lensmass.core import estimate as estimate_module
from lensmass.core.result_keys import RESULT_KEYS, UNIT_FORMS, KeyFact, fact, keys_in, register_key, unregister_key

DEMO = Path(__file__).resolve().parents[1] / "demo_fields"


def _json(*argv) -> dict:
    out = io.StringIO()
    with redirect_stdout(out):
        assert main(list(argv)) == 0
    return json.loads(out.getvalue())


def _all_keys(result: dict, where: str) -> set[tuple[str, str]]:
    """(key, where) for the top-level keys, the keys inside medians/intervals/models and profile rows."""
    found = {(k, where) for k in result}
    for block in ("medians", "intervals68", "intervals95", "models", "best_fit"):
        found |= {(k, f"{where}.{block}") for k in (result.get(block) or {})}
    for row in result.get("profile") or []:
        found |= {(k, f"{where}.profile") for k in row}
    return {(k, w) for k, w in found if not k.startswith("_")}


@pytest.fixture(scope="module")
def produced(tmp_path_factory) -> set[tuple[str, str]]:
    tmp = tmp_path_factory.mktemp("keys")
    truth = json.loads((DEMO / "tris_ring_a.truth.json").read_text())
    points = tmp / "points.csv"
    points.write_text("x,y\n" + "\n".join(f"{x},{y}" for x, y in truth["arc_points_xy"][::4]) + "\n")
    keys: set[tuple[str, str]] = set()
    light = ["--lens-mag", "18.9", "--band", "sdss_r", "--r-eff", "1.2", "--sersic-n", "4"]
    runs = {
        "estimate": ["estimate", "--theta-e", "1.4", "--zl", "0.25", "--zs", "0.9"],
        "estimate MC": ["estimate", "--theta-e", "1.4", "--theta-e-err", "0.05", "--zl", "0.25", "--zs", "0.9",
                        "--samples", "300"],
        "estimate z_s range": ["estimate", "--theta-e", "1.1", "--zl", "0.31", "--zs-range", "0.8,2.5",
                               "--samples", "300"],
        "estimate light M/L": ["estimate", "--theta-e", "1.4", "--zl", "0.25", "--zs", "0.9", *light,
                               "--stellar-ml", "3.0"],
        "estimate light M*": ["estimate", "--theta-e", "1.4", "--zl", "0.25", "--zs", "0.9", *light,
                              "--stellar-mass", "2e11"],
        "measure points": ["measure", str(DEMO / "tris_ring_a.fits"), "--points", str(points), "--zl", "0.25",
                           "--zs", "0.9", "--samples", "300"],
        "measure ellipse": ["measure", str(DEMO / "tris_ring_a.fits"), "--points", str(points), "--shape",
                            "ellipse", "--zl", "0.25", "--zs", "0.9"],
        "measure ring + photometry": ["measure", str(DEMO / "tris_ring_a.fits"), "--auto-ring", "--zl", "0.25",
                                      "--zs", "0.9", "--zeropoint", "30", "--band", "sdss_r", "--stellar-ml", "3",
                                      "--samples", "300"],
        "shear": ["shear", str(DEMO / "tris_cluster_d_shear.fits"), "--zl", "0.35", "--center-sky",
                  "141.3720,18.2705", "--columns", "ra=RA,dec=DEC,e1=E1,e2=E2,weight=WEIGHT,z=Z_PHOT",
                  "--bootstrap", "20", "--map-out", str(tmp / "kappa.fits"), "--map-pixels", "32", "--map-noise", "2"],
    }
    for name, argv in runs.items():
        keys |= _all_keys(_json(*argv, "--json"), name)
    # The Python API's results and a batch row hold the same keys.
    keys |= _all_keys(estimate_module.estimate(1.2, 0.3, 1.0, theta_e_err=0.05, samples=300), "estimate()")
    keys |= _all_keys(estimate_module.estimate([1.2, -1.0], 0.3, 1.0, theta_e_err=[0.05, 0.0], samples=300,
                                               strict=False), "estimate(arrays)")
    return keys


def test_every_key_a_result_can_hold_is_registered(produced):
    missing = sorted({f"{k} (from {w})" for k, w in produced if k not in RESULT_KEYS})
    assert not missing, "unregistered result keys: " + ", ".join(missing)
    # The runs cover each group of the registry (so the check above is not vacuous).
    groups = {fact(k).group for k, _ in produced}
    assert groups == {"estimate", "measure", "light", "shear", "profile", "meta"}


def test_derived_keys_are_exactly_what_the_estimate_computes():
    from astropy.cosmology import Planck18

    from lensmass.core.concentration import concentration_relation

    c_of_m, _ = concentration_relation("duffy08", "200c")
    derived = estimate_module.derive_quantities(1.2, 0.3, 1.0, Planck18, c_of_m)
    assert list(derived) == list(estimate_module.DERIVED_KEYS) == list(keys_in("estimate"))


def test_units_parse_in_astropy_and_match_the_key_names():
    import astropy.units as u

    # Unit suffixes of key names (DEVELOPERS.md "Units in names"; common practice).
    suffix_units = {"_msun_per_pc2": "solMass / pc2", "_msun": "solMass", "_kpc": "kpc", "_mpc": "Mpc",
                    "_arcsec": "arcsec", "_kms": "km / s", "_deg": "deg", "_lsun": "solLum"}
    for unit in UNIT_FORMS:
        assert u.Unit(unit) is not None  # astropy reads every unit spelling we use
    for key, info in RESULT_KEYS.items():
        for suffix, unit in suffix_units.items():
            if key.endswith(suffix):
                assert info.unit is not None and u.Unit(info.unit) == u.Unit(unit), key
                break
        assert info.description and info.label, key


def test_a_missing_key_names_the_registry():
    with pytest.raises(KeyError, match="result_keys.py"):
        fact("no_such_key_msun")
    with pytest.raises(ValueError, match="working data"):
        register_key(KeyFact("_samples", "x", None, "x"))
    with pytest.raises(ValueError, match="UNIT_FORMS"):
        register_key(KeyFact("odd_furlongs", "x", "furlong", "x", "estimate"))


# ---------------------------------------------------------------------------- the "add a mass model" recipe
TOY = KeyFact("toy_core_mass_msun", "toy M_core", "solMass", "mass of a toy cored profile inside theta_E",
              "estimate", table=True, rich="M<sub>toy</sub>", math=r"$M_{toy}$")


def _with_toy(original):
    def derive(theta_e_arcsec, *args, **kwargs):
        out = original(theta_e_arcsec, *args, **kwargs)
        out["toy_core_mass_msun"] = 0.5 * np.asarray(out["mass_einstein_msun"])
        return out
    return derive


@pytest.fixture
def toy_key(monkeypatch):
    """DEVELOPERS.md 'How to add a mass model', step 4: the key in derive_quantities and a registry row."""
    monkeypatch.setattr(estimate_module, "derive_quantities", _with_toy(estimate_module.derive_quantities))
    register_key(TOY)
    yield TOY
    unregister_key(TOY.key)


def test_a_new_key_reaches_the_export_the_command_line_and_the_report(toy_key, tmp_path, capsys):
    from lensmass.io.export import results_table, write_results_ecsv
    from lensmass.io.report import result_rows

    result = estimate_module.estimate(1.2, 0.3, 1.0, theta_e_err=0.05, samples=300)
    # Same number as the key's definition: half of pi Sigma_cr R_E^2.
    assert result["toy_core_mass_msun"] == pytest.approx(0.5 * result["mass_einstein_msun"], rel=1e-12)
    assert "toy_core_mass_msun" in result["intervals68"]
    table = results_table({"A": result})
    assert str(table["toy_core_mass_msun"].unit) == "solMass"
    assert table["toy_core_mass_msun_p84"][0] > table["toy_core_mass_msun_p16"][0]
    write_results_ecsv(tmp_path / "r.ecsv", {"A": result})
    from astropy.table import Table

    assert Table.read(tmp_path / "r.ecsv")["toy_core_mass_msun"].unit == "solMass"
    assert ("toy_core_mass_msun", r"$M_{toy}$", r"M$_\odot$") in result_rows()
    assert main(["estimate", "--theta-e", "1.2", "--zl", "0.3", "--zs", "1.0"]) == 0
    line = next(ln for ln in capsys.readouterr().out.splitlines() if ln.startswith("toy M_core"))
    assert line.split()[-1] == "Msun"
