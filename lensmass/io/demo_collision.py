"""The colliding-cluster field E of the invented Tern Ridge Imaging Survey, and its truth.

Everything is invented: two NFW halos at z = 0.29 (a main cluster and a smaller one that has
passed through it), hot gas in two beta-model clumps that lag behind their halos toward the
middle, about 200 member galaxies scattered around the halos (plus unrelated galaxies in
front and behind), a simulated X-ray counts image on its own rotated WCS with an exposure
map (with a chip gap), a gas surface-mass map, a shallow optical image of the members and
a weak-lensing shape catalogue. Made by :mod:`lensmass.core.cluster_simulation`.

Files (``lensmass demo OUTDIR``): ``tris_collide_e_shear.fits``, ``tris_collide_e_members.ecsv``,
``tris_collide_e_xray.fits`` (counts; extension EXPOSURE), ``tris_collide_e_gas_mass.fits``
(Msun per pixel, on a coarser grid aligned with the X-ray image), ``tris_collide_e_optical.fits`` and
``tris_collide_e.truth.json``.
"""

from __future__ import annotations

import json
from typing import Any
import os
from pathlib import Path

import numpy as np

from lensmass.core.cluster_simulation import halo_concentration, simulate_multi_halo_shear
from lensmass.core.cosmology import cosmology_label, resolve_cosmology
from lensmass.core.map_alignment import tan_wcs
from lensmass.core.shear_profile import tangent_plane_offsets_arcsec, tangent_plane_to_sky
from lensmass.io.atomic import atomic_path, write_text_atomic

NAME = "tris_collide_e"
SETUP = {
    "field": NAME,
    "survey": "Tern Ridge Imaging Survey (TRIS), invented",
    "center_ra": 73.1942,
    "center_dec": -27.4186,
    "z_l": 0.29,
    "halos": [
        {"name": "TRIS-E main", "x_arcsec": -115.0, "y_arcsec": 28.0, "m200_msun": 1.1e15},
        {"name": "TRIS-E sub", "x_arcsec": 125.0, "y_arcsec": -22.0, "m200_msun": 5.0e14},
    ],
    # the gas of each halo lags toward the middle of the pair (offsets from the field centre)
    "gas": [
        {"name": "gas of TRIS-E main", "x_arcsec": -62.0, "y_arcsec": 16.0, "core_arcsec": 40.0, "beta": 0.7,
         "mass_norm_msun_per_arcsec2": 2.6e9, "xray_peak_rate": 2.4e-4},
        {"name": "gas of TRIS-E sub", "x_arcsec": 62.0, "y_arcsec": -8.0, "core_arcsec": 22.0, "beta": 0.75,
         "mass_norm_msun_per_arcsec2": 1.9e9, "xray_peak_rate": 2.8e-4},
    ],
    "members": [(130, 70.0), (70, 45.0)],  # number and spatial sigma (arcsec) around each halo
    "interlopers": 60,
    "field_arcsec": 1200.0,
    "density_per_arcmin2": 30.0,
    "shape_noise": 0.25,
    "xray_pixel_arcsec": 2.5,
    "xray_shape": (400, 400),
    "gas_map_pixel_arcsec": 5.0,
    "gas_map_shape": (200, 200),
    "xray_rotation_deg": 23.0,
    "xray_exposure_s": 60000.0,
    "xray_background_rate": 2.0e-6,
    "optical_pixel_arcsec": 2.5,
    "optical_shape": (420, 420),
    "seed": 20261202,
}


def _offsets_of_pixels(wcs, shape, center_ra, center_dec):
    yy, xx = np.mgrid[0:shape[0], 0:shape[1]]
    ra, dec = wcs.all_pix2world(xx.ravel(), yy.ravel(), 0)
    x, y = tangent_plane_offsets_arcsec(ra, dec, center_ra, center_dec)
    return x.reshape(shape), y.reshape(shape)


def _beta_profile(x, y, g, exponent):
    return (1.0 + ((x - g["x_arcsec"]) ** 2 + (y - g["y_arcsec"]) ** 2) / g["core_arcsec"] ** 2) ** exponent


def make_collision_field(cosmology=None) -> dict:
    """All arrays, tables and the truth of the colliding-cluster field (seeded)."""
    from astropy.table import Table

    cosmo = resolve_cosmology(cosmology)
    s: Any = SETUP
    rng = np.random.default_rng(s["seed"])
    ra0, dec0, z_l = s["center_ra"], s["center_dec"], s["z_l"]
    halos = [dict(h) for h in s["halos"]]
    for h in halos:
        h["c200"] = halo_concentration(h, z_l, cosmo)
    sim = simulate_multi_halo_shear(halos, z_l=z_l, cosmo=cosmo, field_arcsec=s["field_arcsec"],
                                    density_per_arcmin2=s["density_per_arcmin2"], shape_noise=s["shape_noise"],
                                    seed=s["seed"] + 1)
    ra, dec = tangent_plane_to_sky(sim["x_arcsec"], sim["y_arcsec"], ra0, dec0)
    n = ra.size
    shear = {"ID": np.arange(1, n + 1, dtype=np.int32), "RA": ra, "DEC": dec,
             "E1": sim["e1"].astype(np.float32), "E2": sim["e2"].astype(np.float32),
             "WEIGHT": np.ones(n, np.float32), "Z_PHOT": sim["z"].astype(np.float32)}

    # members: stellar masses lognormal about 10^10.9 Msun (0.4 dex); r-band magnitudes from M/L = 3
    mx_parts: list = []
    my_parts: list = []
    logm_parts: list = []
    kind: list = []
    for h, (count, sig) in zip(halos, s["members"]):
        mx_parts.append(h["x_arcsec"] + rng.normal(0, sig, count))
        my_parts.append(h["y_arcsec"] + rng.normal(0, sig, count))
        lm = rng.normal(10.9, 0.4, count)
        lm[0] = 11.9  # a dominant central galaxy
        mx_parts[-1][0], my_parts[-1][0] = h["x_arcsec"] + rng.normal(0, 3), h["y_arcsec"] + rng.normal(0, 3)
        logm_parts.append(lm)
        kind += [h["name"]] * count
    half = 0.5 * s["field_arcsec"]
    mx_parts.append(rng.uniform(-half, half, s["interlopers"]))
    my_parts.append(rng.uniform(-half, half, s["interlopers"]))
    logm_parts.append(rng.normal(10.6, 0.4, s["interlopers"]))
    kind += ["interloper"] * s["interlopers"]
    mx, my, logm = np.concatenate(mx_parts), np.concatenate(my_parts), np.concatenate(logm_parts)
    mra, mdec = tangent_plane_to_sky(mx, my, ra0, dec0)
    from lensmass.core.cosmology import luminosity_distance_mpc

    dm = 5 * np.log10(float(luminosity_distance_mpc(z_l, cosmo)) * 1e5)
    mag_r = 4.65 - 2.5 * (logm - np.log10(3.0)) + dm + rng.normal(0, 0.05, logm.size)
    is_member = np.array([k != "interloper" for k in kind])
    members = Table({"ID": np.arange(1, logm.size + 1), "RA": mra, "DEC": mdec, "MAG_R": np.round(mag_r, 3),
                     "LOG_MSTAR": np.round(logm, 3), "MEMBER_OF": kind})
    members["RA"].unit = members["DEC"].unit = "deg"
    members["MAG_R"].unit = "mag"
    members["LOG_MSTAR"].description = "log10 stellar mass / Msun"
    members.meta.update({"survey": "TRIS (invented)", "field": NAME, "note": "interlopers are not cluster members"})

    # X-ray counts, exposure and gas surface-mass maps on a rotated grid
    shape = s["xray_shape"]
    xwcs = tan_wcs(ra0, dec0, s["xray_pixel_arcsec"], shape, s["xray_rotation_deg"])
    gx, gy = _offsets_of_pixels(xwcs, shape, ra0, dec0)
    area = s["xray_pixel_arcsec"] ** 2
    rate = np.full(shape, s["xray_background_rate"] * area)
    for g in s["gas"]:
        rate += g["xray_peak_rate"] * area * _beta_profile(gx, gy, g, -3 * g["beta"] + 0.5)
    gwcs = tan_wcs(ra0, dec0, s["gas_map_pixel_arcsec"], s["gas_map_shape"], s["xray_rotation_deg"])
    mx_, my_ = _offsets_of_pixels(gwcs, s["gas_map_shape"], ra0, dec0)
    gas_map = np.zeros(s["gas_map_shape"])
    for g in s["gas"]:
        gas_map += (g["mass_norm_msun_per_arcsec2"] * s["gas_map_pixel_arcsec"] ** 2
                    * _beta_profile(mx_, my_, g, -1.5 * g["beta"] + 0.5))
    yy, xx = np.mgrid[0:shape[0], 0:shape[1]]
    rr = np.hypot(xx - shape[1] / 2, yy - shape[0] / 2) * s["xray_pixel_arcsec"]
    exposure = s["xray_exposure_s"] * (1.0 - 0.3 * (rr / 600.0) ** 2).clip(0.0, 1.0)
    exposure[:, shape[1] // 2 + 50: shape[1] // 2 + 55] = 0.0  # a chip gap
    counts = rng.poisson(rate * exposure).astype(np.int16)

    # a shallow optical image of the members (north up, east left)
    oshape = s["optical_shape"]
    owcs = tan_wcs(ra0, dec0, s["optical_pixel_arcsec"], oshape, 0.0)
    opx, opy = owcs.all_world2pix(mra, mdec, 0)
    flux = 10 ** (-0.4 * (mag_r - 30.0)) / 1800.0
    optical = np.zeros(oshape)
    oy, ox = np.mgrid[0:oshape[0], 0:oshape[1]]
    for fx, fy, f in zip(opx, opy, flux):
        if 0 <= fx < oshape[1] and 0 <= fy < oshape[0]:
            sl = (slice(max(0, int(fy) - 8), int(fy) + 9), slice(max(0, int(fx) - 8), int(fx) + 9))
            optical[sl] += f * np.exp(-((ox[sl] - fx) ** 2 + (oy[sl] - fy) ** 2) / (2 * 1.2**2)) / (2 * np.pi * 1.44)
    optical += rng.normal(0, 0.02, oshape)

    truth = _truth(halos, members, is_member, logm, mx, my, mx_, my_, gas_map, cosmo, n)
    return {"shear": shear, "members": members, "counts": counts, "exposure": exposure.astype(np.float32),
            "gas_map": gas_map.astype(np.float32), "xray_wcs": xwcs, "gas_wcs": gwcs, "optical": optical.astype(np.float32),
            "optical_wcs": owcs, "truth": truth}


def _truth(halos, members, is_member, logm, mx, my, gx, gy, gas_map, cosmo, n_galaxies) -> dict:
    from lensmass.core.cluster_budget import cosmic_baryon_fraction, nfw_aperture_masses
    from lensmass.core.peak_offsets import kpc_per_arcsec
    from lensmass.core.shear_profile import lens_distance_mpc

    s: Any = SETUP
    d_l = lens_distance_mpc(s["z_l"], cosmo)
    scale = kpc_per_arcsec(d_l)
    ap_kpc = 250.0
    ap = ap_kpc / scale
    centres = np.array([[h["x_arcsec"], h["y_arcsec"]] for h in halos])
    lens = nfw_aperture_masses(np.log10([[h["m200_msun"] for h in halos]]), centres, centres, ap,
                               np.array([[h["c200"] for h in halos]]), z_l=s["z_l"], cosmo=cosmo, d_l_mpc=d_l)[0]
    out_halos, budgets = [], []
    for i, (h, g) in enumerate(zip(halos, s["gas"])):
        hra, hdec = tangent_plane_to_sky(np.array([h["x_arcsec"]]), np.array([h["y_arcsec"]]), s["center_ra"],
                                         s["center_dec"])
        gra, gdec = tangent_plane_to_sky(np.array([g["x_arcsec"]]), np.array([g["y_arcsec"]]), s["center_ra"],
                                         s["center_dec"])
        off = float(np.hypot(g["x_arcsec"] - h["x_arcsec"], g["y_arcsec"] - h["y_arcsec"]))
        out_halos.append({**h, "ra_deg": float(hra[0]), "dec_deg": float(hdec[0]),
                          "gas_ra_deg": float(gra[0]), "gas_dec_deg": float(gdec[0]),
                          "gas_offset_arcsec": off, "gas_offset_kpc": off * scale})
        inside = np.hypot(mx - h["x_arcsec"], my - h["y_arcsec"]) <= ap
        star = float(np.sum(10 ** logm[inside]))
        gas = float(np.sum(gas_map[np.hypot(gx - h["x_arcsec"], gy - h["y_arcsec"]) <= ap]))
        budgets.append({"halo": h["name"], "aperture_kpc": ap_kpc, "aperture_arcsec": ap,
                        "lens_mass_nfw_msun": float(lens[i]), "stellar_mass_msun": star,
                        "stellar_mass_members_only_msun": float(np.sum(10 ** logm[inside & is_member])),
                        "gas_mass_msun": gas, "baryon_fraction": (star + gas) / float(lens[i])})
    return {
        "field": NAME, "survey": s["survey"], "synthetic": True, "z_l": s["z_l"], "cosmology": cosmology_label(cosmo),
        "center_ra": s["center_ra"], "center_dec": s["center_dec"],
        "offsets": "arcsec from the field centre on the tangent plane, x east, y north",
        "halos": out_halos, "halo_definition": "200c", "concentration": "Duffy et al. (2008)",
        "gas": s["gas"], "gas_model": "beta models: X-ray brightness (1 + R^2/r_c^2)^(-3 beta + 1/2), gas surface "
                                      "mass (1 + R^2/r_c^2)^(-3 beta / 2 + 1/2)",
        "budgets_in_apertures_around_true_halo_centres": budgets,
        "cosmic_baryon_fraction": cosmic_baryon_fraction(cosmo),
        "members": {"count": int(is_member.sum()), "interlopers": int((~is_member).sum()),
                    "stellar_mass_model": "log10 M* ~ N(10.9, 0.4), one central of 10^11.9 per halo; "
                                          "MAG_R from M/L_r = 3 at the luminosity distance (no k-correction)"},
        "shear": {"n_galaxies": int(n_galaxies), "shape_noise_per_component": s["shape_noise"],
                  "source_redshifts": "Smail et al. (1994) n(z), z0 = 0.7, a = 2, b = 1.5, exact (no photo-z error)",
                  "distortion": "exact reduced shear of the summed halos, Seitz & Schneider (1997)"},
        "xray": {"pixel_arcsec": s["xray_pixel_arcsec"], "rotation_deg": s["xray_rotation_deg"],
                 "exposure_s": s["xray_exposure_s"], "background_rate_per_arcsec2": s["xray_background_rate"],
                 "notes": "vignetting 30% at 10 arcmin; a chip gap of 5 columns"},
        "seed": s["seed"], "generator": "lensmass.io.demo_collision",
    }


def write_collision_field(outdir: str | os.PathLike, cosmology=None) -> list[Path]:
    """Write the colliding-cluster files into ``outdir`` (atomic); returns the paths."""
    from astropy.io import fits

    from lensmass.io.catalogs import write_shear_catalog_fits
    from lensmass.io.jsonout import dumps

    out = Path(outdir)
    out.mkdir(parents=True, exist_ok=True)
    f = make_collision_field(cosmology)
    paths = {k: out / f"{NAME}_{k}{ext}" for k, ext in
             (("shear", ".fits"), ("members", ".ecsv"), ("xray", ".fits"), ("gas_mass", ".fits"),
              ("optical", ".fits"))}
    write_shear_catalog_fits(paths["shear"], f["shear"], {"SURVEY": "TRIS (invented)", "FIELD": NAME})
    with atomic_path(paths["members"]) as tmp:
        f["members"].write(tmp, format="ascii.ecsv", overwrite=True)
    xh = f["xray_wcs"].to_header()
    xh["BUNIT"] = "count"
    xh["EXPTIME"] = (SETUP["xray_exposure_s"], "[s] on-axis exposure")
    xh["ORIGIN"] = "lensmass demo generator (synthetic X-ray image of an invented survey field)"
    eh = f["xray_wcs"].to_header()
    eh["BUNIT"] = "s"
    with atomic_path(paths["xray"]) as tmp:
        fits.HDUList([fits.PrimaryHDU(f["counts"], header=xh),
                      fits.ImageHDU(f["exposure"], header=eh, name="EXPOSURE")]).writeto(tmp, overwrite=True)
    gh = f["gas_wcs"].to_header()
    gh["BUNIT"] = "solMass"
    gh["COMMENT"] = "Gas mass per pixel (synthetic), on a coarser grid aligned with the X-ray image."
    with atomic_path(paths["gas_mass"]) as tmp:
        fits.PrimaryHDU(f["gas_map"], header=gh).writeto(tmp, overwrite=True)
    oh = f["optical_wcs"].to_header()
    oh["BUNIT"] = "count/s"
    oh["COMMENT"] = "Shallow synthetic image of the member galaxies only (invented survey)."
    with atomic_path(paths["optical"]) as tmp:
        fits.PrimaryHDU(f["optical"], header=oh).writeto(tmp, overwrite=True)
    truth_path = out / f"{NAME}.truth.json"
    write_text_atomic(truth_path, dumps(f["truth"]) + "\n")
    written = [*paths.values(), truth_path]
    for p in written:
        os.chmod(p, 0o644)
    return written


def read_truth(path) -> dict:
    return json.loads(Path(path).read_text(encoding="utf-8"))
