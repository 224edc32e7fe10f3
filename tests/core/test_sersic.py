"""Sersic enclosed light and the Hernquist / de Vaucouleurs projected profiles."""

import numpy as np
import pytest
from scipy import integrate, optimize, special

from lensmass.core.errors import LensInputError
from lensmass.core.sersic import (
    sersic_b,
    sersic_b_series,
    sersic_enclosed_fraction,
    sersic_profile,
    sersic_total_flux,
)
from lensmass.core.stellar_profiles import (
    HERNQUIST_RE_OVER_A,
    hernquist_projected_fraction,
    hernquist_surface_density,
    projected_mass_fraction,
)


def test_b4_is_7669():
    # shared REFERENCES.md and Ciotti & Bertin (1999): b_4 = 7.669
    assert round(float(sersic_b(4.0)), 3) == 7.669


@pytest.mark.parametrize("n", [0.5, 1.0, 2.0, 4.0, 6.0, 10.0])
def test_half_light_at_r_eff(n):
    # Graham & Driver (2005), eq. 2: L(<R_e) / L = P(2n, b_n) = 1/2 by the definition of b_n
    assert sersic_enclosed_fraction(3.7, 3.7, n) == pytest.approx(0.5, abs=1e-12)


@pytest.mark.parametrize("n", [0.5, 1.0, 2.5, 4.0, 8.0])
def test_b_n_against_a_scipy_root_find(n):
    # b_n solves P(2n, b) = 1/2 (Graham & Driver 2005, eq. 2), here with scipy brentq
    root = optimize.brentq(lambda b: special.gammainc(2 * n, b) - 0.5, 1e-3, 100, xtol=1e-14)
    assert float(sersic_b(n)) == pytest.approx(root, rel=1e-10)


@pytest.mark.parametrize("n, tol", [(1.0, 5e-5), (2.0, 1e-5), (4.0, 1e-6), (10.0, 1e-7)])
def test_ciotti_bertin_series(n, tol):
    # Ciotti & Bertin (1999), A&A 352, 447, eq. 18 (higher terms from memory, hence checked here
    # against the exact root; the first three terms 2n - 1/3 + 4/(405 n) are in REFERENCES.md)
    assert abs(float(sersic_b_series(n)) - float(sersic_b(n))) < tol
    three_terms = 2 * n - 1 / 3 + 4 / (405 * n)
    assert abs(three_terms - float(sersic_b(n))) < 2e-3


def test_exponential_disc_closed_form():
    # n = 1: P(2, x) = 1 - (1 + x) e^-x (Abramowitz & Stegun 6.5.13), x = b_1 R / R_e
    b1 = float(sersic_b(1.0))
    for r in (0.3, 1.0, 2.5):
        x = b1 * r
        assert float(sersic_enclosed_fraction(r, 1.0, 1.0)) == pytest.approx(1 - (1 + x) * np.exp(-x), rel=1e-12)


@pytest.mark.parametrize("n", [1.0, 4.0])
def test_total_flux_against_numerical_integral(n):
    # Graham & Driver (2005), eq. 4 against integral of 2 pi R I(R) dR with scipy quad
    r_e, i_e = 2.0, 3.0
    numeric, _ = integrate.quad(lambda r: 2 * np.pi * r * sersic_profile(r, i_e, r_e, n), 0, np.inf,
                                limit=400, epsrel=1e-11)
    assert float(sersic_total_flux(i_e, r_e, n)) == pytest.approx(numeric, rel=1e-8)
    inner, _ = integrate.quad(lambda r: 2 * np.pi * r * sersic_profile(r, i_e, r_e, n), 0, 1.3,
                              limit=400, epsrel=1e-11)
    assert float(sersic_enclosed_fraction(1.3, r_e, n)) == pytest.approx(inner / numeric, rel=1e-8)


def test_bad_sersic_index():
    with pytest.raises(LensInputError, match="Sersic index .`sersic_n`."):
        sersic_b(-1.0)


def _hernquist_rho(r, a=1.0):
    # Hernquist (1990), eq. 2, unit total mass
    return a / (2 * np.pi * r * (r + a) ** 3)


def _projected(r_2d, a=1.0):
    return 2 * integrate.quad(lambda z: _hernquist_rho(np.hypot(r_2d, z), a), 0, np.inf, epsrel=1e-12, limit=200)[0]


@pytest.mark.parametrize("s", [0.05, 0.5, 0.97, 1.0, 1.02, 3.0, 20.0])
def test_hernquist_surface_density_against_numerical_projection(s):
    # Hernquist (1990), eq. 32, against a line-of-sight integral of eq. 2 (scipy quad)
    assert float(hernquist_surface_density(s, 1.0, 1.0)) == pytest.approx(_projected(s), rel=1e-9)


@pytest.mark.parametrize("s", [0.2, 1.0, 2.5])
def test_hernquist_projected_mass_against_numerical_projection(s):
    # Hernquist (1990), eq. 37, against the cylinder integral of the projected density
    numeric = integrate.quad(lambda r: 2 * np.pi * r * _projected(r), 0, s, epsrel=1e-10, limit=200)[0]
    assert float(hernquist_projected_fraction(s, 1.0)) == pytest.approx(numeric, rel=1e-8)


def test_hernquist_half_light_radius():
    # Hernquist (1990), eq. 38: R_e = 1.8153 a encloses half the projected mass
    assert float(hernquist_projected_fraction(HERNQUIST_RE_OVER_A, 1.0)) == pytest.approx(0.5, abs=1e-4)
    assert float(projected_mass_fraction("hernquist", 2.0, 2.0)) == pytest.approx(0.5, abs=1e-4)


def test_de_vaucouleurs_is_sersic_four():
    # de Vaucouleurs (1948) R^1/4 law = Sersic n = 4 (common practice)
    assert float(projected_mass_fraction("devaucouleurs", 0.7, 1.9)) == float(sersic_enclosed_fraction(0.7, 1.9, 4.0))


def test_unknown_profile():
    with pytest.raises(LensInputError, match="Unknown stellar profile"):
        projected_mass_fraction("jaffe", 1.0, 1.0)
