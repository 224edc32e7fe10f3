"""Options shared by several subcommands, and how results are printed."""

from __future__ import annotations

import argparse

from lensmass.core.errors import LensInputError
from lensmass.core.result_text import ESTIMATE_ROWS, format_number, format_table  # noqa: F401 (shared by the subcommands)


def add_redshift_options(parser: argparse.ArgumentParser) -> None:
    """``--zl [--zl-err]`` and one of ``--zs | --zs-range | --zs-table`` with ``--zs-err``."""
    parser.add_argument("--zl", type=float, required=True, help="lens redshift")
    parser.add_argument("--zl-err", type=float, default=0.0, help="1-sigma error of z_l")
    zs = parser.add_mutually_exclusive_group(required=True)
    zs.add_argument("--zs", type=float, help="source redshift")
    zs.add_argument("--zs-range", metavar="ZMIN,ZMAX", help="unknown source redshift: uniform in this range")
    zs.add_argument("--zs-table", metavar="FILE", help="unknown source redshift: table with columns z, weight")
    parser.add_argument("--zs-err", type=float, default=0.0, help="1-sigma error of z_s")


def add_cosmology_options(parser: argparse.ArgumentParser) -> None:
    """``--cosmology NAME | --h0 H0 --om0 OM [--ode0 OL]``."""
    g = parser.add_argument_group("cosmology")
    g.add_argument("--cosmology", metavar="NAME", default=None,
                   help="astropy preset: Planck18 (default), Planck15, Planck13, WMAP9, WMAP7, WMAP5, WMAP3, WMAP1")
    g.add_argument("--h0", type=float, default=None, help="custom Lambda-CDM: Hubble constant in km/s/Mpc")
    g.add_argument("--om0", type=float, default=None, help="custom Lambda-CDM: matter density today")
    g.add_argument("--ode0", type=float, default=None, help="custom Lambda-CDM: dark-energy density (curved if given)")


def add_halo_options(parser: argparse.ArgumentParser) -> None:
    """``--concentration`` and ``--halo-definition``."""
    g = parser.add_argument_group("NFW halo")
    g.add_argument("--concentration", default="duffy08", metavar="duffy08|dutton14|VALUE",
                   help="c(M, z) relation or a fixed concentration (default duffy08)")
    g.add_argument("--halo-definition", default="200c", choices=("200c", "200m", "vir"),
                   help="halo boundary overdensity (default 200c: 200 x critical density at z_l)")


def add_sampling_options(parser: argparse.ArgumentParser) -> None:
    g = parser.add_argument_group("Monte Carlo")
    from lensmass.core.uncertainty import DEFAULT_SAMPLES, DEFAULT_SEED

    g.add_argument("--samples", type=int, default=DEFAULT_SAMPLES, help=f"Monte Carlo draws (default {DEFAULT_SAMPLES})")
    g.add_argument("--seed", type=int, default=DEFAULT_SEED, help="random seed (default fixed, reproducible)")


def cosmology_from_args(args: argparse.Namespace):
    """The astropy cosmology the options ask for (preset, or custom H0/Om0/Ode0)."""
    from lensmass.core.cosmology import resolve_cosmology

    if args.h0 is not None or args.om0 is not None or args.ode0 is not None:
        return resolve_cosmology(args.cosmology, h0=args.h0, om0=args.om0, ode0=args.ode0)
    return resolve_cosmology(args.cosmology)


def parse_pair(text: str, what: str) -> tuple[float, float]:
    """``"A,B"`` to two floats, with a clear message naming ``what``."""
    parts = [p.strip() for p in str(text).split(",")]
    try:
        if len(parts) != 2:
            raise ValueError
        a, b = float(parts[0]), float(parts[1])
    except ValueError:
        raise LensInputError(f"{what} must be two numbers separated by a comma, got '{text}'.") from None
    return a, b


#: Display name and unit of each key, in the order of the readable table (from the key registry).
DISPLAY = ESTIMATE_ROWS


def add_scheduler_option(parser: argparse.ArgumentParser) -> None:
    """``--scheduler ADDRESS``: send the per-partition work to an existing Dask cluster."""
    parser.add_argument("--scheduler", metavar="ADDRESS", default=None,
                        help="address of a running Dask scheduler (e.g. tcp://10.0.0.5:8786): each file is worked "
                             "on a worker of that cluster, which must see the same paths; default: this process")
