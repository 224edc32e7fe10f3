"""Products drawn from a shear result: the Kaiser-Squires map of its galaxies and the best-fit model curves."""

from __future__ import annotations

from typing import Any

import numpy as np

from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.cosmology import resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.nfw import nfw_halo
from lensmass.core.shear_profile import DEFAULT_Z_MARGIN, select_sources, sky_offsets_and_radius
from lensmass.core.uncertainty import DEFAULT_SEED


def mass_map_for_result(result: dict, *, n_pixels: int = 128, extent_arcsec: float | None = None,
                        smoothing_arcsec: float = 60.0, n_noise: int = 16, seed: int | None = DEFAULT_SEED):
    """Kaiser-Squires map of the usable galaxies of an in-memory :func:`lensmass.core.shear_analysis.analyse_shear_catalog` result,
    centred on its centre (the same selection as the profile: finite values, |e| < 1, w > 0, behind the lens)."""
    from lensmass.core.mass_map import mass_map

    gal = result.get("_galaxies")
    if gal is None:
        raise LensInputError("The mass map needs the catalogue in memory: run it on one catalogue file "
                             "without a distributed scheduler (`scheduler`), or make the map of a smaller part of the survey.")
    x, y, _, placed = sky_offsets_and_radius(gal["ra_deg"], gal["dec_deg"], result["center_ra"], result["center_dec"])
    sel = result.get("_selection", {})
    z = gal["z"] if sel.get("z_s") is None else None
    ok, _ = select_sources(gal["e1"], gal["e2"], gal["weight"], z, result["z_l"], positions_ok=placed,
                           z_margin=sel.get("z_margin", DEFAULT_Z_MARGIN))
    return mass_map(x[ok], y[ok], gal["e1"][ok], gal["e2"][ok], gal["weight"][ok], n_pixels=n_pixels,
                    extent_arcsec=extent_arcsec, smoothing_arcsec=smoothing_arcsec, n_noise=n_noise, seed=seed)


def model_curves(result: dict, theta_arcsec, cosmology: Any = None) -> dict[str, np.ndarray]:
    """Best-fit SIS and NFW reduced tangential shear at radii ``theta_arcsec``, for plots.

    Uses one source plane with the sample's mean D_ls / D_s (the fits themselves average
    over the galaxies' own redshifts), so the curves are a display aid.
    """
    from lensmass.core.lensing import sigma_crit_msun_per_mpc2
    from lensmass.core.nfw import nfw_reduced_shear
    from lensmass.core.shear_fit import expected_ellipticity
    from lensmass.core.sis import sis_reduced_shear, sis_theta_e_arcsec

    cosmo = resolve_cosmology(cosmology if cosmology is not None else result["cosmology"])
    theta = np.asarray(theta_arcsec, float)
    best = result["best_fit"]
    beta = result["beta_mean"]
    d_l = result["d_l_mpc"]
    sis = sis_reduced_shear(theta, sis_theta_e_arcsec(best["sis_sigma_v_kms"], 1.0, beta))
    halo = nfw_halo(best["nfw_m200_msun"], best["nfw_c200"], result["z_l"], cosmo, result.get("halo_definition", "200c"))
    nfw = nfw_reduced_shear(theta * ARCSEC_RAD * d_l, halo, sigma_crit_msun_per_mpc2(d_l, 1.0, beta))
    return {"sis": expected_ellipticity(sis), "nfw": expected_ellipticity(nfw)}
