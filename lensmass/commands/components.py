"""``lensmass components``: where a cluster's mass, gas and galaxies are, their offsets and budgets."""

from __future__ import annotations

import argparse

from lensmass.commands.common import add_cosmology_options, add_halo_options, cosmology_from_args, parse_pair


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


def run_components(args: argparse.Namespace, progress=None, cancelled=None) -> dict:
    """The command's options to :func:`lensmass.io.cluster_run.run_components`."""
    from lensmass.io.cluster_run import run_components as run_on_files

    centre = parse_pair(args.center_sky, "--center-sky") if args.center_sky else (None, None)
    return run_on_files(args, cosmology=cosmology_from_args(args), center_sky=centre, progress=progress,
                        cancelled=cancelled)


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
