"""Run the mass, gas and light comparison on the files a user named (shared by ``lensmass components`` and the window)."""

from __future__ import annotations

from typing import Any

from lensmass.core.errors import LensInputError


def _numbers(text: str | None, what: str) -> list[float] | None:
    if text is None:
        return None
    try:
        return [float(v) for v in text.split(",") if v.strip()]
    except ValueError:
        raise LensInputError(f"{what} must be numbers separated by commas, got '{text}'.") from None


def run_components(args: Any, *, cosmology: Any = None, center_sky: tuple[float | None, float | None] = (None, None),
                   progress=None, cancelled=None) -> dict:
    """Read the files named in ``args`` (the command's options, or the window's fields as the same names)
    and run :func:`lensmass.core.cluster_components.locate_cluster_components` (shared by both).

    ``cosmology`` is anything :func:`lensmass.core.cosmology.resolve_cosmology` takes (default Planck18);
    ``center_sky`` the map centre (RA, Dec) in degrees, or the middle of the galaxies.
    """
    from lensmass.core.cluster_components import locate_cluster_components
    from lensmass.io.catalogs import read_shear_catalog
    from lensmass.io.cluster_inputs import read_member_catalog, read_sky_image, read_xray

    from lensmass.core.cosmology import resolve_cosmology

    cosmo = resolve_cosmology(cosmology)
    cat = read_shear_catalog(args.catalog, args.columns, need_z=args.zs is None, flip_e1=args.flip_e1,
                             flip_e2=args.flip_e2)
    centre = center_sky
    kw: dict[str, Any] = {}
    if args.xray:
        counts, exposure = read_xray(args.xray, args.exposure)
        kw.update(xray_counts=counts.data, xray_wcs=counts.wcs, xray_exposure=exposure)
    elif args.exposure:
        raise LensInputError("An exposure map belongs to an X-ray image: give the X-ray counts image too (`xray`).")
    if args.members:
        mem = read_member_catalog(args.members, args.member_columns)
        kw.update(member_ra=mem.ra_deg, member_dec=mem.dec_deg)
        if mem.stellar_mass_msun is not None:
            kw["member_stellar_mass_msun"] = mem.stellar_mass_msun
        else:
            if not args.band or args.mass_to_light is None:
                raise LensInputError("The members have magnitudes but no stellar masses: give their band and a "
                                     "stellar mass-to-light ratio (`band`, `mass_to_light`) to turn them into masses.")
            from lensmass.core.light import absolute_magnitude, luminosity_lsun
            from lensmass.core.sun_magnitudes import sun_absolute_magnitude

            lum = luminosity_lsun(absolute_magnitude(mem.magnitude, args.zl, cosmo), sun_absolute_magnitude(args.band))
            kw.update(member_luminosity_lsun=lum, mass_to_light=args.mass_to_light)
    gas = _numbers(args.gas_mass, "The gas masses (`gas_mass`)")
    if gas is not None:
        kw.update(gas_mass_msun=gas, gas_mass_err_msun=_numbers(args.gas_mass_err, "The gas-mass errors (`gas_mass_err`)"))
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
