"""Where the mass, the gas and the galaxies of a cluster are, and how much of each: one call.

:func:`locate_cluster_components` runs, on one shear catalogue and optionally an X-ray
image, a member catalogue and a gas mass:

1. the E-mode convergence map and its peaks, with bootstrap regions and significance
   (:mod:`lensmass.core.mass_peaks`);
2. the gas map (X-ray) and the light map (members) on the same sky grid, and their peaks
   (:mod:`lensmass.core.map_alignment`);
3. the offsets of the nearest gas and light peaks from each mass peak
   (:mod:`lensmass.core.peak_offsets`);
4. a joint NFW fit of one halo per mass peak (:mod:`lensmass.core.halo_fit`) and the
   budgets inside an aperture around each peak (:mod:`lensmass.core.cluster_budget`).

The result is a plain mapping (JSON-ready apart from ``_``-prefixed working data) with
``notes`` and ``models`` saying which model and assumptions produced each number.
"""

from __future__ import annotations

from typing import Any, Callable

import numpy as np

from lensmass.core import cluster_budget as cb
from lensmass.core.concentration import concentration_relation
from lensmass.core.cosmology import cosmology_label, little_h, resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.halo_fit import fit_nfw_halos
from lensmass.core.lensing import sigma_crit_msun_per_mpc2
from lensmass.core.map_alignment import light_peaks, reproject_onto_map, xray_peaks
from lensmass.core.mass_peaks import mass_peaks
from lensmass.core.nfw import nfw_halo
from lensmass.core.peak_offsets import kpc_per_arcsec, match_offsets
from lensmass.core.shear_profile import (
    lensing_efficiency,
    select_sources,
    tangent_plane_offsets_arcsec,
    tangent_plane_to_sky,
)


def _interval_row(key: str, draws, row: dict) -> None:
    q = cb.quantiles(draws)
    row[key] = float(q[2])
    row.setdefault("intervals68", {})[key] = [float(q[1]), float(q[3])]
    row.setdefault("intervals95", {})[key] = [float(q[0]), float(q[4])]


def _peak_row(i: int, p, center_ra: float, center_dec: float, n_resamples: int) -> dict:
    ra, dec = tangent_plane_to_sky(np.array([p.x_arcsec]), np.array([p.y_arcsec]), center_ra, center_dec)
    row = {"peak": i + 1, "ra_deg": float(ra[0]), "dec_deg": float(dec[0]), "x_arcsec": p.x_arcsec,
           "y_arcsec": p.y_arcsec, "regions": [r.as_dict() for r in p.regions],
           "found_in_resamples": f"{p.n_found}/{n_resamples}"}
    return row


def locate_cluster_components(
    ra_deg, dec_deg, e1, e2, weight=None, z=None, *,
    z_l: float,
    z_s: float | None = None,
    center_ra: float | None = None,
    center_dec: float | None = None,
    cosmology: Any = None,
    concentration: str = "duffy08",
    halo_definition: str = "200c",
    n_pixels: int = 128,
    extent_arcsec: float | None = None,
    smoothing_arcsec: float = 45.0,
    gas_smoothing_arcsec: float = 10.0,
    light_smoothing_arcsec: float | None = None,
    n_resamples: int = 200,
    n_noise: int = 32,
    min_snr: float = 3.5,
    max_peaks: int = 4,
    xray_counts=None, xray_wcs=None, xray_exposure=None,
    member_ra=None, member_dec=None, member_stellar_mass_msun=None,
    member_luminosity_lsun=None, mass_to_light: float | None = None,
    stellar_systematic_dex: float = 0.15,
    gas_mass_msun=None, gas_mass_err_msun=None, gas_map_msun_per_pixel=None, gas_map_wcs=None,
    gas_map_err_fraction: float = 0.1,
    aperture_kpc: float = 250.0,
    inner_cut_arcsec: float = 60.0,
    n_draws: int = 2000,
    z_margin: float = 0.1,
    seed: int | None = 20261202,
    progress: Callable[[float, str], None] | None = None,
    cancelled: Callable[[], bool] | None = None,
) -> dict[str, Any]:
    """Mass, gas and light peaks, their offsets and the dark-to-ordinary budgets of a cluster.

    Parameters
    ----------
    ra_deg, dec_deg, e1, e2, weight, z : array_like
        Shear catalogue (degrees; east/north ellipticities; weights; per-galaxy redshifts or
        None with ``z_s``).
    z_l : float
        Cluster redshift.
    center_ra, center_dec : float, optional
        Map centre; default the middle of the galaxies' range.
    smoothing_arcsec : float
        Gaussian sigma of the E-mode map (and of the light map unless ``light_smoothing_arcsec``).
    gas_smoothing_arcsec : float
        Gaussian sigma of the X-ray map (X-ray images resolve far finer detail than shear maps:
        smoothed at the mass map's scale, a compact gas clump next to a big one is only a shoulder).
    xray_counts, xray_wcs, xray_exposure :
        X-ray counts image, its astropy WCS, optional exposure map.
    member_ra, member_dec, member_stellar_mass_msun / member_luminosity_lsun + mass_to_light :
        Member galaxies with stellar masses, or luminosities and a stated M/L (Msun/Lsun).
    gas_mass_msun, gas_mass_err_msun : sequence, optional
        Gas mass inside the aperture of each mass peak (in peak order), with errors.
    gas_map_msun_per_pixel, gas_map_wcs :
        Or a gas surface-mass map (Msun per pixel of that map) on its own WCS.
    aperture_kpc : float
        Radius of the budget apertures, physical at the cluster.

    Examples
    --------
    20,000 galaxies sheared by a 2e15 Msun NFW halo at the centre: the strongest mass peak lies there.

    >>> from astropy.cosmology import Planck18
    >>> from lensmass.core.shear_simulation import simulate_shear_catalog
    >>> sim = simulate_shear_catalog(center_ra=150.0, center_dec=2.0, z_l=0.3, cosmo=Planck18,
    ...                              n_galaxies=20000, z_s=1.0, m200_msun=2e15, seed=4)
    >>> out = locate_cluster_components(sim["ra"], sim["dec"], sim["e1"], sim["e2"], z_l=0.3, z_s=1.0,
    ...                                 center_ra=150.0, center_dec=2.0, n_pixels=48, n_resamples=20,
    ...                                 n_noise=8, cosmology=Planck18)
    >>> peak = out["mass_peaks"][0]
    >>> bool(np.hypot(peak["x_arcsec"], peak["y_arcsec"]) < 20 and peak["snr"] > 5)
    True
    """
    cosmo = resolve_cosmology(cosmology)
    tick = progress or (lambda f, m: None)
    if not (np.isfinite(z_l) and 0 < z_l < 5):
        raise LensInputError(f"The cluster redshift must be between 0 and 5, got {z_l}.")
    if not (np.isfinite(aperture_kpc) and aperture_kpc > 0):
        raise LensInputError(f"The aperture radius must be a positive number of kpc, got {aperture_kpc}.")
    ra = np.asarray(ra_deg, float)
    dec = np.asarray(dec_deg, float)
    e1 = np.asarray(e1, float)
    e2 = np.asarray(e2, float)
    w = np.ones_like(e1) if weight is None else np.asarray(weight, float)
    if z is None and z_s is None:
        raise LensInputError("Give the source redshifts: a redshift column or one source redshift for all.")
    zz = None if z is None else np.asarray(z, float)
    ok, dropped = select_sources(e1, e2, w, zz, z_l, positions_ok=np.isfinite(ra) & np.isfinite(dec),
                                 z_margin=z_margin)
    if z_s is not None and z_s <= z_l + z_margin:
        raise LensInputError(f"The source redshift {z_s} is not behind the cluster (z_l = {z_l}); give a larger one.")
    if np.count_nonzero(ok) < 100:
        raise LensInputError(f"Only {np.count_nonzero(ok)} usable galaxies behind the cluster: a mass map needs "
                             "hundreds at least; check the columns and the redshifts.")
    ra, dec, e1, e2, w = ra[ok], dec[ok], e1[ok], e2[ok], w[ok]
    if center_ra is None or center_dec is None:
        center_ra = float(0.5 * (np.min(ra) + np.max(ra)))
        center_dec = float(0.5 * (np.min(dec) + np.max(dec)))
    x, y = tangent_plane_offsets_arcsec(ra, dec, center_ra, center_dec)
    beta, _, d_l = lensing_efficiency(z_l, zz[ok] if zz is not None else np.full(x.size, float(z_s)), cosmo)
    if extent_arcsec is None:
        extent_arcsec = 2.0 * float(max(np.max(np.abs(x)), np.max(np.abs(y))))
    scale = kpc_per_arcsec(d_l)
    aperture_arcsec = aperture_kpc / scale
    mean_beta = float(np.sum(w * beta) / np.sum(w))
    sigma_cr_eff = float(sigma_crit_msun_per_mpc2(d_l, 1.0, 1.0)) / mean_beta

    tick(0.02, "mass map")
    mp = mass_peaks(x, y, e1, e2, w, n_pixels=n_pixels, extent_arcsec=extent_arcsec,
                    smoothing_arcsec=smoothing_arcsec, n_resamples=n_resamples, n_noise=n_noise, min_snr=min_snr,
                    max_peaks=max_peaks, keep_resampled_maps=True, seed=seed,
                    progress=lambda f: tick(0.02 + 0.6 * f, "mass map resamplings"), cancelled=cancelled)
    if not mp.peaks:
        raise LensInputError(f"No mass peak reaches S/N {min_snr:g} on this map: lower the threshold, change the "
                             "smoothing, or check the ellipticity sign convention (`flip_e1`, `flip_e2`).")
    centres = np.array([[p.x_arcsec, p.y_arcsec] for p in mp.peaks])
    pix = mp.pixel_arcsec
    notes: list[str] = []
    models = {
        "mass_map": f"Kaiser & Squires (1993) E-mode convergence of the Gaussian-smoothed shear (sigma "
                    f"{smoothing_arcsec:g} arcsec), {n_pixels} x {n_pixels} pixels of {pix:.3g} arcsec; zero mean "
                    "over the padded field (mass-sheet degeneracy)",
        "peak_positions": f"sub-pixel local maxima; regions from {n_resamples} Poisson-bootstrap resamplings of the "
                          "galaxies, widened by a calibrated factor (see lensmass.core.peak_finding)",
        "peak_significance": f"S/N against the scatter of {n_noise} rotated-ellipticity maps; false-peak probability = "
                             "fraction of those maps whose highest peak anywhere is as high; B-mode map searched alike",
    }
    result: dict[str, Any] = {
        "kind": "cluster_components", "cosmology": cosmology_label(cosmo), "z_l": float(z_l),
        "center_ra": float(center_ra), "center_dec": float(center_dec), "d_l_mpc": float(d_l),
        "kpc_per_arcsec": scale, "n_rows": int(ok.size), "n_used": int(x.size), "n_dropped": dropped,
        "mean_beta": mean_beta, "sigma_cr_effective_msun_per_pc2": sigma_cr_eff / 1e12,
        "map": {"pixels": n_pixels, "pixel_arcsec": pix, "extent_arcsec": float(extent_arcsec),
                "smoothing_arcsec": float(smoothing_arcsec), "resamples": n_resamples, "noise_maps": n_noise,
                "min_snr": float(min_snr), "b_mode_max_snr": mp.b_mode_max_snr},
    }
    rows = []
    for i, p in enumerate(mp.peaks):
        row = _peak_row(i, p, center_ra, center_dec, n_resamples)
        row.update(kappa_e=p.kappa_e, snr=p.snr, false_peak_probability=p.false_peak_probability,
                   b_mode_peaks_as_high=p.b_mode_peaks_as_high)
        rows.append(row)
    result["mass_peaks"] = rows
    b_limit = float(np.quantile(mp.null_max_snr, 0.95))
    result["map"]["noise_highest_peak_snr95"] = b_limit
    if mp.b_mode_max_snr > b_limit:
        notes.append(f"The B-mode map's highest peak (S/N {mp.b_mode_max_snr:.1f}) is higher than 95% of the "
                     f"rotated-noise maps' highest peaks ({b_limit:.1f}). Lensing makes no B mode, but the reduced shear "
                     "near massive halos and the field's edges leak a little into it; far from both, suspect the shape "
                     "measurement or the ellipticity convention.")

    seconds = {}
    if xray_counts is not None:
        tick(0.64, "X-ray map")
        if xray_wcs is None:
            raise LensInputError("The X-ray image has no usable sky coordinates (WCS): give one with a WCS.")
        seconds["gas"] = xray_peaks(xray_counts, xray_wcs, exposure=xray_exposure, center_ra=center_ra,
                                    center_dec=center_dec, pixel_arcsec=pix, n_pixels=n_pixels,
                                    smoothing_arcsec=gas_smoothing_arcsec, n_resamples=n_resamples, seed=seed)
        models["gas_map"] = seconds["gas"].description
    member_amount = None
    if member_ra is not None:
        tick(0.7, "light map")
        if member_stellar_mass_msun is not None:
            member_amount, unit = np.asarray(member_stellar_mass_msun, float), "Msun (stellar)"
            models["stellar_mass"] = (f"sum of the members' stellar masses in the aperture; Poisson bootstrap of the "
                                      f"members times a lognormal systematic of {stellar_systematic_dex:g} dex")
        elif member_luminosity_lsun is not None:
            if mass_to_light is None or not (mass_to_light > 0):
                raise LensInputError("Member luminosities need a stellar mass-to-light ratio (Msun/Lsun) to give "
                                     "stellar masses: state one.")
            member_amount, unit = np.asarray(member_luminosity_lsun, float) * mass_to_light, "Msun (L x M/L)"
            models["stellar_mass"] = (f"members' luminosities x the stated M/L = {mass_to_light:g} Msun/Lsun; "
                                      f"lognormal systematic {stellar_systematic_dex:g} dex; Poisson bootstrap")
        else:
            raise LensInputError("The member catalogue needs stellar masses or magnitudes for a light map.")
        seconds["light"] = light_peaks(member_ra, member_dec, member_amount, center_ra=center_ra,
                                       center_dec=center_dec, pixel_arcsec=pix, n_pixels=n_pixels,
                                       smoothing_arcsec=light_smoothing_arcsec or smoothing_arcsec,
                                       n_resamples=n_resamples, unit=unit,
                                       seed=None if seed is None else seed + 1)
        models["light_map"] = seconds["light"].description
    for kind, sm in seconds.items():
        result[f"{kind}_peaks"] = [dict(_peak_row(i, p, center_ra, center_dec, sm.n_resamples),
                                        height=p.height) for i, p in enumerate(sm.peaks)]
    offsets = []
    for kind, sm in seconds.items():
        for o in match_offsets(mp.peaks, sm.peaks, kind=kind, d_l_mpc=d_l, max_match_arcsec=4 * smoothing_arcsec):
            offsets.append(o.as_dict(scale))
    result["offsets"] = offsets
    if seconds:
        models["offsets"] = ("nearest gas / light peak within 4 smoothing widths of each mass peak; regions from "
                             "paired bootstrap resamplings (widened as the mass peaks'); significance of a non-zero "
                             "offset from chi^2 (2 dof) of its Mahalanobis distance under the bootstrap covariance, "
                             "with the distribution-free bootstrap p-value beside it")

    tick(0.75, "NFW fit")
    fit = fit_nfw_halos(x, y, e1, e2, w, beta, centres, z_l=z_l, cosmo=cosmo, d_l_mpc=d_l,
                        extent_arcsec=extent_arcsec, concentration=concentration, halo_definition=halo_definition,
                        inner_cut_arcsec=inner_cut_arcsec, n_draws=n_draws, seed=seed)
    c_of_m, c_label = concentration_relation(concentration, halo_definition)
    h = little_h(cosmo)
    halo_rows = []
    mq = fit.m200_quantiles()
    for i in range(len(mp.peaks)):
        m_med = float(mq[i, 2])
        c_med = float(c_of_m(m_med, z_l, h))
        r_delta = float(nfw_halo(m_med, c_med, z_l, cosmo, halo_definition).r_delta_mpc) * 1000.0
        halo_rows.append({"peak": i + 1, "m200_msun": m_med, "c200": c_med, "r200_kpc": r_delta,
                          "intervals68": {"m200_msun": [float(mq[i, 1]), float(mq[i, 3])]},
                          "intervals95": {"m200_msun": [float(mq[i, 0]), float(mq[i, 4])]},
                          "at_prior_edge": fit.at_prior_edge[i]})
        if fit.at_prior_edge[i]:
            notes.append(f"The NFW mass of peak {i + 1} sits at the edge of the allowed range: it is not measured.")
    result["halo_fit"] = {"halos": halo_rows, "chi2": fit.chi2, "dof": fit.dof, "cells": fit.n_cells,
                          "inner_cut_arcsec": float(inner_cut_arcsec)}
    models["halo_fit"] = (f"one NFW halo ({halo_definition}, c from {c_label}) at each mass peak, fitted jointly to "
                          f"the galaxies' ellipticities (reduced shear of the summed halos) outside "
                          f"{inner_cut_arcsec:g} arcsec of the peaks; Laplace approximation of the posterior in "
                          "log10 M200 (flat prior); centres held at the peaks")

    tick(0.85, "budgets")
    try:
        cosmic = cb.cosmic_baryon_fraction(cosmo)
    except LensInputError as exc:  # a custom cosmology without Ob0: everything but that comparison
        cosmic = None
        notes.append(str(exc))
    lens_nfw = cb.nfw_aperture_masses(fit.draws_log10_m200, centres, centres, aperture_arcsec,
                                      lambda lm: c_of_m(10.0 ** lm, z_l, h), z_l=z_l, cosmo=cosmo, d_l_mpc=d_l,
                                      halo_definition=halo_definition)
    lens_map = cb.map_aperture_masses(mp.resampled_kappa_e, pix, centres, aperture_arcsec, sigma_cr_eff, d_l)
    lens_map_measured = cb.map_aperture_masses([mp.kappa_e], pix, centres, aperture_arcsec, sigma_cr_eff, d_l)[0]
    rng = np.random.default_rng(seed)
    n = lens_nfw.shape[0]
    star = star_measured = star_count = None
    if member_amount is not None:
        mx, my = tangent_plane_offsets_arcsec(np.asarray(member_ra, float), np.asarray(member_dec, float),
                                              center_ra, center_dec)
        good = np.isfinite(mx) & np.isfinite(my) & np.isfinite(member_amount) & (member_amount > 0)
        star_measured, star, star_count = cb.member_aperture_masses(
            mx[good], my[good], member_amount[good], centres, aperture_arcsec, n_draws=n,
            systematic_dex=stellar_systematic_dex, seed=None if seed is None else seed + 2)
    gas = gas_measured = None
    if gas_mass_msun is not None:
        g = np.atleast_1d(np.asarray(gas_mass_msun, float))
        if g.size != len(mp.peaks):
            raise LensInputError(f"Give one gas mass per mass peak ({len(mp.peaks)} found), in peak order; got "
                                 f"{g.size}: give {len(mp.peaks)}, or keep only the strongest {g.size} peaks "
                                 f"(`max_peaks`).")
        ge = np.zeros_like(g) if gas_mass_err_msun is None else np.atleast_1d(np.asarray(gas_mass_err_msun, float))
        gas_measured = g
        gas = np.abs(g[None, :] + ge[None, :] * rng.normal(size=(n, g.size)))
        models["gas_mass"] = "gas masses inside the apertures as given by the user, Gaussian errors as given"
    elif gas_map_msun_per_pixel is not None:
        if gas_map_wcs is None:
            raise LensInputError("The gas mass map has no usable sky coordinates (WCS): give one with a WCS.")
        on_grid = reproject_onto_map(gas_map_msun_per_pixel, gas_map_wcs, center_ra, center_dec, pix, n_pixels,
                                     conserve_sum=True)
        gas_measured = cb.aperture_sums(on_grid, pix, centres, aperture_arcsec)
        gas = gas_measured[None, :] * (1.0 + gas_map_err_fraction * rng.normal(size=(n, gas_measured.size)))
        models["gas_mass"] = (f"user's gas map (Msun per pixel) resampled onto the mass grid by WCS (reproject, sum "
                              f"kept) and summed in the apertures; stated error {100 * gas_map_err_fraction:g}%")
    budgets = []
    lens_map_draws = lens_map[rng.integers(0, lens_map.shape[0], n)]
    for i in range(len(mp.peaks)):
        row = {"peak": i + 1, "aperture_kpc": float(aperture_kpc), "aperture_arcsec": float(aperture_arcsec)}
        _interval_row("lens_mass_nfw_msun", lens_nfw[:, i], row)
        _interval_row("lens_mass_map_msun", lens_map_draws[:, i], row)
        row["lens_mass_map_measured_msun"] = float(lens_map_measured[i])
        if star is not None:
            _interval_row("stellar_mass_msun", star[:, i], row)
            row["stellar_mass_measured_msun"] = float(star_measured[i])
            row["members_in_aperture"] = int(star_count[i])
        if gas is not None:
            _interval_row("gas_mass_msun", gas[:, i], row)
        if star is not None or gas is not None:
            ratios = cb.budget_ratios(lens_nfw[:, i], star[:, i] if star is not None else np.zeros(n),
                                      gas[:, i] if gas is not None else None, cosmic)
            for key, draws in ratios.items():
                _interval_row(key, draws, row)
        budgets.append(row)
    result["budgets"] = budgets
    result["cosmic_baryon_fraction"] = cosmic
    models["lens_mass"] = ("lens_mass_nfw: projected mass of all fitted NFW halos inside the aperture (from the fit's "
                           "posterior draws); lens_mass_map: Sigma_cr,eff x kappa_E summed in the aperture (bootstrap "
                           "maps), a low estimate because the map has zero mean and is smoothed")
    models["ratios"] = "fractions of the NFW aperture mass" + (
        f"; baryon fraction compared with Omega_b / Omega_m = {cosmic:.4f} of {cosmology_label(cosmo)} "
        "(astropy Ob0 / Om0)" if cosmic is not None else "")
    if star is None:
        notes.append("No member catalogue: no light map, stellar masses or baryon fractions from stars.")
    if gas is None:
        notes.append("No gas mass given: the baryon fraction counts stars only (gas usually dominates the baryons "
                     "of a cluster), so it is a lower bound.")
    notes.append("All masses are model-dependent estimates: NFW halos with a c(M) relation centred on the mass "
                 "peaks; the map's aperture mass is reduced by the mass-sheet degeneracy and the smoothing.")
    result["notes"] = notes
    result["models"] = models
    result["_mass"] = mp
    result["_second_maps"] = seconds
    result["_halo_fit"] = fit
    tick(1.0, "done")
    return result
