"""DEVELOPERS.md's recipes, followed as written (the mass-model and column recipes are exercised in
tests/test_result_keys.py and tests/gui/test_key_registry_window.py; the panel recipe in
tests/gui/test_window_parts.py).

"How to add a subcommand": a module with ``add_arguments(parser)`` and ``run(args) -> int``, one
line in ``SUBCOMMANDS``, shared options from ``lensmass.commands.common``; its bad input is one line
naming the flag (the command line's translation of core messages).
"""

import sys
import types

from lensmass import cli


def test_a_new_subcommand_works_as_the_recipe_says(monkeypatch, capsys):
    from lensmass.commands.common import add_cosmology_options, cosmology_from_args
    from lensmass.core.estimate import estimate

    module = types.ModuleType("lensmass_probe_command")

    def add_arguments(parser):
        parser.add_argument("--theta-e", type=float, required=True)
        parser.add_argument("--zl", type=float, required=True)
        add_cosmology_options(parser)

    def run(args):
        r = estimate(args.theta_e, args.zl, 1.0, cosmology=cosmology_from_args(args))
        print(f"probe mass {r['mass_einstein_msun']:.6g}")
        return 0

    module.add_arguments, module.run = add_arguments, run
    monkeypatch.setitem(sys.modules, "lensmass_probe_command", module)
    monkeypatch.setitem(cli.SUBCOMMANDS, "probe", ("lensmass_probe_command", "A probe command."))
    assert cli.main(["probe", "--theta-e", "1.2", "--zl", "0.3", "--cosmology", "WMAP9"]) == 0
    expected = estimate(1.2, 0.3, 1.0, cosmology="WMAP9")["mass_einstein_msun"]
    assert capsys.readouterr().out.strip() == f"probe mass {expected:.6g}"
    assert cli.main(["probe", "--theta-e", "1.2", "--zl", "-1"]) == cli.EXIT_BAD_INPUT
    err = capsys.readouterr().err.strip()
    assert err.startswith("lensmass probe: The lens redshift (--zl)") and "\n" not in err
