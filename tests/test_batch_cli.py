"""lensmass batch: bad rows are kept and flagged, resume after a kill equals one clean run."""

import os
import subprocess
import sys

import numpy as np
import pytest
from astropy.cosmology import Planck18
from astropy.table import Table

from lensmass.cli import main

BROKEN_MANIFEST = """id,theta_e_arcsec,theta_e_err,z_l,z_s,image,points
good-1,1.2,0.05,0.3,1.1,,
good-2,2.5,,0.45,1.6,,
swapped,1.0,0.1,0.8,0.5,,
negative,-1.0,,0.3,1.0,,
text,abc,,0.3,1.0,,
no-image,,,0.3,1.0,missing.fits,
no-points,,,0.3,1.0,,missing_points.csv
no-redshift,1.1,,,1.0,,
"""
BROKEN = {"swapped", "negative", "text", "no-image", "no-points", "no-redshift"}


def test_broken_rows_are_kept_and_flagged(tmp_path, capsys):
    (tmp_path / "m.csv").write_text(BROKEN_MANIFEST)
    out = tmp_path / "res.ecsv"
    status = main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--samples", "500", "--no-progress",
                   "--cosmology", "Planck18"])
    assert status == 3  # documented: some rows failed
    t = Table.read(out)
    assert list(t["id"]) == [line.split(",")[0] for line in BROKEN_MANIFEST.splitlines()[1:]]
    errors = {i: ("" if np.ma.is_masked(e) else str(e)) for i, e in zip(t["id"], t["error"])}
    assert {i for i, e in errors.items() if e} == BROKEN
    assert all("\n" not in e and e.endswith(".") for e in errors.values() if e)
    assert "behind the lens" in errors["swapped"] and "column theta_e_arcsec" in errors["negative"]
    # The measured rows hold the estimate; D_l checked against astropy (Hogg 1999 via astropy.cosmology).
    good = t[t["id"] == "good-2"][0]
    assert good["d_l_mpc"] == pytest.approx(Planck18.angular_diameter_distance(0.45).value, rel=1e-6)
    assert np.isfinite(t[t["id"] == "good-1"][0]["mass_einstein_msun_p16"])  # theta_E error propagated
    assert "mass_einstein_msun" in t.meta["models"] and t.meta["settings"]["cosmology"] == "Planck18"


def test_points_file_rows_are_measured(tmp_path):
    t = np.linspace(0, 2 * np.pi, 13)[:-1]
    pts = "x,y\n" + "".join(f"{60 + 7 * np.cos(a):.4f},{50 + 7 * np.sin(a):.4f}\n" for a in t)
    (tmp_path / "arc.csv").write_text(pts)
    (tmp_path / "m.csv").write_text("id,points,pixel_scale_arcsec,z_l,z_s\nP1,arc.csv,0.2,0.25,0.9\n")
    out = tmp_path / "r.ecsv"
    assert main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--samples", "500", "--no-progress"]) == 0
    row = Table.read(out)[0]
    # a circle of radius 7 px at 0.2"/px has radius 1.4" (geometry; common practice)
    assert row["theta_e_arcsec"] == pytest.approx(1.4, rel=1e-4)  # points rounded to 1e-4 px
    assert "points file arc.csv" in row["source"] and row["method"].startswith("circle")
    # the lens centre: the circle's centre (60, 50) px, and which centre it is; no WCS, so no RA/Dec
    assert (row["center_x"], row["center_y"]) == pytest.approx((60.0, 50.0), abs=1e-3)
    assert row["center_source"] == "centre of the circle fitted to the arc points"
    assert np.isnan(row["center_ra"])


def test_all_good_rows_exit_zero_and_existing_results_are_protected(tmp_path, capsys):
    (tmp_path / "m.csv").write_text("id,theta_e_arcsec,z_l,z_s\nA,1.0,0.2,0.9\n")
    out = tmp_path / "r.ecsv"
    assert main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--no-progress"]) == 0
    before = out.read_bytes()
    assert main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--no-progress"]) == 2
    assert "already exists" in capsys.readouterr().err
    assert out.read_bytes() == before  # nothing the user had is lost


def _manifest(path, n):
    rng = np.random.default_rng(7)
    lines = ["id,theta_e_arcsec,theta_e_err,z_l,z_s"]
    for i in range(n):
        lines.append(f"K{i:04d},{rng.uniform(0.6, 3):.3f},{rng.uniform(0.02, 0.2):.3f},"
                     f"{rng.uniform(0.1, 0.5):.3f},{rng.uniform(0.9, 2.5):.3f}")
    lines[5] = "K0004,1.0,0.1,0.9,0.4"  # one broken row (source in front of the lens)
    path.write_text("\n".join(lines) + "\n")


def _batch_cmd(manifest, out, *extra):
    return [sys.executable, "-m", "lensmass.cli", "batch", str(manifest), "--out", str(out), "--samples", "1000",
            "--no-progress", "--save-every", "0.01", *extra]


def _rows_in(path):
    try:
        return len(Table.read(path, format="ascii.ecsv"))
    except Exception:
        return -1


# Runs the batch command in a child process that is killed (os._exit: no clean-up, like SIGKILL) right
# after the first block of finished rows has been saved to RESULTS: a deterministic "killed halfway".
_KILLED_AFTER_FIRST_BLOCK = """
import os, sys
import lensmass.io.batch_engine as batch
real_add = batch._Saver.add
def add_save_and_die(self, records):
    real_add(self, records)
    self.save()
    os._exit(9)
batch._Saver.add = add_save_and_die
from lensmass.cli import main
sys.exit(main(sys.argv[1:]))
"""


def test_kill_halfway_then_resume_equals_one_clean_run(tmp_path):
    n = 120
    manifest = tmp_path / "m.csv"
    _manifest(manifest, n)
    clean, broken = tmp_path / "clean.ecsv", tmp_path / "resumed.ecsv"
    env = dict(os.environ, PYTHONHASHSEED="0")
    killed = subprocess.run([sys.executable, "-c", _KILLED_AFTER_FIRST_BLOCK,
                             *_batch_cmd(manifest, broken, "--workers", "1")[3:]],
                            env=env, stderr=subprocess.DEVNULL, timeout=120)
    assert killed.returncode == 9
    partial = _rows_in(broken)
    assert 0 < partial < n, "the run should have been killed halfway"
    subprocess.run(_batch_cmd(manifest, broken, "--resume", "--workers", "2"), env=env, check=False,
                   stderr=subprocess.DEVNULL, timeout=120)
    status = subprocess.run(_batch_cmd(manifest, clean), env=env, stderr=subprocess.DEVNULL, timeout=120).returncode
    assert status == 3
    a, b = Table.read(clean), Table.read(broken)
    assert len(a) == len(b) == n
    for name in a.colnames:
        if a[name].dtype.kind == "f":
            np.testing.assert_array_equal(np.asarray(a[name]), np.asarray(b[name]), err_msg=name)
        else:
            assert list(a[name]) == list(b[name]), name


def test_resume_with_other_settings_is_refused(tmp_path, capsys):
    (tmp_path / "m.csv").write_text("id,theta_e_arcsec,z_l,z_s\nA,1.0,0.2,0.9\n")
    out = tmp_path / "r.ecsv"
    assert main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--no-progress"]) == 0
    assert main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--no-progress", "--resume",
                 "--cosmology", "WMAP9"]) == 2
    assert "other settings" in capsys.readouterr().err


def test_bad_manifest_is_one_sentence(tmp_path, capsys):
    assert main(["batch", str(tmp_path / "none.csv"), "--out", str(tmp_path / "r.ecsv")]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "does not exist" in err


def _die(rows):
    os._exit(9)  # a worker killed from outside (e.g. out of memory)


def test_a_dying_worker_is_one_sentence_and_keeps_results(tmp_path, monkeypatch, capsys):
    import lensmass.io.batch_workers as workers

    monkeypatch.setattr(workers, "_run_chunk", _die)
    _manifest(tmp_path / "m.csv", 40)
    out = tmp_path / "r.ecsv"
    status = main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--workers", "2", "--no-progress",
                   "--samples", "200"])
    assert status == 2
    assert "worker process died" in capsys.readouterr().err
    assert _rows_in(out) == 0  # RESULTS is a valid (empty) table; --resume continues it


def test_unknown_source_redshift_rows_use_a_range(tmp_path):
    # A row with z_s_min/z_s_max is the estimate with z_s_range (same draws, same seed): one source of numbers.
    from lensmass.core.estimate import estimate

    (tmp_path / "m.csv").write_text("id,theta_e_arcsec,z_l,z_s,z_s_min,z_s_max\nU1,1.3,0.3,,1.0,2.5\nU2,1.3,0.3,,,\n")
    out = tmp_path / "r.ecsv"
    assert main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--no-progress", "--samples", "500",
                 "--workers", "1"]) == 3
    t = Table.read(out)
    direct = estimate(1.3, 0.3, z_s_range=(1.0, 2.5), samples=500, seed=20261201 + 0)
    assert t["error"][0] == "" or t["error"][0] is np.ma.masked
    assert float(t["mass_einstein_msun"][0]) == pytest.approx(direct["mass_einstein_msun"], rel=1e-12)
    assert "z_s_min and z_s_max" in str(t["error"][1])
