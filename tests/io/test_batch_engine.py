"""The batch engine from Python: a run, a resume from an older RESULTS file, the schema version.

Outside check: each measured row equals ``estimate`` for that row with seed ``seed + row - 1``
(the engine's documented seeding), itself checked against astropy's distances in test_estimate.py.
"""

import pytest
from astropy.table import Table

from lensmass.core.errors import LensInputError
from lensmass.core.estimate import estimate
from lensmass.io.batch_engine import RESULTS_SCHEMA, batch_settings, run_batch


def _manifest(path, rows):
    path.write_text("id,theta_e_arcsec,theta_e_err,z_l,z_s\n" + "\n".join(",".join(map(str, r)) for r in rows) + "\n")
    return path


def test_run_batch_from_python_and_resume_an_older_file(tmp_path):
    manifest = _manifest(tmp_path / "m.csv", [("A", 1.2, 0.05, 0.3, 1.0), ("B", -1, 0, 0.3, 1.0), ("C", 2.0, 0, 0.4, 1.5)])
    out = tmp_path / "r.ecsv"
    settings = batch_settings(samples=300, seed=11)
    done = run_batch(manifest, out, settings=settings)
    assert (done.n_rows, done.n_measured, done.n_failed) == (3, 2, 1)
    table = Table.read(out, format="ascii.ecsv")
    assert table.meta["schema"] == RESULTS_SCHEMA and table.meta["format"] == "lensmass-batch-results"
    one = estimate(1.2, 0.3, 1.0, theta_e_err=0.05, samples=300, seed=11)
    assert table["mass_einstein_msun_p84"][0] == pytest.approx(one["intervals68"]["mass_einstein_msun"][1], rel=1e-12)
    assert "column theta_e_arcsec" in table["error"][1]
    # An older file: no schema in its meta and a column this version added is missing.
    del table.meta["schema"]
    table.remove_column("method")
    table.write(out, format="ascii.ecsv", overwrite=True)
    again = run_batch(manifest, out, settings=settings, resume=True)
    assert (again.n_resumed, again.n_measured, again.n_failed) == (2, 2, 1)
    resumed = Table.read(out, format="ascii.ecsv")
    assert "method" in resumed.colnames and resumed["mass_einstein_msun"][2] == pytest.approx(table["mass_einstein_msun"][2])


def test_a_newer_results_file_is_refused_in_one_sentence(tmp_path):
    manifest = _manifest(tmp_path / "m.csv", [("A", 1.2, 0, 0.3, 1.0)])
    out = tmp_path / "r.ecsv"
    run_batch(manifest, out, settings=batch_settings(samples=200))
    table = Table.read(out, format="ascii.ecsv")
    table.meta["schema"] = RESULTS_SCHEMA + 1
    table.write(out, format="ascii.ecsv", overwrite=True)
    with pytest.raises(LensInputError, match="newer lensmass") as info:
        run_batch(manifest, out, settings=batch_settings(samples=200), resume=True)
    assert "\n" not in str(info.value)
