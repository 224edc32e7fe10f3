"""Monte Carlo propagation of input uncertainties and percentile summaries.

The intervals are the 16th/84th (68%) and 2.5th/97.5th (95%) percentiles of the
sampled distribution of each derived number, with the 50th as its median: the
usual way to quote asymmetric errors (common practice).
"""

from __future__ import annotations

from typing import Mapping

import numpy as np

from lensmass.core.errors import LensInputError

DEFAULT_SAMPLES = 10_000
DEFAULT_SEED = 20261201


def normal_samples(value: float, error: float, n: int, rng: np.random.Generator) -> np.ndarray:
    """n draws from a Gaussian of mean ``value`` and width ``error`` (constant if error is 0)."""
    if error is None or error == 0:
        return np.full(n, float(value))
    return rng.normal(float(value), float(error), n)


def distribution_samples(z, weight, n: int, rng: np.random.Generator) -> np.ndarray:
    """Draws from a tabulated distribution (piecewise-linear density through (z, weight)).

    Inverse-CDF sampling of the trapezoid-integrated table.
    """
    z = np.asarray(z, float)
    w = np.asarray(weight, float)
    if z.ndim != 1 or z.size < 2 or z.shape != w.shape:
        raise LensInputError("A redshift distribution needs at least two rows of z and weight.")
    if not (np.all(np.isfinite(z)) and np.all(np.isfinite(w))):
        raise LensInputError("The redshift distribution has non-numeric or missing values: fix those rows.")
    order = np.argsort(z)
    z, w = z[order], w[order]
    if np.any(w < 0) or not np.any(w > 0):
        raise LensInputError("The redshift distribution weights must be non-negative and not all zero.")
    if np.any(np.diff(z) <= 0):
        raise LensInputError("The redshift distribution has repeated z values: give each z once.")
    cdf = np.concatenate([[0.0], np.cumsum(0.5 * (w[1:] + w[:-1]) * np.diff(z))])
    total = cdf[-1]
    u = rng.uniform(0, 1, n) * total
    i = np.clip(np.searchsorted(cdf, u, side="right") - 1, 0, len(z) - 2)
    dz = z[i + 1] - z[i]
    w0 = w[i]
    slope = (w[i + 1] - w0) / dz
    need = u - cdf[i]  # solve w0 t + slope t^2 / 2 = need for the offset t inside the interval
    with np.errstate(divide="ignore", invalid="ignore"):
        curved = (np.sqrt(np.maximum(w0**2 + 2 * slope * need, 0.0)) - w0) / slope
        straight = need / w0
    t = np.where(np.abs(slope) * dz > 1e-9 * np.maximum(w0, 1e-300), curved, straight)
    return z[i] + np.clip(np.nan_to_num(t), 0.0, dz)


def summarize(samples: np.ndarray) -> dict[str, object]:
    """Median, 68% and 95% intervals of finite samples (NaN when none are finite)."""
    s = np.asarray(samples, float)
    s = s[np.isfinite(s)]
    if s.size == 0:
        nan = float("nan")
        return {"median": nan, "interval68": [nan, nan], "interval95": [nan, nan]}
    p = np.percentile(s, [2.5, 16, 50, 84, 97.5])
    return {"median": float(p[2]), "interval68": [float(p[1]), float(p[3])], "interval95": [float(p[0]), float(p[4])]}


def summarize_many(samples: Mapping[str, np.ndarray]) -> dict[str, dict]:
    """``medians``, ``intervals68`` and ``intervals95`` blocks for several sampled keys."""
    medians, i68, i95 = {}, {}, {}
    for key, values in samples.items():
        s = summarize(values)
        medians[key] = s["median"]
        i68[key] = s["interval68"]
        i95[key] = s["interval95"]
    return {"medians": medians, "intervals68": i68, "intervals95": i95}
