"""Many lenses at once: :func:`lensmass.core.estimate.estimate` for a block of rows in one pass.

The batch runner has thousands of rows with their own theta_E, redshifts and errors.
Calling ``estimate`` per row spends most of its time in the fixed cost of the
vectorised NFW root find; here the Monte Carlo draws of every row are made exactly
as ``estimate`` makes them (same generator, same seed, same order of draws, same
rejection), stacked, passed through one :func:`~lensmass.core.estimate.derive_quantities`
call, and summarised per row with the same percentiles. The result of each row is
the mapping ``estimate`` returns for it (values, medians, intervals, notes, models);
``tests/core/test_estimate_many.py`` holds the two equal.

Rows that ``estimate`` would reject (bad numbers, source in front of the lens, too
many rejected draws) come back as None: call ``estimate`` on them for its message.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from lensmass.core import limits
from lensmass.core.concentration import concentration_relation
from lensmass.core.cosmology import cosmology_label, little_h, resolve_cosmology
from lensmass.core.estimate import (
    DERIVED_KEYS,
    derive_in_chunks,
    model_descriptions,
    model_notes,
    monte_carlo_notes,
    range_notes,
)
from lensmass.core.limits import MC_CHUNK
from lensmass.core.uncertainty import DEFAULT_SAMPLES, normal_samples

#: Percentiles behind median, 68% and 95% intervals (as in lensmass.core.uncertainty.summarize).
PERCENTILES = np.array([2.5, 16, 50, 84, 97.5])


def _row_percentiles(values: np.ndarray, lengths: np.ndarray) -> np.ndarray:
    """Percentiles of the finite entries of each row segment, numpy's 'linear' method.

    ``values`` is the stacked draws, ``lengths`` the number of draws of each row in
    order. Returns (n_rows, 5), NaN for a row without finite draws.
    """
    n_rows, width = len(lengths), int(lengths.max()) if len(lengths) else 0
    grid = np.full((n_rows, width), np.nan)
    rows = np.repeat(np.arange(n_rows), lengths)
    cols = np.arange(values.size) - np.repeat(np.cumsum(lengths) - lengths, lengths)
    v = np.where(np.isfinite(values), values, np.nan)
    grid[rows, cols] = v
    grid.sort(axis=1)  # NaN last
    k = np.isfinite(grid).sum(axis=1)
    q = PERCENTILES / 100.0
    virtual = (k[:, None] - 1) * q[None, :]
    lo = np.floor(virtual)
    gamma = virtual - lo
    lo_i = np.clip(lo.astype(int), 0, max(width - 1, 0))
    hi_i = np.clip(lo_i + 1, 0, np.maximum(k - 1, 0)[:, None])
    a = np.take_along_axis(grid, lo_i, axis=1)
    b = np.take_along_axis(grid, hi_i, axis=1)
    diff = b - a  # numpy's _lerp, including its form for gamma >= 0.5
    out = np.where(gamma >= 0.5, b - diff * (1 - gamma), a + diff * gamma)
    out[k == 0] = np.nan
    return out


def estimate_many(theta_e_arcsec, theta_e_err, z_l, z_l_err, z_s, z_s_err, seeds, *, cosmology: Any = None,
                  concentration: str | float = "duffy08", halo_definition: str = "200c",
                  samples: int = DEFAULT_SAMPLES) -> list[dict[str, Any] | None]:
    """``estimate(theta_e_arcsec[i], z_l[i], z_s[i], theta_e_err=..., seed=seeds[i], ...)`` for every i.

    All arguments are 1-D sequences of equal length (errors may be 0). Returns one
    result mapping per row, or None for a row ``estimate`` would refuse.

    Examples
    --------
    >>> r = estimate_many([1.0, 2.0], [0.1, 0.0], [0.3, 0.4], [0, 0], [1.0, 1.5], [0, 0], [1, 2], samples=500)
    >>> r[0]["mc_samples"], "medians" in r[1]
    (500, False)
    """
    cosmo = resolve_cosmology(cosmology)
    h = little_h(cosmo)
    c_of_m, c_label = concentration_relation(concentration, halo_definition)
    cols = [np.asarray(v, float).ravel() for v in (theta_e_arcsec, theta_e_err, z_l, z_l_err, z_s, z_s_err)]
    theta, t_err, zl, zl_err, zs, zs_err = cols
    n_rows = theta.size
    ok = np.ones(n_rows, bool)
    for v in (theta, zl, zs):
        ok &= np.isfinite(v) & (v > 0)
    for e in (t_err, zl_err, zs_err):
        ok &= np.isfinite(e) & (e >= 0)
    ok &= zs > zl
    # rows outside the physical limits go through estimate(), which names the problem
    ok &= (theta < limits.THETA_E_MAX_ARCSEC) & (zl <= limits.REDSHIFT_MAX) & (zs <= limits.REDSHIFT_MAX)
    ok &= np.array([isinstance(s_, (int, np.integer)) and 0 <= s_ <= limits.SEED_MAX for s_ in seeds], bool) \
        if n_rows else ok
    n = int(samples)
    if n < 100:
        ok[:] = False
    label = cosmology_label(cosmo)
    models = model_descriptions(label, c_label, halo_definition, cosmo)
    results: list[dict[str, Any] | None] = [None] * n_rows
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        return results
    central = derive_in_chunks(theta[idx], zl[idx], zs[idx], cosmo, c_of_m, halo_definition)
    ok[idx[~(central["sis_sigma_v_kms"] < limits.SPEED_OF_LIGHT_KMS)]] = False  # estimate() says why

    wants = (t_err > 0) | (zl_err > 0) | (zs_err > 0)
    summaries: dict[int, dict] = {}
    rejected: dict[int, int] = {}
    group: list[tuple[int, tuple]] = []
    causes: dict[int, tuple[int, int]] = {}
    for i in idx[wants[idx]]:
        rng = np.random.default_rng(int(seeds[i]))
        t_s = normal_samples(theta[i], t_err[i], n, rng)
        zl_s = normal_samples(zl[i], zl_err[i], n, rng)
        zs_s = normal_samples(zs[i], zs_err[i], n, rng)
        bad_theta = t_s <= 0
        bad_z = (zl_s <= 0) | (zs_s <= zl_s)
        keep = ~bad_theta & ~bad_z
        if keep.sum() < 0.5 * n:
            ok[i] = False  # estimate() refuses this row with its own message
            continue
        group.append((i, (t_s[keep], zl_s[keep], zs_s[keep])))
        rejected[i] = int(n - keep.sum())
        causes[i] = (int(bad_theta.sum()), int(bad_z.sum()))
        if sum(d[0].size for _, d in group) >= MC_CHUNK:  # bounded memory: summarise rows in groups
            summaries.update(_summarise_group(group, cosmo, c_of_m, halo_definition))
            group = []
    if group:
        summaries.update(_summarise_group(group, cosmo, c_of_m, halo_definition))

    for j, i in enumerate(idx):
        if not ok[i]:
            continue
        result: dict[str, Any] = {"cosmology": label}
        notes: list[str] = []
        if i in summaries and ok[i]:
            s = summaries[i]
            result.update({k: s[k] for k in ("medians", "intervals68", "intervals95")})
            result["mc_samples"], result["mc_rejected"], result["mc_seed"] = n, rejected[i], int(seeds[i])
            notes.extend(monte_carlo_notes(n, rejected[i], s["_nfw_failed"], s["_n_kept"], *causes[i]))
        for key in DERIVED_KEYS:
            result[key] = float(central[key][j])
        notes.extend(model_notes(theta[i], result["nfw_m200_msun"], c_label))
        notes[-1:-1] = range_notes(result["nfw_m200_msun"], result["z_l"], result["d_ls_mpc"] / result["d_s_mpc"],
                                   concentration, h, cosmo, halo_definition)
        result["notes"] = notes
        result["models"] = dict(models)
        results[i] = result
    return results


def _summarise_group(group, cosmo, c_of_m, halo_definition) -> dict[int, dict]:
    """Percentile summaries of several rows' kept draws, derived in one stacked pass."""
    draws = [d for _, d in group]
    lengths = np.array([d[0].size for d in draws])
    stacked = derive_in_chunks(np.concatenate([d[0] for d in draws]), np.concatenate([d[1] for d in draws]),
                                np.concatenate([d[2] for d in draws]), cosmo, c_of_m, halo_definition)
    pct = {key: _row_percentiles(stacked[key], lengths) for key in DERIVED_KEYS}
    m200 = stacked["nfw_m200_msun"]
    bounds = np.concatenate([[0], np.cumsum(lengths)])
    out = {}
    for j, (i, _) in enumerate(group):
        seg = m200[bounds[j]:bounds[j + 1]]
        out[i] = {
            "medians": {k: float(pct[k][j, 2]) for k in DERIVED_KEYS},
            "intervals68": {k: [float(pct[k][j, 1]), float(pct[k][j, 3])] for k in DERIVED_KEYS},
            "intervals95": {k: [float(pct[k][j, 0]), float(pct[k][j, 4])] for k in DERIVED_KEYS},
            "_nfw_failed": int((~np.isfinite(seg)).sum()), "_n_kept": int(seg.size),
        }
    return out
