"""Nonsense in, a sentence out: one row per bad input (issue 15).

Each row is a command line (run in-process) and what must happen:

- ``CLEAN``: exit status 2 and exactly one line on stderr naming the problem (and,
  where given, containing a phrase that shows the sentence is about the right thing);
- ``FLAG``: the command runs (exit 0, or 3 for a batch with failed rows) and its
  output carries a note containing the phrase.

Never exit 0 with an unflagged nonsense number, never exit 70 ("internal error"),
never a traceback. The tally (tried / clean / flagged) is printed by
``python -m pytest tests/test_bad_inputs.py -q -s -k tally``.

Limits come from :mod:`lensmass.core.limits`; where a limit is a fact of physics the
row says so (speed of light: CODATA via astropy.constants; declination within
+-90 deg: the definition of equatorial coordinates, common practice).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
from astropy.io import fits
from astropy.table import Table

from lensmass.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_fields"
RING = DEMO / "tris_ring_a.fits"
SHEAR = DEMO / "tris_cluster_d_shear.fits"
CLEAN, FLAG = "clean", "flag"

EST = ["estimate", "--theta-e", "1.4", "--zl", "0.25", "--zs", "0.9", "--samples", "300"]
MEAS_PTS = ["--points", "{ring_pts}", "--zl", "0.25", "--zs", "0.9", "--samples", "300"]
SHEAR_BASE = ["shear", str(SHEAR), "--zl", "0.35", "--center-sky", "141.3720,18.2705", "--bootstrap", "0",
              "--columns", "ra=RA,dec=DEC,e1=E1,e2=E2,weight=WEIGHT,z=Z_PHOT"]


@dataclass(frozen=True)
class Case:
    name: str
    argv: tuple
    outcome: str
    phrase: str = ""


def c(name, argv, outcome=CLEAN, phrase=""):
    return Case(name, tuple(argv), outcome, phrase)


# ---------------------------------------------------------------------------------- the issue's cases

ISSUE_CASES = [
    # nonsense in, confident mass out
    c("wcs-90-deg-per-pixel", ["measure", "{wcs90}", *MEAS_PTS], CLEAN, "pixel scale"),
    c("cdelt-nan-string", ["measure", "{cdelt_nan}", *MEAS_PTS], CLEAN, "pixel scale"),
    c("points-off-image", ["measure", str(RING), "--points", "{pts_far}", "--zl", "0.25", "--zs", "0.9"],
      CLEAN, "outside"),
    c("demo-points-on-1x1-image", ["measure", "{one_pixel}", "--pixel-scale", "0.2", *MEAS_PTS], CLEAN, "outside"),
    c("sky-points-off-sphere", ["measure", str(RING), "--points", "{pts_sky_bad}", "--zl", "0.25", "--zs", "0.9"],
      CLEAN, "declination"),
    c("theta-e-1e6-faster-than-light", ["estimate", "--theta-e", "1e6", "--zl", "0.25", "--zs", "0.9"], CLEAN,
      "Einstein radius"),
    c("manifest-two-z_l-columns", ["batch", "{manifest_dup_cols}", "--out", "{tmp}/dup.ecsv", "--no-progress"],
      CLEAN, "twice"),
    c("shear-negative-zs-margin", [*SHEAR_BASE, "--zs-margin", "-5"], CLEAN, "--zs-margin"),
    # internal errors
    c("seed-negative", [*EST, "--seed", "-1"], CLEAN, "--seed"),
    c("cosmology-without-big-bang", [*EST, "--h0", "70", "--om0", "0.1", "--ode0", "2.5"], CLEAN, "big bang"),
    c("max-radius-nan", ["measure", str(RING), "--auto-ring", "--max-radius", "nan", "--zl", "0.25", "--zs", "0.9"],
      CLEAN, "--max-radius"),
    c("max-radius-negative", ["measure", str(RING), "--auto-ring", "--max-radius", "-5", "--zl", "0.25", "--zs",
                              "0.9"], CLEAN, "--max-radius"),
    c("bootstrap-negative", [*SHEAR_BASE, "--bootstrap", "-1"], CLEAN, "--bootstrap"),
    c("png-decompression-bomb", ["measure", "{bomb_png}", "--pixel-scale", "0.2", *MEAS_PTS], CLEAN, "pixels"),
    c("singular-cd-matrix", ["measure", "{cd_singular}", *MEAS_PTS], CLEAN, "singular"),
    c("cdelt-1e-15", ["measure", "{cdelt_tiny}", *MEAS_PTS], CLEAN, "pixel scale"),
    c("session-nested-100000", ["gui", "{session_deep}", "--screenshot", "{tmp}/deep.png"], CLEAN, "nested"),
    c("session-mc-samples-1e12", ["gui", "{session_huge_mc}", "--screenshot", "{tmp}/mc.png"], CLEAN, "mc_samples"),
    c("session-centre-minus-1e9", ["gui", "{session_far_centre}", "--screenshot", "{tmp}/far.png"], CLEAN, "centre"),
    c("argparse-error", ["estimate", "--theta-e", "abc", "--zl", "0.3", "--zs", "1"], CLEAN, "--theta-e"),
    # limits on what one run may take
    c("samples-1e9", [*EST[:-2], "--theta-e-err", "0.1", "--samples", "1000000000"], CLEAN, "--samples"),
    c("shear-bins-100000", [*SHEAR_BASE, "--bins", "100000"], CLEAN, "--bins"),
    c("batch-workers-500", ["batch", "{manifest_two}", "--out", "{tmp}/w500.ecsv", "--workers", "500",
                            "--no-progress", "--samples", "200"], FLAG, "worker"),
    # files
    c("manifest-points-system-file", ["batch", "{manifest_passwd}", "--out", "{tmp}/pw.ecsv", "--no-progress",
                                      "--samples", "200"], FLAG, ""),
    c("out-into-missing-folder", ["batch", "{manifest_two}", "--out", "{tmp}/no/such/folder/r.ecsv",
                                  "--no-progress"], CLEAN, "does not exist"),
]

# every output option: a folder, and a path under /proc (unwritable even for root)
OUTPUT_OPTIONS = {
    "batch --out": (["batch", "{manifest_two}", "--no-progress", "--samples", "200", "--out"], ".ecsv"),
    "grade --out": (["grade", "{class_csv}", "--out"], ".csv"),
    "grade --html": (["grade", "{class_csv}", "--out", "{tmp}/{uniq}r.csv", "--html"], ".html"),
    "measure --save-residual": (["measure", str(RING), *MEAS_PTS, "--save-residual"], ".fits"),
    "shear --profile-out": ([*SHEAR_BASE, "--profile-out"], ".ecsv"),
    "shear --map-out": ([*SHEAR_BASE, "--map-pixels", "32", "--map-noise", "2", "--map-out"], ".fits"),
    "gui --screenshot": (["gui", str(RING), "--screenshot"], ".png"),
}
for _opt, (_argv, _ext) in OUTPUT_OPTIONS.items():
    ISSUE_CASES.append(c(f"{_opt} is a folder", [*_argv, "{folder}" + _ext], CLEAN, "folder"))
    ISSUE_CASES.append(c(f"{_opt} under /proc", [*_argv, "/proc/lensmass-test/out" + _ext], CLEAN, ""))

OWN_CASES: list[Case] = []
ALL_CASES = ISSUE_CASES + OWN_CASES


# ---------------------------------------------------------------------------------- input files


def _ring_header():
    return fits.getheader(RING)


def _fits_with(path, **cards):
    h = _ring_header()
    for k, v in cards.items():
        h[k] = v
    fits.PrimaryHDU(fits.getdata(RING), header=h).writeto(path, overwrite=True)


def _png_header_only(width, height):
    """A PNG that declares width x height pixels of 8-bit grey (PNG spec, W3C 2003: signature, IHDR, IEND)."""
    import struct
    import zlib

    def chunk(kind, data):
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))

    ihdr = struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(b"\0" * 64)) + chunk(b"IEND", b"")


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("bad")
    f = {"tmp": str(d)}
    truth = json.loads((DEMO / "tris_ring_a.truth.json").read_text())
    pts = np.array(truth["arc_points_xy"])[::3]
    (d / "ring_pts.csv").write_text("x,y\n" + "".join(f"{a},{b}\n" for a, b in pts))
    f["ring_pts"] = str(d / "ring_pts.csv")
    (d / "far.csv").write_text("x,y\n" + "".join(f"{a},{b}\n" for a, b in pts) + "5000,5000\n")
    f["pts_far"] = str(d / "far.csv")
    (d / "sky_bad.csv").write_text("ra,dec\n400,100\n401,100.1\n402,99.8\n")
    f["pts_sky_bad"] = str(d / "sky_bad.csv")
    for name, cards in {"wcs90": {"CDELT1": -90.0, "CDELT2": 90.0},
                        "cdelt_nan": {"CDELT1": "NaN", "CDELT2": "NaN"},
                        "cdelt_tiny": {"CDELT1": -1e-15, "CDELT2": 1e-15},
                        "cd_singular": {"CD1_1": 1e-5, "CD1_2": 1e-5, "CD2_1": 1e-5, "CD2_2": 1e-5}}.items():
        _fits_with(d / f"{name}.fits", **cards)
        f[name] = str(d / f"{name}.fits")
    fits.PrimaryHDU(np.ones((1, 1), np.float32)).writeto(d / "one.fits")
    f["one_pixel"] = str(d / "one.fits")
    (d / "bomb.png").write_bytes(_png_header_only(30000, 30000))
    f["bomb_png"] = str(d / "bomb.png")
    (d / "dup.csv").write_text("id,theta_e_arcsec,z_l,z_s,z_l\nA,1.2,0.3,1.1,0.5\n")
    f["manifest_dup_cols"] = str(d / "dup.csv")
    (d / "two.csv").write_text("id,theta_e_arcsec,z_l,z_s\nA,1.2,0.3,1.1\nB,1.4,0.25,0.9\n")
    f["manifest_two"] = str(d / "two.csv")
    (d / "pw.csv").write_text("id,points,pixel_scale_arcsec,z_l,z_s\nP,/etc/passwd,0.2,0.3,1.1\n")
    f["manifest_passwd"] = str(d / "pw.csv")
    (d / "class.csv").write_text("student,theta_e_arcsec,z_l,z_s,mass_einstein_msun\nann,1.5,0.35,1.4,1e11\n")
    f["class_csv"] = str(d / "class.csv")
    (d / "afolder.png").mkdir()
    for ext in (".ecsv", ".csv", ".html", ".fits"):
        (d / f"afolder{ext}").mkdir()
    f["folder"] = str(d / "afolder")
    base = json.loads((ROOT / "resources" / "demo_ring_a.lensmass.json").read_text())
    base["image"]["path"] = str(RING)
    base["image"].pop("absolute_path", None)
    deep = '{"a":' * 100_000 + "1" + "}" * 100_000
    (d / "deep.lensmass.json").write_text(deep)
    f["session_deep"] = str(d / "deep.lensmass.json")
    huge = dict(base, mc_samples=10**12)
    (d / "huge.lensmass.json").write_text(json.dumps(huge))
    f["session_huge_mc"] = str(d / "huge.lensmass.json")
    far = dict(base, centre={"x": -1e9, "y": -1e9, "how": "hand"})
    (d / "far.lensmass.json").write_text(json.dumps(far))
    f["session_far_centre"] = str(d / "far.lensmass.json")
    return f


def _expand(argv, files, uniq):
    return [a.format(uniq=uniq, **files) for a in argv]


def run_case(case: Case, files, capsys, uniq: str = ""):
    argv = _expand(case.argv, files, uniq)
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def verdict(case: Case, code, out, err) -> str:
    """'clean', 'flag', or a description of what went wrong."""
    lines = [ln for ln in err.splitlines() if ln.strip()]
    if code == 70 or "internal error" in err or "Traceback" in err:
        return f"internal error: {err.strip()[:300]}"
    if code == 2:
        if len(lines) != 1:
            return f"exit 2 but {len(lines)} lines: {err[:300]}"
        if case.phrase and case.phrase.lower() not in lines[0].lower():
            return f"sentence lacks '{case.phrase}': {lines[0]}"
        return CLEAN
    if code in (0, 3):
        if case.outcome == CLEAN:
            return f"exit {code} (expected a refusal): {err.strip()[:200]} {out[:200]}"
        if case.phrase.lower() in (out + err).lower():
            return FLAG
        return f"exit {code} without a note containing '{case.phrase}'"
    return f"exit {code}: {err.strip()[:300]}"


@pytest.mark.parametrize("case", ALL_CASES, ids=[x.name for x in ALL_CASES])
def test_bad_input(case, files, capsys, monkeypatch):
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    code, out, err = run_case(case, files, capsys, uniq=str(abs(hash(case.name))))
    assert verdict(case, code, out, err) == case.outcome
