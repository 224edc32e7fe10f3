"""What each number of a shear analysis means: the profile table rows, the notes and the model descriptions."""

from __future__ import annotations

from typing import Any

import numpy as np

from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.result_keys import MODEL_NOTE
from lensmass.core.shear_fit import DETECTION_SIGMA, PRIORS


def profile_rows(profile, sis_model, nfw_model) -> list[dict[str, float]]:
    """The binned profile as one dict per bin (radii in arcsec and kpc, Delta Sigma in Msun/pc^2)."""
    e = profile.edges_arcsec
    to_kpc = ARCSEC_RAD * profile.d_l_mpc * 1e3
    ds = profile.delta_sigma_msun_per_mpc2
    dse = profile.delta_sigma_err_msun_per_mpc2
    rows = []
    for i in range(e.size - 1):
        rows.append({
            "r_lo_arcsec": float(e[i]), "r_hi_arcsec": float(e[i + 1]),
            "r_mean_arcsec": float(profile.r_mean_arcsec[i]), "r_mean_kpc": float(profile.r_mean_arcsec[i] * to_kpc),
            "n_galaxies": int(profile.n_galaxies[i]),
            "g_t": float(profile.g_t[i]), "g_t_err": float(profile.g_t_err[i]),
            "g_t_err_bootstrap": float(profile.g_t_err_boot[i]),
            "g_x": float(profile.g_x[i]), "g_x_err": float(profile.g_x_err[i]),
            "g_x_err_bootstrap": float(profile.g_x_err_boot[i]),
            "delta_sigma_msun_per_pc2": float(ds[i] * 1e-12) if ds is not None else float("nan"),
            "delta_sigma_err_msun_per_pc2": float(dse[i] * 1e-12) if dse is not None else float("nan"),
            "g_t_model_sis": float(sis_model[i]), "g_t_model_nfw": float(nfw_model[i]),
        })
    return rows


def detection_note(sis, nfw) -> str | None:
    """The sentence that replaces a measurement when the data do not detect the halo."""
    if nfw.detected:
        return None
    return (f"The data do not detect the halo: the NFW fit beats no lens at {nfw.significance:.1f} sigma "
            f"(SIS {sis.significance:.1f} sigma; {DETECTION_SIGMA:g} needed). Read the masses as upper limits: "
            f"M200 < {nfw.upper['nfw_m200_msun']:.3g} Msun and sigma_v < {sis.upper['sis_sigma_v_kms']:.0f} km/s "
            f"(95%, one-sided; priors {PRIORS['NFW']} and {PRIORS['SIS']}). The medians and intervals are "
            "posterior summaries under those priors, not measurements.")


def _notes(sis, nfw, p_cross, dropped, zeta_mass, zeta_err, nfw_m2d, per_galaxy_z, zeta_mass_weak) -> list[str]:
    notes = list(sis.notes) + list(nfw.notes)
    undetected = detection_note(sis, nfw)
    if undetected:
        notes.insert(0, undetected)
    total = sum(v for k, v in dropped.items() if k != "outside_radial_range")
    if total:
        parts = ", ".join(f"{v} {k.replace('_', ' ')}" for k, v in dropped.items() if v and k != "outside_radial_range")
        notes.append(f"{total} catalogue rows were dropped ({parts}).")
    if np.isfinite(p_cross) and p_cross < 0.01:
        notes.append(f"The cross shear is not consistent with zero (p = {p_cross:.2g}): suspect a wrong centre, "
                     "a flipped e1/e2 sign convention, or PSF residuals.")
    for fit in (sis, nfw):
        if np.isfinite(fit.pvalue) and fit.pvalue < 0.01:
            notes.append(f"The {fit.model} model fits poorly (p = {fit.pvalue:.2g}).")
    if np.isfinite(zeta_mass) and np.isfinite(zeta_mass_weak) and zeta_mass_weak > 0 \
            and zeta_mass_weak - zeta_mass > 0.02 * zeta_mass_weak:
        notes.append(f"The convergence is not small in the zeta annulus: converting the reduced shear to shear "
                     f"(gamma_t = g_t (1 - kappa), kappa of the fitted NFW halo) lowered the zeta mass by "
                     f"{100 * (1 - zeta_mass / zeta_mass_weak):.0f}%; read uncorrected ({zeta_mass_weak:.3g} Msun) "
                     "it would not be a lower bound.")
    if np.isfinite(zeta_mass) and np.isfinite(nfw_m2d) and zeta_mass > nfw_m2d + 2 * zeta_err:
        notes.append("The zeta lower bound exceeds the projected mass of the fitted NFW halo at that radius "
                     "by more than 2 sigma: the NFW fit may underestimate the mass inside that radius.")
    if per_galaxy_z:
        notes.append("Per-galaxy redshifts are used as given: photometric-redshift errors and outliers bias "
                     "Sigma_cr and are not propagated.")
    notes.append(MODEL_NOTE)
    return notes


def model_descriptions(cosmology_name: str, concentration_label: str, halo_definition: str,
                       free_concentration: bool, source_redshifts: str, cosmo: Any = None) -> dict[str, str]:
    """Which model and assumptions produced each reported number."""
    from lensmass.core.nfw import halo_boundary_description

    if cosmo is not None:
        boundary = halo_boundary_description(halo_definition, cosmo)
    else:
        boundary = {"200c": "200 x critical density at z_l", "200m": "200 x mean matter density at z_l",
                    "vir": "virial overdensity of Bryan & Norman (1998) at z_l"}[halo_definition]
    like = ("Gaussian likelihood of the binned tangential reduced shear (shape-noise errors), "
            "posterior on a grid; value = posterior median, best_fit = maximum likelihood; "
            f"distances in {cosmology_name}; source redshifts: {source_redshifts}")
    c_text = "c free (flat prior in log c, 0.3-40)" if free_concentration else f"c from {concentration_label}"
    nfw = f"NFW halo (Wright & Brainerd 2000), boundary {boundary}, {c_text}; prior {PRIORS['NFW']}; {like}"
    zeta = ("aperture densitometry (Fahlman et al. 1994): lower bound on the projected mass inside the inner "
            "radius, from the Delta Sigma profile in the annulus with the reduced shear converted to shear by the "
            "convergence of the fitted NFW halo, gamma_t = g_t (1 - kappa); the bound rests on that convergence "
            "in the annulus (its 68% range is in the error), not on the NFW mass inside the inner radius")
    return {
        "sis_sigma_v_kms": f"singular isothermal sphere fitted to the reduced shear; prior {PRIORS['SIS']}; " + like,
        "sis_theta_e_arcsec": "Einstein radius of the fitted SIS for a source at z_s_effective "
        "(the redshift with the sample's mean D_ls/D_s)",
        "nfw_m200_msun": nfw,
        "nfw_c200": nfw,
        "nfw_r200_kpc": nfw,
        "zeta_mass_msun": zeta,
        "zeta": "zeta(theta1, theta2) = mean kappa inside theta1 minus mean kappa in the annulus (Fahlman et al. 1994)",
        "delta_sigma_msun_per_pc2": "excess surface density Sigma_cr g_t, each galaxy's own Sigma_cr, weights w / Sigma_cr^2",
        "cross_shear_pvalue": "chi^2 of the binned cross shear against zero (expected for lensing)",
        "detection_significance": "likelihood ratio of the best NFW fit against no lens (zero shear), as Gaussian "
        f"sigma (Wilks' theorem); below {DETECTION_SIGMA:g} the halo counts as not detected",
        "nfw_m200_upper95_msun": "one-sided 95% upper limit on M200: 95th percentile of the NFW posterior under "
        f"the prior {PRIORS['NFW']}",
        "sis_sigma_v_upper95_kms": "one-sided 95% upper limit on the SIS sigma_v: 95th percentile of its posterior "
        f"under the prior {PRIORS['SIS']}",
        "nfw_mass_2d_at_zeta_radius_msun": "projected mass of the best-fit NFW halo inside the zeta inner radius",
        "zeta_mass_weak_shear_msun": "the zeta mass with the reduced shear read as shear (weak-shear limit, "
        "kappa << 1): above the truth where kappa is not small, so not a bound; shown for comparison",
    }
