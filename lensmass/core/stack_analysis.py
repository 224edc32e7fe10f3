"""The stacking job: a lens catalogue, random points and a source catalogue (in blocks) to the stacked
Delta Sigma(R), its jackknife covariance and the mean halo mass of the lens sample.

The window (none yet), the ``lensmass stack`` command and Python all call :func:`analyse_stack`;
the physics is in :mod:`lensmass.core.stacking`. Sources come as anything with ``total(fn)``
(see :class:`lensmass.core.catalog_arrays.ArrayBlocks`, the streamed files of
:mod:`lensmass.io.catalog_stream` or a Dask cluster of :mod:`lensmass.io.distributed`).
"""

from __future__ import annotations

from functools import partial
from typing import Any

import numpy as np

from lensmass.core.result_keys import MODEL_NOTE
from lensmass.core.cosmology import cosmology_label, resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.lensing import MPC2_PER_PC2
from lensmass.core.nfw import HALO_DEFINITIONS
from lensmass.core.stack_priors import check_concentration_prior
from lensmass.core.stacking import (
    Z_CELLS,
    PointSet,
    StackLayout,
    assign_patches,
    POINT_MASS_MAX_MSUN,
    check_point_mass_prior,
    fit_stack_nfw,
    jackknife_patches,
    stack_block_sums,
    stack_profile,
)

#: Default number of random points per lens when none are given.
DEFAULT_RANDOMS_PER_LENS = 10
DEFAULT_PATCHES = 32


def random_points_like(lens_ra, lens_dec, lens_z, n: int, seed: int = 0) -> tuple[np.ndarray, ...]:
    """Random points uniform on the sphere inside the lenses' RA/Dec box, redshifts drawn from the
    lenses' (common practice when no random catalogue of the survey mask is at hand).

    The box is the lenses' range in RA and sin Dec widened by span / (n - 1) at each end: the
    unbiased estimate of the ends of a uniform distribution from n draws (the extreme draws fall
    inside the true edges by span / (n + 1) on average; common practice). Without the widening the
    random points sit further from the edges than the lenses and count more sources each, which
    biases the boost factor low (about 1% at 1 Mpc for 200 lenses on 2 deg^2).
    """
    ra, dec = np.asarray(lens_ra, float), np.asarray(lens_dec, float)
    rng = np.random.default_rng(seed)
    span = ra.max() - ra.min()
    if span > 180:  # the lenses straddle RA = 0: use -180..180
        ra = np.where(ra > 180, ra - 360, ra)
    k = max(ra.size - 1, 1)
    lo, hi = ra.min(), ra.max()
    lo, hi = lo - (hi - lo) / k, hi + (hi - lo) / k
    if hi - lo >= 360.0:
        lo, hi = 0.0, 360.0
    s_lo, s_hi = np.sin(np.radians(dec.min())), np.sin(np.radians(dec.max()))
    s_lo, s_hi = max(s_lo - (s_hi - s_lo) / k, -1.0), min(s_hi + (s_hi - s_lo) / k, 1.0)
    r_ra = rng.uniform(lo, hi, n) % 360.0
    r_dec = np.degrees(np.arcsin(rng.uniform(s_lo, s_hi, n)))
    r_z = rng.choice(np.asarray(lens_z, float), n, replace=True)
    return r_ra, r_dec, r_z


def analyse_stack(
    lens_ra,
    lens_dec,
    lens_z,
    sources,
    *,
    lens_weight=None,
    randoms: tuple | None = None,
    n_randoms: int | None = None,
    r_min_mpc: float = 0.05,
    r_max_mpc: float = 3.0,
    n_bins: int = 10,
    n_patches: int = DEFAULT_PATCHES,
    cosmology: Any = None,
    concentration: str | float = "duffy08",
    free_concentration: bool = False,
    concentration_prior: float | tuple[float, float] | None = None,
    halo_definition: str = "200c",
    point_mass_msun: float | str = 0.0,
    point_mass_prior: tuple[float, float] | None = None,
    boost: bool = True,
    z_margin: float = 0.1,
    seed: int = 0,
) -> dict[str, Any]:
    """Stacked excess surface density around lenses, minus the same around random points, with a
    boost factor, jackknife covariance and the mean NFW M200 of the sample.

    Parameters
    ----------
    lens_ra, lens_dec, lens_z : array_like
        Lens positions (degrees) and redshifts; ``lens_weight`` optional weights.
    sources
        Source catalogue in blocks (``total(fn)``), each row with a redshift.
    randoms : (ra, dec, z), optional
        Random points tracing the lenses' footprint and redshifts. Without them,
        ``n_randoms`` (default 10 per lens) are drawn in the lenses' RA/Dec box;
        ``n_randoms=0`` skips the random subtraction and the boost.
    r_min_mpc, r_max_mpc, n_bins
        Logarithmic bins of physical projected radius at each lens (Mpc).
    n_patches : int
        Jackknife patches (k-means on the lenses).
    concentration : str or float
        c(M, z) relation (``"duffy08"``, ``"dutton14"``) or a fixed c200: fixes c200 of every halo, or,
        with ``free_concentration``, centres its prior.
    free_concentration : bool
        Fit c200 (one value for the stack) with M200 and report its median and intervals; M200's
        intervals are then marginalised over it.
    concentration_prior : float or (c_min, c_max), optional
        With ``free_concentration``: a log-normal scatter in dex about the ``concentration`` relation at
        the fitted M200 and the pairs' mean lens redshift (default 0.15 dex), or a range of c200 with a
        flat prior in c.
    point_mass_msun : float or "fit"
        A central point mass added to every halo (the lenses' stars): a fixed value in Msun (0 for
        none), or ``"fit"`` to fit it alongside M200 (posterior median and intervals under
        ``point_mass_prior``).
    point_mass_prior : (median_msun, sigma_dex), optional
        With ``"fit"``: a log-normal prior on the point mass (e.g. from the lenses' photometry);
        default flat on [0, 1e13] Msun.

    Returns
    -------
    dict
        ``mean_halo_m200_msun`` (posterior median) with ``intervals68`` / ``intervals95``,
        ``mean_halo_c200`` (fitted, with intervals, when free), ``point_mass_msun`` (fixed, or fitted with intervals), ``stack_chi2`` with
        ``stack_dof`` and ``stack_pvalue``, counts,
        the binned ``profile`` (Msun / pc^2), ``covariance_msun2_per_pc4``, ``notes`` and ``models``.

    Examples
    --------
    Sources held in memory go in as :class:`lensmass.core.shear_analysis.ArrayBlocks` (or use
    :func:`lensmass.core.stack_arrays.analyse_stack_catalog`); 200 lenses with M200 = 3e13 Msun:

    >>> from astropy.cosmology import Planck18
    >>> from lensmass.core.shear_analysis import ArrayBlocks
    >>> from lensmass.core.stack_simulation import simulate_stack
    >>> s = simulate_stack(n_lenses=200, n_sources=20000, m200_msun=3e13, cosmo=Planck18, seed=2)
    >>> sources = ArrayBlocks(s["ra"], s["dec"], s["e1"], s["e2"], None, s["z"])
    >>> r = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"], sources, r_min_mpc=0.1, r_max_mpc=2.0,
    ...                   n_bins=6, n_patches=10, cosmology=Planck18, seed=1)
    >>> lo, hi = r["intervals95"]["mean_halo_m200_msun"]
    >>> bool(lo < 3e13 < hi)
    True

    With c200 fitted too (flat prior on 1-20), c200 has its own intervals and M200's are marginalised
    over it:

    >>> f = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"], sources, r_min_mpc=0.1, r_max_mpc=2.0,
    ...                   n_bins=6, n_patches=10, cosmology=Planck18, seed=1, free_concentration=True,
    ...                   concentration_prior=(1, 20))
    >>> sorted(f["intervals68"])
    ['mean_halo_c200', 'mean_halo_m200_msun']
    >>> lo, hi = f["intervals95"]["mean_halo_c200"]
    >>> bool(1 <= lo < f["mean_halo_c200"] < hi <= 20)
    True
    """
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.cosmology import little_h

    if halo_definition not in HALO_DEFINITIONS:
        raise LensInputError(f"Unknown halo definition '{halo_definition}': use one of {', '.join(HALO_DEFINITIONS)}.")
    fit_point_mass = isinstance(point_mass_msun, str)
    if fit_point_mass and str(point_mass_msun).strip().lower() != "fit":
        raise LensInputError(f"The central point mass (`point_mass_msun`) is a number of Msun or 'fit', got "
                             f"'{point_mass_msun}'.")
    fixed_point_mass = 0.0 if fit_point_mass else float(point_mass_msun)
    if not (np.isfinite(fixed_point_mass) and fixed_point_mass >= 0):
        raise LensInputError(f"The central point mass (`point_mass_msun`) must be 0 or more Msun, got "
                             f"{fixed_point_mass:g}.")
    if point_mass_prior is not None and not fit_point_mass:
        raise LensInputError("A stellar-mass prior (`point_mass_prior`) needs the point mass fitted: set it to 'fit'.")
    prior = check_point_mass_prior(point_mass_prior)
    if concentration_prior is not None and not free_concentration:
        raise LensInputError("A concentration prior (`concentration_prior`) needs the concentration fitted: set "
                             "`free_concentration`.")
    c_prior = check_concentration_prior(concentration_prior) if free_concentration else None
    cosmo = resolve_cosmology(cosmology)
    c_of_m, c_label = concentration_relation(concentration, halo_definition)
    lra, ldec, lz = (np.asarray(a, float).ravel() for a in (lens_ra, lens_dec, lens_z))
    lw = np.ones(lra.size) if lens_weight is None else np.asarray(lens_weight, float).ravel()
    if not (lra.size == ldec.size == lz.size == lw.size):
        raise LensInputError("The lens columns differ in length: give one RA, Dec and z per lens.")
    good = np.isfinite(lra) & np.isfinite(ldec) & (np.abs(ldec) <= 90) & np.isfinite(lz) & (lz > 0) & (lw > 0)
    n_bad_lenses = int(lra.size - good.sum())
    lra, ldec, lz, lw = lra[good], ldec[good], lz[good], lw[good]
    if lra.size < 2:
        raise LensInputError("Fewer than two usable lenses (finite RA, Dec, z > 0, weight > 0): check the lens "
                             "catalogue and its columns.")
    if not (np.isfinite(r_min_mpc) and np.isfinite(r_max_mpc) and 0 < r_min_mpc < r_max_mpc):
        raise LensInputError(f"The radial range needs 0 < rmin < rmax in Mpc, got {r_min_mpc:g} to {r_max_mpc:g}.")
    if int(n_bins) < 2:
        raise LensInputError(f"Use at least 2 radial bins, got {n_bins}.")
    edges = np.geomspace(r_min_mpc, r_max_mpc, int(n_bins) + 1)
    centres = jackknife_patches(lra, ldec, int(n_patches), seed)
    lenses = PointSet(lra, ldec, lz, lw, assign_patches(lra, ldec, centres))
    if randoms is not None:
        rra, rdec, rz = (np.asarray(a, float).ravel() for a in randoms)
        ok = np.isfinite(rra) & np.isfinite(rdec) & np.isfinite(rz) & (rz > 0)
        rra, rdec, rz = rra[ok], rdec[ok], rz[ok]
        random_origin = f"{rra.size} random points given"
    else:
        n_r = DEFAULT_RANDOMS_PER_LENS * lra.size if n_randoms is None else int(n_randoms)
        rra, rdec, rz = random_points_like(lra, ldec, lz, n_r, seed + 1) if n_r else (np.zeros(0),) * 3
        random_origin = (f"{n_r} random points uniform in the lenses' RA/Dec box with the lenses' redshifts "
                         "(assumes the sources cover that box evenly)") if n_r else "no random points"
    rand = PointSet(rra, rdec, rz, np.ones(rra.size), assign_patches(rra, rdec, centres)) if rra.size else None
    z_lo, z_hi = float(lz.min()), float(lz.max())
    if rand is not None:
        z_lo = min(z_lo, float(rz.min()))
    z_edges = np.linspace(z_lo, max(z_hi, z_lo + 1e-6), Z_CELLS + 1)
    layout = StackLayout(tuple(float(e) for e in edges), cosmo, int(n_patches), tuple(float(e) for e in z_edges),
                         float(z_margin))
    sums = sources.total(partial(stack_block_sums, layout, lenses, rand))
    if sums.n_sources_used == 0:
        raise LensInputError("No usable sources (finite values, |e| < 1, weight > 0, behind the nearest lens): "
                             "check the source catalogue's columns and redshifts.")
    profile = stack_profile(sums, layout, lenses, rand, boost=boost and rand is not None)
    fit = fit_stack_nfw(profile, sums, layout, concentration=concentration, halo_definition=halo_definition,
                        point_mass_msun=fixed_point_mass, fit_point_mass=fit_point_mass, point_mass_prior=prior,
                        concentration_prior=c_prior)
    mean_z = float(np.average(lz, weights=lw))
    q = fit.quantiles
    c_med = (float(fit.c200_quantiles[2]) if fit.c200_quantiles is not None else
             float(c_of_m(fit.m200_msun, mean_z, little_h(cosmo))))
    to_pc = MPC2_PER_PC2
    rows = []
    for i in range(edges.size - 1):
        rows.append({
            "r_lo_mpc": float(edges[i]), "r_hi_mpc": float(edges[i + 1]), "r_mean_mpc": float(profile.r_mean_mpc[i]),
            "n_pairs": int(profile.n_pairs[i]),
            "delta_sigma_msun_per_pc2": float(profile.delta_sigma[i] * to_pc),
            "delta_sigma_err_msun_per_pc2": float(profile.delta_sigma_err[i] * to_pc),
            "delta_sigma_lenses_msun_per_pc2": float(profile.delta_sigma_lens[i] * to_pc),
            "delta_sigma_randoms_msun_per_pc2": (float(profile.delta_sigma_random[i] * to_pc)
                                                 if profile.delta_sigma_random is not None else float("nan")),
            "boost": float(profile.boost[i]),
            "delta_sigma_cross_msun_per_pc2": float(profile.delta_sigma_cross[i] * to_pc),
            "shape_noise_err_msun_per_pc2": float(profile.shape_noise_err[i] * to_pc),
            "delta_sigma_model_msun_per_pc2": float(fit.model[i] * to_pc),
        })
    notes = list(profile.notes) + list(fit.notes)
    if n_bad_lenses:
        notes.append(f"{n_bad_lenses} lenses were dropped (non-finite position or redshift, or weight <= 0).")
    if rand is None:
        notes.append("No random points: neither the random subtraction nor the boost factor is applied, so additive "
                     "shear systematics and source-lens clustering are not corrected.")
    if np.isfinite(fit.pvalue) and fit.pvalue < 0.01:
        notes.append(f"The NFW model fits the stacked profile poorly (p = {fit.pvalue:.2g}): the mean mass is "
                     "model-dependent; check the radial range (two-halo term at large R, miscentring, stars at small R).")
    notes.append("The stacked mass is the M200 of one NFW halo whose profile matches the sample's mean Delta Sigma; "
                 "with a spread of masses it is not the arithmetic mean of the haloes' masses.")
    notes.append(MODEL_NOTE)
    best_fit: dict[str, float] = {}
    medians: dict[str, float] = {}
    i68: dict[str, list[float]] = {}
    i95: dict[str, list[float]] = {}

    def report(key: str, best: float, quantiles) -> None:
        best_fit[key], medians[key] = float(best), float(quantiles[2])
        i68[key] = [float(quantiles[1]), float(quantiles[3])]
        i95[key] = [float(quantiles[0]), float(quantiles[4])]

    report("mean_halo_m200_msun", fit.best_m200_msun, q)
    if fit.c200_quantiles is not None:
        report("mean_halo_c200", fit.best_c200, fit.c200_quantiles)
        c_text = (f"c200 fitted with M200, one value for the stack ({c_prior.describe(c_label)}; intervals from the "
                  "marginal posterior)")
        c_model = ("posterior median of c200, fitted with M200 (" + c_prior.describe(c_label) + ", the relation "
                   "taken at the fitted M200 and the pairs' mean lens redshift)")
    else:
        c_text = f"c from {c_label}"
        c_model = f"{c_label} at the weighted mean lens redshift and the median M200"
        notes.append(f"c200 is not fitted: {c_label} fixes it at each lens redshift (c200 = {c_med:.2f} at the mean "
                     "z_l and median M200); fit it with a prior to marginalise M200 over it.")
    if fit.point_mass_quantiles is not None:
        report("point_mass_msun", fit.best_point_mass_msun, fit.point_mass_quantiles)
        prior_text = (f"log-normal prior, median {prior[0]:.3g} Msun, {prior[1]:g} dex" if prior is not None else
                      f"flat prior on [0, {POINT_MASS_MAX_MSUN:.0e}] Msun")
        point_text = (f"a central point mass M_* / (pi R^2) fitted with M200 ({prior_text}; intervals from the "
                      "marginal posterior)")
    else:
        point_text = f"a central point mass of {fit.point_mass_msun:.3g} Msun"
    cosmo_name = cosmology_label(cosmo)
    boundary = {"200c": "200 x critical density", "200m": "200 x mean matter density",
                "vir": "virial overdensity of Bryan & Norman (1998)"}[halo_definition]
    return {
        "cosmology": cosmo_name,
        "n_lenses": int(lra.size), "n_randoms": int(rra.size), "n_sources_read": int(sums.n_sources),
        "n_sources_used": int(sums.n_sources_used), "n_patches": int(profile.n_patches_used),
        "mean_lens_z": mean_z,
        "mean_halo_m200_msun": fit.m200_msun, "mean_halo_c200": c_med,
        "best_fit": best_fit, "medians": medians, "intervals68": i68, "intervals95": i95,
        "point_mass_msun": fit.point_mass_msun,
        "stack_chi2": fit.chi2, "stack_dof": fit.dof, "stack_pvalue": fit.pvalue, "hartlap_factor": fit.hartlap,
        "stack_likelihood_power": fit.likelihood_power, "stack_effective_patches": fit.effective_patches,
        "free_concentration": bool(free_concentration),
        "profile": rows,
        "covariance_msun2_per_pc4": (profile.covariance * to_pc**2).tolist(),
        "notes": notes,
        "models": {
            "delta_sigma_msun_per_pc2": "B(R) Delta Sigma around lenses - Delta Sigma around random points; pair "
            "weights w_l w_s / Sigma_cr^2 with each pair's own Sigma_cr; sources with z_s > z_l + "
            f"{z_margin:g}; distances in {cosmo_name}; " + random_origin,
            "boost": "ratio of weighted source counts around lenses and around random points, each per unit lens "
            "weight (sources physically associated with the lenses dilute the signal)",
            "delta_sigma_err_msun_per_pc2": f"delete-one jackknife over {profile.n_patches_used} k-means sky patches "
            "of the lenses (sample variance and shape noise)",
            "mean_halo_m200_msun": f"NFW halo (Wright & Brainerd 2000), boundary {boundary} at each lens's z, "
            f"{c_text}, plus {point_text}; model averaged over the pairs' lens redshifts and radii; t-likelihood "
            f"for the jackknife covariance (Sellentin & Heavens 2016) with power m = {fit.likelihood_power:.1f} for "
            f"{fit.effective_patches:.1f} effective patches (Percival et al. 2022), so that the covariance's noise "
            "widens the intervals; posterior on a grid, flat prior in log M200; value = posterior median",
            "mean_halo_c200": c_model,
            "point_mass_msun": "the lenses' stars as a point mass at the centre: " + point_text + " (a model "
            "choice: the stars' extent and any miscentring fold into it)",
        },
        "_profile": profile, "_fit": fit, "_sums": sums, "_layout": layout,
    }
