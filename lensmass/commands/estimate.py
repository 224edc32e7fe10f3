"""``lensmass estimate``: an Einstein radius and redshifts to masses."""

from __future__ import annotations

import argparse
import sys

from lensmass.commands.common import (
    add_redshift_options,
    add_cosmology_options,
    add_halo_options,
    add_sampling_options,
    cosmology_from_args,
    format_table,
    parse_pair,
)
from lensmass.commands.light_options import LIGHT_ROWS, add_light_options, apply_light


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--theta-e", type=float, required=True, metavar="ARCSEC", help="Einstein radius in arcsec")
    parser.add_argument("--theta-e-err", type=float, default=0.0, metavar="E", help="1-sigma error of theta_E")
    add_redshift_options(parser)
    add_cosmology_options(parser)
    add_halo_options(parser)
    add_sampling_options(parser)
    add_light_options(parser)
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of a table")


def estimate_from_args(args: argparse.Namespace, theta_e_arcsec: float, theta_e_err: float,
                       theta_e_draws=None) -> dict:
    """Call the core estimate with the shared options of ``args`` (used by measure and model too);
    ``theta_e_draws`` (posterior draws of a lens model) replace the Gaussian theta_E error."""
    from lensmass.core.estimate import estimate

    z_range = parse_pair(args.zs_range, "--zs-range") if getattr(args, "zs_range", None) else None
    z_table = None
    if getattr(args, "zs_table", None):
        from lensmass.io.redshift_table import read_redshift_table

        z_table = read_redshift_table(args.zs_table)
    return estimate(
        theta_e_arcsec,
        args.zl,
        args.zs,
        cosmology=cosmology_from_args(args),
        concentration=args.concentration,
        halo_definition=args.halo_definition,
        theta_e_err=theta_e_err if theta_e_draws is None else 0.0,
        theta_e_draws=theta_e_draws,
        z_l_err=args.zl_err,
        z_s_err=args.zs_err,
        z_s_range=z_range,
        z_s_distribution=z_table,
        samples=args.samples,
        seed=args.seed,
    )


def print_result(result: dict, as_json: bool, extra_rows=()) -> None:
    if as_json:
        from lensmass.io.jsonout import dumps

        print(dumps(result))
    else:
        print(format_table(result, extra_rows=extra_rows))


def run(args: argparse.Namespace) -> int:
    result = apply_light(args, estimate_from_args(args, args.theta_e, args.theta_e_err))
    print_result(result, args.json, extra_rows=LIGHT_ROWS)
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(0)
