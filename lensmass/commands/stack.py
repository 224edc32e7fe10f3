"""``lensmass stack``: Delta Sigma(R) stacked around a lens catalogue, random-point subtraction, boost,
jackknife covariance and the mean NFW halo mass of the lenses."""

from __future__ import annotations

import argparse
import math

from lensmass.commands.common import (
    add_cosmology_options,
    add_halo_options,
    add_scheduler_option,
    cosmology_from_args,
    format_table,
)
from lensmass.core.errors import LensInputError

#: Display rows of the readable output (key, label, unit).
STACK_DISPLAY = [
    ("n_lenses", "lenses", ""),
    ("n_randoms", "random points", ""),
    ("n_sources_used", "sources used", ""),
    ("mean_lens_z", "mean z_l", ""),
    ("mean_halo_m200_msun", "mean halo M200", "Msun"),
    ("mean_halo_c200", "mean halo c200", ""),
    ("point_mass_msun", "central M_*", "Msun"),
    ("stack_chi2", "chi^2", ""),
    ("stack_pvalue", "p-value", ""),
    ("n_patches", "jackknife patches", ""),
]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("sources", metavar="SOURCES", nargs="+",
                        help="source shape catalogue with redshifts: files, a quoted glob or a Parquet folder "
                             "(streamed in blocks)")
    parser.add_argument("--lenses", required=True, metavar="FILE", help="lens catalogue: ra, dec, z (+ weight)")
    parser.add_argument("--lens-columns", metavar="ROLE=NAME,...", help="lens column mapping (roles ra, dec, z, weight)")
    parser.add_argument("--columns", metavar="ROLE=NAME,...",
                        help="source column mapping (roles ra, dec, e1, e2, weight, z)")
    parser.add_argument("--flip-e1", action="store_true", help="flip the sign of the sources' e1")
    parser.add_argument("--flip-e2", action="store_true", help="flip the sign of the sources' e2")
    rnd = parser.add_argument_group("random points")
    rnd.add_argument("--randoms", metavar="FILE", help="random points tracing the lenses' footprint: ra, dec, z")
    rnd.add_argument("--random-columns", metavar="ROLE=NAME,...", help="random column mapping (roles ra, dec, z)")
    rnd.add_argument("--random-count", type=int, default=None, metavar="N",
                     help="without --randoms: draw N points in the lenses' RA/Dec box with their redshifts "
                          "(default 10 per lens; 0 = no random subtraction and no boost)")
    rnd.add_argument("--no-boost", action="store_true", help="do not correct for sources associated with the lenses")
    prof = parser.add_argument_group("profile and fit")
    prof.add_argument("--rmin-mpc", type=float, default=0.05, help="inner radius, physical Mpc (default 0.05)")
    prof.add_argument("--rmax-mpc", type=float, default=3.0, help="outer radius, physical Mpc (default 3)")
    prof.add_argument("--bins", type=int, default=10, help="logarithmic radial bins (default 10)")
    prof.add_argument("--patches", type=int, default=32, help="jackknife sky patches (default 32)")
    prof.add_argument("--stellar-mass", default="0", metavar="MSUN|fit",
                      help="central point mass for the lenses' stars in the fit: a value in Msun (default 0: halo "
                           "only), or 'fit' to fit it with M200 and report its intervals")
    prof.add_argument("--stellar-mass-prior", default=None, metavar="MEDIAN,DEX",
                      help="with --stellar-mass fit: log-normal prior, median in Msun and width in dex "
                           "(default flat on 0-1e13 Msun)")
    prof.add_argument("--free-concentration", action="store_true",
                      help="fit c200 with M200 (one value for the stack) instead of fixing it by the "
                           "--concentration relation; M200's intervals are marginalised over it")
    prof.add_argument("--concentration-prior", default=None, metavar="DEX|CMIN,CMAX",
                      help="with --free-concentration: log-normal scatter in dex about the --concentration relation "
                           "(default 0.15), or a range of c200 with a flat prior, e.g. 2,14")
    prof.add_argument("--zs-margin", type=float, default=0.1, help="use sources with z_s > z_l + margin (default 0.1)")
    prof.add_argument("--seed", type=int, default=20261201, help="seed of the patches and drawn random points")
    add_scheduler_option(parser)
    add_cosmology_options(parser)
    add_halo_options(parser)
    out = parser.add_argument_group("output")
    out.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    out.add_argument("--profile-out", metavar="FILE.ecsv", help="write the stacked profile and covariance as ECSV")


def run_stack(args: argparse.Namespace) -> dict:
    """Read the catalogues named in ``args`` and run :func:`lensmass.core.stack_analysis.analyse_stack`."""
    from lensmass.core.stack_analysis import analyse_stack
    from lensmass.io.catalog_stream import CatalogFiles
    from lensmass.io.point_catalogs import read_point_catalog

    lenses = read_point_catalog(args.lenses, args.lens_columns, what="lens")
    randoms = None
    if args.randoms:
        r = read_point_catalog(args.randoms, args.random_columns, what="random")
        randoms = (r["ra"], r["dec"], r["z"])
    elif args.random_count is not None and args.random_count < 0:
        raise LensInputError(f"--random-count must be 0 or more, got {args.random_count}.")
    stellar, prior = stellar_mass_options(args.stellar_mass, args.stellar_mass_prior)
    c_prior = concentration_prior_option(args.concentration_prior)
    files = CatalogFiles(args.sources, args.columns, need_z=True, flip_e1=args.flip_e1, flip_e2=args.flip_e2)
    blocks, route = files, "streamed in one process"
    if args.scheduler:
        from lensmass.io.distributed import ClusterBlocks

        blocks, route = ClusterBlocks(files, args.scheduler), f"Dask cluster at {args.scheduler}"
    result = analyse_stack(
        lenses["ra"], lenses["dec"], lenses["z"], blocks, lens_weight=lenses["weight"], randoms=randoms,
        n_randoms=args.random_count, r_min_mpc=args.rmin_mpc, r_max_mpc=args.rmax_mpc, n_bins=args.bins,
        n_patches=args.patches, cosmology=cosmology_from_args(args), concentration=args.concentration,
        halo_definition=args.halo_definition, point_mass_msun=stellar, point_mass_prior=prior,
        free_concentration=args.free_concentration, concentration_prior=c_prior,
        boost=not args.no_boost,
        z_margin=args.zs_margin, seed=args.seed)
    result["catalogs"] = {"sources": files.path, "source_columns": files.columns, "lenses": str(args.lenses),
                          "randoms": str(args.randoms or ""), "read": route}
    return result


def stellar_mass_options(value: str, prior: str | None) -> tuple[float | str, tuple[float, float] | None]:
    """``--stellar-mass`` (Msun or 'fit') and ``--stellar-mass-prior`` (MEDIAN,DEX) as analyse_stack takes them."""
    text = str(value).strip().lower()
    if text == "fit":
        stellar: float | str = "fit"
    else:
        try:
            stellar = float(text)
        except ValueError:
            raise LensInputError(f"--stellar-mass takes a mass in Msun or 'fit', got '{value}'.") from None
    if prior is None:
        return stellar, None
    parts = str(prior).split(",")
    try:
        median, dex = (float(p) for p in parts)
    except ValueError:
        raise LensInputError(f"--stellar-mass-prior takes MEDIAN,DEX (e.g. 3e11,0.2), got '{prior}'.") from None
    return stellar, (median, dex)


def concentration_prior_option(text: str | None) -> float | tuple[float, float] | None:
    """``--concentration-prior`` (DEX or CMIN,CMAX) as analyse_stack takes it."""
    if text is None:
        return None
    try:
        parts = [float(p) for p in str(text).split(",")]
    except ValueError:
        parts = []
    if len(parts) == 1:
        return parts[0]
    if len(parts) == 2:
        return parts[0], parts[1]
    raise LensInputError(f"--concentration-prior takes a scatter in dex (e.g. 0.15) or CMIN,CMAX (e.g. 2,14), "
                         f"got '{text}'.")


def format_profile(result: dict) -> str:
    head = (f"{'R [Mpc]':>9}{'pairs':>11}{'Delta Sigma':>13}{'err':>9}{'lenses':>9}{'randoms':>9}{'boost':>7}"
            f"{'cross':>8}{'model':>8}")
    lines = ["", head]
    for r in result["profile"]:
        vals = [r["delta_sigma_msun_per_pc2"], r["delta_sigma_err_msun_per_pc2"], r["delta_sigma_lenses_msun_per_pc2"],
                r["delta_sigma_randoms_msun_per_pc2"]]
        text = "".join(f"{v:>{w}.2f}" if math.isfinite(v) else f"{'-':>{w}}" for v, w in zip(vals, (13, 9, 9, 9)))
        lines.append(f"{r['r_mean_mpc']:>9.3f}{r['n_pairs']:>11d}{text}{r['boost']:>7.3f}"
                     f"{r['delta_sigma_cross_msun_per_pc2']:>8.2f}{r['delta_sigma_model_msun_per_pc2']:>8.2f}")
    lines.append("(Delta Sigma = boost x around lenses - around random points, Msun/pc^2; err from the jackknife; "
                 "cross: the same with e_x, expected 0; model: the fitted NFW halo)")
    return "\n".join(lines)


def write_stack_ecsv(path, result: dict) -> None:
    """The stacked profile as ECSV (atomic): one row per bin with units; covariance, fit and models in the meta."""
    from astropy.table import Table

    from lensmass.io.atomic import atomic_path
    from lensmass.io.jsonout import to_jsonable

    rows = result["profile"]
    table = Table(rows=[[r[k] for k in rows[0]] for r in rows], names=list(rows[0]))
    for name in table.colnames:
        if name.endswith("_mpc"):
            table[name].unit = "Mpc"
        elif name.endswith("_msun_per_pc2"):
            table[name].unit = "solMass / pc2"
    keep = ("cosmology", "n_lenses", "n_randoms", "n_sources_used", "mean_lens_z", "mean_halo_m200_msun",
            "mean_halo_c200", "intervals68", "intervals95", "point_mass_msun", "stack_chi2", "stack_dof",
            "stack_pvalue", "n_patches", "free_concentration", "stack_likelihood_power", "stack_effective_patches",
            "covariance_msun2_per_pc4", "notes", "models")
    table.meta.update(to_jsonable({k: result[k] for k in keep if k in result}))
    with atomic_path(path) as tmp:
        table.write(tmp, format="ascii.ecsv", overwrite=True)


def run(args: argparse.Namespace) -> int:
    result = run_stack(args)
    if args.profile_out:
        write_stack_ecsv(args.profile_out, result)
    if args.json:
        from lensmass.io.jsonout import dumps

        print(dumps(result))
    else:
        print(format_table(result, rows=STACK_DISPLAY))
        print(format_profile(result))
    return 0
