"""estimate_many gives, row for row, what lensmass.core.estimate.estimate gives (the reference)."""

import numpy as np

from lensmass.core.estimate import DERIVED_KEYS, estimate
from lensmass.core.estimate_many import _row_percentiles, estimate_many
from lensmass.core.uncertainty import summarize

ROWS = [  # theta, err, z_l, z_l_err, z_s, z_s_err, seed
    (1.2, 0.05, 0.3, 0.0, 1.1, 0.0, 11),       # galaxy scale, theta error only
    (25.0, 2.0, 0.35, 0.02, 1.8, 0.1, 12),     # cluster scale, every error
    (1.0, 0.1, 0.6, 0.05, 0.75, 0.1, 13),      # source just behind: some draws rejected
    (2.0, 0.0, 0.4, 0.0, 1.5, 0.0, 14),        # no errors: no Monte Carlo
    (1.0, 0.1, 0.8, 0.0, 0.5, 0.0, 15),        # source in front: refused
    (-1.0, 0.0, 0.3, 0.0, 1.0, 0.0, 16),       # negative radius: refused
    (1.0, 0.1, 0.5, 0.3, 0.55, 0.3, 17),       # most draws rejected: refused
]


def test_rows_match_estimate():
    cols = list(zip(*ROWS))
    got = estimate_many(*cols, cosmology="Planck18", samples=600)
    for row, res in zip(ROWS, got):
        theta, err, zl, zle, zs, zse, seed = row
        try:
            ref = estimate(theta, zl, zs, theta_e_err=err, z_l_err=zle, z_s_err=zse, samples=600, seed=seed,
                           cosmology="Planck18")
        except ValueError:
            assert res is None, row
            continue
        assert res is not None, row
        for key in DERIVED_KEYS:
            np.testing.assert_allclose(res[key], ref[key], rtol=1e-12, equal_nan=True, err_msg=key)
        assert res["notes"] == ref["notes"] and res["models"] == ref["models"]
        assert ("medians" in res) == ("medians" in ref)
        if "medians" in ref:
            assert res["mc_rejected"] == ref["mc_rejected"] and res["mc_samples"] == ref["mc_samples"]
            for block in ("medians", "intervals68", "intervals95"):
                for key in DERIVED_KEYS:
                    np.testing.assert_allclose(res[block][key], ref[block][key], rtol=1e-12, equal_nan=True,
                                               err_msg=f"{block} {key}")
    assert got[2]["mc_rejected"] > 0


def test_row_percentiles_equal_numpy():
    # reference: numpy.percentile (linear method) on the finite entries, via lensmass summarize
    rng = np.random.default_rng(3)
    lengths = np.array([1, 2, 7, 100, 333])
    values = rng.normal(size=lengths.sum())
    values[[5, 40, 41]] = np.nan
    got = _row_percentiles(values, lengths)
    start = 0
    for j, n in enumerate(lengths):
        s = summarize(values[start:start + n])
        start += n
        expect = [s["interval95"][0], s["interval68"][0], s["median"], s["interval68"][1], s["interval95"][1]]
        np.testing.assert_allclose(got[j], expect, rtol=1e-14, atol=0)
