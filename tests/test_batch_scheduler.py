"""``lensmass batch --scheduler``: rows run as tasks on a Dask LocalCluster (127.0.0.1) give the same
RESULTS as one process (each row's Monte Carlo seed is fixed, so the numbers are identical)."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.table import Table

from lensmass.cli import main

distributed = pytest.importorskip("distributed")


def test_batch_on_a_cluster_equals_one_process(tmp_path, capsys):
    lines = ["id,theta_e_arcsec,theta_e_err,z_l,z_s"] + [
        f"L{i},{1.0 + 0.05 * i:.2f},0.05,{0.2 + 0.01 * i:.2f},{0.9 + 0.02 * i:.2f}" for i in range(12)]
    lines.append("BAD,1.0,0.05,0.5,0.3")  # source in front of the lens: a row error, not a crash
    (tmp_path / "m.csv").write_text("\n".join(lines) + "\n")
    common = ["batch", str(tmp_path / "m.csv"), "--samples", "500", "--no-progress"]
    assert main(common + ["--out", str(tmp_path / "one.ecsv")]) == 3
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, host="127.0.0.1",
                                  protocol="tcp", dashboard_address=None) as cluster:
        assert main(common + ["--out", str(tmp_path / "dask.ecsv"), "--scheduler", cluster.scheduler_address]) == 3
    capsys.readouterr()
    one, dask = Table.read(tmp_path / "one.ecsv"), Table.read(tmp_path / "dask.ecsv")
    assert list(one["id"]) == list(dask["id"])
    for name in ("mass_einstein_msun", "sis_sigma_v_kms", "nfw_m200_msun"):
        np.testing.assert_array_equal(np.asarray(one[name]), np.asarray(dask[name]))
    assert list(one["error"]) == list(dask["error"]) and dask["error"][-1]
