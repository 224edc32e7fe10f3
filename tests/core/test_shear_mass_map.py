"""Kaiser-Squires mass maps (lensmass.core.mass_map)."""

import numpy as np
import pytest

from lensmass.core.errors import LensInputError
from lensmass.core.mass_map import forward_shear, kaiser_squires, mass_map
from lensmass.core.sis import sis_convergence, sis_shear


def _sis_field(n=256, pix=4.0, theta_e=20.0):
    c = (np.arange(n) - n / 2 + 0.5) * pix
    x, y = np.meshgrid(c, c)  # axis 0 = y (north), axis 1 = x (east)
    r = np.hypot(x, y)
    phase = (x + 1j * y) ** 2 / r**2  # exp(2 i phi), phi from east toward north
    gamma = -sis_shear(r, theta_e) * phase  # pure tangential shear
    return x, y, r, gamma, sis_convergence(r, theta_e)


def test_kaiser_squires_inverts_forward_shear_exactly():
    # Kaiser & Squires (1993), eq. (2.4): on a periodic grid the inversion is exact up to the mean.
    rng = np.random.default_rng(1)
    kappa = rng.normal(size=(64, 48))
    ke, kb = kaiser_squires(*forward_shear(kappa))
    np.testing.assert_allclose(ke, kappa - kappa.mean(), atol=1e-12)
    np.testing.assert_allclose(kb, 0.0, atol=1e-12)


def test_kaiser_squires_of_analytic_sis_shear_returns_its_convergence():
    # Analytic SIS: gamma_t = kappa = theta_E / (2 theta) (Narayan & Bartelmann 1996). A finite field
    # fixes kappa only up to a constant (mass-sheet degeneracy, Kaiser & Squires 1993), so compare
    # kappa(r) - kappa(r_ref) away from the singular centre and the field edge.
    x, y, r, gamma, kappa = _sis_field()
    ke, kb = kaiser_squires(gamma.real, gamma.imag)
    ref = (r > 300) & (r < 320)
    offset = ke[ref].mean() - kappa[ref].mean()
    for a, b in ((40, 50), (80, 90), (160, 170), (240, 250)):  # ring means: the profile itself
        ring = (r > a) & (r < b)
        assert ke[ring].mean() - offset == pytest.approx(kappa[ring].mean(), rel=5e-3)
    # Pixel by pixel after the same Gaussian smoothing of both (scipy.ndimage; KS is linear, so
    # smoothing commutes with it): the sampled 1/theta field aliases at the grid scale otherwise.
    from scipy.ndimage import gaussian_filter

    ks, ts = gaussian_filter(ke, 2.0), gaussian_filter(kappa, 2.0)
    ring = (r > 40) & (r < 250)
    assert np.max(np.abs(ks[ring] - offset - ts[ring])) < 0.03 * np.max(ts[ring])
    assert np.max(np.abs(gaussian_filter(kb, 2.0)[ring])) < 0.03 * np.max(ts[ring])


def test_catalogue_map_peaks_on_the_sis_and_b_mode_is_small():
    # Dense noiseless catalogue of the analytic SIS shear: the E map peaks at the centre and
    # matches the Gaussian-smoothed convergence profile shape; B stays near zero (lensing has no B mode).
    rng = np.random.default_rng(2)
    n = 200000
    x = rng.uniform(-600, 600, n)
    y = rng.uniform(-600, 600, n)
    r = np.hypot(x, y)
    g = -sis_shear(r, 20.0) * (x + 1j * y) ** 2 / r**2
    m = mass_map(x, y, g.real, g.imag, n_pixels=96, smoothing_arcsec=30.0)
    iy, ix = np.unravel_index(np.argmax(m.kappa_e), m.kappa_e.shape)
    assert abs(m.x_centers_arcsec[ix]) < 2 * m.pixel_arcsec and abs(m.y_centers_arcsec[iy]) < 2 * m.pixel_arcsec
    xx, yy = np.meshgrid(m.x_centers_arcsec, m.y_centers_arcsec)
    rr = np.hypot(xx, yy)
    inner = (rr > 90) & (rr < 110)
    outer = (rr > 290) & (rr < 310)
    drop = m.kappa_e[inner].mean() - m.kappa_e[outer].mean()
    assert drop == pytest.approx(20.0 / 2 * (1 / 100 - 1 / 300), rel=0.15)
    assert np.abs(m.kappa_b[rr < 450]).max() < 0.2 * m.kappa_e.max()


def test_noise_map_scales_as_shape_noise():
    # Pure noise: rotated realisations give a noise map whose level matches the scatter of the
    # E map itself (both are shape noise), common practice.
    rng = np.random.default_rng(3)
    n = 60000
    x = rng.uniform(-600, 600, n)
    y = rng.uniform(-600, 600, n)
    e = rng.normal(0, 0.25, n) + 1j * rng.normal(0, 0.25, n)
    m = mass_map(x, y, e.real, e.imag, n_pixels=64, smoothing_arcsec=40.0, n_noise=20, seed=1)
    centre = slice(16, 48)
    ratio = np.std(m.kappa_e[centre, centre]) / np.median(m.noise[centre, centre])
    assert 0.7 < ratio < 1.4
    assert m.signal_to_noise.shape == (64, 64)


def test_mass_map_inputs_checked():
    with pytest.raises(LensInputError, match="between 8 and 4096"):
        mass_map([1.0], [1.0], [0.0], [0.0], n_pixels=2)
    with pytest.raises(LensInputError, match="smoothing"):
        mass_map([1.0], [1.0], [0.0], [0.0], smoothing_arcsec=-1)
