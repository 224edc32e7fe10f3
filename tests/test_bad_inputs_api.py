"""The Python API refuses nonsense with one sentence, or flags it in the result (issue 15).

Each row calls a public function the window and the command line share. ``CLEAN``: it raises
:class:`LensInputError` whose message is one line (and contains the phrase); ``FLAG``: it returns,
and the predicate on the result holds (a note, an empty row, a neutralised cell).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from astropy.cosmology import LambdaCDM
from astropy.io import fits

import lensmass
from lensmass.core import limits
from lensmass.core.errors import LensInputError

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_fields"
RING = DEMO / "tris_ring_a.fits"
CLEAN, FLAG = "clean", "flag"


@pytest.fixture(scope="module")
def d(tmp_path_factory):
    d = tmp_path_factory.mktemp("api")
    h = fits.getheader(RING)
    h["CDELT1"], h["CDELT2"] = -90.0, 90.0
    fits.PrimaryHDU(fits.getdata(RING), header=h).writeto(d / "wcs90.fits")
    (d / "dup.csv").write_text("id,theta_e_arcsec,z_l,z_s,Z_L\nA,1.2,0.3,1.1,0.4\n")
    (d / "cat.csv").write_text("RA,DEC,E1,E2\n141.37,18.27,0.1,0.0\n141.38,18.28,0.0,0.1\n")
    (d / "deep.json").write_text('{"a":' * 5000 + "1" + "}" * 5000)
    base = json.loads((ROOT / "resources" / "demo_ring_a.lensmass.json").read_text())
    (d / "huge.json").write_text(json.dumps(dict(base, mc_samples=10**12)))
    (d / "class.csv").write_text("student,theta_e_arcsec,z_l,z_s,mass_einstein_msun\n"
                                 "=HYPERLINK(\"http://x\"),1.5,0.35,1.4,+SUM(1)\n@cmd,1.5,0.35,1.4,-3\n")
    return d


def _est(*a, **k):
    return lambda d: lensmass.estimate(*a, **k)


def _notes_have(phrase):
    return lambda r: any(phrase in n for n in r["notes"])


def _load(name, **k):
    from lensmass.io.images import load_image

    return lambda d: load_image(d / name if not str(name).startswith("/") else name, **k)


def _wcs90_scale(d):
    from lensmass.io.images import load_image

    return load_image(d / "wcs90.fits").require_pixel_scale()


def _points_off_image(d):
    from lensmass.io.images import load_image
    from lensmass.io.points import PointsTable

    return PointsTable("pixel", np.array([10.0, 5000.0]), np.array([10.0, 5000.0])).to_pixels(load_image(RING))


def _sky_off_sphere(d):
    from lensmass.io.points import PointsTable

    return PointsTable("sky", np.array([10.0]), np.array([-91.0])).to_pixels(None)


def _passwd_points(d):
    from lensmass.io.points import read_points

    return read_points("/etc/passwd")


def _measure_off_image(d):
    from lensmass.core.einstein import measure_from_points
    from lensmass.io.images import load_image

    t = np.linspace(0, 6, 8)
    return measure_from_points(500 + 7 * np.cos(t), 50 + 7 * np.sin(t), image=load_image(RING), z_l=0.25, z_s=0.9)


def _ring_nan_radius(d):
    from lensmass.core.einstein import measure_auto_ring
    from lensmass.io.images import load_image

    return measure_auto_ring(load_image(RING), max_radius_pix=float("nan"), z_l=0.25, z_s=0.9)


def _ring_centre_off(d):
    from lensmass.core.einstein import measure_auto_ring
    from lensmass.io.images import load_image

    return measure_auto_ring(load_image(RING), center=(-1e9, 5.0), z_l=0.25, z_s=0.9)


def _manifest(d):
    from lensmass.io.manifest import read_manifest

    return read_manifest(d / "dup.csv")


def _catalog_same_column(d):
    from lensmass.io.catalogs import read_shear_catalog

    return read_shear_catalog(d / "cat.csv", "e1=E1,e2=E1", need_z=False)


def _shear(**k):
    def call(d):
        from lensmass.core.shear_analysis import analyse_shear_catalog

        args = {"z_l": 0.35, "z_s": 1.0, "center_ra": 141.37, "center_dec": 18.27}
        args.update(k)
        ra, dec = np.array([141.37, 141.38]), np.array([18.27, 18.28])
        return analyse_shear_catalog(ra, dec, np.zeros(2), np.zeros(2), np.ones(2), None, **args)
    return call


def _session(name):
    def call(d):
        from lensmass.io.session import load_session

        return load_session(d / name)
    return call


def _write_missing_folder(d):
    from lensmass.io.atomic import write_text_atomic

    return write_text_atomic(d / "no" / "such" / "x.txt", "x")


def _write_folder(d):
    from lensmass.io.atomic import write_text_atomic

    return write_text_atomic(d, "x")


def _save_session_missing_folder(d):
    from lensmass.io.session import Session, save_session

    return save_session(d / "absent" / "s.lensmass.json", Session())


def _grade_report(d):
    from lensmass.core.cosmology import resolve_cosmology
    from lensmass.io.grading_report import grade_class, report_csv_text

    return report_csv_text(grade_class(d / "class.csv", resolve_cosmology("Planck18")))


def _csv_cells_safe(text):
    import csv
    import io

    rows = list(csv.reader(io.StringIO(text)))[1:]
    cells = [c for r in rows for c in r]
    texts = [c for c in cells if c and not _is_number(c)]
    # OWASP CSV-injection advice (common practice): no text cell may start with = + - @ tab CR
    return texts and all(not c.startswith(("=", "+", "-", "@", "\t", "\r")) for c in texts) and "-3" not in texts


def _is_number(text):
    try:
        float(text)
        return True
    except ValueError:
        return False


def _estimate_many_rows(d):
    from lensmass.core.estimate_many import estimate_many

    return estimate_many([1.2, 1e6, 1.2], [0.05, 0.05, 0.05], [0.3, 0.3, 2000.0], [0, 0, 0], [1.1, 1.1, 3000.0],
                         [0, 0, 0], [1, 2, -3], samples=300)


CASES = [
    ("estimate theta 1e6", _est(1e6, 0.3, 1.0), CLEAN, "Einstein radius"),
    ("estimate array with 5000 arcsec", _est(np.array([1.0, 5000.0]), 0.3, 1.0), CLEAN, "Einstein radius"),
    ("estimate seed -1", _est(1.4, 0.25, 0.9, theta_e_err=0.05, seed=-1), CLEAN, "seed"),
    ("estimate samples 1e12", _est(1.4, 0.25, 0.9, theta_e_err=0.05, samples=10**12), CLEAN, "samples"),
    ("estimate samples 1.5", _est(1.4, 0.25, 0.9, theta_e_err=0.05, samples=1500.5), CLEAN, "whole number"),
    ("estimate bouncing cosmology", _est(1.4, 0.25, 0.9, cosmology=LambdaCDM(70, 0.1, 2.5)), CLEAN, "big bang"),
    ("estimate concentration 1e9", _est(1.4, 0.25, 0.9, concentration=1e9), CLEAN, "concentration"),
    ("estimate z beyond 1100", _est(1.4, 2000.0, 3000.0), CLEAN, "1100"),
    ("estimate faster than light", _est(30.0, 0.5, 0.5000000001), CLEAN, "faster than light"),
    ("estimate 150 arcsec is flagged", _est(150.0, 0.25, 2.5), FLAG, _notes_have("larger than any known lens")),
    ("estimate_many leaves nonsense rows to estimate()", _estimate_many_rows, FLAG,
     lambda r: r[0] is not None and r[1] is None and r[2] is None),
    ("cosmology h0 70 om0 0.1 ode0 2.5",
     lambda d: lensmass.core.cosmology.resolve_cosmology(h0=70, om0=0.1, ode0=2.5), CLEAN, "big bang"),
    ("pixel scale 1e-6", lambda d: limits.pixel_scale(1e-6), CLEAN, "per pixel"),
    ("pixel scale 2 deg", lambda d: limits.pixel_scale(7200), CLEAN, "per pixel"),
    ("load image with scale 1e-6", _load(RING, pixel_scale_arcsec=1e-6), CLEAN, "per pixel"),
    ("load image with scale error above scale", _load(RING, pixel_scale_arcsec=0.2, pixel_scale_err_arcsec=0.5),
     CLEAN, "error"),
    ("WCS of 90 deg per pixel", _wcs90_scale, CLEAN, "outside"),
    ("points off the image", _points_off_image, CLEAN, "outside the 100 x 100 image"),
    ("sky points off the sphere", _sky_off_sphere, CLEAN, "declination"),
    ("points file /etc/passwd", _passwd_points, CLEAN, "header"),
    ("measure points off the image", _measure_off_image, CLEAN, "outside"),
    ("ring finder max radius nan", _ring_nan_radius, CLEAN, "search radius (`max_radius_pix`)"),
    ("ring finder centre off the image", _ring_centre_off, CLEAN, "outside"),
    ("manifest Z_L and z_l", _manifest, CLEAN, "twice"),
    ("catalogue e1 and e2 from one column", _catalog_same_column, CLEAN, "both"),
    ("shear bins 0", _shear(n_bins=0), CLEAN, "radial bins (`n_bins`)"),
    ("shear bins 1e5", _shear(n_bins=100_000), CLEAN, "radial bins (`n_bins`)"),
    ("shear bootstrap -1", _shear(n_bootstrap=-1), CLEAN, "bootstrap resamplings (`n_bootstrap`)"),
    ("shear seed -1", _shear(seed=-1), CLEAN, "random seed (`seed`)"),
    ("shear margin -5", _shear(z_margin=-5.0), CLEAN, "(`z_margin`)"),
    ("shear rmin nan", _shear(r_min=float("nan")), CLEAN, "inner radius (`r_min`)"),
    ("shear zl 5000", _shear(z_l=5000.0), CLEAN, "1100"),
    ("shear centre off sphere", _shear(center_dec=120.0), CLEAN, "sky"),
    ("session 5000 levels deep", _session("deep.json"), CLEAN, "nested"),
    ("session mc_samples 1e12", _session("huge.json"), CLEAN, "mc_samples"),
    ("write into a missing folder", _write_missing_folder, CLEAN, "does not exist"),
    ("write onto a folder", _write_folder, CLEAN, "is a folder"),
    ("save session into a missing folder", _save_session_missing_folder, CLEAN, "does not exist"),
    ("write under /proc", lambda d: lensmass.io.atomic.write_text_atomic("/proc/lensmass/x.txt", "x"), CLEAN, ""),
    ("grade report formula cells", _grade_report, FLAG, _csv_cells_safe),
    ("monte carlo samples by memory", lambda d: limits.monte_carlo_samples(3_000_000, memory_bytes=10**9), CLEAN,
     "GB of free memory"),
    ("unique names", lambda d: limits.unique_names(["a", "B", "b"], "table", str.lower), CLEAN, "twice"),
    ("velocity at c", lambda d: limits.below_light_speed(3e5), CLEAN, "faster than light"),
    ("sky RA 400", lambda d: limits.sky_position(400.0, 10.0), CLEAN, "right ascension"),
    ("count not whole", lambda d: limits.count(2.5, "--bins", 1, 10), CLEAN, "whole number"),
]


@pytest.mark.parametrize("name,call,outcome,check", CASES, ids=[c[0] for c in CASES])
def test_api_bad_input(name, call, outcome, check, d):
    import lensmass.io.atomic  # noqa: F401  (for the lambda above)

    if outcome == CLEAN:
        with pytest.raises(LensInputError) as info:
            call(d)
        text = str(info.value)
        assert "\n" not in text and text.strip()
        assert check.lower() in text.lower(), text
        assert "root:" not in text  # never a file's contents
    else:
        assert check(call(d))


def test_no_folder_was_made(d):
    assert not (d / "no").exists() and not (d / "absent").exists()
