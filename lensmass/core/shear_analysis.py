"""The weak-lensing job: a shape catalogue and a centre to a profile, SIS/NFW fits and zeta mass.

The window and the ``lensmass shear`` command both call :func:`analyse_shear_catalog`,
so every number has one source. Each number is labelled in ``models`` with the model
and assumptions behind it.

Longer than 500 lines because it holds both entry points (arrays in memory and blocks from files or a
cluster) beside the zeta corrections and the notes; moving ArrayBlocks and the zeta helpers to their own
modules is the next split.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from typing import Any

import numpy as np

from lensmass.core.result_keys import MODEL_NOTE
from lensmass.core.aperture_mass import shear_from_reduced_shear, zeta_from_profile, zeta_mass_bound_msun
from lensmass.core.concentration import concentration_relation
from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.cosmology import cosmology_label, little_h, resolve_cosmology
from lensmass.core import limits
from lensmass.core.errors import LensInputError
from lensmass.core.estimate import range_notes
from lensmass.core.lensing import sigma_crit_msun_per_mpc2
from lensmass.core.nfw import HALO_DEFINITIONS, nfw_halo, nfw_mass_2d_msun, nfw_surface_density_msun_per_mpc2
from lensmass.core.shear_fit import DETECTION_SIGMA, PRIORS, cross_shear_test, fit_nfw, fit_sis
from lensmass.core.shear_profile import (
    DEFAULT_Z_MARGIN,
    lens_distance_mpc,
    lensing_efficiency,
    profile_subbin_edges,
    radial_bin_edges,
    select_sources,
    sky_offsets_and_radius,
)
from lensmass.core.shear_sums import (
    CatalogBlock,
    SumLayout,
    annulus_profile,
    block_sums,
    farthest_usable,
    profile_from_sums,
)
from lensmass.core.uncertainty import DEFAULT_SEED

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
    limits.count(n_bins, "--bins", 1, limits.SHEAR_BINS_MAX, "a profile is a few to a few tens of bins")
    limits.count(n_bootstrap, "--bootstrap", 0, limits.BOOTSTRAP_MAX, "a few hundred resamplings settle the errors")
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
    """
    blocks = ArrayBlocks(ra_deg, dec_deg, e1, e2, weight, z)
    if z is None and options.get("z_s") is None:
        raise LensInputError("No source redshift: give --zs for all galaxies, or map a redshift column with --columns z=NAME.")
    result = analyse_shear_blocks(blocks, per_galaxy_z=z is not None, **options)
    result["_galaxies"] = {"ra_deg": blocks.ra, "dec_deg": blocks.dec, "e1": blocks.e1, "e2": blocks.e2,
                           "weight": blocks.weight, "z": blocks.z}
    return result


class ArrayBlocks:
    """Catalogue columns in memory as one block of rows (the engine works through it in pieces).

    Any source of rows offers ``total(fn)``: ``fn(block)`` for each of its blocks, the results
    added; ``lensmass.io.catalog_stream`` and ``lensmass.io.distributed`` offer the same for
    files and for Dask clusters.
    """

    def __init__(self, ra_deg, dec_deg, e1, e2, weight=None, z=None):
        self.ra = np.asarray(ra_deg, float)
        self.dec = np.asarray(dec_deg, float)
        self.e1 = np.asarray(e1, float)
        self.e2 = np.asarray(e2, float)
        self.weight = np.ones(self.ra.size) if weight is None else np.asarray(weight, float)
        self.z = None if z is None else np.asarray(z, float)
        if not (self.dec.shape == self.e1.shape == self.e2.shape == self.weight.shape == self.ra.shape) or (
                self.z is not None and self.z.shape != self.ra.shape):
            raise LensInputError("The catalogue columns differ in length: give one value per galaxy in each column.")
        self.n_rows = int(self.ra.size)

    def total(self, fn):
        return fn(CatalogBlock(self.ra, self.dec, self.e1, self.e2, self.weight, self.z, 0))


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
    limits.non_negative(z_margin, "--zs-margin", "sources are kept when z > z_l + margin")
    limits.redshift_in_range(z_l, "The lens redshift", "--zl")
    for value, flag in ((r_min, "--rmin"), (r_max, "--rmax")):
        if value is not None:
            limits.positive_radius(value, flag)
    if r_min is not None and r_max is not None and not r_min < r_max:
        raise LensInputError(f"The radial range needs rmin < rmax, got --rmin {r_min:g} and --rmax {r_max:g}; "
                             "swap or correct them.")
    if zeta_radii is not None:
        for value in zeta_radii:
            limits.positive_radius(value, "--zeta-radii")
    if not (np.isfinite(z_l) and z_l > 0):
        raise LensInputError(f"The lens redshift must be a positive number, got {z_l}; check --zl.")
    if z_s is not None and not (np.isfinite(z_s) and z_s > z_l):
        raise LensInputError(
            f"The source redshift {z_s:g} is not behind the lens at z_l = {z_l:g}: check --zs and --zl."
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
    raise LensInputError(f"No usable galaxies in the catalogue ({reasons}): check the columns and --zl.")


def _zeta_subbins(fine_edges: np.ndarray, z_in: float, z_out: float) -> slice | None:
    """The profile's sub-bins that make up the zeta annulus, when it falls on their edges (the
    default annulus always does), else None."""
    k1 = int(np.argmin(np.abs(fine_edges - z_in)))
    k2 = int(np.argmin(np.abs(fine_edges - z_out)))
    if k2 - k1 >= 4 and np.isclose(fine_edges[k1], z_in, rtol=1e-9) and np.isclose(fine_edges[k2], z_out, rtol=1e-9):
        return slice(k1, k2)
    return None


def _convergence_inf(halo, radius_mpc, d_l):
    """Convergence of ``halo`` for a source with D_ls / D_s = 1."""
    return nfw_surface_density_msun_per_mpc2(radius_mpc, halo) / sigma_crit_msun_per_mpc2(d_l, 1.0, 1.0)


def _subbin_kappa(fine_edges, cells, halo, d_l):
    """Convergence of ``halo`` in each sub-bin, averaged as the two estimators weight their galaxies.

    With g = beta gamma_inf / (1 - beta kappa_inf) per galaxy, gamma_t = g_t (1 - kappa) in a bin of
    mean g_t (weights w) needs kappa_inf <beta^2>/<beta>; the Delta Sigma mean (weights w beta^2)
    needs kappa_inf <beta^3>/<beta^2> (moments over the bin's cells, first order in the shear).
    """
    n = fine_edges.size - 1
    k = np.searchsorted(fine_edges, cells.theta_arcsec, side="right") - 1
    ok = (k >= 0) & (k < n)
    w, b, v = cells.weight[ok], cells.beta[ok], cells.beta_var[ok]
    m = [np.bincount(k[ok], w * mom, n) for mom in (b, b * b + v, b**3 + 3 * b * v)]
    centre_mpc = np.sqrt(fine_edges[1:] * fine_edges[:-1]) * ARCSEC_RAD * d_l
    kappa_inf = _convergence_inf(halo, centre_mpc, d_l)
    with np.errstate(invalid="ignore", divide="ignore"):
        return kappa_inf * m[1] / m[0], kappa_inf * m[2] / m[1]


def _zeta_from_subbins(fine, sl: slice, z_in, z_out, halo=None, cells=None, d_l=None):
    """zeta and zeta_Sigma with errors from the profile's sub-bins ``sl``; with ``halo``, the
    reduced shear is first converted to shear with the halo's convergence."""
    e = fine.edges_arcsec[sl.start:sl.stop + 1]
    g_t, ds = fine.g_t[sl], fine.delta_sigma_msun_per_mpc2[sl]
    if halo is not None:
        kappa_g, kappa_ds = _subbin_kappa(e, cells, halo, d_l)
        g_t, ds = shear_from_reduced_shear(g_t, kappa_g), shear_from_reduced_shear(ds, kappa_ds)
    zeta = zeta_from_profile(e, g_t, fine.g_t_err[sl], z_in, z_out)
    zeta_s = zeta_from_profile(e, ds, fine.delta_sigma_err_msun_per_mpc2[sl], z_in, z_out)
    return (*zeta, *zeta_s)


def _zeta_from_annulus(sums, layout, zeta_edges, z_in, z_out, halo=None, beta_mean=None, d_l=None):
    """zeta and zeta_Sigma with errors from the engine's sums in the annulus bins (an annulus off the
    profile's sub-bin edges); with ``halo``, the reduced shear is converted to shear with the halo's
    convergence at the annulus bins' centres for the sample's mean D_ls / D_s (first order)."""
    g_t, g_err, ds, ds_err = annulus_profile(sums, layout)
    if halo is not None:
        centre_mpc = np.sqrt(zeta_edges[1:] * zeta_edges[:-1]) * ARCSEC_RAD * d_l
        kappa = _convergence_inf(halo, centre_mpc, d_l) * beta_mean
        g_t, ds = shear_from_reduced_shear(g_t, kappa), shear_from_reduced_shear(ds, kappa)
    zeta = zeta_from_profile(zeta_edges, g_t, g_err, z_in, z_out)
    zeta_s = zeta_from_profile(zeta_edges, ds, ds_err, z_in, z_out)
    return (*zeta, *zeta_s)


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


def mass_map_for_result(result: dict, *, n_pixels: int = 128, extent_arcsec: float | None = None,
                        smoothing_arcsec: float = 60.0, n_noise: int = 16, seed: int | None = DEFAULT_SEED):
    """Kaiser-Squires map of the usable galaxies of an in-memory :func:`analyse_shear_catalog` result,
    centred on its centre (the same selection as the profile: finite values, |e| < 1, w > 0, behind the lens)."""
    from lensmass.core.mass_map import mass_map

    gal = result.get("_galaxies")
    if gal is None:
        raise LensInputError("The mass map needs the catalogue in memory: run it on one catalogue file "
                             "without --scheduler, or make the map of a smaller part of the survey.")
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
