"""The ``lensmass`` command line.

Each subcommand lives in ``lensmass/commands/<name>.py`` with two functions,
``add_arguments(parser)`` and ``run(args) -> int``, and is imported only when
used, so ``lensmass estimate`` starts fast. Bad input is reported as one line
on stderr with a non-zero exit status, never a traceback.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys

#: name -> (module, one-line help). Modules are imported lazily.
SUBCOMMANDS: dict[str, tuple[str, str]] = {
    "estimate": ("lensmass.commands.estimate", "Einstein radius + redshifts -> distances, Sigma_cr, masses."),
    "measure": ("lensmass.commands.measure", "Measure theta_E on an image (points file or ring finder), then estimate."),
    "model": ("lensmass.commands.model", "Fit an SIE + external shear lens model to marked images and arcs."),
    "shear": ("lensmass.commands.shear", "Weak-lensing shear catalogue -> profile, SIS/NFW fits, aperture mass, map."),
    "components": ("lensmass.commands.components",
                   "Cluster: mass peaks vs gas and galaxies, offsets, dark and ordinary mass budgets."),
    "stack": ("lensmass.commands.stack", "Stack Delta Sigma(R) around many lenses -> mean halo mass (jackknife errors)."),
    "batch": ("lensmass.commands.batch", "Run estimate/measure over every row of a manifest."),
    "grade": ("lensmass.commands.grade", "Grade a class's lensing answers and diagnose the classic mistakes."),
    "demo": ("lensmass.commands.demo", "Write the synthetic demo fields (ray-traced) into a folder."),
    "gui": ("lensmass.commands.gui", "Open the desktop window (optionally on an image or session)."),
}

#: Core messages name a quantity's Python parameter in backquotes; the command line shows its flag.
PARAMETER_FLAGS: dict[str, str] = {
    "theta_e_arcsec": "--theta-e", "theta_e_err": "--theta-e-err", "z_l": "--zl", "z_l_err": "--zl-err",
    "z_s": "--zs", "z_s_err": "--zs-err", "z_s_range": "--zs-range", "z_s_distribution": "--zs-table",
    "concentration": "--concentration", "halo_definition": "--halo-definition", "samples": "--samples",
    "seed": "--seed", "zeropoint": "--zeropoint", "zeropoint_key": "--zeropoint-key", "exptime": "--exptime",
    "pixel_scale_arcsec": "--pixel-scale", "sersic_n": "--sersic-n", "lens_mag": "--lens-mag",
    "r_eff_arcsec": "--r-eff", "stellar_ml": "--stellar-ml", "stellar_mass_msun": "--stellar-mass",
    "workers": "--workers", "save_every": "--save-every",
    "lens_mag_err": "--lens-mag-err", "kcorr": "--kcorr", "extinction": "--extinction", "band": "--band",
    "stellar_ml_err": "--stellar-ml-err", "stellar_mass_err_dex": "--stellar-mass-err",
    "center": "--center", "points": "--points", "max_radius_pix": "--max-radius",
    "pixel_scale_err_arcsec": "--pixel-scale-err", "hdu": "--hdu", "plane": "--plane",
    "h0": "--h0", "om0": "--om0", "ode0": "--ode0", "cosmology": "--cosmology",
    "n_bins": "--bins", "n_bootstrap": "--bootstrap", "z_margin": "--zs-margin", "r_min": "--rmin",
    "r_max": "--rmax", "zeta_radii": "--zeta-radii", "scheduler": "--scheduler", "columns": "--columns",
    "map_out": "--map-out", "flip_e1": "--flip-e1", "flip_e2": "--flip-e2", "max_peaks": "--max-peaks",
    "member_columns": "--member-columns", "xray": "--xray", "mass_to_light": "--mass-to-light",
    "gas_mass": "--gas-mass", "gas_mass_err": "--gas-mass-err", "n_patches": "--patches",
    "randoms": "--randoms", "n_randoms": "--random-count", "out": "--out", "store": "--store",
    "point_mass_msun": "--stellar-mass", "point_mass_prior": "--stellar-mass-prior",
    "concentration_prior": "--concentration-prior", "free_concentration": "--free-concentration",
}

#: Exit status for bad input (one-line message on stderr).
EXIT_BAD_INPUT = 2
#: Exit status for an unexpected failure inside lensmass (a bug: one line, then report it).
EXIT_INTERNAL = 70


class _OneLineParser(argparse.ArgumentParser):
    """argparse, but a usage error is one line (the problem and where to look), exit status 2."""

    def error(self, message: str):  # argparse's hook
        text = " ".join(str(message).split())
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: {text}; see '{self.prog} --help'.\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _OneLineParser(
        prog="lensmass",
        description="From a lensing image to a defensible, model-labelled mass.",
    )
    from lensmass import __version__

    parser.add_argument("--version", action="version", version=f"lensmass {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    wanted = sys.argv[1] if len(sys.argv) > 1 else None
    # Only the chosen command's parser is built and its module imported (fast start: argparse looks up
    # translations for every string, about 0.15 ms a parser); --help and a mistyped command list all.
    names = [wanted] if wanted in SUBCOMMANDS else list(SUBCOMMANDS)
    for name in names:
        module_name, help_text = SUBCOMMANDS[name]
        p = sub.add_parser(name, help=help_text, description=help_text)
        if wanted == name:
            module = _load(module_name)
            if module is not None:
                module.add_arguments(p)
                p.set_defaults(_module=module)
    return parser


def _load(module_name: str):
    try:
        return importlib.import_module(module_name)
    except ModuleNotFoundError as exc:
        if exc.name == module_name:
            return None
        raise


def _warnings_on_one_line(command: str) -> None:
    """Library warnings (numpy, scipy, astropy) as one line each, without the source line they came from."""
    import warnings

    def show(message, category, filename, lineno, file=None, line=None):
        text = " ".join(str(message).split()) or category.__name__
        print(f"lensmass {command}: warning from {category.__name__}: {text[:200]}", file=sys.stderr)

    warnings.showwarning = show


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``lensmass`` console script."""
    if argv is not None:
        sys.argv = [sys.argv[0], *argv]
    args_list = sys.argv[1:]
    if not args_list:
        args_list = ["gui"]
        sys.argv = [sys.argv[0], "gui"]
    parser = build_parser()
    try:
        args = parser.parse_args(args_list)
    except SystemExit as exc:  # --help, --version, or a usage error already printed on one line
        return exc.code if isinstance(exc.code, int) else EXIT_BAD_INPUT
    module = getattr(args, "_module", None)
    if module is None:
        print(f"lensmass: the '{args.command}' command is not available in this build.", file=sys.stderr)
        return EXIT_BAD_INPUT
    from lensmass.core.errors import LensInputError, in_words

    if not os.environ.get("LENSMASS_DEBUG"):
        _warnings_on_one_line(args.command)
    try:
        return int(module.run(args) or 0)
    except LensInputError as exc:
        print(f"lensmass {args.command}: {in_words(str(exc), PARAMETER_FLAGS)}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print(f"lensmass {args.command}: interrupted.", file=sys.stderr)
        return 130
    except BrokenPipeError:
        # The reader of our output went away (e.g. `| head`): not an error of the user's.
        sys.stdout = open(os.devnull, "w")
        return 0
    except MemoryError:
        print(f"lensmass {args.command}: this run needs more memory than the machine has; ask for less "
              "(fewer --samples, --bins or map pixels, a smaller image or catalogue).", file=sys.stderr)
        return EXIT_BAD_INPUT
    except RecursionError:
        print(f"lensmass {args.command}: an input file is nested too deeply to be read; check that it is the "
              "file you meant.", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:  # a file vanished or a disk filled outside the places that name the file
        where = f" '{exc.filename}'" if exc.filename else ""
        print(f"lensmass {args.command}: {(exc.strerror or type(exc).__name__).lower()}{where}; check the path "
              "and the free space, then run again.", file=sys.stderr)
        return EXIT_BAD_INPUT
    except Exception as exc:  # last safety net: one line, never a traceback
        if os.environ.get("LENSMASS_DEBUG"):
            raise
        print(
            f"lensmass {args.command}: internal error ({type(exc).__name__}: {exc}); "
            "rerun with LENSMASS_DEBUG=1 for details and report it.",
            file=sys.stderr,
        )
        return EXIT_INTERNAL


if __name__ == "__main__":
    sys.exit(main())
