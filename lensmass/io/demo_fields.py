"""The demo fields of the invented Tern Ridge Imaging Survey (TRIS), ray-traced and written as FITS.

Everything here is synthetic: an invented ground-based survey (r-like band, seeing
about 0.8", zeropoint 30.0 AB for 1 count/s, 1800 s exposures) and invented fields
at invented coordinates. Each field is written as ``<name>.fits`` (float32 counts/s,
sky subtracted, TAN WCS centred on the lens) with ``<name>.truth.json`` beside it.
Run ``lensmass demo OUTDIR`` to regenerate them; the same seeds give the same files.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

from lensmass.core import raytrace as rt
from lensmass.io.atomic import atomic_path, write_text_atomic

SURVEY = "Tern Ridge Imaging Survey (TRIS, invented)"
BAND = "TRIS r (r-like, invented)"
ZEROPOINT_AB = 30.0
EXPTIME_S = 1800.0
SKY_MAG = 21.0
GENERATOR_VERSION = 1
FIELD_NAMES = ("tris_ring_a", "tris_double_b", "tris_group_c", "tris_cluster_d")


@dataclass
class DemoField:
    """Everything needed to render one demo field and describe its truth."""

    name: str
    description: str
    ra_deg: float
    dec_deg: float
    z_l: float
    z_s: float
    shape: tuple[int, int]
    pixel_scale_arcsec: float
    center_x: float
    center_y: float
    lenses: list
    theta_e_arcsec: float
    sources: list = field(default_factory=list)
    point_sources: list = field(default_factory=list)
    foreground: list = field(default_factory=list)
    psf_fwhm_arcsec: float = 0.8
    psf_kind: str = "moffat"
    seed: int = 1
    extra_truth: dict = field(default_factory=dict)


def _mag(m: float) -> float:
    return rt.flux_from_mag(m, ZEROPOINT_AB)


def _ring_a() -> DemoField:
    return DemoField(
        name="tris_ring_a", description="Galaxy-scale Einstein ring around an early-type galaxy (SIE).",
        ra_deg=201.4471, dec_deg=4.1882, z_l=0.25, z_s=0.90, shape=(100, 100), pixel_scale_arcsec=0.2,
        center_x=50.3, center_y=49.6, lenses=[rt.SIELens(1.40, 0.85, 30.0)], theta_e_arcsec=1.40,
        sources=[rt.SersicSource(_mag(24.0), 0.18, 1.0, 0.8, 10.0, 0.04, -0.03)],
        foreground=[rt.SersicSource(_mag(19.6), 1.2, 4.0, 0.8, 30.0)],
        psf_fwhm_arcsec=0.8, psf_kind="moffat", seed=101,
    )


def _double_b() -> DemoField:
    lenses = [rt.SIELens(1.10, 0.9, -20.0), rt.ExternalShear(0.02, 0.01)]
    return DemoField(
        name="tris_double_b", description="Galaxy lensing a compact bright nucleus into a double, its host into an arc.",
        ra_deg=318.9054, dec_deg=-11.6620, z_l=0.31, z_s=1.20, shape=(90, 90), pixel_scale_arcsec=0.2,
        center_x=44.7, center_y=45.2, lenses=lenses, theta_e_arcsec=1.10,
        sources=[rt.SersicSource(_mag(23.2), 0.25, 1.0, 0.7, 40.0, 0.28, 0.08)],
        point_sources=[(0.28, 0.08, _mag(22.0))],
        foreground=[rt.SersicSource(_mag(20.0), 1.0, 4.0, 0.85, -20.0)],
        psf_fwhm_arcsec=0.8, psf_kind="moffat", seed=202,
        extra_truth={"point_source_beta_arcsec": [0.28, 0.08]},
    )


def _group_c() -> DemoField:
    lenses = [rt.SIELens(5.0, 0.8, 65.0), rt.ExternalShear(0.03, -0.02)]
    members = [rt.SersicSource(_mag(18.6), 3.0, 4.0, 0.75, 65.0),
               rt.SersicSource(_mag(20.8), 1.0, 3.0, 0.8, 10.0, -9.0, 6.5),
               rt.SersicSource(_mag(21.2), 0.8, 2.5, 0.7, 120.0, 11.0, -4.0),
               rt.SersicSource(_mag(21.5), 0.7, 2.0, 0.9, 0.0, 3.0, 14.0)]
    sources = [rt.ClumpySource(_mag(22.6), 0.35, n_clumps=5, x0=0.45, y0=0.25, seed=31),
               rt.SersicSource(_mag(23.0), 0.3, 1.0, 0.6, 80.0, -0.7, 0.5),
               rt.ClumpySource(_mag(23.0), 0.3, n_clumps=4, x0=0.15, y0=-0.85, seed=32)]
    return DemoField(
        name="tris_group_c", description="Galaxy group lensing three background galaxies into several arcs.",
        ra_deg=27.6631, dec_deg=33.0917, z_l=0.42, z_s=1.60, shape=(200, 200), pixel_scale_arcsec=0.25,
        center_x=99.4, center_y=100.8, lenses=lenses, theta_e_arcsec=5.0, sources=sources, foreground=members,
        psf_fwhm_arcsec=0.85, psf_kind="moffat", seed=303,
    )


def _cluster_d() -> DemoField:
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.cosmology import angular_diameter_distances_mpc, little_h, resolve_cosmology
    from lensmass.core.lensing import sigma_crit_msun_per_mpc2
    from lensmass.core.nfw import nfw_halo
    from lensmass.core.sis import sis_theta_e_arcsec

    cosmo = resolve_cosmology("Planck18")
    z_l, z_s, m200 = 0.35, 1.80, 8e14
    c_of_m, c_label = concentration_relation("duffy08", "200c")
    c200 = float(c_of_m(m200, z_l, little_h(cosmo)))
    halo = nfw_halo(m200, c200, z_l, cosmo, "200c")
    d_l, d_s, d_ls = (float(v) for v in angular_diameter_distances_mpc(z_l, z_s, cosmo))
    sig = float(sigma_crit_msun_per_mpc2(d_l, d_s, d_ls))
    bcg_sigma = 300.0
    bcg_te = float(sis_theta_e_arcsec(bcg_sigma, d_s, d_ls))
    nfw = rt.NFWLens(halo, d_l, sig)
    lenses = [nfw, rt.SISLens(bcg_te), rt.ExternalShear(0.02, 0.015)]
    theta_e = _axisymmetric_einstein_radius([nfw, rt.SISLens(bcg_te)])
    theta_nfw = _axisymmetric_einstein_radius([nfw])
    rng = np.random.default_rng(44)
    members = [rt.SersicSource(_mag(17.8), 5.0, 4.0, 0.7, 20.0)]
    for _ in range(10):
        r, t = rng.uniform(12, 45), rng.uniform(0, 2 * np.pi)
        members.append(rt.SersicSource(_mag(rng.uniform(20.0, 22.0)), rng.uniform(0.5, 1.2), rng.uniform(2, 4),
                                       rng.uniform(0.6, 0.95), rng.uniform(0, 180), r * np.cos(t), r * np.sin(t)))
    sources = [rt.ClumpySource(_mag(22.4), 0.4, n_clumps=6, x0=0.6, y0=0.3, seed=41),
               rt.SersicSource(_mag(22.8), 0.35, 1.0, 0.5, 30.0, -0.9, 0.8),
               rt.ClumpySource(_mag(22.8), 0.35, n_clumps=5, x0=-0.2, y0=-1.1, seed=42),
               rt.SersicSource(_mag(23.0), 0.3, 1.0, 0.7, 100.0, 1.3, -0.9)]
    return DemoField(
        name="tris_cluster_d", description="Galaxy cluster (NFW halo + central galaxy) with arcs of four background galaxies.",
        ra_deg=141.3720, dec_deg=18.2705, z_l=z_l, z_s=z_s, shape=(400, 400), pixel_scale_arcsec=0.25,
        center_x=199.6, center_y=200.3, lenses=lenses, theta_e_arcsec=theta_e, sources=sources, foreground=members,
        psf_fwhm_arcsec=0.85, psf_kind="moffat", seed=404,
        extra_truth={
            "nfw_m200_msun": m200, "nfw_c200": c200, "halo_definition": "200c", "concentration_relation": c_label,
            "cosmology": "Planck18", "bcg_sis_sigma_v_kms": bcg_sigma, "bcg_sis_theta_e_arcsec": bcg_te,
            "nfw_alone_theta_e_arcsec": theta_nfw,
            "theta_e_definition": "radius where the mean convergence of NFW + central SIS inside it is 1 "
                                  "(external shear does not change it)",
        },
    )


def _axisymmetric_einstein_radius(lenses) -> float:
    """Radius (arcsec) where the mean convergence of circular lenses inside it is 1: alpha(theta) = theta."""
    from scipy.optimize import brentq

    def f(t):
        ax, _ = rt.deflection_arcsec(lenses, np.array([t]), np.array([0.0]))
        return float(ax[0]) - t

    return float(brentq(f, 1e-3, 200.0, xtol=1e-10))


#: name -> builder of its :class:`DemoField`.
DEMO_FIELDS: dict[str, Callable[[], DemoField]] = {
    "tris_ring_a": _ring_a, "tris_double_b": _double_b, "tris_group_c": _group_c, "tris_cluster_d": _cluster_d,
}


def render_demo_field(spec: DemoField) -> rt.SimulatedField:
    """Ray-trace one demo field (noise included, seeded)."""
    return rt.simulate_field(
        shape=spec.shape, pixel_scale_arcsec=spec.pixel_scale_arcsec, center_x=spec.center_x,
        center_y=spec.center_y, lenses=spec.lenses, sources=spec.sources, point_sources=spec.point_sources,
        foreground=spec.foreground, psf_fwhm_arcsec=spec.psf_fwhm_arcsec, psf_kind=spec.psf_kind,
        sky_mag_per_arcsec2=SKY_MAG, zeropoint_mag=ZEROPOINT_AB, exptime_s=EXPTIME_S, seed=spec.seed,
    )


def demo_header(spec: DemoField):
    """FITS header with a TAN WCS whose reference pixel is the lens centre."""
    from astropy.io import fits

    h = fits.Header()
    h["CTYPE1"], h["CTYPE2"] = "RA---TAN", "DEC--TAN"
    h["CRPIX1"], h["CRPIX2"] = spec.center_x + 1.0, spec.center_y + 1.0  # FITS pixels are 1-based
    h["CRVAL1"], h["CRVAL2"] = spec.ra_deg, spec.dec_deg
    h["CDELT1"], h["CDELT2"] = -spec.pixel_scale_arcsec / 3600.0, spec.pixel_scale_arcsec / 3600.0
    h["CUNIT1"], h["CUNIT2"] = "deg", "deg"
    h["RADESYS"] = "ICRS"
    h["OBJECT"] = spec.name
    h["SURVEY"] = ("TRIS", "Tern Ridge Imaging Survey (invented)")
    h["FILTER"] = ("TRIS-r", "r-like band (invented survey)")
    h["BUNIT"] = "count/s"
    h["EXPTIME"] = (EXPTIME_S, "[s] exposure time")
    h["GAIN"] = (1.0, "[e-/count]")
    h["MAGZERO"] = (ZEROPOINT_AB, "AB mag giving 1 count/s")
    h["SKYSUB"] = (True, "sky level subtracted")
    h["SEEING"] = (spec.psf_fwhm_arcsec, "[arcsec] PSF FWHM")
    h["ORIGIN"] = "lensmass demo generator (synthetic field)"
    h["COMMENT"] = "Synthetic, ray-traced field of an invented survey; truth in the .truth.json file."
    return h


def truth_of(spec: DemoField, sim: rt.SimulatedField) -> dict:
    """The truth record written beside the image."""
    return {
        "field": spec.name,
        "description": spec.description,
        "survey": SURVEY,
        "band": BAND,
        "synthetic": True,
        "z_l": spec.z_l,
        "z_s": spec.z_s,
        "theta_e_arcsec": spec.theta_e_arcsec,
        "center_x": spec.center_x,
        "center_y": spec.center_y,
        "center_ra": spec.ra_deg,
        "center_dec": spec.dec_deg,
        "pixel_scale_arcsec": spec.pixel_scale_arcsec,
        "shape": list(spec.shape),
        "pixel_convention": "x, y are 0-based column, row of the array as stored",
        "lens_mass_model": {"components": [lens.describe() for lens in spec.lenses],
                            "angles": "arcsec from the lens centre; x along columns, y along rows"},
        "lens_light_model": [c.describe() for c in spec.foreground],
        "sources": [s.describe() for s in spec.sources],
        "point_sources": [{"beta_x_arcsec": bx, "beta_y_arcsec": by, "flux": f} for bx, by, f in spec.point_sources],
        "psf": {"kind": spec.psf_kind, "fwhm_arcsec": spec.psf_fwhm_arcsec},
        "zeropoint_ab": ZEROPOINT_AB,
        "exptime_s": EXPTIME_S,
        "sky_mag_per_arcsec2": SKY_MAG,
        "noise_sigma_counts_per_s": sim.noise_sigma,
        "seed": spec.seed,
        "generator_version": GENERATOR_VERSION,
        "arc_points_xy": [[round(x, 3), round(y, 3)] for x, y in sim.arc_points_xy],
        "arc_points_by_source": [[[round(x, 3), round(y, 3)] for x, y in g] for g in sim.arc_points_by_source],
        "image_points_xy": [[round(x, 3), round(y, 3)] for x, y in sim.image_points_xy],
        "image_magnifications": [round(m, 4) for m in sim.image_magnifications],
        **spec.extra_truth,
    }


def write_demo_field(spec: DemoField, outdir: str | os.PathLike) -> tuple[Path, Path]:
    """Render ``spec`` and write ``<name>.fits`` + ``<name>.truth.json`` atomically into ``outdir``."""
    from astropy.io import fits

    out = Path(outdir)
    out.mkdir(parents=True, exist_ok=True)
    sim = render_demo_field(spec)
    img_path, truth_path = out / f"{spec.name}.fits", out / f"{spec.name}.truth.json"
    with atomic_path(img_path) as tmp:
        fits.PrimaryHDU(sim.image.astype(np.float32), header=demo_header(spec)).writeto(tmp, overwrite=True)
    from lensmass.io.jsonout import dumps

    write_text_atomic(truth_path, dumps(truth_of(spec, sim)) + "\n")
    for p in (img_path, truth_path):
        os.chmod(p, 0o644)  # readable by everyone, like any downloaded example file
    return img_path, truth_path


def write_demo_fields(outdir: str | os.PathLike, names=FIELD_NAMES, progress=None) -> list[Path]:
    """Write the chosen demo fields into ``outdir``; returns the paths written."""
    written: list[Path] = []
    for i, name in enumerate(names):
        written.extend(write_demo_field(DEMO_FIELDS[name](), outdir))
        if progress is not None:
            progress((i + 1) / len(names))
    return written
