""":func:`lensmass.core.estimate.estimate` for arrays of lenses: validity per lens, Monte Carlo per lens.

Every lens is checked on its own. With ``strict=True`` the first bad lens stops the call with a
sentence naming it; with ``strict=False`` the good lenses are computed and each bad one gets NaN
values and its reason in ``problems`` (None for a good lens). Errors given for arrays are
propagated by Monte Carlo lens by lens with seed ``seed + i`` through
:func:`lensmass.core.estimate_many.estimate_many`, which draws exactly as ``estimate`` does
for one lens: the numbers equal a call per lens.
"""

from __future__ import annotations

from typing import Any, Callable

import numpy as np

from lensmass.core import limits
from lensmass.core.cosmology import cosmology_label
from lensmass.core.errors import LensInputError
from lensmass.core.estimate import DERIVED_KEYS, derive_in_chunks, model_descriptions, model_notes
from lensmass.core.results import LensResult

_INPUTS = (("The Einstein radius", "theta_e_arcsec", "positive"), ("The lens redshift", "z_l", "positive"),
           ("The source redshift", "z_s", "positive"), ("The uncertainty of theta_E", "theta_e_err", "error"),
           ("The uncertainty of z_l", "z_l_err", "error"), ("The uncertainty of z_s", "z_s_err", "error"))


def _columns(values) -> list[np.ndarray]:
    arrays = []
    for value, (what, name, _) in zip(values, _INPUTS):
        try:
            arrays.append(np.asarray(0.0 if value is None else value, dtype=float))
        except (TypeError, ValueError):
            raise LensInputError(f"{what} (`{name}`) must be a number or an array of numbers, got {value!r}.") from None
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays))
    except ValueError:
        shapes = ", ".join(f"`{name}` {np.shape(a)}" for a, (_, name, _) in zip(arrays, _INPUTS) if np.ndim(a))
        raise LensInputError(f"The input arrays have shapes that do not broadcast ({shapes}): give arrays of "
                             "one length, or single numbers.") from None
    n = int(np.prod(shape))
    # a single number stays one number seen n times (no copy: an error of 0 for 10^7 lenses costs nothing)
    return [np.broadcast_to(a.reshape(-1), (n,)) if a.size == 1 else np.broadcast_to(a, shape).reshape(-1)
            for a in arrays]


def _bad_masks(cols: list[np.ndarray]) -> list[np.ndarray]:
    masks = []
    for col, (_, _, kind) in zip(cols, _INPUTS):
        with np.errstate(invalid="ignore"):
            masks.append(~np.isfinite(col) | ((col <= 0) if kind == "positive" else (col < 0)))
    ok = ~masks[0] & ~masks[1] & ~masks[2]
    with np.errstate(invalid="ignore"):
        z_out = lambda z: (z < limits.REDSHIFT_MIN) | (z > limits.REDSHIFT_MAX)  # noqa: E731
        masks.append(ok & ((cols[0] < limits.THETA_E_MIN_ARCSEC) | (cols[0] >= limits.THETA_E_MAX_ARCSEC)
                           | z_out(cols[1]) | z_out(cols[2])))  # outside the physical limits (core/limits.py)
        masks.append(~masks[1] & ~masks[2] & (cols[2] <= cols[1]))  # source in front of the lens
    return masks


def _reason(i: int, cols: list[np.ndarray], masks: list[np.ndarray]) -> str | None:
    for (what, name, kind), col, mask in zip(_INPUTS, cols, masks):
        if mask[i]:
            need = "a positive finite number" if kind == "positive" else "zero or positive"
            return f"{what} (`{name}`) must be {need}, got {col[i]}."
    if masks[-2][i]:
        try:
            limits.einstein_radius_arcsec(cols[0][i])
            limits.redshift_in_range(cols[1][i], "The lens redshift", "the lens redshift (`z_l`)")
            limits.redshift_in_range(cols[2][i], "The source redshift", "the source redshift (`z_s`)")
        except LensInputError as exc:
            return str(exc)
    if masks[-1][i]:
        return ("The source must lie behind the lens: z_s must be larger than z_l "
                f"(got z_l = {cols[1][i]:g}, z_s = {cols[2][i]:g}); check that the two redshifts are not swapped.")
    return None


def estimate_arrays(theta_e_arcsec, z_l, z_s, theta_e_err, z_l_err, z_s_err, *, cosmo, concentration,
                    c_of_m: Callable, c_label: str, halo_definition: str, samples: int, seed: int | None,
                    strict: bool) -> LensResult:
    """The array form of :func:`lensmass.core.estimate.estimate` (called by it; see the module docstring)."""
    cols = _columns((theta_e_arcsec, z_l, z_s, theta_e_err, z_l_err, z_s_err))
    shape = np.broadcast_shapes(*(np.shape(0.0 if v is None else v)
                                  for v in (theta_e_arcsec, z_l, z_s, theta_e_err, z_l_err, z_s_err)))
    theta, zl, zs, t_err, zl_err, zs_err = cols
    n = theta.size
    masks = _bad_masks(cols)
    bad = np.logical_or.reduce(masks)
    if strict and bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise LensInputError(f"Lens {i} of {n}: {_reason(i, cols, masks)} Pass strict=False to compute the other "
                             "lenses and get a reason for each bad one.")
    problems: list[str | None] | None = None
    if not strict:
        problems = [None] * n
        for j in np.flatnonzero(bad):
            problems[int(j)] = _reason(int(j), cols, masks)
    wants_mc = bool(np.any((t_err > 0) | (zl_err > 0) | (zs_err > 0)))
    if wants_mc:
        samples = limits.monte_carlo_samples(samples)
    label = cosmology_label(cosmo)
    result: dict[str, Any] = {"cosmology": label}
    good = ~bad
    if not wants_mc:
        if good.all():
            values = derive_in_chunks(theta, zl, zs, cosmo, c_of_m, halo_definition)
        else:
            part = derive_in_chunks(theta[good], zl[good], zs[good], cosmo, c_of_m, halo_definition)
            values = {}
            for key, v in part.items():
                values[key] = np.full(n, np.nan)
                values[key][good] = v
        notes = []
    else:
        values, notes = _monte_carlo(cols, good, problems, cosmo, concentration, halo_definition, samples, seed,
                                     result, strict)
    for key in DERIVED_KEYS:
        result[key] = np.reshape(values[key], shape)
    kept = np.isfinite(np.ravel(result["theta_e_arcsec"])) if not wants_mc else good
    m200 = np.ravel(result["nfw_m200_msun"])
    notes.extend(model_notes(theta, m200, c_label) if kept.all() else model_notes(theta[kept], m200[kept], c_label))
    if problems is not None and any(p is not None for p in problems):
        n_bad = sum(p is not None for p in problems)
        notes.insert(0, f"{n_bad} of {n} lenses could not be computed (NaN): 'problems' gives the reason for each.")
    result["notes"] = notes
    result["models"] = model_descriptions(label, c_label, halo_definition)
    if problems is not None:
        result["problems"] = problems
    return LensResult(result)


def _monte_carlo(cols, good, problems, cosmo, concentration, halo_definition, samples, seed, result, strict):
    """Per-lens draws through estimate_many; values, medians and intervals as arrays (NaN for bad lenses)."""
    from lensmass.core.estimate_many import estimate_many

    theta, zl, zs, t_err, zl_err, zs_err = cols
    n = theta.size
    base = int(seed) if seed is not None else int(np.random.default_rng().integers(2**31))
    seeds = base + np.arange(n)
    idx = np.flatnonzero(good)
    rows = estimate_many(theta[idx], t_err[idx], zl[idx], zl_err[idx], zs[idx], zs_err[idx], seeds[idx],
                         cosmology=cosmo, concentration=concentration, halo_definition=halo_definition,
                         samples=samples) if idx.size else []
    keys = tuple(DERIVED_KEYS)
    values = {k: np.full(n, np.nan) for k in keys}
    blocks = {b: {k: np.full(n, np.nan) if b == "medians" else [np.full(n, np.nan), np.full(n, np.nan)] for k in keys}
              for b in ("medians", "intervals68", "intervals95")}
    rejected = np.zeros(n, int)
    notes: list[str] = []
    for i, row in zip(idx, rows):
        if row is None:  # estimate would refuse this lens (too many draws rejected): its own sentence
            from lensmass.core.estimate import estimate

            try:
                estimate(theta[i], zl[i], zs[i], theta_e_err=t_err[i], z_l_err=zl_err[i], z_s_err=zs_err[i],
                         cosmology=cosmo, concentration=concentration,
                         halo_definition=halo_definition, samples=samples, seed=int(seeds[i]))
                reason = "the Monte Carlo draws could not be summarised"
            except LensInputError as exc:
                reason = str(exc)
            if strict:
                raise LensInputError(f"Lens {i} of {n}: {reason}")
            problems[i] = reason
            continue
        for k in keys:
            values[k][i] = row[k]
            if "medians" in row:
                blocks["medians"][k][i] = row["medians"][k]
                for b in ("intervals68", "intervals95"):
                    blocks[b][k][0][i], blocks[b][k][1][i] = row[b][k]
        rejected[i] = row.get("mc_rejected", 0)
        for note in row["notes"]:
            if note.startswith(("In ", "Masses are", "Galaxy-scale", "No NFW")) or note in notes:
                continue
            notes.append(note)
    result.update(blocks)
    result["mc_samples"] = int(samples)
    result["mc_rejected"] = rejected
    result["mc_seed"] = base
    notes.append(f"Monte Carlo per lens: lens i draws {int(samples)} times with seed {base} + i, exactly as a call "
                 "for that lens alone; lenses without errors have no bounds (NaN).")
    return values, notes

