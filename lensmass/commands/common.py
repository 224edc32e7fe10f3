"""Options shared by several subcommands, and how results are printed."""

from __future__ import annotations

import argparse
import math
from typing import Any

from lensmass.core.errors import LensInputError


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
    g.add_argument("--samples", type=int, default=10_000, help="Monte Carlo draws (default 10000)")
    g.add_argument("--seed", type=int, default=20261201, help="random seed (default fixed, reproducible)")


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


#: Display name and unit of each key, in the order of the readable table.
DISPLAY = [
    ("theta_e_arcsec", "theta_E", "arcsec"),
    ("z_l", "z_l", ""),
    ("z_s", "z_s", ""),
    ("d_l_mpc", "D_l", "Mpc"),
    ("d_s_mpc", "D_s", "Mpc"),
    ("d_ls_mpc", "D_ls", "Mpc"),
    ("sigma_cr_msun_per_pc2", "Sigma_cr", "Msun/pc^2"),
    ("r_e_kpc", "R_E", "kpc"),
    ("mass_einstein_msun", "M(<theta_E)", "Msun"),
    ("sis_sigma_v_kms", "sigma_SIS", "km/s"),
    ("nfw_m200_msun", "NFW M200", "Msun"),
    ("nfw_c200", "NFW c200", ""),
    ("nfw_r200_kpc", "NFW r200", "kpc"),
]


def format_number(value: Any) -> str:
    """Four significant figures; scientific notation for large or small numbers."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return "-"
    if v != 0 and (abs(v) >= 1e5 or abs(v) < 1e-3):
        return f"{v:.4g}"
    return f"{v:.0f}" if abs(v) >= 1e4 else f"{v:.4g}"


def format_table(result: dict, rows=DISPLAY, extra_rows=()) -> str:
    """A readable table with units, intervals when present, then notes."""
    lines = [f"cosmology: {result.get('cosmology', '')}"]
    i68 = result.get("intervals68", {})
    header = f"{'quantity':<14}{'value':>12}  {'68% interval':<26}unit"
    lines.append(header)
    lines.append("-" * len(header))
    for key, label, unit in list(rows) + list(extra_rows):
        if key not in result:
            continue
        value = format_number(result[key])
        interval = ""
        if key in i68:
            lo, hi = i68[key]
            if lo is not None and hi is not None and math.isfinite(float(lo)) and lo != hi:
                interval = f"[{format_number(lo)}, {format_number(hi)}]"
        lines.append(f"{label:<14}{value:>12}  {interval:<26}{unit}")
    notes = result.get("notes") or []
    if notes:
        lines.append("")
        lines.extend(f"note: {n}" for n in notes)
    return "\n".join(lines)
