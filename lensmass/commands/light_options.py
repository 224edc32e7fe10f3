"""The lens-light options shared by ``lensmass estimate`` and ``lensmass measure``.

``add_light_options(parser)`` adds them; ``apply_light(args, result, ...)`` runs the core
:func:`lensmass.core.light.add_light` on an estimate result when any of them is given
(with photometry on the image first, for ``measure``); ``LIGHT_ROWS`` are the extra
rows of the readable table.
"""

from __future__ import annotations

import argparse
from typing import Any

import numpy as np

from lensmass.core.einstein_photometry import (header_number, light_inside_einstein,  # noqa: F401 (re-exported)
                                               photometry_note, zeropoint_and_exposure)
from lensmass.core.errors import LensInputError
from lensmass.core.result_keys import table_rows

#: Display name and unit of the light keys (after the core rows of the table), from the key registry.
LIGHT_ROWS = table_rows("light")

_LIGHT_FLAGS = ("lens_mag", "band", "r_eff", "sersic_n", "stellar_ml", "stellar_mass", "zeropoint", "zeropoint_key")


def add_light_options(parser: argparse.ArgumentParser, *, image: bool = False) -> None:
    """Options of the light step; ``image=True`` adds the photometry-on-the-image options."""
    g = parser.add_argument_group("lens light (luminosity, M/L, stars versus dark matter)")
    g.add_argument("--lens-mag", type=float, metavar="MAG", help="total apparent magnitude of the lens galaxy")
    g.add_argument("--lens-mag-err", type=float, default=0.0, metavar="E", help="1-sigma error of the magnitude")
    g.add_argument("--band", metavar="NAME", help="band of the magnitude: U B V R I, sdss_u..sdss_z, 2mass_j/h/ks, "
                   "acs_f606w, acs_f814w, wfc3_f160w")
    g.add_argument("--mag-system", default="AB", choices=("AB", "Vega", "ab", "vega"), help="magnitude system (default AB)")
    g.add_argument("--r-eff", type=float, metavar="ARCSEC", help="effective (half-light) radius of the lens")
    g.add_argument("--sersic-n", type=float, metavar="N", help="Sersic index of the light (default: de Vaucouleurs, n = 4)")
    g.add_argument("--light-profile", default="devaucouleurs", choices=("devaucouleurs", "hernquist"),
                   help="stellar profile when no Sersic index is given (default devaucouleurs)")
    g.add_argument("--kcorr", type=float, default=0.0, metavar="K", help="k-correction in mag (default 0)")
    g.add_argument("--extinction", type=float, default=0.0, metavar="A", help="Galactic extinction in mag (default 0)")
    stars = g.add_mutually_exclusive_group()
    stars.add_argument("--stellar-ml", type=float, metavar="Y", help="stellar mass-to-light ratio in solar units of the band")
    stars.add_argument("--stellar-mass", type=float, metavar="MSUN", help="total stellar mass of the lens in Msun")
    g.add_argument("--stellar-ml-err", type=float, default=0.0, metavar="E", help="1-sigma error of --stellar-ml")
    g.add_argument("--stellar-mass-err", type=float, default=0.0, metavar="DEX", help="error of --stellar-mass in dex")
    g.add_argument("--imf", metavar="NAME", help="IMF behind the stellar M/L or mass (quoted in the notes), e.g. Chabrier")
    if image:
        p = parser.add_argument_group("photometry on the image (light inside theta_E)")
        p.add_argument("--zeropoint", type=float, metavar="ZP", help="magnitude of one count per second")
        p.add_argument("--zeropoint-key", metavar="KEY", help="FITS header keyword holding the zeropoint")
        p.add_argument("--exptime", type=float, metavar="S", help="exposure time in s (default: 1 if the header BUNIT is per second, else its EXPTIME, else 1)")
        p.add_argument("--sky-annulus", default="4,6", metavar="IN,OUT",
                       help="sky annulus in units of theta_E (default 4,6)")
        p.add_argument("--arc-width", type=float, default=3.0, metavar="PIX",
                       help="width in pixels of the band masked around marked arc points; cover the whole arc (default 3)")
        p.add_argument("--mask-bright", action="store_true",
                       help="also mask pixels standing 3 sigma above the lens light of their ring")


def light_requested(args: argparse.Namespace) -> bool:
    """True when any option that starts the light step was given."""
    return any(getattr(args, flag, None) is not None for flag in _LIGHT_FLAGS)


def image_photometry(args: argparse.Namespace, image, header, *, x_pix: float, y_pix: float, theta_e_pix: float,
                     arc_points_xy=None, **_ellipse) -> dict[str, Any]:
    """Aperture magnitude of the lens inside theta_E from the options (the shared rule of
    :func:`lensmass.core.einstein_photometry.light_inside_einstein`)."""
    from lensmass.commands.common import parse_pair

    return light_inside_einstein(image, header, center_x=x_pix, center_y=y_pix, theta_e_pix=theta_e_pix,
                                 zeropoint=args.zeropoint, zeropoint_key=args.zeropoint_key, exptime=args.exptime,
                                 annulus=parse_pair(args.sky_annulus, "--sky-annulus"), arc_points_xy=arc_points_xy,
                                 arc_width_pix=args.arc_width, mask_residuals=args.mask_bright)


def apply_light(args: argparse.Namespace, result: dict, *, image=None, header=None, cosmology=None,
                **geometry) -> dict:
    """Run the light step on ``result`` when asked; photometry on ``image`` for measure.

    ``geometry`` holds ``x_pix``, ``y_pix``, ``theta_e_pix`` and optionally ``axis_ratio``,
    ``theta_rad`` and ``arc_points_xy`` (pixels) for the aperture.
    """
    if not light_requested(args):
        return result
    from lensmass.commands.common import cosmology_from_args
    from lensmass.core.light import add_light

    aperture = {}
    if image is not None and getattr(args, "lens_mag", None) is None and (
            getattr(args, "zeropoint", None) is not None or getattr(args, "zeropoint_key", None)):
        phot = image_photometry(args, np.asarray(image, float), header, **geometry)
        result["light_photometry"] = phot
        aperture = {"aperture_mag": phot["aperture_mag"], "aperture_mag_err": phot["aperture_mag_err"]}
        result.setdefault("notes", []).append(photometry_note(phot))
    elif getattr(args, "lens_mag", None) is None and getattr(args, "stellar_mass", None) is None:
        hint = " and --zeropoint ZP (or --zeropoint-key KEY)" if hasattr(args, "zeropoint") else ""
        raise LensInputError(f"The light step needs the lens brightness: give --lens-mag MAG with --band{hint}.")
    return add_light(
        result,
        band=args.band, mag_system=args.mag_system, lens_mag=args.lens_mag, lens_mag_err=args.lens_mag_err,
        r_eff_arcsec=args.r_eff, sersic_n=args.sersic_n, stellar_profile=args.light_profile,
        kcorr=args.kcorr, extinction=args.extinction, stellar_ml=args.stellar_ml, stellar_ml_err=args.stellar_ml_err,
        stellar_mass_msun=args.stellar_mass, stellar_mass_err_dex=args.stellar_mass_err, imf=args.imf,
        cosmology=cosmology if cosmology is not None else cosmology_from_args(args),
        concentration=args.concentration, halo_definition=args.halo_definition,
        samples=args.samples, seed=args.seed, **aperture,
    )


def apply_light_to_measurement(args: argparse.Namespace, result: dict) -> dict:
    """The measure hook: photometry inside the measured theta_E on the same image, then the light step.

    The aperture is the circle of radius theta_E about the measured centre (for an ellipse
    fit that circle has the ellipse's area, theta_E = sqrt(a b)); the marked points are
    masked as arcs. The image is read again only when photometry is asked for.
    """
    if not light_requested(args):
        return result
    wants_photometry = getattr(args, "lens_mag", None) is None and (
        getattr(args, "zeropoint", None) is not None or getattr(args, "zeropoint_key", None))
    if not wants_photometry:
        return apply_light(args, result)
    from lensmass.io.images import load_image

    image = load_image(args.image, hdu=args.hdu, plane=args.plane, pixel_scale_arcsec=args.pixel_scale,
                       pixel_scale_err_arcsec=args.pixel_scale_err or 0.0)
    radius_pix = float(result["theta_e_arcsec"]) / float(result["pixel_scale_arcsec"])
    result = apply_light(args, result, image=image.data, header=image.header, x_pix=float(result["center_x"]),
                         y_pix=float(result["center_y"]), theta_e_pix=radius_pix,
                         arc_points_xy=result.get("points_xy") or None)
    if result.get("fit_axis_ratio") is not None:
        result["notes"].append("Photometry aperture: the circle of radius theta_E, which has the area of the fitted ellipse.")
    return result
