"""Sampling helpers against scipy.stats references."""

import numpy as np
import pytest
from scipy import stats

from lensmass.core.errors import LensInputError
from lensmass.core.uncertainty import distribution_samples, summarize


def test_summary_percentiles_of_a_gaussian():
    # scipy.stats.norm: the 16th/84th percentiles sit at -/+0.9945 sigma, the 2.5th/97.5th at -/+1.96.
    s = np.random.default_rng(0).normal(10.0, 2.0, 400000)
    out = summarize(s)
    assert out["median"] == pytest.approx(10.0, abs=0.02)
    np.testing.assert_allclose(out["interval68"], 10 + 2 * stats.norm.ppf([0.16, 0.84]), atol=0.03)
    np.testing.assert_allclose(out["interval95"], 10 + 2 * stats.norm.ppf([0.025, 0.975]), atol=0.04)


def test_table_sampling_reproduces_triangular_distribution():
    # A piecewise-linear table through (0.5, 0), (1, 1), (2, 0) is scipy.stats.triang(c=1/3, loc=0.5, scale=1.5).
    s = distribution_samples([0.5, 1.0, 2.0], [0.0, 1.0, 0.0], 200000, np.random.default_rng(1))
    ks = stats.kstest(s, stats.triang(c=1 / 3, loc=0.5, scale=1.5).cdf)
    assert ks.pvalue > 0.01


def test_bad_tables():
    rng = np.random.default_rng(0)
    with pytest.raises(LensInputError, match="at least two rows"):
        distribution_samples([1.0], [1.0], 10, rng)
    with pytest.raises(LensInputError, match="non-negative"):
        distribution_samples([1.0, 2.0], [-1.0, 1.0], 10, rng)
    with pytest.raises(LensInputError, match="non-numeric"):
        distribution_samples([1.0, np.nan], [1.0, 1.0], 10, rng)
