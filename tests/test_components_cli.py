"""`lensmass components` from the command line: outputs, files and one-sentence errors."""

import json

import numpy as np
import pytest
from astropy.cosmology import Planck18
from astropy.table import Table

from lensmass.cli import main
from lensmass.core.cluster_simulation import simulate_multi_halo_shear
from lensmass.core.shear_profile import tangent_plane_to_sky

RA0, DEC0, Z_L = 120.0, 10.0, 0.3


@pytest.fixture(scope="module")
def catalogue(tmp_path_factory):
    halos = [dict(x_arcsec=-160.0, y_arcsec=0.0, m200_msun=1.2e15), dict(x_arcsec=170.0, y_arcsec=40.0,
                                                                            m200_msun=9e14)]
    sim = simulate_multi_halo_shear(halos, z_l=Z_L, cosmo=Planck18, field_arcsec=900.0, density_per_arcmin2=25.0,
                                    seed=4)
    ra, dec = tangent_plane_to_sky(sim["x_arcsec"], sim["y_arcsec"], RA0, DEC0)
    path = tmp_path_factory.mktemp("comp") / "shapes.fits"
    Table({"RA": ra, "DEC": dec, "E1": sim["e1"], "E2": sim["e2"], "Z": sim["z"]}).write(path)
    members = path.parent / "members.csv"
    rng = np.random.default_rng(5)
    mx = np.concatenate([rng.normal(-160, 40, 40), rng.normal(170, 40, 40)])
    my = np.concatenate([rng.normal(0, 40, 40), rng.normal(40, 40, 40)])
    mra, mdec = tangent_plane_to_sky(mx, my, RA0, DEC0)
    Table({"ra": mra, "dec": mdec, "log_mstar": rng.normal(11, 0.3, 80)}).write(members)
    return path, members, halos


def _run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_json_table_and_files(catalogue, capsys, tmp_path):
    path, members, halos = catalogue
    code, out, err = _run(capsys, "components", str(path), "--zl", str(Z_L), "--center-sky", f"{RA0},{DEC0}",
                          "--members", str(members), "--pixels", "48", "--resamples", "24", "--noise-maps", "8",
                          "--gas-mass", "1.5e13,1.0e13", "--gas-mass-err", "2e12,2e12", "--max-peaks", "2", "--json",
                          "--out", str(tmp_path / "c.ecsv"), "--out", str(tmp_path / "c.png"))
    assert code == 0, err
    result = json.loads(out)
    assert result["kind"] == "cluster_components" and len(result["mass_peaks"]) == 2
    # the two strongest peaks lie near the two simulated halos (within 3 smoothing widths)
    for h in halos:
        assert min(np.hypot(p["x_arcsec"] - h["x_arcsec"], p["y_arcsec"] - h["y_arcsec"])
                   for p in result["mass_peaks"]) < 135
    b = result["budgets"][0]
    for key in ("lens_mass_nfw_msun", "stellar_mass_msun", "gas_mass_msun", "baryon_fraction", "dark_fraction",
                "baryon_fraction_over_cosmic"):
        assert key in b and key in b["intervals68"] and key in b["intervals95"]
    assert result["cosmic_baryon_fraction"] == pytest.approx(Planck18.Ob0 / Planck18.Om0)  # astropy
    assert "halo_fit" in result["models"] and result["notes"]
    table = Table.read(tmp_path / "c.ecsv")
    assert len(table) == len(result["mass_peaks"]) and table["nfw_m200_msun"].unit == "solMass"
    assert (tmp_path / "c.png").stat().st_size > 10_000


@pytest.mark.parametrize("extra, message", [
    (["--exposure", "x.fits"], "exposure map belongs to an X-ray image"),
    (["--xray", "missing.fits"], "does not exist"),
    (["--gas-mass", "lots"], "gas masses (--gas-mass) must be numbers"),
    (["--aperture-kpc", "-5"], "aperture radius must be a positive number"),
])
def test_bad_input_is_one_sentence(catalogue, capsys, extra, message):
    path, _, _ = catalogue
    code, out, err = _run(capsys, "components", str(path), "--zl", str(Z_L), "--pixels", "32", "--resamples", "20",
                          "--noise-maps", "8", *extra)
    assert code == 2 and message in err and err.count("\n") == 1 and "Traceback" not in err


def test_missing_catalogue(capsys, tmp_path):
    code, out, err = _run(capsys, "components", str(tmp_path / "none.fits"), "--zl", "0.3")
    assert code == 2 and "none.fits" in err and "Traceback" not in err


def test_cosmology_without_baryons_still_gives_the_budget(catalogue, capsys):
    # A custom flat LCDM has no Ob0 (astropy): the comparison is left out with a note, the rest is there.
    path, members, _ = catalogue
    code, out, err = _run(capsys, "components", str(path), "--zl", str(Z_L), "--members", str(members),
                          "--pixels", "40", "--resamples", "20", "--noise-maps", "8", "--max-peaks", "2",
                          "--h0", "70", "--om0", "0.3", "--json")
    assert code == 0, err
    result = json.loads(out)
    assert result["cosmic_baryon_fraction"] is None
    assert "baryon_fraction_over_cosmic" not in result["budgets"][0] and "baryon_fraction" in result["budgets"][0]
    assert any("baryon density" in n for n in result["notes"])
