"""The stacked NFW fit: the likelihood for a covariance estimated from patches, the free concentration,
the Wright & Brainerd profile behind it, and the random points' box.

Sources of truth named beside each check. The 100-realisation coverage sweeps are in
benchmarks/bench_stack.py (--coverage, --coverage-stars, --coverage-c); quick subsets are asserted here.
"""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.constants import G, c
from astropy.coordinates import SkyCoord
from astropy.cosmology import FlatLambdaCDM

from lensmass.core.catalog_arrays import ArrayBlocks
from lensmass.core.concentration import concentration_relation
from lensmass.core.cosmology import little_h, resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.stack_analysis import analyse_stack, random_points_like
from lensmass.core.stack_fit import effective_patches, likelihood_power
from lensmass.core.stack_simulation import simulate_stack

PLANCK = resolve_cosmology("Planck18")


def _blocks(s):
    return ArrayBlocks(s["ra"], s["dec"], s["e1"], s["e2"], s["weight"], s["z"])


def _toy_coverage(n_s, n_d, trials, power, seed=11):
    """Coverage of the posterior intervals of one linear amplitude when the data covariance is the sample
    covariance of n_s Gaussian draws (a textbook setting, numpy only, no project code but the power)."""
    rng = np.random.default_rng(seed)
    x = np.linspace(0.5, 2.0, n_d)
    cov = 0.5 * np.exp(-np.abs(x[:, None] - x[None]) / 0.3) + 0.5 * np.eye(n_d)
    chol = np.linalg.cholesky(cov)
    sigma = 1 / np.sqrt(x @ np.linalg.solve(cov, x))
    grid = np.linspace(-8 * sigma, 8 * sigma, 321)
    data = (chol @ rng.normal(size=(n_d, trials))).T
    draws = np.einsum("ij,tjk->tik", chol, rng.normal(size=(trials, n_d, n_s)))
    icov = np.linalg.inv(np.einsum("tik,tjk->tij", draws - draws.mean(2, keepdims=True),
                                   draws - draws.mean(2, keepdims=True)) / (n_s - 1))
    res = data[:, None, :] - grid[None, :, None] * x  # truth 0
    chi2 = np.einsum("tgi,tij,tgj->tg", res, icov, res)
    lnp = -0.5 * power * np.log1p(chi2 / (n_s - 1))
    cdf = np.cumsum(np.exp(lnp - lnp.max(1, keepdims=True)), 1)
    cdf /= cdf[:, -1:]
    q = np.array([np.interp([0.025, 0.16, 0.84, 0.975], c, grid) for c in cdf])
    return np.mean((q[:, 1] <= 0) & (q[:, 2] >= 0)), np.mean((q[:, 0] <= 0) & (q[:, 3] >= 0))


def test_likelihood_power_gives_intervals_their_coverage_with_a_noisy_covariance():
    # Percival, Friedrich, Sellentin & Heavens (2022, MNRAS 510, 3207): the power m makes Bayesian intervals
    # cover as often as they claim when the covariance is estimated from n_s samples; Sellentin & Heavens
    # (2016) alone (m = n_s) covers less. Checked here by simulation, the formula being quoted from memory.
    n_s, n_d, trials = 24, 6, 2500
    c68, c95 = _toy_coverage(n_s, n_d, trials, likelihood_power(n_s, n_d, 1))
    s68, s95 = _toy_coverage(n_s, n_d, trials, n_s)
    # binomial 1-sigma over 2500 trials: 0.009 at 68%, 0.0044 at 95%
    assert 0.64 < c68 < 0.72 and 0.93 < c95 < 0.965
    assert s95 < c95 and s68 < c68
    # many samples: the power tends to n_s (Sellentin & Heavens 2016, their eq. 12 with the Gaussian limit)
    assert likelihood_power(10**6, 6, 1) == pytest.approx(10**6, rel=1e-4)


def test_effective_patches_is_kish_sample_size():
    # Kish (1965): (sum w)^2 / sum w^2; equal patches give their number, empty patches do not count
    w = np.ones((24, 5))
    w[3] = 0.0
    assert effective_patches(w) == pytest.approx(23.0)
    w[0] = 3.0
    assert effective_patches(w) == pytest.approx(25.0**2 / 31.0)


def test_random_box_estimates_the_ends_of_a_uniform_footprint():
    # the ends of a uniform distribution from n draws: min - span/(n-1), max + span/(n-1) is unbiased
    # (common practice); the bare min/max fall inside by span/(n+1) on average
    rng = np.random.default_rng(3)
    widths = []
    for k in range(200):
        ra = rng.uniform(30.0, 31.5, 40)
        dec = np.degrees(np.arcsin(rng.uniform(np.sin(np.radians(-0.75)), np.sin(np.radians(0.75)), 40)))
        r_ra, _, _ = random_points_like(ra, dec, np.full(40, 0.3), 4000, seed=k)
        widths.append(np.ptp(r_ra))
    assert np.mean(widths) == pytest.approx(1.5, rel=0.01)


def _wright_brainerd_delta_sigma(r_mpc, m200, conc, z, cosmo):
    """Delta Sigma (Msun / pc^2) of an NFW halo: Wright & Brainerd (2000, ApJ 534, 34), eqs. (11)-(16),
    written here independently of lensmass.core.nfw; rho_crit from astropy."""
    rho_c = cosmo.critical_density(z).to_value(u.Msun / u.Mpc**3)
    r200 = (3 * m200 / (4 * np.pi * 200 * rho_c)) ** (1 / 3)
    rs = r200 / conc
    delta_c = 200 / 3 * conc**3 / (np.log(1 + conc) - conc / (1 + conc))
    x = np.asarray(r_mpc, float) / rs
    g = np.empty_like(x)
    lo, hi = x < 1, x > 1
    a = np.arctanh(np.sqrt((1 - x[lo]) / (1 + x[lo])))
    g[lo] = (8 * a / (x[lo] ** 2 * np.sqrt(1 - x[lo] ** 2)) + 4 / x[lo] ** 2 * np.log(x[lo] / 2)
             - 2 / (x[lo] ** 2 - 1) + 4 * a / ((x[lo] ** 2 - 1) * np.sqrt(1 - x[lo] ** 2)))
    b = np.arctan(np.sqrt((x[hi] - 1) / (1 + x[hi])))
    g[hi] = (8 * b / (x[hi] ** 2 * np.sqrt(x[hi] ** 2 - 1)) + 4 / x[hi] ** 2 * np.log(x[hi] / 2)
             - 2 / (x[hi] ** 2 - 1) + 4 * b / (x[hi] ** 2 - 1) ** 1.5)
    g[x == 1] = 10 / 3 + 4 * np.log(0.5)
    return rs * delta_c * rho_c * g / 1e12


def test_stacked_nfw_profile_and_mass_against_wright_brainerd():
    # isolated NFW lenses (1 degree apart, so each source feels one), noiseless e = gamma_t in the weak limit,
    # gamma_t Sigma_cr = Delta Sigma of Wright & Brainerd (2000) computed in this test with astropy distances
    cosmo = FlatLambdaCDM(H0=70, Om0=0.3)
    rng = np.random.default_rng(8)
    m200, conc = 2e14, 5.0
    gra, gdec = np.meshgrid(150.0 + np.arange(5), 2.0 + np.arange(5))
    lra, ldec = gra.ravel(), gdec.ravel()
    lz = rng.uniform(0.2, 0.4, lra.size)
    n = 120000
    sra, sdec, sz = rng.uniform(149.5, 154.5, n), rng.uniform(1.5, 6.5, n), rng.uniform(0.7, 1.2, n)
    src, lens = SkyCoord(sra * u.deg, sdec * u.deg), SkyCoord(lra * u.deg, ldec * u.deg)
    nearest, sep, _ = src.match_to_catalog_sky(lens)
    zl = lz[nearest]
    d_l = cosmo.angular_diameter_distance(zl).to_value(u.Mpc)
    r = d_l * sep.to_value(u.rad)
    sigma_cr = (c**2 / (4 * np.pi * G) * cosmo.angular_diameter_distance(sz)
                / (cosmo.angular_diameter_distance(zl) * cosmo.angular_diameter_distance(zl, sz)))
    sigma_cr = sigma_cr.to_value(u.Msun / u.pc**2)
    gamma_t = np.zeros(n)
    for z_i in np.unique(zl):
        on = zl == z_i
        gamma_t[on] = _wright_brainerd_delta_sigma(r[on], m200, conc, z_i, cosmo) / sigma_cr[on]
    phi = np.pi / 2 - lens[nearest].position_angle(src).rad
    s = {"ra": sra, "dec": sdec, "e1": -gamma_t * np.cos(2 * phi), "e2": -gamma_t * np.sin(2 * phi),
         "weight": np.ones(n), "z": sz}
    res = analyse_stack(lra, ldec, lz, _blocks(s), cosmology=cosmo, r_min_mpc=0.1, r_max_mpc=1.5, n_bins=8,
                        n_patches=20, n_randoms=0, concentration=conc)
    # the estimator: sum w Sigma_cr e_t / sum w with w = Sigma_cr^-2, i.e. the weighted mean of Delta Sigma
    w = 1 / sigma_cr**2
    edges = np.geomspace(0.1, 1.5, 9)
    ds_true = sigma_cr * gamma_t
    for k, row in enumerate(res["profile"]):
        inb = (r >= edges[k]) & (r < edges[k + 1]) & (sz > zl + 0.1)
        expected = np.sum(w[inb] * ds_true[inb]) / np.sum(w[inb])
        assert row["delta_sigma_msun_per_pc2"] == pytest.approx(expected, rel=2e-3)
    # and the fit, whose model averages the halo over the bins, recovers M200 (c fixed at the truth)
    assert res["mean_halo_m200_msun"] == pytest.approx(m200, rel=0.02)


def _population(seed, c_true):
    m = 10 ** np.random.default_rng(1000 + seed).uniform(13.5, 14.2)
    s = simulate_stack(n_lenses=200, n_sources=80000, m200_msun=m, cosmo=PLANCK, ra_range=(30.0, 31.5),
                       dec_range=(-0.75, 0.75), concentration=c_true(m), seed=seed)
    return m, s


_OPTS = {"cosmology": PLANCK, "r_min_mpc": 0.1, "r_max_mpc": 1.5, "n_bins": 6, "n_patches": 24, "n_randoms": 600}


def test_free_concentration_holds_the_truth_and_widens_m200():
    # 6 seeded realisations of benchmarks/bench_stack.py --coverage-c (100 there): every lens has one c200,
    # drawn log-normally (0.15 dex) about Duffy et al. (2008) at z = 0.3; the fit's prior is that relation
    # with 0.15 dex. A true 95% coverage gives >= 5 of 6 in 97% of sets.
    c_of_m, _ = concentration_relation("duffy08")
    inside_m = inside_c = 0
    for seed in range(700, 706):
        scatter = 10 ** np.random.default_rng(3000 + seed).normal(0.0, 0.15)
        m, s = _population(seed, lambda mass: float(c_of_m(mass, 0.3, little_h(PLANCK))) * scatter)
        c_true = float(c_of_m(m, 0.3, little_h(PLANCK))) * scatter
        free = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"], _blocks(s), free_concentration=True,
                             seed=seed, **_OPTS)
        lo, hi = free["intervals95"]["mean_halo_m200_msun"]
        inside_m += lo <= m <= hi
        lo, hi = free["intervals95"]["mean_halo_c200"]
        inside_c += lo <= c_true <= hi
        assert free["free_concentration"] and free["medians"]["mean_halo_c200"] == free["mean_halo_c200"]
        assert "0.15 dex scatter" in free["models"]["mean_halo_c200"]
    assert inside_m >= 5 and inside_c >= 5
    fixed = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"], _blocks(s), seed=seed, **_OPTS)
    width = {k: np.diff(np.log(r["intervals68"]["mean_halo_m200_msun"]))[0] for k, r in (("free", free),
                                                                                           ("fixed", fixed))}
    assert width["free"] > width["fixed"]
    assert "mean_halo_c200" not in fixed["intervals68"]
    assert any("Duffy et al. (2008)" in n and "fixes it" in n for n in fixed["notes"])


def test_flat_concentration_prior_bounds_the_interval():
    m, s = _population(710, lambda mass: 8.0)
    r = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"], _blocks(s), free_concentration=True,
                      concentration_prior=(3, 12), seed=1, **_OPTS)
    lo, hi = r["intervals95"]["mean_halo_c200"]
    assert 3 <= lo < r["mean_halo_c200"] < hi <= 12
    assert "flat prior in c200 on [3, 12]" in r["models"]["mean_halo_m200_msun"]


@pytest.mark.parametrize("kw, needle", [
    ({"concentration_prior": 0.2}, "needs the concentration fitted"),
    ({"free_concentration": True, "concentration_prior": 2.0}, "needs 0-1 dex"),
    ({"free_concentration": True, "concentration_prior": (5, 2)}, "c_min < c_max"),
    ({"free_concentration": True, "concentration_prior": "wide"}, "needs 0-1 dex"),
    ({"free_concentration": True, "concentration_prior": (1, 2, 3)}, "a scatter in dex"),
])
def test_bad_concentration_priors_are_one_sentence(kw, needle):
    s = {"ra": np.array([30.0]), "dec": np.array([0.0]), "e1": np.zeros(1), "e2": np.zeros(1),
         "weight": np.ones(1), "z": np.ones(1)}
    with pytest.raises(LensInputError, match=needle):
        analyse_stack([30.0, 30.1, 30.2], [0.0] * 3, [0.3] * 3, _blocks(s), n_patches=2, **kw)
