"""The input limits of lensmass.core.limits, each against an outside source, and Monte Carlo in chunks."""

import numpy as np
import pytest
from astropy import units as u
from astropy.constants import c
from astropy.cosmology import LambdaCDM, Planck18

from lensmass.core import limits
from lensmass.core.errors import LensInputError
from lensmass.core.estimate import estimate


def test_speed_of_light_is_codata():
    # CODATA 2018 exact value, as carried by astropy.constants
    assert limits.SPEED_OF_LIGHT_KMS == pytest.approx(c.to_value(u.km / u.s), rel=0, abs=1e-9)


def test_big_bang_check_agrees_with_the_friedmann_equation():
    # Hogg (1999) eq. 14: E(z)^2 = Om (1+z)^3 + Ok (1+z)^2 + OL (no radiation). For Om 0.1, OL 2.5
    # (Ok = -1.6) it is negative at 1 + z = 10: the model bounces and has no big bang.
    om, ol = 0.1, 2.5
    x = 10.0
    assert om * x**3 + (1 - om - ol) * x**2 + ol < 0
    with pytest.raises(LensInputError, match="no big bang"):
        limits.has_big_bang(LambdaCDM(H0=70, Om0=om, Ode0=ol, Tcmb0=0))
    # the same formula is positive everywhere for Om 0.3, OL 0.7 and for an open Om 0.3, OL 0
    grid = np.geomspace(1, 1101, 2000)
    for om, ol in ((0.3, 0.7), (0.3, 0.0)):
        assert np.all(om * grid**3 + (1 - om - ol) * grid**2 + ol > 0)
        limits.has_big_bang(LambdaCDM(H0=70, Om0=om, Ode0=ol, Tcmb0=0))
    limits.has_big_bang(Planck18)


def test_sis_velocity_limit_matches_the_sis_formula():
    # SIS (Narayan & Bartelmann 1996): theta_E = 4 pi (sigma/c)^2 D_ls/D_s; sigma = c exactly when
    # theta_E = 4 pi D_ls/D_s radians. Just below, the estimate runs; at the limit it is refused.
    zl, zs = 0.5, 0.5 + 1e-9
    d_s = Planck18.angular_diameter_distance(zs)
    d_ls = Planck18.angular_diameter_distance(zl, zs)
    theta_c = (4 * np.pi * d_ls / d_s).to_value(u.dimensionless_unscaled) * 206264.806
    r = estimate(0.9 * theta_c, zl, zs, cosmology="Planck18")
    assert r["sis_sigma_v_kms"] == pytest.approx(np.sqrt(0.9) * limits.SPEED_OF_LIGHT_KMS, rel=1e-4)
    with pytest.raises(LensInputError, match="faster than light"):
        estimate(1.01 * theta_c, zl, zs, cosmology="Planck18")


def test_monte_carlo_in_chunks_gives_the_same_numbers(monkeypatch):
    args = {"theta_e_err": 0.05, "z_l_err": 0.01, "z_s_err": 0.03, "samples": 3000, "seed": 11}
    whole = estimate(1.4, 0.25, 0.9, **args)
    from lensmass.core import estimate as estimate_module

    monkeypatch.setattr(estimate_module, "DERIVE_BLOCK", 700)
    chunked = estimate(1.4, 0.25, 0.9, **args)
    for key, values in whole["_samples"].items():
        np.testing.assert_array_equal(values, chunked["_samples"][key])
    assert whole["intervals68"] == chunked["intervals68"] and whole["medians"] == chunked["medians"]


def test_many_lenses_in_blocks_give_the_same_numbers(monkeypatch):
    # estimate on arrays derives DERIVE_BLOCK lenses at a time (bounded memory): each number depends on
    # its own lens only, so blocks of 7 give exactly the numbers of one pass
    from lensmass.core import estimate as estimate_module

    theta, z_l = np.linspace(0.5, 30.0, 50), np.linspace(0.1, 0.8, 50)
    whole = estimate(theta, z_l, z_l + 1.0)
    monkeypatch.setattr(estimate_module, "DERIVE_BLOCK", 7)
    blocks = estimate(theta, z_l, z_l + 1.0)
    for key in estimate_module.DERIVED_KEYS:
        np.testing.assert_array_equal(whole[key], blocks[key])


def test_estimate_many_in_groups_gives_the_same_numbers(monkeypatch):
    from lensmass.core import estimate_many as em

    rows = ([1.2, 2.0, 0.8], [0.05, 0.1, 0.02], [0.3, 0.4, 0.2], [0.01, 0, 0], [1.1, 1.5, 0.9], [0, 0.05, 0])
    whole = em.estimate_many(*rows, [1, 2, 3], samples=400)
    monkeypatch.setattr(em, "MC_CHUNK", 300)  # one row per group
    grouped = em.estimate_many(*rows, [1, 2, 3], samples=400)
    for a, b in zip(whole, grouped):
        assert a["intervals95"] == b["intervals95"] and a["medians"] == b["medians"]
    # and each row equals estimate() with the same seed (one source for each number)
    one = estimate(2.0, 0.4, 1.5, theta_e_err=0.1, z_s_err=0.05, samples=400, seed=2)
    assert grouped[1]["intervals68"]["mass_einstein_msun"] == pytest.approx(one["intervals68"]["mass_einstein_msun"])


def test_samples_bounded_by_memory_and_said_before_starting():
    assert limits.monte_carlo_samples(2_000_000, memory_bytes=10**9) == 2_000_000  # 0.5 GB / 250 B
    with pytest.raises(LensInputError, match="at most 2,000,000"):
        limits.monte_carlo_samples(2_000_001, memory_bytes=10**9)
    with pytest.raises(LensInputError, match="more draws do not sharpen"):
        limits.monte_carlo_samples(limits.MC_SAMPLES_MAX + 1, memory_bytes=10**15)


def test_on_image_uses_pixel_edges():
    # 0-based pixel centres; the image covers -0.5 .. n - 0.5 (FITS/numpy convention, common practice)
    limits.on_image([-0.5, 9.5], [0, 4.5], (5, 10))
    with pytest.raises(LensInputError, match="outside the 10 x 5 image"):
        limits.on_image([9.6], [0], (5, 10))


def test_sky_position_limits():
    limits.sky_position([0, 359.9, -10], [-90, 90, 0])
    for ra, dec in ((10, 90.01), (400, 0), (np.nan, 0)):
        with pytest.raises(LensInputError):
            limits.sky_position(ra, dec)


def test_spreadsheet_cells():
    from lensmass.io.spreadsheet import spreadsheet_safe

    # OWASP advice on CSV injection (common practice): prefix formula-starting text with a quote
    for text in ("=1+1", "+SUM(1)", "-cmd", "@x", "\tA", "\rA", "=HYPERLINK(\"http://x\",\"y\")"):
        assert spreadsheet_safe(text) == "'" + text
    for value in ("-1.5", "+3e4", "ann", "", -2.0, 7):
        assert spreadsheet_safe(value) == value
    assert np.isnan(spreadsheet_safe(float("nan")))
