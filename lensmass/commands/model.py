"""``lensmass model``: an SIE + external shear fitted to marked images and arcs, then masses and delays.

The points file is a CSV with ``x,y`` (pixels, 0-based column,row) or ``ra,dec`` (degrees) and two
optional columns: ``system`` (which background source a point belongs to) and ``kind`` (``image`` or
``arc``). Without them all points are images of one source.
"""

from __future__ import annotations

import argparse

from lensmass.io.lens_model_text import PARAMETER_ROWS, delay_rows, image_lines, interval_columns
from lensmass.commands.common import (
    add_cosmology_options,
    add_halo_options,
    add_redshift_options,
    add_sampling_options,
    parse_pair,
)

MODEL_ROWS = [
    ("theta_e_err_arcsec", "theta_E err", "arcsec"),
    ("fit_axis_ratio", "axis ratio", ""),
    ("fit_position_angle_deg", "PA (E of N)", "deg"),
]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("image", metavar="IMAGE", nargs="?",
                        help="FITS, PNG, JPEG or TIFF image the points were marked on (optional with --pixel-scale)")
    parser.add_argument("--points", metavar="FILE", required=True,
                        help="CSV: x,y or ra,dec, optional columns system and kind (image|arc)")
    centre = parser.add_mutually_exclusive_group()
    centre.add_argument("--center", metavar="X,Y", help="lens-light centre in pixels (a prior on the mass centre)")
    centre.add_argument("--center-sky", metavar="RA,DEC", help="lens-light centre in degrees (needs a WCS)")
    parser.add_argument("--center-err", type=float, default=None, metavar="PIX",
                        help="1-sigma error of the lens-light centre in pixels (default: the click error)")
    parser.add_argument("--click-err", type=float, default=0.5, metavar="PIX",
                        help="1-sigma error of each marked position in pixels (default 0.5)")
    parser.add_argument("--light-shape", metavar="Q,PA",
                        help="lens light axis ratio and position angle (deg east of north) as a prior on the mass shape")
    parser.add_argument("--light-shape-err", type=float, default=0.1, metavar="DQ",
                        help="width of that prior in axis ratio (default 0.1)")
    parser.add_argument("--system-zs", action="append", default=[], metavar="NAME=Z",
                        help="source redshift of one system (repeat per system); others use --zs")
    parser.add_argument("--pixel-scale", type=float, metavar="ARCSEC",
                        help="arcsec per pixel (needed without an image or WCS; north up, east left assumed)")
    parser.add_argument("--hdu", metavar="N", help="FITS extension number or name (default: first image)")
    parser.add_argument("--draws", type=int, default=4000, help="posterior draws kept (default 4000)")
    parser.add_argument("--sampler", choices=("auto", "emcee"), default="auto",
                        help="auto: importance sampling when it suffices, else emcee (default); emcee: always emcee")
    add_redshift_options(parser)
    add_cosmology_options(parser)
    add_halo_options(parser)
    add_sampling_options(parser)
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of a table")


def _system_redshifts(items: list[str]) -> dict[str, float]:
    from lensmass.core.errors import LensInputError

    out = {}
    for item in items:
        name, sep, value = item.partition("=")
        try:
            if not sep or not name.strip():
                raise ValueError
            out[name.strip()] = float(value)
        except ValueError:
            raise LensInputError(f"--system-zs takes NAME=Z (for example B=2.1), got '{item}'.") from None
    return out


def model_from_args(args: argparse.Namespace) -> dict:
    """Read the points (and image), fit the lens model and derive masses as the options ask."""
    from lensmass.commands.estimate import estimate_from_args
    from lensmass.core.errors import LensInputError
    from lensmass.core.lens_model import fit_lens_model
    from lensmass.io.points import read_points

    image = None
    if args.image:
        from lensmass.io.images import load_image

        image = load_image(args.image, hdu=args.hdu, pixel_scale_arcsec=args.pixel_scale)
        image.require_pixel_scale()
    elif args.pixel_scale is None:
        raise LensInputError("Without an image the pixel scale is unknown: give the image or --pixel-scale ARCSEC.")
    pts = read_points(args.points)
    if pts.frame == "sky" and image is None:
        raise LensInputError("The points are given as ra,dec: give the image (with its WCS) to place them.")
    x, y = pts.to_pixels(image)
    center = None
    if args.center:
        center = parse_pair(args.center, "--center")
    elif args.center_sky:
        if image is None or not image.has_sky:
            raise LensInputError("--center-sky needs an image with a WCS; give --center X,Y in pixels instead.")
        ra, dec = parse_pair(args.center_sky, "--center-sky")
        cx, cy = image.sky_to_pixel(ra, dec)
        center = (float(cx), float(cy))
    light_q = light_pa = None
    if args.light_shape:
        light_q, light_pa = parse_pair(args.light_shape, "--light-shape")
    if args.draws < 500:
        raise LensInputError(f"Keep at least 500 posterior draws, got {args.draws}.")
    z_s = args.zs
    per_system = _system_redshifts(args.system_zs)
    if z_s is None and (args.zs_range or args.zs_table):
        raise LensInputError("The lens model needs a source redshift per system: give --zs (and --system-zs NAME=Z).")
    z_map = None
    if per_system:
        systems = list(dict.fromkeys(pts.system.tolist())) if pts.system is not None else ["1"]
        unknown = sorted(set(per_system) - set(systems))
        if unknown:
            raise LensInputError(f"--system-zs names system '{unknown[0]}', which is not in the points file "
                                 f"(systems: {', '.join(systems)}).")
        z_map = {s: per_system.get(s, z_s) for s in systems}

    def run_estimate(theta, err, draws):
        return estimate_from_args(args, theta, err, theta_e_draws=draws)

    result = fit_lens_model(x, y, pts.system, pts.kind, image=image,
                            pixel_scale_arcsec=args.pixel_scale if image is None else None,
                            point_err_pix=args.click_err, center=center, center_err_pix=args.center_err,
                            light_axis_ratio=light_q, light_position_angle_deg=light_pa,
                            light_axis_ratio_err=args.light_shape_err, z_l=args.zl,
                            z_s=z_map if z_map is not None else z_s,
                            estimate_options={"cosmology": _cosmology(args), "z_l_err": args.zl_err,
                                              "z_s_err": args.zs_err},
                            estimate_fn=run_estimate,
                            draws=args.draws, method=args.sampler, seed=args.seed)
    return result


def _cosmology(args):
    from lensmass.commands.common import cosmology_from_args

    return cosmology_from_args(args)


def format_model(result: dict) -> str:
    """The lens-model part of the readable output."""
    from lensmass.core.lens_centre import centre_text
    from lensmass.core.lens_model import chi2_text

    lm = result["lens_model"]
    p = lm["parameters"]
    lines = [f"lens model: {lm['model']} ({lm['sampler']} posterior, {lm['n_draws']} draws)",
             f"  {lm['theta_e_convention']}",
             f"  {'':<20}{'median':>8} {'68% interval':^17} {'95% interval':^17}"]
    lines += [f"  {label + (' (' + unit + ')' if unit else ''):<20}{interval_columns(p[key], fmt)}"
              for key, label, _short, unit, fmt in PARAMETER_ROWS]
    lines += [f"  {label:<20}{interval_columns(block, '.3g')}" for label, block in delay_rows(lm)]
    lines += [f"  lens centre: {centre_text(result)}",
              f"  fit: {chi2_text(lm)}",
              f"  click error {lm['point_err_pix']:g} px = {lm['point_err_arcsec']:.3g} arcsec (1 sigma)",
              "  images: marked -> model (px), residual, magnification [68%]:"]
    lines += [f"    {line}" for line in image_lines(lm)]
    lines.append("  priors: " + "; ".join(lm["priors"]))
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from lensmass.commands.estimate import print_result

    result = model_from_args(args)
    if not args.json:
        print(format_model(result))
        print()
    print_result(result, args.json, extra_rows=MODEL_ROWS)
    return 0
