"""``lensmass components``: where a cluster's mass, gas and galaxies are, their offsets and budgets."""

from __future__ import annotations

import argparse

from lensmass.commands.common import add_cosmology_options, add_halo_options, cosmology_from_args, parse_pair
from lensmass.core.errors import LensInputError


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("catalog", metavar="SHEAR_CATALOG", help="shape catalogue: .fits, .csv, .ecsv or .parquet")
    parser.add_argument("--zl", type=float, required=True, help="cluster redshift")
    parser.add_argument("--center-sky", metavar="RA,DEC", help="map centre in degrees (default: middle of the galaxies)")
    cat = parser.add_argument_group("shear catalogue")
    cat.add_argument("--columns", metavar="ROLE=NAME,...", help="column mapping, roles ra, dec, e1, e2, weight, z")
    cat.add_argument("--zs", type=float, default=None, help="one source redshift for every galaxy")
    cat.add_argument("--flip-e1", action="store_true", help="flip the sign of e1 (other sign convention)")
    cat.add_argument("--flip-e2", action="store_true", help="flip the sign of e2 (other sign convention)")
    m = parser.add_argument_group("mass map and peaks")
    m.add_argument("--pixels", type=int, default=128, help="map pixels per side (default 128)")
    m.add_argument("--smoothing", type=float, default=45.0, metavar="ARCSEC",
                   help="Gaussian sigma of the E-mode map (default 45)")
    m.add_argument("--min-snr", type=float, default=3.5, help="lowest S/N of a reported mass peak (default 3.5)")
    m.add_argument("--max-peaks", type=int, default=4, help="most mass peaks reported (default 4)")
    m.add_argument("--resamples", type=int, default=200, help="bootstrap resamplings (default 200)")
    m.add_argument("--noise-maps", type=int, default=32, help="rotated-noise maps (default 32)")
    m.add_argument("--seed", type=int, default=20261202, help="random seed (default fixed)")
    g = parser.add_argument_group("gas")
    g.add_argument("--xray", metavar="FITS", help="X-ray counts image with a WCS (extension EXPOSURE is used if present)")
    g.add_argument("--exposure", metavar="FITS", help="exposure map for --xray (same pixels)")
    g.add_argument("--gas-smoothing", type=float, default=10.0, metavar="ARCSEC",
                   help="Gaussian sigma of the X-ray map (default 10)")
    gm = g.add_mutually_exclusive_group()
    gm.add_argument("--gas-mass", metavar="M1,M2,...", help="gas mass (Msun) in the aperture of each mass peak")
    gm.add_argument("--gas-map", metavar="FITS", help="gas mass map in Msun per pixel, with a WCS")
    g.add_argument("--gas-mass-err", metavar="E1,E2,...", help="1-sigma errors of --gas-mass (Msun)")
    g.add_argument("--gas-map-error", type=float, default=0.1, metavar="FRACTION",
                   help="fractional error of --gas-map sums (default 0.1)")
    s = parser.add_argument_group("galaxies")
    s.add_argument("--members", metavar="FILE", help="member catalogue: ra, dec and mstar | log_mstar | mag")
    s.add_argument("--member-columns", metavar="ROLE=NAME,...", help="roles ra, dec, mstar, log_mstar, mag")
    s.add_argument("--band", help="band of the members' magnitudes (for luminosities), e.g. sdss_r")
    s.add_argument("--mass-to-light", type=float, help="stellar M/L (Msun/Lsun) for magnitudes")
    s.add_argument("--stellar-systematic", type=float, default=0.15, metavar="DEX",
                   help="lognormal systematic of stellar masses (default 0.15 dex)")
    s.add_argument("--light-smoothing", type=float, default=None, metavar="ARCSEC",
                   help="Gaussian sigma of the light map (default: --smoothing)")
    b = parser.add_argument_group("budgets")
    b.add_argument("--aperture-kpc", type=float, default=250.0, help="aperture radius, physical kpc (default 250)")
    b.add_argument("--inner-cut", type=float, default=60.0, metavar="ARCSEC",
                   help="galaxies this close to a peak are left out of the NFW fit (default 60)")
    add_cosmology_options(parser)
    add_halo_options(parser)
    out = parser.add_argument_group("output")
    out.add_argument("--json", action="store_true", help="print one JSON object instead of tables")
    out.add_argument("--out", action="append", metavar="FILE",
                     help="write FILE by its ending: .json, .ecsv (one row per mass peak), .png/.pdf (report page); "
                          "repeatable")
    out.add_argument("--optical", metavar="FITS", help="optical image with a WCS for the report's background")


def _numbers(text: str | None, what: str) -> list[float] | None:
    if text is None:
        return None
    try:
        return [float(v) for v in text.split(",") if v.strip()]
    except ValueError:
        raise LensInputError(f"{what} must be numbers separated by commas, got '{text}'.") from None


def run_components(args: argparse.Namespace, progress=None, cancelled=None) -> dict:
    """Read the files named in ``args`` and run the core (shared with the window)."""
    from lensmass.core.cluster_components import locate_cluster_components
    from lensmass.io.catalogs import read_shear_catalog
    from lensmass.io.cluster_inputs import read_member_catalog, read_sky_image, read_xray

    cosmo = cosmology_from_args(args)
    cat = read_shear_catalog(args.catalog, args.columns, need_z=args.zs is None, flip_e1=args.flip_e1,
                             flip_e2=args.flip_e2)
    centre = parse_pair(args.center_sky, "--center-sky") if args.center_sky else (None, None)
    kw = {}
    if args.xray:
        counts, exposure = read_xray(args.xray, args.exposure)
        kw.update(xray_counts=counts.data, xray_wcs=counts.wcs, xray_exposure=exposure)
    elif args.exposure:
        raise LensInputError("An exposure map belongs to an X-ray image: give the X-ray counts image too (--xray).")
    if args.members:
        mem = read_member_catalog(args.members, args.member_columns)
        kw.update(member_ra=mem.ra_deg, member_dec=mem.dec_deg)
        if mem.stellar_mass_msun is not None:
            kw["member_stellar_mass_msun"] = mem.stellar_mass_msun
        else:
            if not args.band or args.mass_to_light is None:
                raise LensInputError("The members have magnitudes but no stellar masses: give their band and a "
                                     "stellar mass-to-light ratio (--band, --mass-to-light) to turn them into masses.")
            from lensmass.core.light import absolute_magnitude, luminosity_lsun
            from lensmass.core.sun_magnitudes import sun_absolute_magnitude

            lum = luminosity_lsun(absolute_magnitude(mem.magnitude, args.zl, cosmo), sun_absolute_magnitude(args.band))
            kw.update(member_luminosity_lsun=lum, mass_to_light=args.mass_to_light)
    gas = _numbers(args.gas_mass, "--gas-mass")
    if gas is not None:
        kw.update(gas_mass_msun=gas, gas_mass_err_msun=_numbers(args.gas_mass_err, "--gas-mass-err"))
    if args.gas_map:
        gm = read_sky_image(args.gas_map, "gas mass map")
        kw.update(gas_map_msun_per_pixel=gm.data, gas_map_wcs=gm.wcs, gas_map_err_fraction=args.gas_map_error)
    result = locate_cluster_components(
        cat.ra_deg, cat.dec_deg, cat.e1, cat.e2, cat.weight, None if args.zs is not None else cat.z,
        z_l=args.zl, z_s=args.zs, center_ra=centre[0], center_dec=centre[1], cosmology=cosmo,
        concentration=args.concentration, halo_definition=args.halo_definition, n_pixels=args.pixels,
        smoothing_arcsec=args.smoothing, gas_smoothing_arcsec=args.gas_smoothing,
        light_smoothing_arcsec=args.light_smoothing, n_resamples=args.resamples, n_noise=args.noise_maps,
        min_snr=args.min_snr, max_peaks=args.max_peaks, stellar_systematic_dex=args.stellar_systematic,
        aperture_kpc=args.aperture_kpc, inner_cut_arcsec=args.inner_cut, seed=args.seed, progress=progress,
        cancelled=cancelled, **kw)
    result["inputs"] = {"catalog": cat.path, "columns": cat.columns, "xray": args.xray, "exposure": args.exposure,
                        "members": args.members, "gas_map": args.gas_map}
    return result


def format_components(result: dict) -> str:
    from lensmass.io.cluster_report import OFFSET_HEADER, budget_rows, offset_rows

    lines = [f"z_l {result['z_l']:g}  {result['cosmology']}  galaxies {result['n_used']}  map "
             f"{result['map']['pixels']} px of {result['map']['pixel_arcsec']:.3g}\"  E-mode smoothing "
             f"{result['map']['smoothing_arcsec']:g}\"", "", "mass peaks:"]
    for p in result["mass_peaks"]:
        r95 = next((r for r in p["regions"] if r["level"] and abs(r["level"] - 0.95) < 1e-6), {})
        lines.append(f"  M{p['peak']}  RA {p['ra_deg']:.5f}  Dec {p['dec_deg']:+.5f}  S/N {p['snr']:.1f}  "
                     f"false-peak p {p['false_peak_probability']:.2g}  95% ellipse "
                     f"{r95.get('semi_major_arcsec') or float('nan'):.1f}\" x "
                     f"{r95.get('semi_minor_arcsec') or float('nan'):.1f}\"")
    for kind in ("gas", "light"):
        for p in result.get(f"{kind}_peaks", []):
            lines.append(f"  {kind[0].upper()}{p['peak']}  RA {p['ra_deg']:.5f}  Dec {p['dec_deg']:+.5f}  ({kind})")
    for h in result["halo_fit"]["halos"]:
        lo, hi = h["intervals95"]["m200_msun"]
        lines.append(f"  NFW at M{h['peak']}: M200 {h['m200_msun']:.3g} Msun (95%: {lo:.3g} - {hi:.3g})")
    if result.get("offsets"):
        lines += ["", "offsets:", "  " + "  ".join(f"{h:>14}" for h in OFFSET_HEADER)]
        lines += ["  " + "  ".join(f"{c:>14}" for c in row) for row in offset_rows(result)]
    header, rows = budget_rows(result)
    lines += ["", "budgets (median [68%]):", "  " + "".join(f"{h:<36}" for h in header)]
    lines += ["  " + "".join(f"{c:<36}" for c in row) for row in rows]
    if result.get("cosmic_baryon_fraction") is not None:
        lines += ["", f"cosmic baryon fraction Omega_b/Omega_m = {result['cosmic_baryon_fraction']:.4f}"]
    lines.append("")
    lines += [f"note: {n}" for n in result["notes"]]
    return "\n".join(lines)


def run(args: argparse.Namespace) -> int:
    from lensmass.io.cluster_export import write_components

    result = run_components(args)
    optical = None
    if args.optical:
        from lensmass.io.cluster_inputs import read_sky_image

        optical = read_sky_image(args.optical, "optical image")
    for path in args.out or ():
        write_components(path, result, optical=optical)
    if args.json:
        from lensmass.io.jsonout import dumps

        print(dumps(result))
    else:
        print(format_components(result))
        for path in args.out or ():
            print(f"written: {path}")
    return 0
