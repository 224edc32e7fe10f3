"""Distances against astropy (the reference library) and Hogg (1999)."""

import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM, LambdaCDM, Planck18, WMAP9

from lensmass.core.cosmology import (
    angular_diameter_distances_mpc,
    luminosity_distance_mpc,
    resolve_cosmology,
)
from lensmass.core.errors import LensInputError

Z_L = np.array([0.01, 0.1, 0.3, 0.5, 1.0, 2.0, 4.0])
Z_S = np.array([0.05, 0.6, 0.8, 2.0, 3.0, 2.5, 9.0])

COSMOLOGIES = [
    Planck18,
    WMAP9,
    FlatLambdaCDM(H0=70, Om0=0.3),
    LambdaCDM(H0=70, Om0=0.3, Ode0=0.6),  # open (Omega_k = +0.1)
    LambdaCDM(H0=70, Om0=0.3, Ode0=0.8),  # closed (Omega_k = -0.1)
]


@pytest.mark.parametrize("cosmo", COSMOLOGIES, ids=lambda c: repr(c)[:40])
def test_distances_match_astropy_to_1e6(cosmo):
    # Reference: astropy.cosmology angular_diameter_distance (one- and two-redshift forms).
    d_l, d_s, d_ls = angular_diameter_distances_mpc(Z_L, Z_S, cosmo)
    np.testing.assert_allclose(d_l, cosmo.angular_diameter_distance(Z_L).value, rtol=1e-6)
    np.testing.assert_allclose(d_s, cosmo.angular_diameter_distance(Z_S).value, rtol=1e-6)
    np.testing.assert_allclose(d_ls, cosmo.angular_diameter_distance(Z_L, Z_S).value, rtol=1e-6)


def test_flat_identity_of_hogg_1999():
    # Hogg (1999), arXiv:astro-ph/9905116: in a flat universe D_ls = (D_C(z_s) - D_C(z_l)) / (1 + z_s).
    cosmo = FlatLambdaCDM(H0=70, Om0=0.3)
    _, _, d_ls = angular_diameter_distances_mpc(Z_L, Z_S, cosmo)
    dc = cosmo.comoving_distance
    expected = (dc(Z_S) - dc(Z_L)).value / (1 + Z_S)
    np.testing.assert_allclose(d_ls, expected, rtol=1e-6)


def test_luminosity_distance_matches_astropy():
    z = np.array([0.05, 0.3, 1.0, 3.0])
    np.testing.assert_allclose(luminosity_distance_mpc(z, Planck18), Planck18.luminosity_distance(z).value, rtol=1e-6)


def test_default_cosmology_is_flat_with_baryon_fraction_near_one_sixth():
    # Fact of the trade (common practice): ordinary matter about 5% and dark matter about 27% of the
    # critical density, so Omega_b / Omega_m is near 1/6, and the universe is flat to well under 1%.
    cosmo = resolve_cosmology()
    assert cosmo.name == "Planck18"
    assert abs(cosmo.Ok0) < 0.01
    assert cosmo.Ob0 / cosmo.Om0 == pytest.approx(1 / 6, rel=0.1)


def test_presets_and_custom_models():
    assert resolve_cosmology("wmap9").name == "WMAP9"
    flat = resolve_cosmology(h0=70, om0=0.3)
    assert flat.Ode0 == pytest.approx(0.7)
    curved = resolve_cosmology(h0=70, om0=0.3, ode0=0.6)
    assert curved.Ok0 == pytest.approx(0.1)


@pytest.mark.parametrize(
    "kwargs, fragment",
    [
        ({"spec": "Planck99"}, "Unknown cosmology 'Planck99'"),
        ({"h0": 70}, "needs both H0 and Om0"),
        ({"h0": -5, "om0": 0.3}, "H0 must be a positive"),
    ],
)
def test_bad_cosmology_gives_one_sentence(kwargs, fragment):
    spec = kwargs.pop("spec", None)
    with pytest.raises(LensInputError, match=fragment):
        resolve_cosmology(spec, **kwargs)


def test_cache_key_is_the_repr_of_each_cosmology_object():
    # the per-cosmology caches key on repr(cosmo), remembered per object: a new object with other
    # parameters gets its own key, an equal one the same (astropy cosmologies are immutable)
    from astropy.cosmology import FlatLambdaCDM

    from lensmass.core.cosmology import _cosmology_key

    a, b, c = FlatLambdaCDM(70, 0.3), FlatLambdaCDM(70, 0.3), FlatLambdaCDM(67, 0.3)
    assert _cosmology_key(a) == repr(a) == _cosmology_key(b)
    assert _cosmology_key(c) == repr(c) != _cosmology_key(a)
    assert _cosmology_key(a) is _cosmology_key(a)  # remembered, not formatted again
