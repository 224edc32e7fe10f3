"""The main job: from an Einstein radius and two redshifts to labelled masses.

Every number here comes from the physics modules beside this one; the window,
the command line and the batch runner all call :func:`estimate`, so each number
has one source.
"""

from __future__ import annotations

from typing import Any, Callable

import numpy as np

from lensmass.core.result_keys import MODEL_NOTE
from lensmass.core.concentration import concentration_relation
from lensmass.core.cosmology import angular_diameter_distances_mpc, cosmology_label, little_h, resolve_cosmology
from lensmass.core import limits
from lensmass.core.errors import LensInputError
from lensmass.core.lensing import arcsec_to_mpc, sigma_crit_msun_per_mpc2
from lensmass.core.nfw import HALO_DEFINITIONS, nfw_mass_for_einstein_radius, overdensity_density_msun_per_mpc3
from lensmass.core.quantities import to_arcsec, to_plain
from lensmass.core.result_keys import keys_in
from lensmass.core.results import LensResult
from lensmass.core.sis import sis_sigma_v_kms
from lensmass.core.uncertainty import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    distribution_samples,
    normal_samples,
    summarize_many,
)

#: Keys whose values are derived numbers (each gets a median and intervals): the "estimate" group of
#: the key registry, read live so a registered key appears here too.
DERIVED_KEYS = keys_in("estimate")

#: NFW masses above this exceed any halo observed (common practice: the most massive known
#: clusters have M200 of a few 1e15 Msun).
MASSIVE_HALO_MSUN = 1e16
#: D_ls / D_s below this: the source sits just behind the lens and every mass scales as its inverse.
SMALL_BETA = 0.2

#: Lenses or Monte Carlo draws derived at once: bounds the NFW root find's ~20 work arrays (2.6 MB).
#: CPU seconds for 5e5 lenses, measured: blocks of 2048: 0.78, 4096: 0.55, 16384: 0.37, 65536: 0.36,
#: one pass: 0.39 (smaller blocks pay Python's per-call cost; larger ones save nothing).
DERIVE_BLOCK = 16384

#: Einstein radii below this are treated as galaxy-scale for the NFW caveat (common practice:
#: about 1" for massive single galaxies, several arcsec for groups).
GALAXY_SCALE_ARCSEC = 3.0


def derive_quantities(theta_e_arcsec, z_l, z_s, cosmo, concentration_of_mass: Callable,
                      halo_definition: str = "200c") -> dict[str, np.ndarray]:
    """All derived numbers for (arrays of) theta_E, z_l, z_s; no validation, no notes.

    Returns arrays keyed as :data:`DERIVED_KEYS`. NFW entries are NaN where no halo
    gives the radius.
    """
    theta, zl, zs = np.broadcast_arrays(*(np.asarray(v, float) for v in (theta_e_arcsec, z_l, z_s)))
    d_l, d_s, d_ls = angular_diameter_distances_mpc(zl, zs, cosmo)
    sigma_cr = sigma_crit_msun_per_mpc2(d_l, d_s, d_ls)
    r_e_mpc = arcsec_to_mpc(theta, d_l)
    mass = np.pi * sigma_cr * r_e_mpc**2
    m200, c200 = nfw_mass_for_einstein_radius(r_e_mpc, mass, zl, cosmo, concentration_of_mass, halo_definition)
    rho_delta = overdensity_density_msun_per_mpc3(zl, cosmo, halo_definition)
    r200_kpc = np.cbrt(3 * m200 / (4 * np.pi * rho_delta)) * 1e3
    return {
        "theta_e_arcsec": theta,
        "z_l": zl,
        "z_s": zs,
        "d_l_mpc": d_l,
        "d_s_mpc": d_s,
        "d_ls_mpc": d_ls,
        "sigma_cr_msun_per_pc2": sigma_cr * 1e-12,
        "r_e_kpc": r_e_mpc * 1e3,
        "mass_einstein_msun": mass,
        "sis_sigma_v_kms": sis_sigma_v_kms(theta, d_s, d_ls),
        "nfw_m200_msun": m200,
        "nfw_c200": c200,
        "nfw_r200_kpc": r200_kpc,
    }


def _as_floats(value, what: str, name: str) -> np.ndarray:
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise LensInputError(f"{what} (`{name}`) must be a number or an array of numbers, got {value!r}.") from None


def _check_positive(what: str, value, name: str) -> np.ndarray:
    arr = _as_floats(value, what, name)
    bad = ~np.isfinite(arr) | (arr <= 0)
    if np.any(bad):
        where = "" if arr.ndim == 0 else f" (element {int(np.flatnonzero(bad)[0])})"
        shown = arr if arr.ndim == 0 else arr.ravel()[np.flatnonzero(bad)[0]]
        raise LensInputError(f"{what} (`{name}`) must be a positive finite number{where}, got {shown}.")
    return arr


def _check_error(what: str, value, name: str) -> float:
    try:
        v = float(value or 0.0)
    except (TypeError, ValueError):
        raise LensInputError(f"The uncertainty of {what} (`{name}`) must be a number, got {value!r}.") from None
    if not np.isfinite(v) or v < 0:
        raise LensInputError(f"The uncertainty of {what} (`{name}`) must be zero or positive, got {value}.")
    return v


def _source_redshift_model(z_s, z_s_range, z_s_distribution):
    """Validate the three ways of giving z_s; return (kind, description)."""
    given = sum(x is not None for x in (z_s, z_s_range, z_s_distribution))
    if given == 0:
        raise LensInputError("No source redshift: give it (`z_s`), or a range (`z_s_range`) or a table "
                             "(`z_s_distribution`) when it is unknown.")
    if given > 1:
        raise LensInputError("Give the source redshift one way only: `z_s`, `z_s_range` or `z_s_distribution`.")
    if z_s_range is not None:
        try:
            lo, hi = (float(v) for v in z_s_range)
        except (TypeError, ValueError):
            raise LensInputError("The source redshift range must be two numbers, ZMIN,ZMAX (for example 1.0,3.0).") from None
        if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo < hi):
            raise LensInputError(f"The source redshift range needs 0 < ZMIN < ZMAX, got {lo:g},{hi:g}.")
        limits.redshift_in_range(hi, "The top of the source redshift range", "`z_s_range`")
        return "range", (lo, hi)
    if z_s_distribution is not None:
        zt, wt = (np.asarray(v, float) for v in z_s_distribution)
        limits.redshift_in_range(zt[np.isfinite(zt) & (zt > limits.REDSHIFT_MAX)], "A redshift of the table", "the source redshift table (`z_s_distribution`)")
        distribution_samples(zt, wt, 1, np.random.default_rng(0))  # validates with clear messages
        return "table", (zt, wt)
    return "fixed", None


def estimate(
    theta_e_arcsec,
    z_l,
    z_s=None,
    *,
    cosmology: Any = None,
    concentration: str | float = "duffy08",
    halo_definition: str = "200c",
    theta_e_err: float = 0.0,
    theta_e_draws: np.ndarray | None = None,
    z_l_err: float = 0.0,
    z_s_err: float = 0.0,
    z_s_range: tuple[float, float] | None = None,
    z_s_distribution: tuple[np.ndarray, np.ndarray] | None = None,
    samples: int = DEFAULT_SAMPLES,
    seed: int | None = DEFAULT_SEED,
    versus_zs_points: int = 25,
    strict: bool = True,
) -> LensResult:
    """Einstein radius and redshifts to distances, Sigma_cr, Einstein mass, SIS and NFW masses.

    Parameters
    ----------
    theta_e_arcsec, z_l, z_s : float, array_like or astropy Quantity
        Einstein radius (arcsec, or a Quantity in any angle unit), lens and source
        redshifts; arrays broadcast and are computed without a Python loop per lens.
    cosmology : str or astropy Cosmology, optional
        Preset name of astropy's (default ``"Planck18"``) or a cosmology object.
    concentration : {"duffy08", "dutton14"} or float
        c(M, z) relation for the NFW inversion, or a fixed concentration.
    halo_definition : {"200c", "200m", "vir"}
        Overdensity of the NFW halo boundary (default 200 x critical at z_l).
    theta_e_err, z_l_err, z_s_err : float or array_like
        1-sigma Gaussian errors, propagated by Monte Carlo; for arrays each lens i gets its own
        draws with seed ``seed + i`` (the same numbers as a call for that lens alone).
    theta_e_draws : array_like, optional
        Posterior draws of theta_E (e.g. from :func:`lensmass.core.lens_model.fit_lens_model`); the
        Monte Carlo resamples them instead of a Gaussian of width ``theta_e_err`` (one lens only).
    z_s_range, z_s_distribution : optional
        For an unknown source redshift instead of ``z_s``: a uniform range
        ``(zmin, zmax)`` or a table ``(z, weight)``; every number is marginalised.
    samples, seed : int
        Monte Carlo size (default 10^4) and seed (reproducible by default).
    strict : bool
        For arrays: True (default) refuses the call at the first bad lens, naming it; False
        computes the others and gives a reason per bad lens in ``problems`` (NaN values there).

    Returns
    -------
    LensResult
        A mapping (converts to an astropy QTable with ``to_table()``) with the keys of :data:`DERIVED_KEYS` plus ``cosmology``, ``notes`` (caveats),
        ``models`` (which model and assumption produced each number), and, when
        any uncertainty is given, ``medians``, ``intervals68`` ([p16, p84]) and
        ``intervals95`` ([p2.5, p97.5]); with an unknown z_s also ``versus_zs``.

    References
    ----------
    Narayan & Bartelmann (1996), arXiv:astro-ph/9606001 (Sigma_cr, Einstein mass, SIS);
    Wright & Brainerd (2000), ApJ 534, 34 (NFW lensing); Duffy et al. (2008), MNRAS 390, L64.

    Examples
    --------
    >>> r = estimate(1.0, 0.3, 1.0, cosmology="Planck18")
    >>> 1e10 < r["mass_einstein_msun"] < 1e12
    True
    >>> import astropy.units as u
    >>> r2 = estimate(1.0 / 60 * u.arcmin, 0.3, 1.0)  # any angle unit
    >>> bool(abs(r2["mass_einstein_msun"] / r["mass_einstein_msun"] - 1) < 1e-12)
    True
    >>> many = estimate([1.0, -1.0, 2.0], 0.3, 1.0, strict=False)  # a reason per bad lens
    >>> many["problems"][1]
    'The Einstein radius (`theta_e_arcsec`) must be a positive finite number, got -1.0.'
    >>> len(many.to_table())
    3
    """
    if halo_definition not in HALO_DEFINITIONS:
        raise LensInputError(f"Unknown halo definition '{halo_definition}': use one of {', '.join(HALO_DEFINITIONS)}.")
    cosmo = resolve_cosmology(cosmology)
    c_of_m, c_label = concentration_relation(concentration, halo_definition)
    theta_e_arcsec = to_arcsec(theta_e_arcsec, "The Einstein radius", "theta_e_arcsec")
    theta_e_err = to_arcsec(theta_e_err, "The error of the Einstein radius", "theta_e_err")
    z_l, z_s, z_l_err, z_s_err = (to_plain(v, what, name) for v, what, name in (
        (z_l, "The lens redshift", "z_l"), (z_s, "The source redshift", "z_s"),
        (z_l_err, "The error of the lens redshift", "z_l_err"), (z_s_err, "The error of the source redshift", "z_s_err")))
    seed = limits.seed(seed)
    draws = None
    if theta_e_draws is not None:
        draws = np.asarray(theta_e_draws, float).ravel()
        draws = draws[np.isfinite(draws)]
        if draws.size < 100 or np.any(draws <= 0):
            raise LensInputError("The theta_E draws must be at least 100 positive numbers (posterior draws of a fit).")
    kind, zs_model = _source_redshift_model(z_s, z_s_range, z_s_distribution)
    if kind == "fixed" and any(np.ndim(v) for v in (theta_e_arcsec, z_l, z_s, theta_e_err, z_l_err, z_s_err)):
        from lensmass.core.estimate_arrays import estimate_arrays

        return estimate_arrays(theta_e_arcsec, z_l, z_s, theta_e_err, z_l_err, z_s_err, cosmo=cosmo, concentration=concentration,
                               c_of_m=c_of_m, c_label=c_label, halo_definition=halo_definition, samples=samples, seed=seed,
                               strict=strict)
    theta = limits.einstein_radius_arcsec(_check_positive("The Einstein radius", theta_e_arcsec, "theta_e_arcsec"))
    zl = _check_positive("The lens redshift", z_l, "z_l")
    limits.redshift_in_range(zl, "The lens redshift", "the lens redshift (`z_l`)")
    errs = {
        "theta": _check_error("theta_E", theta_e_err, "theta_e_err"),
        "zl": _check_error("z_l", z_l_err, "z_l_err"),
        "zs": _check_error("z_s", z_s_err, "z_s_err"),
    }
    if kind == "fixed":
        zs = _check_positive("The source redshift", z_s, "z_s")
        limits.redshift_in_range(zs, "The source redshift", "the source redshift (`z_s`)")
        zl_b, zs_b = np.broadcast_arrays(zl, zs)
        in_front = np.flatnonzero(np.ravel(zs_b <= zl_b))
        if in_front.size:
            first = in_front[0]
            raise LensInputError(
                "The source must lie behind the lens: z_s must be larger than z_l "
                f"(got z_l = {np.ravel(zl_b)[first]:g}, z_s = {np.ravel(zs_b)[first]:g}); "
                "check that the two redshifts are not swapped."
            )
    else:
        hi_support = zs_model[1] if kind == "range" else _table_support(*zs_model)[1]
        if np.all(hi_support <= zl):
            raise LensInputError(
                f"The source must lie behind the lens: every source redshift offered (up to {hi_support:g}) "
                f"is at or below z_l = {float(np.max(zl)):g}."
            )
        zs = None
    scalar_input = theta.ndim == 0 and zl.ndim == 0 and (zs is None or np.ndim(zs) == 0)
    wants_mc = kind != "fixed" or any(v > 0 for v in errs.values()) or draws is not None
    if wants_mc and not scalar_input:
        raise LensInputError("An unknown source redshift (range or table) is marginalised for one lens at a time: "
                             "call estimate per lens.")
    n_samples = limits.monte_carlo_samples(samples) if wants_mc else int(samples)

    notes: list[str] = []
    result: dict[str, Any] = {"cosmology": cosmology_label(cosmo)}
    if wants_mc:
        rng = np.random.default_rng(seed)
        t_s = (normal_samples(theta, errs["theta"], n_samples, rng) if draws is None
               else rng.choice(draws, size=n_samples, replace=True))
        zl_s = normal_samples(zl, errs["zl"], n_samples, rng)
        if kind == "fixed":
            zs_s = normal_samples(zs, errs["zs"], n_samples, rng)
        elif kind == "range":
            zs_s = rng.uniform(zs_model[0], zs_model[1], n_samples)
        else:
            zs_s = distribution_samples(zs_model[0], zs_model[1], n_samples, rng)
        bad_theta = t_s <= 0
        bad_z = (zl_s <= 0) | (zs_s <= zl_s)
        keep = ~bad_theta & ~bad_z
        n_rejected = int(n_samples - keep.sum())
        if keep.sum() < 0.5 * n_samples:
            raise LensInputError(
                f"Only {int(keep.sum())} of {n_samples} Monte Carlo draws are usable: "
                f"{rejection_causes(int(bad_theta.sum()), int(bad_z.sum()), kind != 'fixed')}."
            )
        sampled = derive_in_chunks(t_s[keep], zl_s[keep], zs_s[keep], cosmo, c_of_m, halo_definition)
        del t_s, zl_s, zs_s, keep
        result.update(summarize_many(sampled))
        result["mc_samples"] = n_samples
        result["mc_rejected"] = n_rejected
        result["mc_seed"] = seed
        n_kept = int(sampled["theta_e_arcsec"].size)
        n_nfw_failed = int((~np.isfinite(sampled["nfw_m200_msun"])).sum())
        notes.extend(monte_carlo_notes(n_samples, n_rejected, n_nfw_failed, n_kept,
                                       int(bad_theta.sum()), int(bad_z.sum()), kind != "fixed"))
        result["_samples"] = sampled  # for plots; dropped from JSON output

    if kind == "fixed":
        central = derive_quantities(theta, zl, zs, cosmo, c_of_m, halo_definition)
        for key, value in central.items():
            result[key] = float(value) if scalar_input else value
    else:
        for key in DERIVED_KEYS:
            result[key] = result["medians"][key]
        if kind == "range":
            desc = f"uniform in [{zs_model[0]:g}, {zs_model[1]:g}]"
        else:
            desc = f"the given table of {len(zs_model[0])} rows"
        notes.append(
            f"Source redshift unknown: every number is marginalised over z_s {desc} "
            "(draws at or in front of the lens rejected); main values are medians."
        )
        result["versus_zs"] = _versus_zs(float(theta), float(zl), kind, zs_model, cosmo, c_of_m,
                                         halo_definition, versus_zs_points)

    limits.below_light_speed(result["sis_sigma_v_kms"], fix="the Einstein radius is too large for these "
                             "redshifts (or z_s is barely behind z_l); check `theta_e_arcsec`, `z_l` and `z_s`")
    notes.extend(model_notes(theta, result["nfw_m200_msun"], c_label))
    beta = np.asarray(result["d_ls_mpc"], float) / np.asarray(result["d_s_mpc"], float)
    notes[-1:-1] = range_notes(result["nfw_m200_msun"], result["z_l"], beta, concentration, little_h(cosmo),
                               cosmo, halo_definition)
    result["notes"] = notes
    result["models"] = model_descriptions(result["cosmology"], c_label, halo_definition, cosmo)
    return LensResult(result)


def derive_in_chunks(theta_e_arcsec, z_l, z_s, cosmo, concentration_of_mass: Callable,
                     halo_definition: str = "200c", chunk: int | None = None) -> dict[str, np.ndarray]:
    """:func:`derive_quantities` on 1-D arrays (lenses or draws), :data:`DERIVE_BLOCK` at a time.

    Every derived number depends on its own lens or draw only, so the result is identical to one
    call on the whole arrays; the work arrays (mostly the NFW root find) stay bounded by the block,
    at no cost in speed (see :data:`DERIVE_BLOCK`; benchmarks/bench_estimate_many_lenses.py). The three inputs are returned as given, not copied;
    ``tests/core/test_limits.py`` holds block-wise and whole equal.
    """
    chunk = int(chunk or DERIVE_BLOCK)
    n = int(np.size(theta_e_arcsec))
    if n <= chunk:
        return derive_quantities(theta_e_arcsec, z_l, z_s, cosmo, concentration_of_mass, halo_definition)
    given = {"theta_e_arcsec": theta_e_arcsec, "z_l": z_l, "z_s": z_s}
    out = {key: np.asarray(given[key], float) if key in given else np.empty(n) for key in DERIVED_KEYS}
    for start in range(0, n, chunk):
        part = slice(start, start + chunk)
        block = derive_quantities(theta_e_arcsec[part], z_l[part], z_s[part], cosmo, concentration_of_mass,
                                  halo_definition)
        for key in DERIVED_KEYS:
            if key not in given:
                out[key][part] = block[key]
    return out


def rejection_causes(n_bad_theta: int, n_bad_z: int, z_s_unknown: bool) -> str:
    """Which input made Monte Carlo draws unusable, with counts and the fix (one clause)."""
    parts = []
    if n_bad_theta:
        parts.append(f"{n_bad_theta} drew a non-positive Einstein radius (the theta_E error is too large "
                     "for theta_E; check `theta_e_err`)")
    if n_bad_z:
        where = "the source redshift range or table reaches" if z_s_unknown else "the redshift errors put"
        parts.append(f"{n_bad_z} had z_s <= z_l or z_l <= 0 ({where} the source at or in front of the lens; "
                     "check `z_l_err`, `z_s_err` or the source redshifts)")
    return "; ".join(parts) if parts else "none was rejected"


def monte_carlo_notes(n_samples: int, n_rejected: int, n_nfw_failed: int, n_kept: int,
                      n_bad_theta: int | None = None, n_bad_z: int | None = None,
                      z_s_unknown: bool = False) -> list[str]:
    """Caveats about the Monte Carlo draws (rejected draws and their cause, draws with no NFW solution)."""
    notes = []
    if n_rejected:
        if n_bad_theta is None or n_bad_z is None:
            cause = "had z_s <= z_l or a non-positive value"
        else:
            cause = "were rejected: " + rejection_causes(n_bad_theta, n_bad_z, z_s_unknown)
        notes.append(f"{n_rejected} of {n_samples} Monte Carlo draws {cause}" +
                     (" and were rejected." if n_bad_theta is None or n_bad_z is None else "."))
    if 0 < n_nfw_failed < n_kept:
        notes.append(f"In {n_nfw_failed} draws no NFW halo could give the radius; the NFW intervals use the rest.")
    return notes


def model_notes(theta_e_arcsec, nfw_m200_msun, concentration_label: str) -> list[str]:
    """Caveats about the models: an impossible NFW inversion, the galaxy-scale NFW bias."""
    notes = []
    if np.any(~np.isfinite(np.asarray(nfw_m200_msun, float))):
        notes.append(
            f"No NFW halo between 1e6 and 1e18 Msun with {concentration_label} gives this Einstein radius at "
            "these redshifts: the NFW numbers are empty."
        )
    if np.any(np.asarray(theta_e_arcsec, float) > limits.THETA_E_NOTE_ARCSEC):
        notes.append(
            f"An Einstein radius above {limits.THETA_E_NOTE_ARCSEC:g}\" is larger than any known lens (the largest "
            "cluster lenses reach about 1'): check that theta_E is a radius in arcsec."
        )
    if np.any(np.asarray(theta_e_arcsec, float) < GALAXY_SCALE_ARCSEC):
        notes.append(
            "Galaxy-scale lens: an NFW-only halo overestimates the mass, because NFW is too shallow in the "
            "centre and the stars that make most of the Einstein radius are missing from the model."
        )
    notes.append(MODEL_NOTE)
    return notes


def range_notes(nfw_m200_msun, z_l, beta, concentration, h: float, cosmo, halo_definition: str) -> list[str]:
    """Caveats when a number rests on a model outside its range.

    A c(M) relation outside its calibration, a halo above any observed
    (:data:`MASSIVE_HALO_MSUN`), a source just behind the lens (D_ls / D_s below
    :data:`SMALL_BETA`), and a virial boundary in a cosmology the Bryan & Norman fits do not cover.
    """
    from lensmass.core.concentration import calibration_note
    from lensmass.core.nfw import virial_overdensity

    notes = []
    m = np.atleast_1d(np.asarray(nfw_m200_msun, float))
    c_note = calibration_note(concentration, m, z_l, h)
    if c_note:
        notes.append(c_note)
    big = np.isfinite(m) & (m > MASSIVE_HALO_MSUN)
    if np.any(big):
        count = "" if m.size == 1 else f" for {int(big.sum())} of {m.size} lenses"
        notes.append(f"The NFW M200 ({float(np.max(m[big])):.3g} Msun{count}) is above 1e16 Msun, more than any "
                     "halo observed: suspect the redshifts (a source just behind the lens) or the Einstein radius.")
    b = np.atleast_1d(np.asarray(beta, float))
    small = np.isfinite(b) & (b < SMALL_BETA)
    if np.any(small):
        count = "" if b.size == 1 else f" for {int(small.sum())} of {b.size} lenses"
        notes.append(f"D_ls/D_s = {float(np.min(b[small])):.3g}{count}: the source lies just behind the lens, so "
                     "Sigma_cr and every mass scale as D_s/D_ls and a small redshift error moves them a lot.")
    if halo_definition == "vir":
        label = virial_overdensity(0.0, cosmo)[1]
        if "outside" in label:
            notes.append(f"The virial boundary uses the {label}.")
    return notes


def _versus_zs(theta, zl, kind, zs_model, cosmo, c_of_m, definition, n_points) -> list[dict[str, float]]:
    if kind == "range":
        lo, hi = zs_model
    else:
        lo, hi = _table_support(*zs_model)
    lo = max(lo, zl * 1.0001 + 1e-4)
    if hi <= lo:
        return []
    grid = np.linspace(lo, hi, n_points)
    q = derive_quantities(theta, zl, grid, cosmo, c_of_m, definition)
    return [
        {"z_s": float(z), "mass_einstein_msun": float(m), "sis_sigma_v_kms": float(s)}
        for z, m, s in zip(grid, q["mass_einstein_msun"], q["sis_sigma_v_kms"])
    ]


def _table_support(z: np.ndarray, weight: np.ndarray) -> tuple[float, float]:
    """Redshift interval where a piecewise-linear table has non-zero density."""
    order = np.argsort(z)
    z, weight = z[order], weight[order]
    nonzero = np.flatnonzero(weight > 0)
    return float(z[max(nonzero[0] - 1, 0)]), float(z[min(nonzero[-1] + 1, len(z) - 1)])


def model_descriptions(cosmology_name: str, concentration_label: str, halo_definition: str,
                       cosmo: Any = None) -> dict[str, str]:
    """Which model and assumptions produced each reported number.

    With ``cosmo`` the virial boundary names the Bryan & Norman (1998) fit used for it.
    """
    from lensmass.core.nfw import halo_boundary_description

    dist = f"angular-diameter distance in {cosmology_name} (astropy; Hogg 1999)"
    if cosmo is not None:
        boundary = halo_boundary_description(halo_definition, cosmo)
    else:
        boundary = {"200c": "200 x critical density at z_l", "200m": "200 x mean matter density at z_l",
                    "vir": "virial overdensity of Bryan & Norman (1998) at z_l"}[halo_definition]
    nfw = f"NFW halo alone (no stars), boundary {boundary}, concentration from {concentration_label}; "
    nfw += "halo mass chosen so its mean convergence inside theta_E is 1"
    return {
        "d_l_mpc": dist,
        "d_s_mpc": dist,
        "d_ls_mpc": dist + ", between the two redshifts",
        "sigma_cr_msun_per_pc2": "Sigma_cr = c^2 D_s / (4 pi G D_l D_ls)",
        "r_e_kpc": "R_E = D_l theta_E",
        "mass_einstein_msun": "projected mass inside theta_E, pi Sigma_cr R_E^2: model-independent for an "
        "axisymmetric lens (Narayan & Bartelmann 1996)",
        "sis_sigma_v_kms": "singular isothermal sphere with this Einstein radius: "
        "theta_E = 4 pi (sigma/c)^2 D_ls/D_s; not a measured stellar dispersion",
        "nfw_m200_msun": nfw,
        "nfw_c200": nfw,
        "nfw_r200_kpc": nfw,
    }
