"""The ``lensmass estimate`` command as a user runs it."""

import json
import subprocess
import sys

import pytest


def run_cli(*args):
    return subprocess.run([sys.executable, "-m", "lensmass.cli", "estimate", *args],
                          capture_output=True, text=True, timeout=120)


def test_json_output_has_the_documented_keys():
    p = run_cli("--theta-e", "1.2", "--theta-e-err", "0.05", "--zl", "0.2", "--zs", "0.6",
                "--samples", "2000", "--json")
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    for key in ("d_l_mpc", "d_s_mpc", "d_ls_mpc", "sigma_cr_msun_per_pc2", "r_e_kpc", "mass_einstein_msun",
                "sis_sigma_v_kms", "nfw_m200_msun", "nfw_c200", "nfw_r200_kpc", "notes", "medians",
                "intervals68", "intervals95"):
        assert key in out
    lo, hi = out["intervals68"]["mass_einstein_msun"]
    assert lo < out["mass_einstein_msun"] < hi


def test_readable_table_has_units():
    p = run_cli("--theta-e", "30", "--zl", "0.35", "--zs", "1.8", "--cosmology", "WMAP9")
    assert p.returncode == 0, p.stderr
    assert "Msun/pc^2" in p.stdout and "km/s" in p.stdout and "WMAP9" in p.stdout


def test_custom_curved_cosmology_and_zs_table(tmp_path):
    table = tmp_path / "nz.csv"
    table.write_text("z,weight\n0.8,0\n1.5,1\n2.5,0\n")
    p = run_cli("--theta-e", "1", "--zl", "0.3", "--zs-table", str(table), "--h0", "70", "--om0", "0.3",
                "--ode0", "0.6", "--samples", "1000", "--json")
    assert p.returncode == 0, p.stderr
    out = json.loads(p.stdout)
    assert out["cosmology"].startswith("LCDM") and len(out["versus_zs"]) > 5


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--theta-e", "1", "--zl", "0.6", "--zs", "0.3"], "source must lie behind the lens"),
        (["--theta-e", "1", "--zl", "0.2", "--zs", "1", "--cosmology", "Planck99"], "Unknown cosmology"),
        (["--theta-e", "1", "--zl", "0.2", "--zs-range", "2"], "--zs-range must be two numbers"),
        (["--theta-e", "1", "--zl", "0.2", "--zs-table", "/nonexistent/nz.csv"], "does not exist"),
    ],
)
def test_bad_input_is_one_line_without_traceback(args, fragment):
    p = run_cli(*args)
    assert p.returncode == 2
    assert fragment in p.stderr
    assert "Traceback" not in p.stderr
    assert len(p.stderr.strip().splitlines()) == 1


def test_help_lists_every_command_and_a_command_builds_only_its_own_parser(capsys):
    # common practice (argparse): the top-level help and a mistyped command list all subcommands; a known
    # command parses with only its own subparser built (lensmass.cli.build_parser)
    from lensmass.cli import SUBCOMMANDS, main

    assert main(["--help"]) == 0
    out = capsys.readouterr().out
    assert all(name in out for name in SUBCOMMANDS)
    assert main(["estimat"]) == 2
    err = capsys.readouterr().err
    assert "invalid choice: 'estimat'" in err and all(repr(name) in err for name in SUBCOMMANDS)
    assert main(["estimate", "--help"]) == 0 and "--theta-e" in capsys.readouterr().out
