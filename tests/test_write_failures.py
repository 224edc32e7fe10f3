"""Failed writes are one sentence and leave the old file as it was (issue 15).

A full disk is simulated with a fake: ``os.fsync`` raising ENOSPC, which is where a full
disk shows up for buffered writes (POSIX fsync(2): ENOSPC/EDQUOT "no room for the data";
common practice). No real disk is filled.
"""

from __future__ import annotations

import errno
import json
import os
import tempfile
from pathlib import Path

import numpy as np
import pytest

from lensmass.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_fields"
RING = DEMO / "tris_ring_a.fits"
SHEAR = DEMO / "tris_cluster_d_shear.fits"
SHEAR_ARGS = ["shear", str(SHEAR), "--zl", "0.35", "--center-sky", "141.3720,18.2705", "--bootstrap", "0",
              "--columns", "ra=RA,dec=DEC,e1=E1,e2=E2,weight=WEIGHT,z=Z_PHOT"]


def _full_disk(monkeypatch):
    def no_space(fd):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr("lensmass.io.atomic.os.fsync", no_space)


def _inputs(tmp_path):
    truth = json.loads((DEMO / "tris_ring_a.truth.json").read_text())
    pts = np.array(truth["arc_points_xy"])[::3]
    (tmp_path / "pts.csv").write_text("x,y\n" + "".join(f"{a},{b}\n" for a, b in pts))
    (tmp_path / "m.csv").write_text("id,theta_e_arcsec,z_l,z_s\nA,1.2,0.3,1.1\n")
    (tmp_path / "class.csv").write_text("student,theta_e_arcsec,z_l,z_s,mass_einstein_msun\nann,1.5,0.35,1.4,1e11\n")


CASES = {
    "grade --out": (["grade", "{d}/class.csv", "--out", "{target}", "--html", "{d}/other.html"], "r.csv"),
    "grade --html": (["grade", "{d}/class.csv", "--out", "{d}/r2.csv", "--html", "{target}"], "s.html"),
    "measure --save-residual": (["measure", str(RING), "--points", "{d}/pts.csv", "--zl", "0.25", "--zs", "0.9",
                                 "--samples", "200", "--save-residual", "{target}"], "res.fits"),
    "shear --profile-out": ([*SHEAR_ARGS, "--profile-out", "{target}"], "p.ecsv"),
    "shear --map-out": ([*SHEAR_ARGS, "--map-pixels", "16", "--map-noise", "1", "--map-out", "{target}"], "k.fits"),
    "gui --screenshot": (["gui", str(RING), "--screenshot", "{target}"], "shot.png"),
}


@pytest.mark.parametrize("option", list(CASES))
def test_full_disk_is_one_sentence_and_keeps_the_old_file(option, tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    _inputs(tmp_path)
    argv, name = CASES[option]
    target = tmp_path / name
    target.write_bytes(b"the user's old file")
    _full_disk(monkeypatch)
    code = main([a.format(d=tmp_path, target=target) for a in argv])
    err = capsys.readouterr().err
    assert code == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "no space left on device" in lines[0], err
    assert "unchanged" in lines[0] or "nothing was written" in lines[0]
    assert target.read_bytes() == b"the user's old file"
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]  # no temporary left behind


def test_full_disk_during_batch_keeps_the_previous_results(tmp_path, capsys, monkeypatch):
    _inputs(tmp_path)
    out = tmp_path / "r.ecsv"
    assert main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--no-progress", "--samples", "200"]) == 0
    before = out.read_bytes()
    capsys.readouterr()
    _full_disk(monkeypatch)
    code = main(["batch", str(tmp_path / "m.csv"), "--out", str(out), "--no-progress", "--samples", "200",
                 "--resume"])
    err = capsys.readouterr().err
    assert code == 2 and "no space left on device" in err and "Traceback" not in err
    assert out.read_bytes() == before


def test_no_folder_is_made_for_an_output(tmp_path, capsys):
    _inputs(tmp_path)
    out = tmp_path / "not" / "there" / "r.csv"
    code = main(["grade", str(tmp_path / "class.csv"), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and "does not exist" in err
    assert not (tmp_path / "not").exists()


def test_screenshot_leaves_no_temporary_folder(tmp_path, capsys, monkeypatch):
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    monkeypatch.setenv("TMPDIR", str(tmp_path / "tmp"))
    (tmp_path / "tmp").mkdir()
    monkeypatch.setattr(tempfile, "tempdir", None)  # re-read TMPDIR
    try:
        assert main(["gui", str(RING), "--screenshot", str(tmp_path / "a.png")]) == 0
        assert main(["gui", str(tmp_path / "missing.fits"), "--screenshot", str(tmp_path / "b.png")]) == 2
    finally:
        monkeypatch.setattr(tempfile, "tempdir", None)
    capsys.readouterr()
    assert (tmp_path / "a.png").stat().st_size > 1000
    assert list((tmp_path / "tmp").iterdir()) == []


def test_window_without_a_display_is_a_sentence():
    from lensmass.gui.app import display_problem

    # X11 convention: a local DISPLAY :N is served through the socket /tmp/.X11-unix/XN (common practice).
    assert "DISPLAY is not set" in display_problem({}, "linux")
    assert "no X server" in display_problem({"DISPLAY": ":987"}, "linux")
    assert display_problem({"QT_QPA_PLATFORM": "offscreen"}, "linux") == ""
    assert display_problem({"WAYLAND_DISPLAY": "wayland-0"}, "linux") == ""
    assert display_problem({}, "darwin") == ""


def test_gui_without_display_exits_2_with_one_line():
    import subprocess
    import sys

    env = {k: v for k, v in os.environ.items() if k not in ("QT_QPA_PLATFORM", "DISPLAY", "WAYLAND_DISPLAY")}
    for display in (None, ":987"):
        if display:
            env["DISPLAY"] = display
        done = subprocess.run([sys.executable, "-m", "lensmass.cli", "gui", str(RING)], env=env, cwd=ROOT, check=False,
                              capture_output=True, text=True, timeout=120)
        assert done.returncode == 2, done.stderr  # not Qt's abort (134)
        assert len(done.stderr.strip().splitlines()) == 1 and "display" in done.stderr
