"""``lensmass measure``: theta_E measured on an image (points file or ring finder), then masses.

Pixel positions (points files, ``--center``) are 0-based column,row of the array
as stored in the file.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

from lensmass.commands.common import (
    add_redshift_options,
    add_cosmology_options,
    add_halo_options,
    add_sampling_options,
    parse_pair,
)
from lensmass.commands.light_options import LIGHT_ROWS, add_light_options, apply_light_to_measurement
from lensmass.core.result_keys import table_rows

#: Rows added to the readable table after the estimate rows (the "measure" keys of the registry).
MEASURE_ROWS = table_rows("measure")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("image", metavar="IMAGE", help="FITS, PNG, JPEG or TIFF image")
    how = parser.add_mutually_exclusive_group(required=True)
    how.add_argument("--points", metavar="FILE", help="CSV with header x,y (pixels) or ra,dec (degrees)")
    how.add_argument("--auto-ring", action="store_true", help="find the ring automatically on the lens-subtracted image")
    parser.add_argument("--shape", choices=("circle", "ellipse", "images"), default="circle",
                        help="points are arc points for a circle (default) or ellipse, or the multiple images of one source")
    parser.add_argument("--refine", action="store_true", help="move each point onto the arc's brightness ridge first")
    centre = parser.add_mutually_exclusive_group()
    centre.add_argument("--center", metavar="X,Y", help="lens centre in pixels (holds the fit centre there)")
    centre.add_argument("--center-sky", metavar="RA,DEC", help="lens centre in degrees (needs a WCS)")
    parser.add_argument("--pixel-scale", type=float, metavar="ARCSEC", help="arcsec per pixel (needed without a WCS)")
    parser.add_argument("--pixel-scale-err", type=float, default=None, metavar="ARCSEC",
                        help="1-sigma error of the pixel scale (default 0)")
    parser.add_argument("--hdu", metavar="N", help="FITS extension number or name (default: first image)")
    parser.add_argument("--plane", type=int, metavar="N", help="plane of a 3-D cube (0-based)")
    parser.add_argument("--max-radius", type=float, metavar="ARCSEC", help="ring finder: largest radius searched")
    parser.add_argument("--accept-weak", action="store_true", help="ring finder: report a weak ring candidate too")
    parser.add_argument("--save-residual", metavar="FILE",
                        help="also write the lens-subtracted image (FITS, same header) to FILE")
    add_redshift_options(parser)
    add_cosmology_options(parser)
    add_halo_options(parser)
    add_sampling_options(parser)
    add_light_options(parser, image=True)
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of a table")


def measure_from_args(args: argparse.Namespace) -> dict:
    """Load the image, measure theta_E as the options ask, and run the estimate."""
    from lensmass.commands.estimate import estimate_from_args
    from lensmass.core.einstein import measure_auto_ring, measure_from_points
    from lensmass.core.errors import LensInputError
    from lensmass.core import limits
    from lensmass.io.images import load_image

    if args.max_radius is not None:
        limits.positive_radius(args.max_radius, "--max-radius")
    image = load_image(args.image, hdu=args.hdu, plane=args.plane, pixel_scale_arcsec=args.pixel_scale,
                       pixel_scale_err_arcsec=args.pixel_scale_err or 0.0)
    image.require_pixel_scale()
    center = None
    if args.center:
        center = parse_pair(args.center, "--center")
    elif args.center_sky:
        ra, dec = parse_pair(args.center_sky, "--center-sky")
        limits.sky_position(ra, dec, "--center-sky", "give the lens centre as RA,DEC in degrees")
        x, y = image.sky_to_pixel(ra, dec)
        if not (np.isfinite(x) and np.isfinite(y)):
            raise LensInputError(f"--center-sky {ra:g},{dec:g} does not fall on {Path(args.image).name} (it is on the "
                                 "far side of the sky for this image's projection); check RA,DEC.")
        center = (float(x), float(y))
    if center is not None:
        ny, nx = image.shape
        if not (np.isfinite(center[0]) and np.isfinite(center[1])
                and -0.5 <= center[0] < nx - 0.5 and -0.5 <= center[1] < ny - 0.5):
            raise LensInputError(f"The lens centre ({center[0]:.1f}, {center[1]:.1f}) is outside the {nx} x {ny} image; "
                                 "check --center (0-based column,row) or --center-sky.")

    def run_estimate(theta, err, draws=None):  # draws: a lone arc's asymmetric interval (core.ring_interval)
        return estimate_from_args(args, theta, err, theta_e_draws=draws)

    if args.auto_ring:
        max_r = None if args.max_radius is None else args.max_radius / image.pixel_scale_arcsec
        result = measure_auto_ring(image, center=center, require_confident=not args.accept_weak,
                                   max_radius_pix=max_r, estimate_fn=run_estimate)
    else:
        from lensmass.io.points import read_points

        pts = read_points(args.points)
        x, y = pts.to_pixels(image)
        result = measure_from_points(x, y, image=image, shape=args.shape, center=center, refine=args.refine,
                                     estimate_fn=run_estimate)
    result["_image"] = image  # private: dropped from JSON
    return result


def save_residual(path: str, result: dict) -> None:
    """Write the lens-subtracted image of this measurement (the ring finder's, or a fit at the centre)."""
    from lensmass.io.images import write_image_fits

    image = result["_image"]
    ring = result.get("_ring")
    if ring is not None and ring.residual is not None:
        residual = ring.residual
    else:
        from lensmass.core.einstein import picture_options
        from lensmass.core.lenslight import fit_lens_light_masked

        residual = fit_lens_light_masked(image.data, result["center_x"], result["center_y"],
                                         **picture_options(image)).residual
    write_image_fits(path, residual, image.header, history="lens light subtracted by lensmass (Sersic model)")
    result.setdefault("notes", []).append(f"Lens-subtracted image written to {path}.")


def print_measurement(result: dict, as_json: bool, extra_rows=()) -> None:
    from lensmass.commands.estimate import print_result

    if not as_json:
        print(f"method: {result.get('method', '')}")
        from lensmass.core.lens_centre import centre_text

        print(f"lens centre: {centre_text(result)}")
        if result.get("theta_e_low1_arcsec") is not None:
            from lensmass.core.einstein import BOUND_KEYS
            from lensmass.core.ring_interval import interval_text

            print("theta_E from the ring finder: "
                  + interval_text(result["theta_e_arcsec"], [result[k] for k in BOUND_KEYS], "arcsec", 3))
    print_result(result, as_json, extra_rows=list(MEASURE_ROWS) + list(extra_rows))


def run(args: argparse.Namespace) -> int:
    if args.save_residual:
        from lensmass.io.atomic import check_writable

        check_writable(args.save_residual, "--save-residual")
    result = measure_from_args(args)
    if args.save_residual:
        save_residual(args.save_residual, result)
    result = apply_light_to_measurement(args, result)
    print_measurement(result, args.json, extra_rows=LIGHT_ROWS)
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(0)
