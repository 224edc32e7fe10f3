"""``lensmass shear``: a weak-lensing shape catalogue to a profile, SIS/NFW fits, zeta mass and a map."""

from __future__ import annotations

import argparse
import math

from lensmass.commands.common import (
    add_cosmology_options,
    add_halo_options,
    add_scheduler_option,
    cosmology_from_args,
    format_number,
    format_table,
    parse_pair,
)
from lensmass.core.errors import LensInputError
from lensmass.core.result_keys import table_rows
from lensmass.core.uncertainty import DEFAULT_SEED

#: Display rows of the readable output (key, label, unit), labels and units from the key registry.
SHEAR_DISPLAY = table_rows(["z_l", "z_s_effective", "n_used", "detection_significance", "sis_sigma_v_kms",
                            "sis_theta_e_arcsec", "chi2_sis", "nfw_m200_msun", "nfw_c200", "nfw_r200_kpc", "chi2_nfw", "cross_shear_pvalue", "zeta",
                            "zeta_mass_msun", "zeta_radius_kpc"])

#: Keys of the table whose values are the fits' posterior medians (the profile file's best_fit holds the
#: maximum-likelihood values).
_POSTERIOR_MEDIAN = {"sis_sigma_v_kms", "sis_theta_e_arcsec", "nfw_m200_msun", "nfw_r200_kpc"}



def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("catalog", metavar="CATALOG", nargs="+",
                        help="shape catalogue: .fits, .csv, .ecsv or .parquet files, a quoted glob pattern, or a "
                             "partitioned Parquet folder; read in blocks, so it may be larger than memory")
    parser.add_argument("--zl", type=float, required=True, help="lens redshift")
    centre = parser.add_mutually_exclusive_group(required=True)
    centre.add_argument("--center-sky", metavar="RA,DEC", help="lens centre in degrees")
    centre.add_argument("--center-pixel", metavar="X,Y", help="lens centre as 0-based pixel column,row of --image")
    parser.add_argument("--image", metavar="FITS", help="image whose WCS converts --center-pixel to the sky")
    cat = parser.add_argument_group("catalogue")
    cat.add_argument("--columns", metavar="ROLE=NAME,...",
                     help="column mapping, roles ra, dec, e1, e2, weight, z (e.g. ra=RA,dec=DEC,e1=E1,e2=E2,z=ZPHOT); "
                          "unmapped roles are guessed from usual names")
    cat.add_argument("--zs", type=float, default=None, help="one source redshift for every galaxy (instead of a z column)")
    cat.add_argument("--zs-margin", type=float, default=0.1, help="keep sources with z > z_l + margin (default 0.1)")
    cat.add_argument("--flip-e1", action="store_true", help="flip the sign of e1 (other sign convention)")
    cat.add_argument("--flip-e2", action="store_true", help="flip the sign of e2 (other sign convention)")
    prof = parser.add_argument_group("profile")
    prof.add_argument("--bins", type=int, default=8, help="number of radial bins (default 8)")
    prof.add_argument("--rmin", type=float, default=None, help="inner radius (default 5%% of rmax)")
    prof.add_argument("--rmax", type=float, default=None, help="outer radius (default the farthest galaxy)")
    prof.add_argument("--unit", choices=("arcmin", "arcsec", "mpc"), default="arcmin",
                      help="unit of --rmin, --rmax and --zeta-radii (mpc: physical, at the lens); default arcmin")
    prof.add_argument("--linear-bins", action="store_true", help="linear instead of logarithmic bins")
    prof.add_argument("--bootstrap", type=int, default=200, help="bootstrap resamplings for profile errors (default 200, 0 = off)")
    prof.add_argument("--seed", type=int, default=DEFAULT_SEED, help="random seed (bootstrap, noise map)")
    prof.add_argument("--zeta-radii", metavar="INNER,OUTER", help="zeta annulus in --unit (default sqrt(rmin rmax), rmax)")
    add_scheduler_option(parser)
    add_cosmology_options(parser)
    add_halo_options(parser)
    parser.add_argument("--free-concentration", action="store_true", help="fit NFW c200 too instead of c(M)")
    out = parser.add_argument_group("output")
    out.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    out.add_argument("--profile-out", metavar="FILE.ecsv", help="write the binned profile as ECSV")
    out.add_argument("--map-out", metavar="FILE.fits", help="write Kaiser-Squires E/B/noise convergence maps as FITS")
    out.add_argument("--map-pixels", type=int, default=128, help="map pixels per side (default 128)")
    out.add_argument("--map-smoothing", type=float, default=60.0, metavar="ARCSEC", help="Gaussian sigma (default 60)")
    out.add_argument("--map-noise", type=int, default=16, help="rotated realisations for the noise map (default 16)")


def check_shear_options(args: argparse.Namespace) -> None:
    """Refuse impossible or oversized options before the catalogue is read (one sentence each)."""
    from lensmass.core import limits
    from lensmass.core.shear_analysis import check_run_sizes

    check_run_sizes(args.bins, args.bootstrap, args.seed)
    limits.non_negative(args.zs_margin, "--zs-margin", "sources are kept when z > z_l + margin")
    limits.count(args.map_pixels, "--map-pixels", 8, limits.MAP_PIXELS_MAX, "a map finer than the galaxy density "
                 "only shows noise")
    limits.count(args.map_noise, "--map-noise", 1, limits.MAP_NOISE_MAX, "a few dozen realisations settle the noise")
    limits.positive_radius(args.map_smoothing, "--map-smoothing")


def centre_from_args(args: argparse.Namespace) -> tuple[float, float]:
    """The lens centre in degrees, from --center-sky or --center-pixel with --image."""
    from lensmass.core import limits

    if args.center_sky:
        ra, dec = parse_pair(args.center_sky, "--center-sky")
        limits.sky_position(ra, dec, "--center-sky", "give the lens centre as RA,DEC in degrees")
        return ra, dec
    x, y = parse_pair(args.center_pixel, "--center-pixel")
    if not args.image:
        raise LensInputError("--center-pixel needs --image FITS, whose WCS turns the pixel into RA/Dec.")
    from lensmass.io.images import load_image

    image = load_image(args.image)
    limits.on_image(x, y, image.shape, "--center-pixel", "check --center-pixel")
    ra, dec = image.pixel_to_sky(x, y)
    return float(ra), float(dec)


def run_shear(args: argparse.Namespace, progress=None) -> dict:
    """Read the catalogue named in ``args`` and run the core analysis (used by the CLI).

    The catalogue streams through the block engine (one process, or the Dask cluster of
    ``--scheduler``); with ``--map-out`` it is read into memory, since the map needs every galaxy.
    """
    from lensmass.core.shear_analysis import analyse_shear_blocks, analyse_shear_catalog

    check_shear_options(args)
    center_ra, center_dec = centre_from_args(args)
    cosmo = cosmology_from_args(args)
    zeta = parse_pair(args.zeta_radii, "--zeta-radii") if args.zeta_radii else None
    specs = args.catalog if isinstance(args.catalog, list) else [args.catalog]
    options = {"z_l": args.zl, "z_s": args.zs, "center_ra": center_ra, "center_dec": center_dec,
               "r_min": args.rmin, "r_max": args.rmax, "n_bins": args.bins, "unit": args.unit,
               "log_bins": not args.linear_bins, "cosmology": cosmo, "concentration": args.concentration,
               "halo_definition": args.halo_definition, "free_concentration": args.free_concentration,
               "n_bootstrap": args.bootstrap, "seed": args.seed, "zeta_radii": zeta, "z_margin": args.zs_margin,
               "progress": progress}
    if getattr(args, "map_out", None):
        if len(specs) > 1 or getattr(args, "scheduler", None):
            raise LensInputError("--map-out needs the catalogue in memory: give one catalogue file and no "
                                 "--scheduler, or leave out --map-out for a profile of the whole survey.")
        from lensmass.io.catalogs import read_shear_catalog

        cat = read_shear_catalog(specs[0], args.columns, need_z=args.zs is None,
                                 flip_e1=args.flip_e1, flip_e2=args.flip_e2)
        result = analyse_shear_catalog(cat.ra_deg, cat.dec_deg, cat.e1, cat.e2, cat.weight,
                                       None if args.zs is not None else cat.z, **options)
        path, columns, has_z, route = cat.path, cat.columns, cat.z is not None, "in memory"
    else:
        from lensmass.io.catalog_stream import CatalogFiles

        files = CatalogFiles(specs, args.columns, need_z=args.zs is None, flip_e1=args.flip_e1, flip_e2=args.flip_e2)
        blocks, route = files, f"streamed in blocks of {files.block_rows:,} rows in one process"
        if getattr(args, "scheduler", None):
            from lensmass.io.distributed import ClusterBlocks

            blocks = ClusterBlocks(files, args.scheduler)
            route = f"Dask cluster at {args.scheduler}, {len(files.partitions)} partitions"
        result = analyse_shear_blocks(blocks, **options)
        path, columns, has_z = files.path, files.columns, "z" in files.columns
    result["catalog"] = {"path": path, "columns": columns, "flipped": [r for r, f in
                                                                       (("e1", args.flip_e1), ("e2", args.flip_e2)) if f],
                         "read": route}
    if args.zs is not None and has_z:
        result["notes"].insert(0, f"--zs {args.zs:g} is used for every galaxy; the catalogue's column "
                                  f"'{columns['z']}' is ignored.")
    return result


def make_map(args: argparse.Namespace, result: dict):
    """The Kaiser-Squires map of the galaxies the analysis used (same selection)."""
    from lensmass.core.shear_analysis import mass_map_for_result

    return mass_map_for_result(result, n_pixels=args.map_pixels, smoothing_arcsec=args.map_smoothing,
                               n_noise=args.map_noise, seed=args.seed)


#: Rows that give way to upper limits when the data do not detect the halo.
_UPPER_LIMIT_ROWS = {
    "sis_sigma_v_kms": ("sis_sigma_v_upper95_kms", "SIS sigma_v <", "km/s (95% upper limit)"),
    "nfw_m200_msun": ("nfw_m200_upper95_msun", "NFW M200 <", "Msun (95% upper limit)"),
}


def display_rows(result: dict) -> list[tuple[str, str, str]]:
    """The rows of the readable output: medians when the halo is detected, upper limits when not."""
    if result.get("detected", True):  # the fitted values shown are posterior medians: say so beside their unit
        return [(key, label, f"{unit} (posterior median)" if key in _POSTERIOR_MEDIAN else unit)
                for key, label, unit in SHEAR_DISPLAY]
    hidden = {"sis_theta_e_arcsec", "nfw_c200", "nfw_r200_kpc"}
    return [_UPPER_LIMIT_ROWS.get(key, (key, label, unit)) for key, label, unit in SHEAR_DISPLAY if key not in hidden]


def format_profile(result: dict) -> str:
    lines = ["", (f"{'R [arcsec]':>11}{'R [kpc]':>9}{'N':>7}{'g_t':>9}{'err':>8}{'g_x':>9}{'err':>8}"
                  f"{'SIS':>8}{'NFW':>8}{'Delta Sigma':>13}")]
    for r in result["profile"]:
        vals = [r["g_t"], r["g_t_err"], r["g_x"], r["g_x_err"], r["g_t_model_sis"], r["g_t_model_nfw"]]
        cells = "".join(f"{v:>9.4f}" if i % 2 == 0 else f"{v:>8.4f}" for i, v in enumerate(vals[:4]))
        cells += "".join(f"{v:>8.4f}" for v in vals[4:])
        ds = r["delta_sigma_msun_per_pc2"]
        ds_text = f"{ds:>13.1f}" if math.isfinite(ds) else f"{'-':>13}"
        lines.append(f"{r['r_mean_arcsec']:>11.1f}{r['r_mean_kpc']:>9.0f}{r['n_galaxies']:>7d}{cells}{ds_text}")
    lines.append("(g_t, g_x: weighted mean tangential/cross ellipticity = reduced shear; Delta Sigma: excess "
                 "surface density in Msun/pc^2)")
    dropped = ", ".join(f"{k.replace('_', ' ')} {v}" for k, v in result["n_dropped"].items())
    lines.append(f"rows read {result['n_rows']}; dropped: {dropped}")
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from lensmass.io.atomic import check_writable
    from lensmass.io.catalogs import write_mass_map_fits, write_profile_ecsv

    check_shear_options(args)
    for flag, path in (("--map-out", args.map_out), ("--profile-out", args.profile_out)):
        if path:
            check_writable(path, flag)

    result = run_shear(args)
    if args.map_out:
        mass = make_map(args, result)
        write_mass_map_fits(args.map_out, mass, result["center_ra"], result["center_dec"],
                            {"ZLENS": result["z_l"], "COSMO": result["cosmology"][:60]})
        result["map"] = {"path": args.map_out, "pixels": args.map_pixels, "pixel_arcsec": mass.pixel_arcsec,
                         "smoothing_arcsec": mass.smoothing_arcsec, "noise_realisations": mass.n_noise,
                         "kappa_e_peak": float(mass.kappa_e.max()),
                         "model": "Kaiser & Squires (1993) inversion of the Gaussian-smoothed shear; "
                                  "zero mean on the field (mass-sheet degeneracy)"}
    if args.profile_out:
        write_profile_ecsv(args.profile_out, result)
    if args.json:
        from lensmass.io.jsonout import dumps

        print(dumps(result))
    else:
        print(format_table(result, rows=display_rows(result)))
        print(format_profile(result))
        if "map" in result:
            print(f"mass map written to {args.map_out} (peak kappa_E {format_number(result['map']['kappa_e_peak'])})")
    return 0
