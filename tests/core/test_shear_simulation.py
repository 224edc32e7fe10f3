"""The synthetic shape-catalogue generator (lensmass.core.shear_simulation)."""

import numpy as np
import pytest
from scipy import stats

from lensmass.core.cosmology import resolve_cosmology
from lensmass.core.shear_simulation import (
    apply_reduced_shear,
    intrinsic_ellipticities,
    simulate_shear_catalog,
    smail_redshifts,
)

COSMO = resolve_cosmology("Planck18")


@pytest.mark.parametrize("g", [0.05 + 0.02j, -0.3 + 0.4j, 1.5 - 0.8j])
def test_mean_lensed_ellipticity_is_g_or_inverse(g):
    # Seitz & Schneider (1997): for randomly oriented sources, <e> = g if |g| < 1 and 1/g* if |g| > 1.
    # Exact for any |e_s| when averaged over orientation: check on a ring of |e_s| = 0.3.
    angle = np.linspace(0, 2 * np.pi, 4000, endpoint=False)
    e_s = 0.3 * np.exp(1j * angle)
    mean = apply_reduced_shear(e_s, g).mean()
    expect = g if abs(g) < 1 else 1 / np.conj(g)
    assert mean == pytest.approx(expect, abs=1e-10)


def test_lensing_then_inverse_lensing_is_identity():
    # The weak-regime map e = (e_s + g)/(1 + g* e_s) has inverse e_s = (e - g)/(1 - g* e)
    # (Seitz & Schneider 1997, eq. 3.3); checked here as a second route to the formula.
    rng = np.random.default_rng(1)
    e_s = intrinsic_ellipticities(1000, 0.3, rng)
    g = 0.2 - 0.1j
    e = apply_reduced_shear(e_s, g)
    np.testing.assert_allclose((e - g) / (1 - np.conj(g) * e), e_s, atol=1e-12)
    assert np.all(np.abs(e) < 1)


def test_smail_redshifts_follow_gamma_distribution():
    # Smail et al. (1994): n(z) ~ z^a exp(-(z/z0)^b); (z/z0)^b ~ Gamma((a+1)/b), checked with scipy's KS test.
    rng = np.random.default_rng(2)
    z = smail_redshifts(20000, rng, z0=0.7, a=2.0, b=1.5)
    u = (z / 0.7) ** 1.5
    assert stats.kstest(u, stats.gamma(2.0).cdf).pvalue > 0.01


def test_intrinsic_ellipticities_have_the_asked_dispersion():
    rng = np.random.default_rng(3)
    e = intrinsic_ellipticities(100000, 0.25, rng)
    assert np.all(np.abs(e) < 1)
    assert np.std(e.real) == pytest.approx(0.25, rel=0.02)


def test_catalogue_density_and_foreground_galaxies_unlensed():
    sim = simulate_shear_catalog(center_ra=141.372, center_dec=18.2705, z_l=0.35, cosmo=COSMO, field_arcsec=600,
                                 density_per_arcmin2=30, shape_noise=0.0, seed=4)
    assert sim["ra"].size == pytest.approx(30 * 100, rel=0.1)
    front = sim["z_true"] <= 0.35
    assert front.any()
    assert np.all(sim["g1"][front] == 0) and np.all(sim["e1"][front] == 0)
