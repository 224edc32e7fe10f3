"""``lensmass shear`` end to end on small catalogues, and its one-line errors."""

import json
from pathlib import Path

import numpy as np
import pytest
from astropy.io import fits
from astropy.table import Table
from astropy.wcs import WCS

from lensmass.core.result_text import round_measured
from lensmass.cli import main
from lensmass.core.concentration import duffy08_concentration
from lensmass.core.cosmology import little_h, resolve_cosmology
from lensmass.core.shear_simulation import simulate_shear_catalog

DEMO = Path(__file__).resolve().parents[1] / "demo_fields" / "tris_cluster_d_shear.fits"
RA0, DEC0, ZL = 141.3720, 18.2705, 0.35


@pytest.fixture(scope="module")
def small_catalog(tmp_path_factory):
    """A noisy NFW catalogue (4000 galaxies, per-galaxy z) written as FITS."""
    cosmo = resolve_cosmology("Planck18")
    sim = simulate_shear_catalog(center_ra=RA0, center_dec=DEC0, z_l=ZL, cosmo=cosmo, field_arcsec=900,
                                 n_galaxies=4000, m200_msun=8e14, seed=7)
    path = tmp_path_factory.mktemp("shear") / "cat.fits"
    Table({"RA": sim["ra"], "DEC": sim["dec"], "E1": sim["e1"], "E2": sim["e2"], "W": sim["weight"],
           "ZP": sim["z"]}).write(path)
    return path


COLUMNS = ["--columns", "ra=RA,dec=DEC,e1=E1,e2=E2,weight=W,z=ZP"]


def _run(capsys, *args):
    code = main(["shear", *map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


def test_json_keys_and_values(capsys, small_catalog):
    code, out, err = _run(capsys, small_catalog, "--zl", ZL, "--center-sky", f"{RA0},{DEC0}",
                          "--columns", "ra=RA,dec=DEC,e1=E1,e2=E2,weight=W,z=ZP", "--rmin", 1, "--rmax", 7,
                          "--bootstrap", 50, "--json")
    assert code == 0, err
    r = json.loads(out)
    for key in ("n_used", "n_dropped", "sis_theta_e_arcsec", "sis_sigma_v_kms", "nfw_m200_msun", "nfw_c200",
                "intervals68", "intervals95", "chi2_sis", "chi2_nfw", "cross_shear_chi2", "cross_shear_pvalue",
                "zeta_mass_msun", "zeta_radius_arcsec", "zeta_radius_kpc", "profile", "models", "notes"):
        assert key in r, key
    assert set(r["n_dropped"]) >= {"non_finite", "ellipticity_ge_1", "weight_not_positive", "source_not_behind_lens"}
    assert r["n_dropped"]["source_not_behind_lens"] > 0
    lo, hi = r["intervals95"]["nfw_m200_msun"]
    assert lo < 8e14 < hi  # the simulator's input halo
    assert len(r["profile"]) == 8 and all(np.isfinite(row["g_t_err_bootstrap"]) for row in r["profile"])
    # Same default concentration relation as 'estimate' (Duffy et al. 2008, 200c), so both agree on one halo.
    h = little_h(resolve_cosmology("Planck18"))
    assert r["nfw_c200"] == pytest.approx(float(duffy08_concentration(r["nfw_m200_msun"], ZL, h)), rel=1e-6)
    assert "Duffy" in r["models"]["nfw_m200_msun"]


def test_demo_catalogue_recovers_its_truth(capsys):
    truth = json.loads(DEMO.with_suffix("").with_suffix(".truth.json").read_text())
    code, out, err = _run(capsys, DEMO, "--zl", truth["z_l"], "--center-sky",
                          f"{truth['center_ra']},{truth['center_dec']}", "--rmin", 1, "--rmax", 10,
                          "--bootstrap", 0, "--json")
    assert code == 0, err
    r = json.loads(out)
    lo, hi = r["intervals95"]["nfw_m200_msun"]
    assert lo < truth["lens_mass_model"]["m200_msun"] < hi
    assert r["cross_shear_pvalue"] > 0.001


def test_center_pixel_with_image_equals_center_sky(capsys, small_catalog, tmp_path):
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [RA0, DEC0]
    w.wcs.crpix = [51.0, 41.0]  # 1-based: pixel (50, 40) 0-based is the centre
    w.wcs.cdelt = [-0.25 / 3600, 0.25 / 3600]
    image = tmp_path / "img.fits"
    fits.PrimaryHDU(np.zeros((80, 100), np.float32), header=w.to_header()).writeto(image)
    common = ["--zl", ZL, "--zs", 1.2, "--rmin", 1, "--rmax", 7, "--bootstrap", 0, "--json"]
    common += COLUMNS
    _, out_pix, err = _run(capsys, small_catalog, "--center-pixel", "50,40", "--image", image, *common)
    _, out_sky, _ = _run(capsys, small_catalog, "--center-sky", f"{RA0},{DEC0}", *common)
    a, b = json.loads(out_pix), json.loads(out_sky)
    assert a["center_ra"] == pytest.approx(RA0, abs=1e-9) and a["center_dec"] == pytest.approx(DEC0, abs=1e-9)
    assert a["nfw_m200_msun"] == pytest.approx(b["nfw_m200_msun"], rel=1e-9)
    assert any("--zs 1.2 is used for every galaxy" in n for n in a["notes"])


def test_profile_and_map_files(capsys, small_catalog, tmp_path):
    prof, mp = tmp_path / "p.ecsv", tmp_path / "m.fits"
    code, out, err = _run(capsys, small_catalog, "--zl", ZL, "--center-sky", f"{RA0},{DEC0}", "--rmin", 1,
                          "--rmax", 7, "--bootstrap", 0, "--profile-out", prof, "--map-out", mp,
                          "--map-pixels", 64, "--map-noise", 4, "--map-smoothing", 50, *COLUMNS)
    assert code == 0, err
    assert "NFW M200" in out and "mass map written" in out
    t = Table.read(prof)
    assert len(t) == 8 and "g_t_model_nfw" in t.colnames and "models" in t.meta
    with fits.open(mp) as hdul:
        assert [h.name for h in hdul] == ["KAPPA_E", "KAPPA_B", "KAPPA_NOISE"]
        kappa = hdul[0].data
        wcs = WCS(hdul[0].header)
    # The peak of the smoothed E map lies near the cluster centre (astropy WCS pixel of the centre).
    px, py = wcs.world_to_pixel_values(RA0, DEC0)
    iy, ix = np.unravel_index(np.argmax(kappa), kappa.shape)
    assert np.hypot(ix - px, iy - py) < 8


def test_nan_rows_are_counted_not_fatal(capsys, tmp_path):
    rng = np.random.default_rng(2)
    n = 3000
    t = Table({"ra": RA0 + rng.uniform(-0.1, 0.1, n), "dec": DEC0 + rng.uniform(-0.1, 0.1, n),
               "e1": rng.normal(0, 0.25, n), "e2": rng.normal(0, 0.25, n), "weight": np.ones(n)})
    t["e1"][:7] = np.nan
    t["weight"][7:10] = 0
    t["e2"][10:12] = 1.2
    path = tmp_path / "c.csv"
    t.write(path)
    code, out, err = _run(capsys, path, "--zl", ZL, "--zs", 1.0, "--center-sky", f"{RA0},{DEC0}", "--json",
                          "--bootstrap", 0)
    assert code == 0, err
    r = json.loads(out)
    assert r["n_dropped"]["non_finite"] == 7
    assert r["n_dropped"]["weight_not_positive"] == 3
    assert r["n_dropped"]["ellipticity_ge_1"] == 2


@pytest.mark.parametrize("extra,needle", [
    (["--columns", "e1=SHAPE1"], "no column 'SHAPE1'"),
    (["--columns", "e1=E1"], "or give one source redshift for all with --zs"),
    (["--zs", "0.2"], "not behind the lens"),
    (["--center-pixel", "3,4"], "needs --image"),
    (["--rmin", "5", "--rmax", "2"], "rmin < rmax"),
    (["--cosmology", "Nowhere"], "Unknown cosmology"),
])
def test_bad_input_gives_one_line(capsys, small_catalog, extra, needle):
    args = [small_catalog, "--zl", ZL, *COLUMNS, *extra]
    if "--center-pixel" not in extra:
        args += ["--center-sky", f"{RA0},{DEC0}"]
    code, out, err = _run(capsys, *args)
    assert code == 2
    assert needle in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1


def test_broken_catalogue_one_line(capsys, tmp_path):
    bad = tmp_path / "half.fits"
    bad.write_bytes(DEMO.read_bytes()[:5000])  # half-written download
    code, out, err = _run(capsys, bad, "--zl", ZL, "--center-sky", f"{RA0},{DEC0}")
    assert code == 2 and "Cannot read catalogue 'half.fits'" in err and len(err.strip().splitlines()) == 1


def test_units_linear_bins_free_concentration_and_parquet(capsys, small_catalog, tmp_path):
    # The same radial range in Mpc and in arcmin gives the same bins: R = D_l theta (Hogg 1999 distances).
    from lensmass.core.cosmology import resolve_cosmology as rc

    d_l = rc("Planck18").angular_diameter_distance(ZL).to_value("Mpc")
    arcmin_mpc = d_l * np.radians(1 / 60)
    base = ["--zl", ZL, "--center-sky", f"{RA0},{DEC0}", "--bootstrap", 0, "--json", *COLUMNS]
    _, out_a, _ = _run(capsys, small_catalog, *base, "--rmin", 1, "--rmax", 7)
    _, out_m, _ = _run(capsys, small_catalog, *base, "--rmin", arcmin_mpc, "--rmax", 7 * arcmin_mpc, "--unit", "mpc")
    a, m = json.loads(out_a), json.loads(out_m)
    assert [r["n_galaxies"] for r in a["profile"]] == [r["n_galaxies"] for r in m["profile"]]
    code, out, err = _run(capsys, small_catalog, *base, "--rmin", 1, "--rmax", 7, "--linear-bins",
                          "--free-concentration")
    assert code == 0, err
    r = json.loads(out)
    widths = [row["r_hi_arcsec"] - row["r_lo_arcsec"] for row in r["profile"]]
    assert np.allclose(widths, widths[0])
    assert r["free_concentration"] and r["dof_nfw"] == r["dof_sis"] - 1
    assert "c free" in r["models"]["nfw_c200"]
    # Parquet input (pyarrow) gives the same numbers as the FITS file.
    pq = tmp_path / "cat.parquet"
    Table.read(small_catalog).write(pq)
    _, out_p, err = _run(capsys, pq, *base, "--rmin", 1, "--rmax", 7)
    assert json.loads(out_p)["nfw_m200_msun"] == pytest.approx(a["nfw_m200_msun"], rel=1e-9), err


def test_flipping_both_signs_negates_the_tangential_shear(capsys, small_catalog):
    # e_t = -(e1 cos 2phi + e2 sin 2phi) is linear in (e1, e2) (shared/REFERENCES.md convention).
    base = ["--zl", ZL, "--center-sky", f"{RA0},{DEC0}", "--bootstrap", 0, "--json", *COLUMNS, "--rmin", 1,
            "--rmax", 7]
    _, out, _ = _run(capsys, small_catalog, *base)
    _, out_f, _ = _run(capsys, small_catalog, *base, "--flip-e1", "--flip-e2")
    a, f = json.loads(out), json.loads(out_f)
    assert [r["g_t"] for r in f["profile"]] == pytest.approx([-r["g_t"] for r in a["profile"]], abs=1e-12)
    assert f["catalog"]["flipped"] == ["e1", "e2"]


def test_terminal_and_profile_file_say_which_m200_is_which(capsys, small_catalog, tmp_path):
    # issue 16: the profile file's best_fit and the terminal's figure differed without saying which is which
    prof = tmp_path / "p.ecsv"
    code, out, err = _run(capsys, small_catalog, "--zl", ZL, "--center-sky", f"{RA0},{DEC0}", "--rmin", 1,
                          "--rmax", 7, "--bootstrap", 0, "--profile-out", prof, *COLUMNS)
    assert code == 0, err
    meta = Table.read(prof).meta
    best, median = meta["best_fit"]["nfw_m200_msun"], meta["medians"]["nfw_m200_msun"]
    assert best != median and "maximum-likelihood" in meta["values"] and "posterior medians" in meta["values"]
    row = next(line for line in out.splitlines() if line.startswith("NFW M200"))
    # the median as the one rounding rule writes it (two figures of the interval's half-width)
    shown = round_measured(median, interval=meta["intervals68"]["nfw_m200_msun"]).value_text
    assert row.split()[2] == shown and row.endswith("Msun (posterior median)")
    assert f"M200 = {best:.4g} Msun" in out and "maximum-likelihood best fit" in out
    assert "detection" in out and meta["detected"] is True


def test_shear_fit_outside_the_concentration_calibration_is_noted(capsys, small_catalog):
    # Duffy et al. (2008) is calibrated for z <= 2 (from memory; shared/REFERENCES.md): a lens at z_l = 2.2
    sim = simulate_shear_catalog(center_ra=RA0, center_dec=DEC0, z_l=2.2, cosmo=resolve_cosmology("Planck18"),
                                 field_arcsec=600, n_galaxies=8000, m200_msun=1e15, z_s=3.5, seed=7)
    from lensmass.core.shear_analysis import analyse_shear_catalog

    r = analyse_shear_catalog(sim["ra"], sim["dec"], sim["e1"], sim["e2"], z_s=3.5, z_l=2.2, center_ra=RA0,
                              center_dec=DEC0, n_bootstrap=0)
    assert r["detected"]  # the halo is seen; its mass then rests on an extrapolated c(M)
    assert any("Duffy et al. (2008)" in n and "extrapolated" in n for n in r["notes"])


@pytest.mark.parametrize("n_rows", [4000, 150_000])  # the exact-distance route and the tabulated (streamed) one
def test_sentinel_redshift_is_one_sentence_not_an_internal_error(capsys, tmp_path, n_rows):
    # Catalogues mark failed photometric redshifts with huge values (1e30 and the like; common practice);
    # nothing is seen behind the last-scattering surface at z ~ 1100 (common practice), so such rows stop the
    # run with the fix named instead of D_ls / D_s = -1e24 (an internal error before).
    rng = np.random.default_rng(5)
    z = rng.uniform(0.6, 1.5, n_rows)
    z[[10, 20, 30]] = 1e30
    path = tmp_path / "sentinel.fits"
    Table({"RA": RA0 + rng.uniform(-0.1, 0.1, n_rows), "DEC": DEC0 + rng.uniform(-0.1, 0.1, n_rows),
           "E1": rng.normal(0, 0.2, n_rows), "E2": rng.normal(0, 0.2, n_rows), "ZP": z}).write(path)
    code, out, err = _run(capsys, path, "--zl", ZL, "--center-sky", f"{RA0},{DEC0}",
                          "--columns", "ra=RA,dec=DEC,e1=E1,e2=E2,z=ZP", "--json")
    assert code == 2 and out == ""
    assert "behind the cosmic microwave background" in err and "set them to NaN" in err
    assert "internal error" not in err and "Traceback" not in err
