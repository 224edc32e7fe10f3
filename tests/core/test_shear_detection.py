"""Weak detections: significance, upper limits, and interval coverage at low and high S/N.

Truth: seeded catalogues from lensmass.core.shear_simulation (Seitz & Schneider 1997 distortion of
NFW haloes, Wright & Brainerd 2000). Coverage targets: a 68% interval holds the truth in 68% of cases,
a 95% one in 95% (common practice); counts are binomial, so bounds here are 3 binomial sigma wide
(scipy.stats.binom). The longer sweep (200 seeds per case) is benchmarks/calibrate_shear_intervals.py.
"""

import numpy as np
import pytest
from astropy.cosmology import Planck18
from scipy import stats

from lensmass.core.shear_analysis import analyse_shear_catalog
from lensmass.core.shear_fit import detection_significance
from lensmass.core.shear_simulation import simulate_shear_catalog

N_SEEDS = 60


def _run(m200, z_l, seed, density=20.0):
    cat = simulate_shear_catalog(center_ra=150.0, center_dec=2.0, z_l=z_l, cosmo=Planck18, field_arcsec=1200.0,
                                 density_per_arcmin2=density, m200_msun=m200, shape_noise=0.25, seed=1000 + seed)
    return analyse_shear_catalog(cat["ra"], cat["dec"], cat["e1"], cat["e2"], cat["weight"], cat["z"], z_l=z_l,
                                 center_ra=150.0, center_dec=2.0, cosmology=Planck18, n_bootstrap=0,
                                 r_min=0.5, r_max=9.5)


def _binomial_range(p, n=N_SEEDS):
    lo, hi = stats.binom.interval(0.997, n, p)  # about 3 sigma
    return lo / n, hi / n


def test_significance_is_sqrt_delta_chi2_for_one_parameter():
    # Wilks' theorem: Delta chi^2 with one parameter is chi^2_1, i.e. the square of a standard normal (scipy)
    assert detection_significance(9.0 + 4.0, 4.0, 1) == pytest.approx(3.0, rel=1e-9)
    assert detection_significance(10.0, 10.0 - stats.chi2.isf(stats.norm.sf(2) * 2, 2), 2) == pytest.approx(2.0)


# the low-S/N cases, and a rich cluster
@pytest.mark.parametrize("m200, z_l", [(1e14, 0.3), (1e14, 0.7), (8e14, 0.3)])
def test_intervals_cover_the_truth_at_low_and_high_signal_to_noise(m200, z_l):
    in68 = in95 = above = 0
    for seed in range(N_SEEDS):
        r = _run(m200, z_l, seed)
        lo, hi = r["intervals68"]["nfw_m200_msun"]
        lo2, hi2 = r["intervals95"]["nfw_m200_msun"]
        in68 += lo <= m200 <= hi
        in95 += lo2 <= m200 <= hi2
        above += r["nfw_m200_upper95_msun"] >= m200
    lo68, hi68 = _binomial_range(0.68)
    assert lo68 <= in68 / N_SEEDS <= hi68
    assert _binomial_range(0.95)[0] <= in95 / N_SEEDS
    assert _binomial_range(0.95)[0] <= above / N_SEEDS  # the one-sided 95% upper limit


def test_no_halo_gives_few_false_detections_at_the_rate_wilks_predicts():
    # zero shear: the best mass sits on its boundary (M = 0) half the time, so Delta chi^2 follows
    # 0.5 chi^2_0 + 0.5 chi^2_1 (Chernoff 1954) and P(significance > 1) = 0.5 P(chi^2_1 > 1) = 0.159 (scipy)
    sig = np.array([_run(1e9, 0.3, seed)["detection_significance"] for seed in range(N_SEEDS)])
    expected = 0.5 * stats.chi2.sf(1.0, 1)
    lo, hi = _binomial_range(expected)
    assert lo <= np.mean(sig > 1.0) <= hi
    assert np.mean(sig >= 3.0) <= 2 / N_SEEDS


def test_undetected_halo_is_reported_as_an_upper_limit():
    # 20 galaxies per arcmin^2 and 1e14 Msun at z_l = 0.7: the case
    r = _run(1e14, 0.7, 3)
    assert not r["detected"] and r["detection_significance"] < 3
    note = r["notes"][0]
    assert note.startswith("The data do not detect the halo")
    assert f"M200 < {r['nfw_m200_upper95_msun']:.3g} Msun" in note and "uniform in M200" in note
    assert "uniform in M200" in r["models"]["nfw_m200_msun"]
    # the upper limit sits above the median, and the median is not piled up at the prior's edge (1e10)
    assert r["nfw_m200_upper95_msun"] > r["nfw_m200_msun"] > 1e12
