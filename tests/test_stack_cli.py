"""``lensmass stack``: the command line, streamed and on a Dask LocalCluster, gives the in-memory numbers
(1e-10 relative); files, keys and one-sentence errors."""

from __future__ import annotations

import json

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from astropy.table import Table

from lensmass.cli import main
from lensmass.core.cosmology import resolve_cosmology
from lensmass.core.shear_analysis import ArrayBlocks
from lensmass.core.stack_analysis import analyse_stack
from lensmass.core.stack_simulation import simulate_stack

PLANCK = resolve_cosmology("Planck18")
ARGS = ["--rmin-mpc", "0.1", "--rmax-mpc", "1.5", "--bins", "5", "--patches", "16", "--random-count", "300",
        "--seed", "4"]


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("stack")
    s = simulate_stack(n_lenses=120, n_sources=30000, m200_msun=1e14, cosmo=PLANCK, ra_range=(30.0, 31.2),
                       dec_range=(-0.6, 0.6), truncate_mpc=2.0, seed=9)
    folder = tmp / "sources.parquet"
    folder.mkdir()
    n = s["ra"].size
    for k in range(3):
        sl = slice(k * n // 3, (k + 1) * n // 3)
        pq.write_table(pa.table({"RA": s["ra"][sl], "DEC": s["dec"][sl], "G1": s["e1"][sl], "G2": s["e2"][sl],
                                 "Z_B": s["z"][sl].astype(np.float32)}), folder / f"part{k}.parquet")
    Table({"RA": s["lens_ra"], "DEC": s["lens_dec"], "ZSPEC": s["lens_z"]}).write(tmp / "lenses.csv")
    return s, folder, tmp / "lenses.csv"


def _in_memory(s):
    z32 = s["z"].astype(np.float32).astype(float)
    return analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"],
                         ArrayBlocks(s["ra"], s["dec"], s["e1"], s["e2"], None, z32),
                         r_min_mpc=0.1, r_max_mpc=1.5, n_bins=5, n_patches=16, n_randoms=300, seed=4)


def _compare(out, ref):
    assert out["mean_halo_m200_msun"] == pytest.approx(ref["mean_halo_m200_msun"], rel=1e-10)
    for key in ("intervals68", "intervals95"):
        np.testing.assert_allclose(out[key]["mean_halo_m200_msun"], ref[key]["mean_halo_m200_msun"], rtol=1e-10)
    for a, b in zip(out["profile"], ref["profile"]):
        for key, value in b.items():
            assert a[key] == pytest.approx(value, rel=1e-10, abs=1e-12), key
    np.testing.assert_allclose(out["covariance_msun2_per_pc4"], ref["covariance_msun2_per_pc4"], rtol=1e-9,
                               atol=1e-12 * np.max(np.abs(ref["covariance_msun2_per_pc4"])))


def test_streamed_stack_equals_in_memory_and_writes_its_profile(files, tmp_path, capsys):
    s, folder, lenses = files
    out_path = tmp_path / "stack.ecsv"
    code = main(["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns", "z=Z_B",
                 *ARGS, "--json", "--profile-out", str(out_path)])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    _compare(out, _in_memory(s))
    table = Table.read(out_path, format="ascii.ecsv")
    assert str(table["delta_sigma_msun_per_pc2"].unit) == "solMass / pc2"
    assert table.meta["mean_halo_m200_msun"] == pytest.approx(out["mean_halo_m200_msun"])
    assert "NFW" in table.meta["models"]["mean_halo_m200_msun"]


def test_readable_table_writes_delta_sigma_out(files, capsys):
    _s, folder, lenses = files
    assert main(["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns", "z=Z_B",
                 *ARGS]) == 0
    out = capsys.readouterr().out
    assert "Delta Sigma" in out and "mean halo M200" in out


def test_stack_on_a_dask_cluster_equals_in_memory(files, capsys):
    distributed = pytest.importorskip("distributed")
    s, folder, lenses = files
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, host="127.0.0.1",
                                  protocol="tcp", dashboard_address=None) as cluster:
        code = main(["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns",
                     "z=Z_B", *ARGS, "--json", "--scheduler", cluster.scheduler_address])
    assert code == 0
    _compare(json.loads(capsys.readouterr().out), _in_memory(s))


@pytest.mark.parametrize("extra, needle", [
    (["--lenses", "missing.csv"], "lens catalogue 'missing.csv' does not exist"),
    (["--random-count", "-3"], "--random-count must be 0 or more"),
    (["--patches", "1"], "at least 2 patches"),
    (["--stellar-mass", "heavy"], "--stellar-mass takes a mass in Msun or 'fit'"),
    (["--stellar-mass=-1e11"], "The central point mass (--stellar-mass) must be 0 or more Msun"),
    (["--stellar-mass", "fit", "--stellar-mass-prior", "3e11"], "--stellar-mass-prior takes MEDIAN,DEX"),
    (["--stellar-mass", "fit", "--stellar-mass-prior", "3e11,-1"], "(--stellar-mass-prior) needs a median > 0"),
    (["--stellar-mass-prior", "3e11,0.2"], "needs the point mass fitted: set it to 'fit'"),
    (["--concentration-prior", "0.2"], "(--concentration-prior) needs the concentration fitted: set "
                                       "--free-concentration"),
    (["--free-concentration", "--concentration-prior", "wide"], "--concentration-prior takes a scatter in dex"),
    (["--free-concentration", "--concentration-prior", "9,3"], "(--concentration-prior) needs 0.1 <= c_min < c_max"),
])
def test_bad_input_one_line(files, capsys, extra, needle):
    _s, folder, lenses = files
    args = ["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns", "z=Z_B"]
    code = main(args + extra)
    err = capsys.readouterr().err
    assert code == 2 and needle in err and len(err.strip().splitlines()) == 1


def test_every_stack_key_is_in_the_registry(files, capsys):
    # one source for each fact about a number: the key registry (lensmass.core.result_keys)
    from lensmass.core.result_keys import RESULT_KEYS

    s, folder, lenses = files
    assert main(["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns", "z=Z_B",
                 *ARGS, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    missing = [k for k in list(out) + list(out["profile"][0]) if k not in RESULT_KEYS]
    assert not missing, missing


def test_fitted_stellar_mass_is_printed_with_its_interval(files, capsys):
    _s, folder, lenses = files
    assert main(["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns", "z=Z_B",
                 *ARGS, "--stellar-mass", "fit", "--stellar-mass-prior", "3e11,0.3"]) == 0
    line = next(row for row in capsys.readouterr().out.splitlines() if row.startswith("central M_*"))
    assert "[" in line and "Msun" in line  # the 68% interval beside the posterior median


def test_free_concentration_is_printed_with_its_interval(files, capsys):
    _s, folder, lenses = files
    assert main(["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns", "z=Z_B",
                 *ARGS, "--free-concentration", "--concentration-prior", "2,14", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    lo, hi = out["intervals95"]["mean_halo_c200"]
    assert 2 <= lo < out["mean_halo_c200"] < hi <= 14 and out["free_concentration"] is True
    assert "flat prior in c200 on [2, 14]" in out["models"]["mean_halo_m200_msun"]
    assert main(["stack", str(folder), "--lenses", str(lenses), "--lens-columns", "z=ZSPEC", "--columns", "z=Z_B",
                 *ARGS, "--free-concentration"]) == 0
    line = next(row for row in capsys.readouterr().out.splitlines() if row.startswith("mean halo c200"))
    assert "[" in line  # the 68% interval beside the posterior median
