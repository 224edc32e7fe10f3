"""Streamed (files, globs, Parquet folders, FITS in row slices) and Dask-distributed catalogues give the
in-memory numbers.

The reference for the profile itself is numpy.average of the tangential ellipticity per bin
(the convention of REFERENCES: e_t = -(e1 cos 2phi + e2 sin 2phi)), and the in-memory route,
which tests/core/test_shear_profile.py checks against astropy distances.
"""

from __future__ import annotations

import itertools
import json

import astropy.units as u
import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from astropy.coordinates import SkyCoord

from lensmass.cli import main
from lensmass.core.cosmology import resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.shear_analysis import analyse_shear_blocks, analyse_shear_catalog
from lensmass.core.shear_simulation import simulate_shear_catalog
from lensmass.io.catalog_stream import CatalogFiles, expand_catalog_paths
from lensmass.io.catalogs import write_shear_catalog_fits
from lensmass.io.distributed import ClusterBlocks

RA0, DEC0, ZL = 141.372, 18.2705, 0.35
COSMO = resolve_cosmology("Planck18")
OPTIONS = {"z_l": ZL, "center_ra": RA0, "center_dec": DEC0, "cosmology": COSMO, "n_bootstrap": 40}
PROFILE_FIELDS = ("n_galaxies", "weight_sum", "r_mean_arcsec", "g_t", "g_t_err", "g_x", "g_t_err_boot",
                  "delta_sigma_msun_per_mpc2", "delta_sigma_err_msun_per_mpc2")
RESULT_KEYS = ("n_rows", "n_used", "sis_sigma_v_kms", "nfw_m200_msun", "nfw_c200", "chi2_sis", "chi2_nfw",
               "cross_shear_chi2", "zeta", "zeta_mass_msun", "beta_mean", "z_s_effective")


@pytest.fixture(scope="module")
def sim():
    s = simulate_shear_catalog(center_ra=RA0, center_dec=DEC0, z_l=ZL, cosmo=COSMO, field_arcsec=1500.0,
                               n_galaxies=20000, photo_z_scatter=0.05, seed=11)
    s["e1"][:7] = np.nan  # bad rows are dropped and counted the same way on every route
    s["weight"][7:12] = 0.0
    return s


def _columns(s, sl=slice(None)):
    return {"RA": s["ra"][sl], "DEC": s["dec"][sl], "E1": s["e1"][sl].astype(np.float32),
            "E2": s["e2"][sl].astype(np.float32), "WEIGHT": s["weight"][sl], "ZPHOT": s["z"][sl],
            "UNUSED": np.zeros(s["ra"][sl].size)}


def _in_memory(s):
    c = _columns(s)
    return analyse_shear_catalog(c["RA"], c["DEC"], c["E1"], c["E2"], c["WEIGHT"], c["ZPHOT"], **OPTIONS)


def assert_same(a, b, rtol=1e-10):
    """Streamed == in-memory to 1e-10 relative (the issue's bar), bin by bin and for every fit."""
    for name in PROFILE_FIELDS:
        x, y = np.asarray(getattr(a["_profile"], name), float), np.asarray(getattr(b["_profile"], name), float)
        np.testing.assert_allclose(y, x, rtol=rtol, atol=0, err_msg=name)
    for key in RESULT_KEYS:
        np.testing.assert_allclose(b[key], a[key], rtol=rtol, atol=0, err_msg=key)
    for key, bounds in a["intervals95"].items():
        np.testing.assert_allclose(b["intervals95"][key], bounds, rtol=rtol, err_msg=key)
    assert a["n_dropped"] == b["n_dropped"]


def _parquet_folder(s, root, n_parts=4):
    """A hive-style partitioned folder named like a file (x.parquet), with a writer's marker file."""
    root.mkdir()
    (root / "_SUCCESS").write_text("")
    n = s["ra"].size
    for k in range(n_parts):
        sl = slice(k * n // n_parts, (k + 1) * n // n_parts)
        (root / f"band={k}").mkdir()
        pq.write_table(pa.table(_columns(s, sl)), root / f"band={k}" / "part-0.parquet", row_group_size=1500)
    return root


def test_parquet_folder_streams_to_the_in_memory_numbers(sim, tmp_path):
    folder = _parquet_folder(sim, tmp_path / "survey.parquet")
    files = CatalogFiles(folder, block_rows=2345)
    assert [p.name for p in files.paths] == ["part-0.parquet"] * 4 and files.n_rows == sim["ra"].size
    assert "UNUSED" not in files.columns.values()
    a, b = _in_memory(sim), analyse_shear_blocks(files, **OPTIONS)
    assert_same(a, b)
    # the profile itself against numpy.average of e_t (sign convention of REFERENCES, common practice)
    c = SkyCoord(RA0 * u.deg, DEC0 * u.deg)
    g = SkyCoord(sim["ra"] * u.deg, sim["dec"] * u.deg)
    theta = c.separation(g).arcsec
    phi = np.pi / 2 - c.position_angle(g).rad  # from east toward north
    e1, e2 = sim["e1"].astype(np.float32).astype(float), sim["e2"].astype(np.float32).astype(float)
    e_t = -(e1 * np.cos(2 * phi) + e2 * np.sin(2 * phi))
    edges = b["_profile"].edges_arcsec
    ok = np.isfinite(e_t) & (sim["weight"] > 0) & (sim["z"] > ZL + 0.1)
    for i in range(edges.size - 1):
        sel = ok & (theta >= edges[i]) & (theta < edges[i + 1])
        assert b["_profile"].g_t[i] == pytest.approx(np.average(e_t[sel], weights=sim["weight"][sel]), rel=1e-9)


def test_several_files_a_glob_and_fits_slices_give_the_same_numbers(sim, tmp_path):
    n = sim["ra"].size
    cuts = [0, 6000, 6001, 14000, n]
    for k, (lo, hi) in enumerate(itertools.pairwise(cuts)):
        write_shear_catalog_fits(tmp_path / f"tile{k}.fits", _columns(sim, slice(lo, hi)))
    a = _in_memory(sim)
    listed = [tmp_path / f"tile{k}.fits" for k in range(4)]
    assert_same(a, analyse_shear_blocks(CatalogFiles(listed, block_rows=999), **OPTIONS))
    assert_same(a, analyse_shear_blocks(CatalogFiles(str(tmp_path / "tile*.fits")), **OPTIONS))


def test_one_fits_file_streamed_equals_in_memory_with_given_bins_and_zeta_annulus(sim, tmp_path):
    path = tmp_path / "one.fits"
    write_shear_catalog_fits(path, _columns(sim))
    opts = dict(OPTIONS, r_min=1.0, r_max=20.0, n_bins=6, zeta_radii=(3.3, 17.0))
    c = _columns(sim)
    a = analyse_shear_catalog(c["RA"], c["DEC"], c["E1"], c["E2"], c["WEIGHT"], c["ZPHOT"], **opts)
    b = analyse_shear_blocks(CatalogFiles(path, block_rows=4096), **opts)
    assert_same(a, b)


def test_command_line_reads_a_folder_a_glob_and_several_files(sim, tmp_path, capsys):
    import json

    folder = _parquet_folder(sim, tmp_path / "cat.parquet")
    base = ["--zl", str(ZL), "--center-sky", f"{RA0},{DEC0}", "--columns", "z=ZPHOT", "--json", "--bootstrap", "0"]
    outs = []
    for spec in ([str(folder)], [str(folder / "band=*" / "*.parquet")],
                 [str(p) for p in sorted(folder.rglob("*.parquet"))]):
        assert main(["shear", *spec, *base]) == 0
        outs.append(json.loads(capsys.readouterr().out))
    for out in outs[1:]:
        assert out["profile"] == outs[0]["profile"]
        assert out["nfw_m200_msun"] == pytest.approx(outs[0]["nfw_m200_msun"], rel=1e-12)
    assert outs[0]["catalog"]["read"].startswith("streamed")
    assert outs[0]["n_rows"] == sim["ra"].size


def test_text_header_writes_delta_sigma_out(sim, tmp_path, capsys):
    path = tmp_path / "one.fits"
    write_shear_catalog_fits(path, _columns(sim))
    assert main(["shear", str(path), "--zl", str(ZL), "--center-sky", f"{RA0},{DEC0}", "--bootstrap", "0"]) == 0
    out = capsys.readouterr().out
    assert "Delta Sigma" in out and "DSigma" not in out


@pytest.mark.parametrize("make, needle", [
    (lambda p: (p / "empty.parquet").mkdir() or p / "empty.parquet", "holds no .parquet files"),
    (lambda p: str(p / "nothing*.fits"), "No file matches"),
    (lambda p: p / "absent.fits", "does not exist"),
])
def test_bad_paths_one_sentence(tmp_path, make, needle):
    with pytest.raises(LensInputError, match=needle):
        expand_catalog_paths(make(tmp_path))


def test_files_without_the_same_columns_one_sentence(sim, tmp_path, capsys):
    write_shear_catalog_fits(tmp_path / "a.fits", _columns(sim, slice(0, 100)))
    cols = _columns(sim, slice(100, 200))
    cols["Z_OTHER"] = cols.pop("ZPHOT")
    write_shear_catalog_fits(tmp_path / "b.fits", cols)
    code = main(["shear", str(tmp_path / "a.fits"), str(tmp_path / "b.fits"), "--zl", str(ZL),
                 "--center-sky", f"{RA0},{DEC0}"])
    err = capsys.readouterr().err
    assert code == 2 and "'b.fits' has no column 'ZPHOT'" in err and len(err.strip().splitlines()) == 1


def test_map_out_with_several_files_says_why(sim, tmp_path, capsys):
    for k in range(2):
        write_shear_catalog_fits(tmp_path / f"t{k}.fits", _columns(sim, slice(k * 100, (k + 1) * 100)))
    code = main(["shear", str(tmp_path / "t0.fits"), str(tmp_path / "t1.fits"), "--zl", str(ZL),
                 "--center-sky", f"{RA0},{DEC0}", "--map-out", str(tmp_path / "m.fits")])
    assert code == 2 and "--map-out needs the catalogue in memory" in capsys.readouterr().err
    assert not (tmp_path / "m.fits").exists()


# ---------------------------------------------------------------- on a Dask cluster
# A real dask.distributed LocalCluster on 127.0.0.1 (2 workers of 1 thread) gives the in-memory numbers
# to 1e-10, through the Python API (client=) and --scheduler.
distributed = pytest.importorskip("distributed")


@pytest.fixture(scope="module")
def cluster():
    # threads, not processes: workers import this checkout's code, and nothing is spawned on a 2-core CI
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, host="127.0.0.1",
                                  protocol="tcp", dashboard_address=None) as c:
        yield c


def test_cluster_sums_equal_the_in_memory_numbers(sim, tmp_path, cluster):
    folder = _parquet_folder(sim, tmp_path / "cat.parquet", n_parts=5)
    with distributed.Client(cluster) as client:
        blocks = ClusterBlocks(CatalogFiles(folder, block_rows=3000), client)
        b = analyse_shear_blocks(blocks, **OPTIONS)
    assert_same(_in_memory(sim), b)


def test_scheduler_option_on_the_command_line(sim, tmp_path, cluster, capsys):
    folder = _parquet_folder(sim, tmp_path / "cat.parquet", n_parts=3)
    base = ["shear", str(folder), "--zl", str(ZL), "--center-sky", f"{RA0},{DEC0}", "--json", "--bootstrap", "20"]
    assert main(base) == 0
    local = json.loads(capsys.readouterr().out)
    assert main(base + ["--scheduler", cluster.scheduler_address]) == 0
    remote = json.loads(capsys.readouterr().out)
    assert remote["catalog"]["read"].startswith("Dask cluster at tcp://127.0.0.1")
    for a, b in zip(local["profile"], remote["profile"]):
        for key, value in a.items():
            assert b[key] == pytest.approx(value, rel=1e-10, nan_ok=True), key
    assert remote["nfw_m200_msun"] == pytest.approx(local["nfw_m200_msun"], rel=1e-10)


def test_unreachable_scheduler_is_one_sentence(sim, tmp_path, capsys, monkeypatch):
    import lensmass.io.distributed as dist

    monkeypatch.setattr(dist, "CONNECT_TIMEOUT_S", 1)
    folder = _parquet_folder(sim, tmp_path / "cat.parquet", n_parts=2)
    code = main(["shear", str(folder), "--zl", str(ZL), "--center-sky", f"{RA0},{DEC0}",
                 "--scheduler", "tcp://127.0.0.1:9"])
    err = capsys.readouterr().err
    assert code == 2 and "Cannot reach the Dask scheduler" in err and len(err.strip().splitlines()) == 1


def test_a_catalogue_too_large_for_memory_is_one_sentence_naming_the_size(sim, tmp_path, monkeypatch):
    # the free memory is made to look tiny; the in-memory reader must say how much it needs and the way out
    import os

    from lensmass.io.catalogs import read_shear_catalog

    path = tmp_path / "one.fits"
    write_shear_catalog_fits(path, _columns(sim))
    real = os.sysconf
    monkeypatch.setattr(os, "sysconf", lambda name: 1 if name == "SC_AVPHYS_PAGES" else real(name))
    with pytest.raises(LensInputError, match=r"Reading the 20,000 rows of 'one.fits' into memory needs about "
                                             r"[0-9.]+ GB but 0.0 GB is free: ask for no mass map \(`map_out`\)"):
        read_shear_catalog(path)
