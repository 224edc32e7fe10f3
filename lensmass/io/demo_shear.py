"""Write the demo shape catalogue around the TRIS cluster field D, and its truth file.

The scenario is invented (the Tern Ridge Imaging Survey): an NFW cluster of
M200 = 8e14 Msun (200c, Duffy et al. 2008 concentration) at z_l = 0.35, centred on
RA 141.3720, Dec +18.2705, with about 30 background galaxies per arcmin^2 over a
20 arcmin square, shape noise 0.25 per component, a per-galaxy measurement error,
and photometric redshifts (scatter 0.05 (1 + z)). Made with
:func:`lensmass.core.shear_simulation.simulate_shear_catalog` (exact reduced-shear distortion).

Run ``python -m lensmass.io.demo_shear OUTDIR`` to (re)write the two files.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

import numpy as np

from lensmass.core.cosmology import cosmology_label, resolve_cosmology
from lensmass.core.shear_simulation import simulate_shear_catalog
from lensmass.core.uncertainty import DEFAULT_SEED
from lensmass.io.atomic import write_text_atomic
from lensmass.io.catalogs import write_shear_catalog_fits

DEMO_NAME = "tris_cluster_d_shear"
DEMO_SETUP: dict[str, Any] = {
    "field": "tris_cluster_d",
    "survey": "Tern Ridge Imaging Survey (TRIS), invented",
    "center_ra": 141.3720,
    "center_dec": 18.2705,
    "z_l": 0.35,
    "m200_msun": 8e14,
    "concentration": "duffy08",
    "halo_definition": "200c",
    "field_arcsec": 1200.0,
    "density_per_arcmin2": 30.0,
    "shape_noise": 0.25,
    "measurement_noise": (0.03, 0.12),
    "photo_z_scatter": 0.05,
    "seed": DEFAULT_SEED,
}


def make_demo_shear_catalog(cosmology=None) -> tuple[dict, dict]:
    """The demo catalogue columns (float32 shapes) and the truth mapping."""
    cosmo = resolve_cosmology(cosmology)
    s = DEMO_SETUP
    sim = simulate_shear_catalog(
        center_ra=s["center_ra"], center_dec=s["center_dec"], z_l=s["z_l"], cosmo=cosmo,
        field_arcsec=s["field_arcsec"], density_per_arcmin2=s["density_per_arcmin2"], model="nfw",
        m200_msun=s["m200_msun"], concentration=s["concentration"], halo_definition=s["halo_definition"],
        shape_noise=s["shape_noise"], photo_z_scatter=s["photo_z_scatter"],
        measurement_noise=s["measurement_noise"], seed=s["seed"],
    )
    n = sim["ra"].size
    columns = {
        "ID": np.arange(1, n + 1, dtype=np.int32),
        "RA": sim["ra"],
        "DEC": sim["dec"],
        "E1": sim["e1"].astype(np.float32),
        "E2": sim["e2"].astype(np.float32),
        "WEIGHT": sim["weight"].astype(np.float32),
        "Z_PHOT": sim["z"].astype(np.float32),
    }
    truth = {
        "field": s["field"],
        "survey": s["survey"],
        "catalog": f"{DEMO_NAME}.fits",
        "z_l": s["z_l"],
        "center_ra": s["center_ra"],
        "center_dec": s["center_dec"],
        "lens_mass_model": {
            "type": "NFW",
            "m200_msun": sim["truth"]["m200_msun"],
            "c200": sim["truth"]["c200"],
            "concentration_relation": sim["truth"]["concentration_relation"],
            "halo_definition": s["halo_definition"],
        },
        "cosmology": cosmology_label(cosmo),
        "n_galaxies": int(n),
        "field_arcmin": s["field_arcsec"] / 60.0,
        "density_per_arcmin2": s["density_per_arcmin2"],
        "shape_noise_per_component": s["shape_noise"],
        "measurement_noise_range": list(s["measurement_noise"]),
        "photo_z_scatter": f"{s['photo_z_scatter']} (1 + z), Gaussian",
        "source_redshifts": "Smail et al. (1994) n(z) with z0 = 0.7, a = 2, b = 1.5; galaxies in front of the "
                            "lens are in the catalogue, unlensed",
        "distortion": "exact reduced shear, Seitz & Schneider (1997)",
        "columns": {"ra": "RA", "dec": "DEC", "e1": "E1", "e2": "E2", "weight": "WEIGHT", "z": "Z_PHOT"},
        "ellipticity_convention": "e1 > 0 elongated east-west; e_t = -(e1 cos 2phi + e2 sin 2phi), "
                                  "phi from east toward north",
        "generator": "lensmass.io.demo_shear",
    }
    return columns, truth


def write_demo_shear(outdir: str | Path, cosmology=None) -> list[Path]:
    """Write ``tris_cluster_d_shear.fits`` and ``tris_cluster_d_shear.truth.json`` into ``outdir``."""
    outdir = Path(outdir)
    columns, truth = make_demo_shear_catalog(cosmology)
    cat_path = outdir / f"{DEMO_NAME}.fits"
    truth_path = outdir / f"{DEMO_NAME}.truth.json"
    write_shear_catalog_fits(cat_path, columns, {"SURVEY": "TRIS (invented)", "FIELD": truth["field"]})
    write_text_atomic(truth_path, json.dumps(truth, indent=2) + "\n")
    return [cat_path, truth_path]


if __name__ == "__main__":  # pragma: no cover
    for p in write_demo_shear(sys.argv[1] if len(sys.argv) > 1 else "demo_fields"):
        print(p)
