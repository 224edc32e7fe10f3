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
    c("singular-cd-matrix", ["measure", "{cd_degenerate}", *MEAS_PTS], CLEAN, "singular"),
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

# ---------------------------------------------------------------------------------- more of our own

E0 = ["estimate", "--zl", "0.25", "--zs", "0.9"]
OWN_CASES: list[Case] = []
for v in ("0", "-1", "nan", "inf", "3600", "1e300"):
    OWN_CASES.append(c(f"estimate theta-e {v}", ["estimate", "--theta-e", v, "--zl", "0.25", "--zs", "0.9"], CLEAN,
                       "Einstein radius"))
for v in ("-0.1", "nan", "inf"):
    OWN_CASES.append(c(f"estimate theta-e-err {v}", [*EST, "--theta-e-err", v], CLEAN, "theta_E"))
for v in ("0", "-0.1", "nan", "inf", "2000"):
    OWN_CASES.append(c(f"estimate zl {v}", ["estimate", "--theta-e", "1.4", "--zl", v, "--zs", "0.9"], CLEAN,
                       "lens redshift"))
for v, phrase in (("0", "source redshift"), ("nan", "source redshift"), ("0.2", "behind the lens"),
                  ("0.25", "behind the lens"), ("5000", "source redshift")):
    OWN_CASES.append(c(f"estimate zs {v}", ["estimate", "--theta-e", "1.4", "--zl", "0.25", "--zs", v], CLEAN, phrase))
for flag in ("--zl-err", "--zs-err"):
    for v in ("-1", "nan"):
        OWN_CASES.append(c(f"estimate {flag} {v}", [*EST, flag, v], CLEAN, "uncertainty"))
for v in ("1", "a,b", "2,1", "0,1", "nan,2", "-1,2", "1,2,3"):
    OWN_CASES.append(c(f"estimate zs-range {v}", ["estimate", "--theta-e", "1.4", "--zl", "0.25", "--zs-range", v,
                                                  "--samples", "300"], CLEAN, "range"))
for name in ("missing", "empty", "dup_z", "neg_w", "folder_zt", "passwd", "zero_w"):
    OWN_CASES.append(c(f"estimate zs-table {name}", ["estimate", "--theta-e", "1.4", "--zl", "0.25", "--zs-table",
                                                     "{zt_" + name + "}", "--samples", "300"], CLEAN, ""))
for v in ("0", "50", "-5", "1000000000", "1000000000000"):
    OWN_CASES.append(c(f"estimate samples {v}", [*EST[:-2], "--theta-e-err", "0.05", "--samples", v], CLEAN,
                       "samples"))
for v in ("-1", "-100", str(2**130)):
    OWN_CASES.append(c(f"estimate seed {v}", [*EST[:-2], "--theta-e-err", "0.05", "--seed", v], CLEAN, "--seed"))
for argv, phrase in ((["--h0", "0", "--om0", "0.3"], "H0"), (["--h0", "-70", "--om0", "0.3"], "H0"),
                     (["--h0", "nan", "--om0", "0.3"], "H0"), (["--h0", "1e6", "--om0", "0.3"], "H0"),
                     (["--h0", "70", "--om0", "0"], "Om0"), (["--h0", "70", "--om0", "-0.3"], "Om0"),
                     (["--h0", "70", "--om0", "5"], "Om0"), (["--h0", "70", "--om0", "nan"], "Om0"),
                     (["--h0", "70", "--om0", "0.3", "--ode0", "nan"], "Ode0"),
                     (["--h0", "70", "--om0", "0.05", "--ode0", "1.5"], "big bang"),
                     (["--h0", "70"], "Om0"), (["--om0", "0.3"], "H0"),
                     (["--cosmology", "Nope"], "Unknown cosmology"),
                     (["--cosmology", "Planck18", "--h0", "70", "--om0", "0.3"], "not both")):
    OWN_CASES.append(c(f"estimate cosmology {' '.join(argv)}", [*EST, *argv], CLEAN, phrase))
for v in ("-3", "0", "nan", "abc", "1e9", "inf"):
    OWN_CASES.append(c(f"estimate concentration {v}", [*EST, "--concentration", v], CLEAN, "concentration"))
for argv, phrase in ((["--halo-definition", "500c"], "--halo-definition"), (["--foo"], "unrecognized"),
                     (["--samples", "1e3"], "--samples"), (["--theta-e"], "--theta-e")):
    OWN_CASES.append(c(f"estimate argparse {' '.join(argv)}", [*EST, *argv], CLEAN, phrase))
OWN_CASES.append(c("estimate missing --zl", ["estimate", "--theta-e", "1.4", "--zs", "0.9"], CLEAN, "--zl"))
OWN_CASES.append(c("estimate theta-e 150 flagged", ["estimate", "--theta-e", "150", "--zl", "0.25", "--zs", "2.5",
                                                    "--json"], FLAG, "larger than any known lens"))
OWN_CASES.append(c("estimate zs barely behind zl", ["estimate", "--theta-e", "30", "--zl", "0.5", "--zs",
                                                    "0.5000000001"], CLEAN, "faster than light"))
for argv, phrase in ((["--theta-e", "1e-300"], "microarcsecond"), (["--zl", "1e-300"], "peculiar velocities"),
                     (["--zs-range", "0.3,1e9"], "1100"), (["--h0", "1e-300", "--om0", "0.3"], "H0"),
                     (["--h0", "70", "--om0", "0.3", "--ode0", "-5"], "undefined")):
    base = {"--theta-e": "1.4", "--zl": "0.25", "--zs": "0.9"}
    for k in range(0, len(argv), 2):
        if argv[k] in base:
            base[argv[k]] = argv[k + 1]
    rest = [a for k in range(0, len(argv), 2) if argv[k] not in base for a in argv[k:k + 2]]
    if "--zs-range" in rest:
        base.pop("--zs")
    OWN_CASES.append(c(f"estimate extreme {' '.join(argv)}", ["estimate", *[a for kv in base.items() for a in kv],
                                                               *rest, "--samples", "300"], CLEAN, phrase))
OWN_CASES.append(c("measure --hdu -1", [*MEAS_PTS[:0], "measure", str(RING), *MEAS_PTS, "--hdu=-1"], CLEAN, "HDU"))
LIGHT = [*EST, "--lens-mag", "18.9", "--band", "sdss_r", "--r-eff", "1.2"]
for argv in (["--lens-mag", "nan"], ["--band", "nope"], ["--r-eff", "-1"], ["--sersic-n", "0"],
             ["--stellar-ml", "-1"], ["--kcorr", "nan"], ["--extinction", "-1"], ["--r-eff", "inf"]):
    OWN_CASES.append(c(f"estimate light {' '.join(argv)}", [*LIGHT, *argv], CLEAN, argv[0].lstrip("-").split("-")[0]))

MEAS = ["measure", str(RING), *MEAS_PTS]
for v in ("0", "-0.2", "nan", "1e-6", "7200"):
    OWN_CASES.append(c(f"measure pixel-scale {v}", [*MEAS, "--pixel-scale", v], CLEAN, "pixel scale"))
for v in ("-1", "0.3", "nan"):
    OWN_CASES.append(c(f"measure pixel-scale-err {v}", [*MEAS, "--pixel-scale", "0.2", "--pixel-scale-err", v],
                       CLEAN, "error"))
for v, phrase in (("a,b", "--center"), ("1", "--center"), ("nan,nan", "outside"), ("-5,-5", "outside"),
                  ("1e9,1e9", "outside")):
    OWN_CASES.append(c(f"measure center {v}", [*MEAS, f"--center={v}"], CLEAN, phrase))
for v, phrase in (("400,100", "declination"), ("201.4,95", "declination"), ("a,b", "--center-sky"),
                  ("10,10", "does not fall on")):
    OWN_CASES.append(c(f"measure center-sky {v}", [*MEAS, "--center-sky", v], CLEAN, phrase))
for argv, phrase in ((["--hdu", "7"], "HDU"), (["--hdu", "NOPE"], "HDU"), (["--plane", "x"], "--plane")):
    OWN_CASES.append(c(f"measure {' '.join(argv)}", [*MEAS, *argv], CLEAN, phrase))
for name, phrase in (("missing", "No such"), ("empty", "empty"), ("header_only", "no points"),
                     ("wrong_header", "header"), ("text", "two numbers"), ("nan", "NaN"), ("folder", "not an "),
                     ("two", ""), ("same", ""), ("binary", "")):
    OWN_CASES.append(c(f"measure points {name}", ["measure", str(RING), "--points", "{pts_" + name + "}", "--zl",
                                                   "0.25", "--zs", "0.9", "--samples", "300"], CLEAN, phrase))
for name, phrase in (("missing", "No such"), ("empty", "empty"), ("folder", "folder"), ("text", "not a valid FITS"),
                     ("truncated", "truncated"), ("png_text", "not a readable picture"), ("table", "table"),
                     ("all_nan", "NaN"), ("cube", "--plane")):
    OWN_CASES.append(c(f"measure image {name}", ["measure", "{img_" + name + "}", "--pixel-scale", "0.2",
                                                  "--auto-ring", "--zl", "0.25", "--zs", "0.9"], CLEAN, phrase))
for v in ("0", "inf", "-1e9"):
    OWN_CASES.append(c(f"measure max-radius {v}", ["measure", str(RING), "--auto-ring", "--max-radius", v, "--zl",
                                                   "0.25", "--zs", "0.9"], CLEAN, "--max-radius"))
OWN_CASES.append(c("measure auto-ring on a blank image", ["measure", "{img_blank}", "--pixel-scale", "0.2",
                                                           "--auto-ring", "--zl", "0.25", "--zs", "0.9"], CLEAN, "ring"))
OWN_CASES.append(c("measure sky points without WCS", ["measure", "{img_blank}", "--pixel-scale", "0.2", "--points",
                                                       "{pts_sky_ok}", "--zl", "0.25", "--zs", "0.9"], CLEAN, "WCS"))

for argv, phrase in ((["--bins", "0"], "--bins"), (["--bins", "-3"], "--bins"), (["--bootstrap", "10000000"],
                                                                                 "--bootstrap"),
                     (["--seed", "-1"], "--seed"), (["--zs-margin", "nan"], "--zs-margin"),
                     (["--zs-margin", "inf"], "--zs-margin"), (["--rmin", "-1"], "--rmin"), (["--rmin", "nan"],
                                                                                            "--rmin"),
                     (["--rmax", "0"], "--rmax"), (["--rmin", "5", "--rmax", "2"], "rmin < rmax"),
                     (["--map-pixels", "0"], "--map-pixels"), (["--map-pixels", "1000000"], "--map-pixels"),
                     (["--map-noise", "0"], "--map-noise"), (["--map-noise", "100000"], "--map-noise"),
                     (["--map-smoothing", "-60"], "--map-smoothing"), (["--map-smoothing", "nan"], "--map-smoothing"),
                     (["--zeta-radii", "5,2"], "zeta"), (["--zeta-radii", "-1,3"], "--zeta-radii"),
                     (["--zeta-radii", "a,b"], "--zeta-radii"), (["--zs", "0.1"], "behind the lens")):
    OWN_CASES.append(c(f"shear {' '.join(argv)}", [*SHEAR_BASE, *argv], CLEAN, phrase))
SHEAR_SMALL = ["shear", "{cat_small}", "--center-sky", "141.3720,18.2705", "--bootstrap", "0", "--zs", "1.0"]
for argv, phrase in ((["--zl", "0"], "lens redshift"), (["--zl", "nan"], "lens redshift"),
                     (["--zl", "5000"], "lens redshift"),
                     (["--zl", "0.35", "--center-sky", "400,100"], "declination"),
                     (["--zl", "0.35", "--center-sky", "a,b"], "--center-sky"),
                     (["--zl", "0.35", "--columns", "e1=E1,e2=E1"], "both"),
                     (["--zl", "0.35", "--columns", "ra=NOPE"], "NOPE"),
                     (["--zl", "0.35", "--columns", "bogus"], "column")):
    OWN_CASES.append(c(f"shear small {' '.join(argv)}", [*SHEAR_SMALL, *argv], CLEAN, phrase))
for name, phrase in (("missing", "does not exist"), ("folder", ""), ("empty", ""), ("text", "")):
    OWN_CASES.append(c(f"shear catalogue {name}", ["shear", "{cat_" + name + "}", "--zl", "0.35", "--center-sky",
                                                    "141.3720,18.2705", "--zs", "1.0"], CLEAN, phrase))

BATCH = ["batch", "{manifest_two}", "--no-progress", "--samples", "200"]
for argv, phrase in ((["--workers", "0"], "--workers"), (["--workers", "-1"], "--workers"),
                     (["--save-every", "0"], "--save-every"), (["--save-every", "nan"], "--save-every"),
                     (["--save-every", "-1"], "--save-every"), (["--samples", "10"], "samples"),
                     (["--samples", "1000000000000"], "--samples"), (["--seed", "-1"], "--seed")):
    OWN_CASES.append(c(f"batch {' '.join(argv)}", [*BATCH, "--out", "{tmp}/b{uniq}.ecsv", *argv], CLEAN, phrase))
OWN_CASES.append(c("batch out not ecsv", [*BATCH, "--out", "{tmp}/b.csv"], CLEAN, ".ecsv"))
for name, phrase in (("missing", "does not exist"), ("folder_m", "manifest table"), ("empty_m", "empty"),
                     ("dup_ids", "twice"), ("dup_case", "twice"), ("dup_alias", "twice"),
                     ("passwd", "none of the manifest columns")):
    OWN_CASES.append(c(f"batch manifest {name}", ["batch", "{man_" + name + "}", "--out", "{tmp}/m{uniq}.ecsv",
                                                   "--no-progress"], CLEAN, phrase))
OWN_CASES.append(c("batch out exists", [*BATCH, "--out", "{existing_ecsv}"], CLEAN, "already exists"))
OWN_CASES.append(c("batch nonsense rows flagged", ["batch", "{man_nonsense}", "--out", "{tmp}/n.ecsv",
                                                   "--no-progress", "--samples", "200"], FLAG, "failed"))

GRADE = ["grade", "{class_csv}"]
for v in ("0", "2", "nan", "-1"):
    OWN_CASES.append(c(f"grade tolerance {v}", [*GRADE, "--out", "{tmp}/g{uniq}.csv", "--tolerance", v], CLEAN,
                       "tolerance"))
OWN_CASES.append(c("grade out txt", [*GRADE, "--out", "{tmp}/g.txt"], CLEAN, ".csv"))
OWN_CASES.append(c("grade out equals html", [*GRADE, "--out", "{tmp}/same.csv", "--html", "{tmp}/same.csv"],
                   CLEAN, "same file"))
for name, phrase in (("missing", "does not exist"), ("no_student", "student"), ("no_answers", "answer")):
    OWN_CASES.append(c(f"grade submissions {name}", ["grade", "{cls_" + name + "}", "--out", "{tmp}/c{uniq}.csv"],
                       CLEAN, phrase))

SHOT = ["--screenshot", "{tmp}/s{uniq}.png"]
for name, phrase in (("not_json", "not valid JSON"), ("empty", "empty"), ("truncated", "ends too early"),
                     ("wrong_tag", ""), ("future", "schema"), ("mc_zero", "mc_samples"), ("seed_neg", "mc_seed"),
                     ("arc_off", "outside"), ("too_big", "MB")):
    OWN_CASES.append(c(f"gui session {name}", ["gui", "{ses_" + name + "}", *SHOT], CLEAN, phrase))
for argv, phrase in ((["--size", "10x10"], "--size"), (["--size", "abc"], "--size"),
                     (["--screenshot", "{tmp}/s.jpg"], ".png")):
    OWN_CASES.append(c(f"gui {' '.join(argv)}", ["gui", str(RING), *argv] + ([] if "--screenshot" in argv else SHOT),
                       CLEAN, phrase))
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
                        "cd_degenerate": {"CD1_1": 1e-5, "CD1_2": 1e-5, "CD2_1": 1e-5, "CD2_2": 1e-5}}.items():
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
    _more_files(d, f, base, pts)
    return f


def _more_files(d: Path, f: dict, base: dict, pts) -> None:
    """Inputs of the cases of our own (files that are missing, empty, damaged or of the wrong kind)."""
    def put(key, name, text=None, data=None):
        path = d / name
        if text is not None:
            path.write_text(text)
        if data is not None:
            path.write_bytes(data)
        f[key] = str(path)

    text_files = {  # key: (file name, text); None = the file does not exist
        "zt_missing": ("nope_nz.csv", None), "zt_empty": ("empty_nz.csv", ""),
        "zt_dup_z": ("dup_nz.csv", "z,weight\n1.0,1\n1.0,2\n2.0,1\n"),
        "zt_neg_w": ("neg_nz.csv", "z,weight\n1.0,1\n1.5,-2\n2.0,1\n"),
        "zt_zero_w": ("zero_nz.csv", "z,weight\n1.0,0\n1.5,0\n2.0,0\n"),
        "pts_missing": ("nope_pts.csv", None), "pts_empty": ("empty_pts.csv", ""),
        "pts_header_only": ("head_pts.csv", "x,y\n"), "pts_wrong_header": ("wrong_pts.csv", "u,v\n1,2\n"),
        "pts_text": ("text_pts.csv", "x,y\n1,two\n"), "pts_nan": ("nan_pts.csv", "x,y\n50,50\nnan,40\n45,45\n"),
        "pts_two": ("two_pts.csv", "x,y\n50,40\n57,50\n"), "pts_same": ("same_pts.csv", "x,y\n" + "50,50\n" * 6),
        "pts_sky_ok": ("sky_ok.csv", "ra,dec\n201.4471,4.1882\n201.4472,4.1883\n201.4470,4.1884\n"),
    }
    for key, (name, text) in text_files.items():
        put(key, name, text)
    for key, name in (("zt_folder_zt", "nz_folder.csv"), ("pts_folder", "pts_dir.csv")):
        (d / name).mkdir()
        f[key] = str(d / name)
    f["zt_passwd"] = "/etc/passwd"
    put("pts_binary", "bin_pts.csv", data=bytes(range(256)) * 4)
    # images
    put("img_missing", "nope.fits")
    put("img_empty", "empty.fits", "")
    (d / "img_dir.fits").mkdir()
    f["img_folder"] = str(d / "img_dir.fits")
    put("img_text", "text.fits", "this is not a FITS file\n" * 20)
    put("img_truncated", "trunc.fits", data=RING.read_bytes()[:5000])
    put("img_png_text", "text.png", "not a picture")
    Table({"a": [1.0, 2.0]}).write(d / "table.fits")
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU(Table({"a": [1.0]}))]).writeto(d / "onlytable.fits")
    f["img_table"] = str(d / "onlytable.fits")
    fits.PrimaryHDU(np.full((20, 20), np.nan, np.float32)).writeto(d / "nan.fits")
    f["img_all_nan"] = str(d / "nan.fits")
    fits.PrimaryHDU(np.zeros((3, 20, 20), np.float32)).writeto(d / "cube.fits")
    f["img_cube"] = str(d / "cube.fits")
    fits.PrimaryHDU(np.zeros((60, 60), np.float32)).writeto(d / "blank.fits")
    f["img_blank"] = str(d / "blank.fits")
    # shear catalogues
    cat = Table.read(SHEAR)[:400]
    cat["RA", "DEC", "E1", "E2"].write(d / "small_cat.csv", format="ascii.csv")
    f["cat_small"] = str(d / "small_cat.csv")
    f["cat_missing"] = str(d / "nope_cat.fits")
    (d / "cat_dir.csv").mkdir()
    f["cat_folder"] = str(d / "cat_dir.csv")
    put("cat_empty", "empty_cat.csv", "")
    put("cat_text", "text_cat.fits", "no table here\n")
    # manifests
    f["man_missing"] = str(d / "nope_manifest.csv")
    (d / "man_dir").mkdir()
    (d / "man_dir" / "x.fits").write_bytes(RING.read_bytes())
    f["man_folder_m"] = str(d / "man_dir")
    put("man_empty_m", "empty_manifest.csv", "")
    put("man_passwd", "passwd.csv", "root:x:0:0:root:/root:/bin/bash\ndaemon:x:1:1:daemon:/usr/sbin\n")
    put("man_dup_ids", "dupid.csv", "id,theta_e_arcsec,z_l,z_s\nA,1.2,0.3,1.1\nA,1.3,0.3,1.1\n")
    put("man_dup_case", "dupcase.csv", "id,theta_e_arcsec,Z_L,z_s,z_l\nA,1.2,0.3,1.1,0.4\n")
    put("man_dup_alias", "dupalias.csv", "id,theta_e_arcsec,zl,z_s,z_l\nA,1.2,0.3,1.1,0.4\n")
    put("man_nonsense", "nonsense.csv", "id,theta_e_arcsec,z_l,z_s\nok,1.2,0.3,1.1\nhuge,1e6,0.3,1.1\n"
        "far,1.2,2000,3000\n")
    (d / "exists.ecsv").write_text("# %ECSV 1.0\n")
    f["existing_ecsv"] = str(d / "exists.ecsv")
    # submissions
    f["cls_missing"] = str(d / "nope_class.csv")
    put("cls_no_student", "nostudent.csv", "name,theta_e_arcsec,z_l,z_s,mass_einstein_msun\nann,1.5,0.35,1.4,1e11\n")
    put("cls_no_answers", "noanswers.csv", "student,theta_e_arcsec,z_l,z_s\nann,1.5,0.35,1.4\n")
    # sessions
    put("ses_not_json", "notjson.lensmass.json", "{this is not json")
    put("ses_empty", "empty.lensmass.json", "")
    put("ses_truncated", "trunc.lensmass.json", json.dumps(base)[:-30])
    put("ses_wrong_tag", "tag.lensmass.json", json.dumps(dict(base, format="something-else")))
    put("ses_future", "future.lensmass.json", json.dumps(dict(base, schema=99)))
    put("ses_mc_zero", "mczero.lensmass.json", json.dumps(dict(base, mc_samples=0)))
    put("ses_seed_neg", "seedneg.lensmass.json", json.dumps(dict(base, mc_seed=-5)))
    arcs = json.loads(json.dumps(base.get("arcs", [])))
    if arcs:
        arcs[0]["points"] = [[5000.0, 5000.0]] + list(arcs[0].get("points", []))
    put("ses_arc_off", "arcoff.lensmass.json", json.dumps(dict(base, arcs=arcs, centre=None)))
    with open(d / "big.lensmass.json", "wb") as fh:
        fh.write(b"{")
        fh.truncate(65_000_001)  # sparse: takes no disk space
    f["ses_too_big"] = str(d / "big.lensmass.json")


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


def test_tally(files, capsys, monkeypatch):
    """Print every case's outcome and sentence (run with -s); the counts go in the closing note."""
    import os

    if not os.environ.get("LENSMASS_TALLY"):
        pytest.skip("set LENSMASS_TALLY=1 to print the tally")
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    lines, counts = [], {CLEAN: 0, FLAG: 0, "other": 0}
    for case in ALL_CASES:
        code, out, err = run_case(case, files, capsys, uniq="t" + str(abs(hash(case.name))))
        v = verdict(case, code, out, err)
        counts[v if v in counts else "other"] += 1
        lines.append(f"{v:>5} | {case.name} | {err.strip().splitlines()[-1] if err.strip() else ''}")
    with capsys.disabled():
        print("\n".join(lines))
        print(f"tried {len(ALL_CASES)}: clean {counts[CLEAN]}, flagged {counts[FLAG]}, other {counts['other']}")
