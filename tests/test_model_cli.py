"""``lensmass model`` from a points file with system and kind columns (our own layout)."""

import json

from lensmass.cli import main
from lensmass.core.image_finder import find_images
from lensmass.core.sie import SIEShear


def _points(tmp_path, rows, header="x,y,system,kind"):
    p = tmp_path / "marks.csv"
    p.write_text(header + "\n" + "\n".join(",".join(str(v) for v in r) for r in rows) + "\n")
    return p


def _quad_rows():
    im = find_images(SIEShear(1.1, 0.8, 0.6, 0.0, 0.0, 0.02, 0.03), 0.04, -0.05)
    # east to the left, north up (pixel scale 0.05")
    return [(round(80 - x / 0.05, 3), round(80 + y / 0.05, 3), "Q", "image") for x, y in zip(im.x, im.y)]


def test_model_json_has_parameters_images_delays_and_masses(tmp_path, capsys):
    p = _points(tmp_path, _quad_rows())
    code = main(["model", "--points", str(p), "--pixel-scale", "0.05", "--center", "80,80", "--zl", "0.3",
                 "--zs", "1.4", "--samples", "500", "--draws", "1000", "--json"])
    out = capsys.readouterr().out
    assert code == 0
    r = json.loads(out)
    lm = r["lens_model"]
    # exact images (no click noise): the 95% interval holds the true theta_E of 1.1 arcsec
    lo, hi = lm["parameters"]["theta_e_arcsec"]["interval95"]
    assert lo <= 1.1 <= hi
    assert len([e for e in lm["images"] if e["marked_x"] is not None]) == 4
    assert len(lm["time_delays"]) == 3 and "intervals68" in r and "mass_einstein_msun" in r["intervals68"]
    assert "intermediate-axis" in lm["theta_e_convention"]
    assert any("0.5 px" in n for n in r["notes"])  # the default click error is stated
    assert "lens model" in r["models"]["theta_e_arcsec"] or "SIE" in r["models"]["theta_e_arcsec"]


def test_model_cli_gives_the_python_masses_and_carries_z_errors_into_delays(tmp_path, capsys):
    # one code path: the command line's masses equal lensmass.core.lens_model.masses_from_lens_model on its own
    # result with the same options; --zl-err/--zs-err reach the delays (D_dt = (1 + z_l) D_l D_s / D_ls)
    from lensmass.core.lens_model import masses_from_lens_model

    p = _points(tmp_path, _quad_rows())
    assert main(["model", "--points", str(p), "--pixel-scale", "0.05", "--center", "80,80", "--zl", "0.3",
                 "--zl-err", "0.03", "--zs", "1.4", "--zs-err", "0.1", "--samples", "500", "--seed", "4",
                 "--draws", "1000", "--json"]) == 0
    r = json.loads(capsys.readouterr().out)
    again = masses_from_lens_model(r, 0.3, 1.4, z_l_err=0.03, z_s_err=0.1, samples=500, seed=4)
    assert again["mass_einstein_msun"] == r["mass_einstein_msun"]
    assert "propagated" in r["models"]["time_delays"]


def test_model_table_and_bad_kind(tmp_path, capsys):
    p = _points(tmp_path, _quad_rows())
    assert main(["model", "--points", str(p), "--pixel-scale", "0.05", "--center", "80,80", "--zl", "0.3",
                 "--zs", "1.4", "--samples", "500", "--draws", "1000"]) == 0
    out = capsys.readouterr().out
    assert "theta_E (arcsec)" in out and "delay Q2-Q1 (d)" in out
    bad = _points(tmp_path, [(1, 2, "A", "knot"), (3, 4, "A", "image")])
    assert main(["model", "--points", str(bad), "--pixel-scale", "0.05", "--zl", "0.3", "--zs", "1.4"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "kind" in err[0]


def test_chi2_is_never_negative_with_arc_points_near_the_critical_curve(tmp_path, capsys):
    # chi^2 is a quadratic form with a positive-definite weight matrix, so it is >= 0 (common practice).
    # A double and points on its host's arc marked as one system put points near the critical curve,
    # where the expanded form sum(b P b) - m.v cancelled to -223 on the demo double.
    from pathlib import Path

    truth = json.loads((Path(__file__).parent.parent / "demo_fields" / "tris_double_b.truth.json").read_text())
    rows = [(x, y, "A", "image") for x, y in truth["image_points_xy"]]
    rows += [(x, y, "A", "arc") for x, y in truth["arc_points_xy"][::4]]
    p = _points(tmp_path, rows)
    code = main(["model", "--points", str(p), "--pixel-scale", "0.2", "--zl", "0.31", "--zs", "1.2",
                 "--samples", "300", "--draws", "1000", "--seed", "1", "--json"])
    assert code == 0
    lm = json.loads(capsys.readouterr().out)["lens_model"]
    assert lm["chi2"] >= 0
    lo, hi = lm["parameters"]["theta_e_arcsec"]["interval95"]
    assert lo <= truth["theta_e_arcsec"] <= hi
