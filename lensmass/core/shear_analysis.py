"""The weak-lensing job: a shape catalogue and a centre to a profile, SIS/NFW fits and zeta mass.

The window and the ``lensmass shear`` command both call :func:`analyse_shear_catalog`,
so every number has one source. Each number is labelled in ``models`` with the model
and assumptions behind it. The parts live in modules of one purpose: the block engine
(:mod:`lensmass.core.shear_sums`), in-memory columns as blocks (:mod:`lensmass.core.catalog_arrays`),
the zeta statistic (:mod:`lensmass.core.shear_zeta`), notes and model descriptions
(:mod:`lensmass.core.shear_notes`), the map and model curves (:mod:`lensmass.core.shear_products`);
their public names are importable from here too.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from typing import Any

import numpy as np

from lensmass.core.aperture_mass import zeta_mass_bound_msun
from lensmass.core.catalog_arrays import ArrayBlocks
from lensmass.core.concentration import concentration_relation
from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.cosmology import cosmology_label, little_h, resolve_cosmology
from lensmass.core import limits
from lensmass.core.errors import LensInputError
from lensmass.core.estimate import range_notes
from lensmass.core.nfw import HALO_DEFINITIONS, nfw_halo, nfw_mass_2d_msun
from lensmass.core.shear_fit import PRIORS, cross_shear_test, fit_nfw, fit_sis
from lensmass.core.shear_notes import _notes, detection_note, model_descriptions, profile_rows
from lensmass.core.shear_products import mass_map_for_result, model_curves
from lensmass.core.shear_profile import (
    DEFAULT_Z_MARGIN,
    lens_distance_mpc,
    lensing_efficiency,
    profile_subbin_edges,
    radial_bin_edges,
)
from lensmass.core.shear_sums import SumLayout, block_sums, farthest_usable, profile_from_sums
from lensmass.core.shear_zeta import _zeta_from_annulus, _zeta_from_subbins, _zeta_subbins
from lensmass.core.uncertainty import DEFAULT_SEED

__all__ = [  # the names this module has always offered (some now live in the modules above)
    "ArrayBlocks", "analyse_shear_blocks", "analyse_shear_catalog", "check_run_sizes", "detection_note",
    "effective_source_redshift", "mass_map_for_result", "model_curves", "model_descriptions", "profile_rows",
    "to_arcsec",
]

RADIUS_UNITS = {"arcsec": 1.0, "arcmin": 60.0}
#: Default inner radius as a fraction of the outer one.
DEFAULT_INNER_FRACTION = 0.05
_ZETA_ANNULI = 16
FIT_KEYS = ("sis_theta_e_arcsec", "sis_sigma_v_kms", "nfw_m200_msun", "nfw_c200", "nfw_r200_kpc")


def to_arcsec(value: float, unit: str, d_l_mpc: float) -> float:
    """A radius in ``arcsec``, ``arcmin`` or ``mpc`` (physical, at the lens) to arcsec."""
    unit = unit.lower()
    if unit == "mpc":
        return float(value) / d_l_mpc / ARCSEC_RAD
    if unit not in RADIUS_UNITS:
        raise LensInputError(f"Unknown radius unit '{unit}': use arcsec, arcmin or mpc.")
    return float(value) * RADIUS_UNITS[unit]


def effective_source_redshift(beta_mean: float, z_l: float, cosmo) -> float:
    """The single source redshift whose D_ls / D_s equals the sample's weighted mean."""
    z = z_l + np.geomspace(1e-4, 20.0 - z_l, 4000)
    beta, _, _ = lensing_efficiency(z_l, z, cosmo)
    if not (beta[0] <= beta_mean <= beta[-1]):
        return float("nan")
    return float(np.interp(beta_mean, beta, z))


def check_run_sizes(n_bins, n_bootstrap, seed) -> None:
    """Bins, bootstrap resamplings and seed within :mod:`lensmass.core.limits` (before any work)."""
    limits.count(n_bins, "The number of radial bins (`n_bins`)", 1, limits.SHEAR_BINS_MAX, "a profile is a few to a few tens of bins")
    limits.count(n_bootstrap, "The number of bootstrap resamplings (`n_bootstrap`)", 0, limits.BOOTSTRAP_MAX, "a few hundred resamplings settle the errors")
    limits.seed(seed)


def analyse_shear_catalog(
    ra_deg,
    dec_deg,
    e1,
    e2,
    weight=None,
    z=None,
    **options: Any,
) -> dict[str, Any]:
    """Profile, fits, cross-shear test and zeta mass of a shape catalogue held in memory.

    Parameters
    ----------
    ra_deg, dec_deg, e1, e2, weight, z : array_like
        Catalogue columns (degrees; ellipticities in the east/north frame; optional
        weights and per-galaxy source redshifts). Bad rows are dropped and counted.
    **options
        As for :func:`analyse_shear_blocks` (``z_l``, ``center_ra``, ``center_dec`` required).

    Returns
    -------
    dict
        The result of :func:`analyse_shear_blocks`, plus ``_galaxies`` (the columns, for
        :func:`mass_map_for_result`). The arrays go through the same block engine
        (:mod:`lensmass.core.shear_sums`) as a streamed or distributed catalogue, so the
        numbers agree with those routes to rounding.

    Examples
    --------
    4000 galaxies at z = 1 sheared by a 1e15 Msun NFW halo at z = 0.3 (the simulator of
    :mod:`lensmass.core.shear_simulation`): the fitted M200 brackets the truth.

    >>> from astropy.cosmology import Planck18
    >>> from lensmass.core.shear_simulation import simulate_shear_catalog
    >>> sim = simulate_shear_catalog(center_ra=150.0, center_dec=2.0, z_l=0.3, cosmo=Planck18,
    ...                              n_galaxies=4000, z_s=1.0, m200_msun=1e15, seed=3)
    >>> out = analyse_shear_catalog(sim["ra"], sim["dec"], sim["e1"], sim["e2"], z_l=0.3, z_s=1.0,
    ...                             center_ra=150.0, center_dec=2.0, n_bootstrap=0, cosmology="Planck18")
    >>> lo, hi = out["intervals68"]["nfw_m200_msun"]
    >>> bool(lo < 1e15 < hi), out["models"]["nfw_m200_msun"].split(",")[0]
    (True, 'NFW halo (Wright & Brainerd 2000)')
    """
    blocks = ArrayBlocks(ra_deg, dec_deg, e1, e2, weight, z)
    if z is None and options.get("z_s") is None:
        raise LensInputError("No source redshift: give one for all galaxies (`z_s`), or each galaxy's redshift (`z`).")
    result = analyse_shear_blocks(blocks, per_galaxy_z=z is not None, **options)
    result["_galaxies"] = {"ra_deg": blocks.ra, "dec_deg": blocks.dec, "e1": blocks.e1, "e2": blocks.e2,
                           "weight": blocks.weight, "z": blocks.z}
    return result


def analyse_shear_blocks(
    blocks,
    *,
    z_l: float,
    center_ra: float,
    center_dec: float,
    z_s: float | None = None,
    per_galaxy_z: bool | None = None,
    r_min: float | None = None,
    r_max: float | None = None,
    n_bins: int = 8,
    unit: str = "arcmin",
    log_bins: bool = True,
    cosmology: Any = None,
    concentration: str | float = "duffy08",
    halo_definition: str = "200c",
    free_concentration: bool = False,
    n_bootstrap: int = 200,
    seed: int | None = DEFAULT_SEED,
    zeta_radii: tuple[float, float] | None = None,
    z_margin: float = DEFAULT_Z_MARGIN,
    progress: Callable[[float, str], None] | None = None,
) -> dict[str, Any]:
    """Profile, fits, cross-shear test and zeta mass of a catalogue given as blocks of rows.

    Parameters
    ----------
    blocks
        Anything with ``total(fn)`` applying ``fn`` to each :class:`CatalogBlock` and adding the
        results: :class:`ArrayBlocks` (memory), a streamed file set or a Dask cluster.
    z_l : float
        Lens redshift.
    center_ra, center_dec : float
        The lens centre in degrees.
    z_s : float, optional
        One source redshift for all galaxies (instead of each row's ``z``).
    r_min, r_max, n_bins, unit, log_bins
        Radial bins, in ``unit`` (arcsec, arcmin or physical mpc at the lens);
        default r_max = the farthest usable galaxy (one extra pass), r_min = 5% of r_max.
    cosmology, concentration, halo_definition, free_concentration
        As in :func:`lensmass.core.estimate.estimate` (same defaults, so both agree on one halo).
    n_bootstrap, seed : int
        Bootstrap resamplings (of 2000 groups of galaxies) for the second set of profile errors.
    zeta_radii : (float, float), optional
        Inner and outer radius of the zeta annulus in ``unit``; default the geometric
        mean of the radial range and r_max.
    progress : callable, optional
        ``progress(fraction, message)``, called between stages (it may raise to cancel).

    Returns
    -------
    dict
        ``n_rows``, ``n_used``, ``n_dropped`` (per reason), fit keys (posterior medians),
        ``best_fit``, ``intervals68``, ``intervals95``, ``chi2_sis``, ``chi2_nfw`` (with dof and
        p-values), ``cross_shear_chi2``, ``cross_shear_pvalue``, ``zeta``, ``zeta_mass_msun`` with
        its radii, ``profile`` (one dict per bin), ``notes`` and ``models``.
    """
    def step(fraction, message):
        if progress is not None:
            progress(fraction, message)

    if halo_definition not in HALO_DEFINITIONS:
        raise LensInputError(f"Unknown halo definition '{halo_definition}': use one of {', '.join(HALO_DEFINITIONS)}.")
    cosmo = resolve_cosmology(cosmology)
    c_of_m, c_label = concentration_relation(concentration, halo_definition)
    check_run_sizes(n_bins, n_bootstrap, seed)
    limits.non_negative(z_margin, "The redshift margin behind the lens (`z_margin`)", "sources are kept when z > z_l + margin")
    limits.redshift_in_range(z_l, "The lens redshift", "the lens redshift (`z_l`)")
    for value, name in ((r_min, "The inner radius (`r_min`)"), (r_max, "The outer radius (`r_max`)")):
        if value is not None:
            limits.positive_radius(value, name)
    if r_min is not None and r_max is not None and not r_min < r_max:
        raise LensInputError(f"The radial range needs rmin < rmax, got an inner radius (`r_min`) of {r_min:g} and an "
                             f"outer radius (`r_max`) of {r_max:g}; "
                             "swap or correct them.")
    if zeta_radii is not None:
        for value in zeta_radii:
            limits.positive_radius(value, "A zeta radius (`zeta_radii`)")
    if not (np.isfinite(z_l) and z_l > 0):
        raise LensInputError(f"The lens redshift must be a positive number, got {z_l}; check the lens redshift (`z_l`).")
    if z_s is not None and not (np.isfinite(z_s) and z_s > z_l):
        raise LensInputError(
            f"The source redshift {z_s:g} is not behind the lens at z_l = {z_l:g}: check the source redshift (`z_s`) and the lens redshift (`z_l`)."
        )
    if not (np.isfinite(center_ra) and np.isfinite(center_dec) and -90 <= center_dec <= 90):
        raise LensInputError(f"The centre RA, Dec = {center_ra}, {center_dec} is not on the sky: give degrees.")
    per_galaxy_z = z_s is None if per_galaxy_z is None else per_galaxy_z and z_s is None
    d_l = lens_distance_mpc(z_l, cosmo)
    if r_max is None:
        step(0.02, "finding the farthest galaxy")
        far = blocks.total(partial(farthest_usable, (float(center_ra), float(center_dec), float(z_l), z_s, z_margin)))
        if far.n_usable == 0:
            _no_usable(far.dropped)
        r_max_as = far.theta_max_arcsec * (1 + 1e-9)
    else:
        r_max_as = to_arcsec(r_max, unit, d_l)
    r_min_as = DEFAULT_INNER_FRACTION * r_max_as if r_min is None else to_arcsec(r_min, unit, d_l)
    edges = radial_bin_edges(r_min_as, r_max_as, n_bins, log=log_bins)
    if zeta_radii is None:
        z_in, z_out = float(np.sqrt(edges[0] * edges[-1])), float(edges[-1])
    else:
        z_in, z_out = (to_arcsec(v, unit, d_l) for v in zeta_radii)
    zeta_edges = radial_bin_edges(z_in, z_out, _ZETA_ANNULI) if 0 < z_in < z_out else None
    if zeta_edges is None:
        from lensmass.core.aperture_mass import zeta_prefactor

        zeta_prefactor(z_in, z_out)  # raises the clear message
    zeta_slice = _zeta_subbins(profile_subbin_edges(edges), z_in, z_out)
    layout = SumLayout(float(center_ra), float(center_dec), float(z_l), cosmo, tuple(float(e) for e in edges),
                       z_s=None if z_s is None else float(z_s), z_margin=float(z_margin),
                       annulus_edges_arcsec=None if zeta_slice is not None else tuple(float(e) for e in zeta_edges),
                       bootstrap=bool(n_bootstrap), seed=int(DEFAULT_SEED if seed is None else seed))
    step(0.15, "source distances and binned profile")
    sums = blocks.total(partial(block_sums, layout))
    if sums.n_usable == 0:
        _no_usable(sums.dropped)
    dropped = dict(sums.dropped)
    if not per_galaxy_z:
        dropped["source_not_behind_lens"] = 0
    dropped["outside_radial_range"] = sums.n_usable - sums.n_in_bins
    profile = profile_from_sums(sums, layout, n_bootstrap=n_bootstrap)
    step(0.5, "SIS fit")
    sis = fit_sis(profile)
    step(0.65, "NFW fit")
    nfw = fit_nfw(profile, z_l, cosmo, concentration=concentration, halo_definition=halo_definition,
                  free_concentration=free_concentration)
    x2, dof_x, p_x = cross_shear_test(profile)

    step(0.85, "aperture mass")
    r_in_mpc = z_in * ARCSEC_RAD * d_l
    nfw_best_halo = nfw_halo(nfw.best["nfw_m200_msun"], nfw.best["nfw_c200"], z_l, cosmo, halo_definition)
    m_hi = float(nfw.quantiles["nfw_m200_msun"][3])
    c_hi = nfw.best["nfw_c200"] if free_concentration else float(c_of_m(m_hi, z_l, little_h(cosmo)))
    halos = (None, nfw_best_halo, nfw_halo(m_hi, c_hi, z_l, cosmo, halo_definition))
    zetas = []
    for halo in halos:  # uncorrected (weak-shear limit), best-fit convergence, 84th-percentile convergence
        if zeta_slice is not None:
            zetas.append(_zeta_from_subbins(profile.fine, zeta_slice, z_in, z_out, halo, profile.cells, d_l))
        else:
            zetas.append(_zeta_from_annulus(sums, layout, zeta_edges, z_in, z_out, halo, profile.beta_mean, d_l))
    (zeta_weak, _, zeta_s_weak, _), (zeta, zeta_err, zeta_s, zeta_s_err), (zeta_hi, _, zeta_s_hi, _) = zetas
    # the convergence of the fitted halo is uncertain: its 68% spread adds to the error
    zeta_err = float(np.hypot(zeta_err, zeta - zeta_hi))
    zeta_s_err = float(np.hypot(zeta_s_err, zeta_s - zeta_s_hi))
    zeta_mass = zeta_mass_bound_msun(r_in_mpc, zeta_s)
    zeta_mass_err = zeta_mass_bound_msun(r_in_mpc, zeta_s_err)
    zeta_mass_weak = zeta_mass_bound_msun(r_in_mpc, zeta_s_weak)
    nfw_m2d_zeta = float(nfw_mass_2d_msun(r_in_mpc, nfw_best_halo))

    step(0.95, "assembling results")
    source_redshifts = "per-galaxy column" if per_galaxy_z else f"single z_s = {z_s:g}"
    result: dict[str, Any] = {
        "cosmology": cosmology_label(cosmo),
        "z_l": float(z_l),
        "center_ra": float(center_ra),
        "center_dec": float(center_dec),
        "n_rows": int(sums.n_rows),
        "n_used": int(sums.n_in_bins),
        "n_dropped": dropped,
        "source_redshifts": source_redshifts,
        "z_s_effective": effective_source_redshift(profile.beta_mean, z_l, cosmo),
        "beta_mean": profile.beta_mean,
        "d_l_mpc": d_l,
        "halo_definition": halo_definition,
        "concentration": c_label if not free_concentration else "free",
    }
    medians, i68, i95, best = {}, {}, {}, {}
    for fit in (sis, nfw):
        for key in fit.quantiles:
            medians[key] = fit.median(key)
            i68[key] = fit.interval(key, 68)
            i95[key] = fit.interval(key, 95)
            best[key] = fit.best[key]
    result.update({key: medians[key] for key in FIT_KEYS})
    result.update(medians=medians, intervals68=i68, intervals95=i95, best_fit=best)
    result.update(
        chi2_sis=sis.chi2, dof_sis=sis.dof, pvalue_sis=sis.pvalue,
        chi2_nfw=nfw.chi2, dof_nfw=nfw.dof, pvalue_nfw=nfw.pvalue,
        cross_shear_chi2=x2, cross_shear_dof=dof_x, cross_shear_pvalue=p_x,
        zeta=zeta, zeta_err=zeta_err,
        zeta_mass_msun=zeta_mass, zeta_mass_err_msun=zeta_mass_err,
        zeta_mass_weak_shear_msun=zeta_mass_weak, zeta_weak_shear=zeta_weak,
        zeta_radius_arcsec=z_in, zeta_outer_radius_arcsec=z_out,
        zeta_radius_kpc=r_in_mpc * 1e3, zeta_outer_radius_kpc=z_out * ARCSEC_RAD * d_l * 1e3,
        nfw_mass_2d_at_zeta_radius_msun=nfw_m2d_zeta,
        free_concentration=bool(free_concentration),
        detection_significance=nfw.significance, sis_detection_significance=sis.significance,
        detected=nfw.detected,
        nfw_m200_upper95_msun=nfw.upper["nfw_m200_msun"], sis_sigma_v_upper95_kms=sis.upper["sis_sigma_v_kms"],
        priors=dict(PRIORS),
    )
    result["profile"] = profile_rows(profile, sis.model_profile, nfw.model_profile)
    result["notes"] = _notes(sis, nfw, p_x, dropped, zeta_mass, zeta_mass_err, nfw_m2d_zeta, per_galaxy_z,
                             zeta_mass_weak)
    result["notes"].insert(-1, (
        f"Fit values are posterior medians; the maximum-likelihood best fit ('best_fit', drawn as the model "
        f"curves and written to the profile file) is sigma_v = {best['sis_sigma_v_kms']:.4g} km/s, "
        f"M200 = {best['nfw_m200_msun']:.4g} Msun, c200 = {best['nfw_c200']:.3g}."))
    result["notes"][-1:-1] = range_notes(nfw.best["nfw_m200_msun"] if nfw.detected else np.nan, z_l,
                                         profile.beta_mean, concentration if not free_concentration else None,
                                         little_h(cosmo), cosmo, halo_definition)
    result["models"] = model_descriptions(result["cosmology"], c_label, halo_definition, free_concentration,
                                          result["source_redshifts"], cosmo)
    result["_profile"] = profile
    result["_sums"] = sums
    result["_fits"] = {"sis": sis, "nfw": nfw}
    result["_selection"] = {"z_s": z_s, "z_margin": float(z_margin)}
    step(1.0, "done")
    return result


def _no_usable(dropped: dict) -> None:
    reasons = ", ".join(f"{k.replace('_', ' ')}: {v}" for k, v in dropped.items() if v)
    raise LensInputError(f"No usable galaxies in the catalogue ({reasons}): check the columns and the lens redshift (`z_l`).")


