"""Deflection fields, sources, PSF and noise of the synthetic-field generator."""

import numpy as np
import pytest
from scipy import integrate
from scipy.special import gammaincinv

from lensmass.core import raytrace as rt
from lensmass.core.cosmology import angular_diameter_distances_mpc, resolve_cosmology
from lensmass.core.lensing import sigma_crit_msun_per_mpc2
from lensmass.core.nfw import nfw_halo


def _divergence_and_curl(lenses, x, y, h=1e-5):
    axp, ayp = rt.deflection_arcsec(lenses, x + h, y)
    axm, aym = rt.deflection_arcsec(lenses, x - h, y)
    bxp, byp = rt.deflection_arcsec(lenses, x, y + h)
    bxm, bym = rt.deflection_arcsec(lenses, x, y - h)
    div = (axp - axm) / (2 * h) + (byp - bym) / (2 * h)
    curl = (ayp - aym) / (2 * h) - (bxp - bxm) / (2 * h)
    return div, curl


PTS_X = np.array([1.0, -0.7, 2.0, 0.3, -1.9])
PTS_Y = np.array([0.5, 1.3, -2.0, -0.9, -0.2])


def test_sis_deflection_is_theta_e():
    # Narayan & Bartelmann (1996), sec. 3.3: the SIS deflection has constant size theta_E.
    ax, ay = rt.deflection_arcsec([rt.SISLens(1.7)], PTS_X, PTS_Y)
    assert np.hypot(ax, ay) == pytest.approx(np.full(PTS_X.size, 1.7))


@pytest.mark.parametrize("lens", [rt.SIELens(1.4, 0.7, 30.0, 0.1, -0.2), rt.SIELens(2.0, 0.4, -75.0)])
def test_sie_deflection_satisfies_poisson_equation(lens):
    # Narayan & Bartelmann (1996), eq. (21)-(23): alpha = grad psi with laplacian psi = 2 kappa, so
    # div alpha = 2 kappa and curl alpha = 0 (checked by finite differences).
    div, curl = _divergence_and_curl([lens], PTS_X, PTS_Y)
    assert div / 2 == pytest.approx(lens.convergence(PTS_X, PTS_Y), rel=1e-6)
    assert np.abs(curl).max() < 1e-6


def test_sie_tends_to_sis_and_critical_curve_area():
    # Kormann et al. (1994): with this normalisation the area inside the tangential critical curve
    # is pi theta_E^2; checked by counting grid cells with det(A) < 0.
    ax1, ay1 = rt.deflection_arcsec([rt.SIELens(1.2, 0.999999, 20.0)], PTS_X, PTS_Y)
    ax2, ay2 = rt.deflection_arcsec([rt.SISLens(1.2)], PTS_X, PTS_Y)
    assert ax1 == pytest.approx(ax2, abs=1e-5) and ay1 == pytest.approx(ay2, abs=1e-5)
    g = np.linspace(-2.5, 2.5, 501)
    xx, yy = np.meshgrid(g + 0.005, g + 0.005)
    mu = rt.magnification([rt.SIELens(1.2, 0.75, 40.0)], xx, yy, step_arcsec=1e-4)
    area = np.sum(mu < 0) * (g[1] - g[0]) ** 2
    assert area == pytest.approx(np.pi * 1.2**2, rel=0.01)


def test_nfw_deflection_against_quadrature_of_convergence():
    # Bartelmann (1996): alpha(theta) = (2 / theta) int_0^theta kappa(t) t dt; the mean is
    # integrated here with scipy.integrate.quad from the local convergence.
    cosmo = resolve_cosmology("Planck18")
    d_l, d_s, d_ls = (float(v) for v in angular_diameter_distances_mpc(0.35, 1.8, cosmo))
    halo = nfw_halo(8e14, 4.0, 0.35, cosmo)
    lens = rt.NFWLens(halo, d_l, float(sigma_crit_msun_per_mpc2(d_l, d_s, d_ls)))
    for theta in (0.5, 5.0, 40.0):
        val, _ = integrate.quad(lambda t: float(lens.convergence(np.array([t]), np.array([0.0]))[0]) * t,
                                1e-8, theta, limit=200, points=[theta / 10])
        ax, _ = rt.deflection_arcsec([lens], np.array([theta]), np.array([0.0]))
        assert ax[0] == pytest.approx(2 * val / theta, rel=1e-5)


def test_external_shear_magnification():
    # Narayan & Bartelmann (1996): pure shear gives det A = 1 - gamma^2.
    mu = rt.magnification([rt.ExternalShear(0.06, -0.08)], PTS_X, PTS_Y)
    assert mu == pytest.approx(np.full(PTS_X.size, 1 / (1 - 0.1**2)))


def test_point_images_of_sis():
    # Narayan & Bartelmann (1996), sec. 3.3: images at beta +- theta_E on the source's axis with
    # magnifications |mu| = theta_E / beta +- 1.
    imgs = sorted(rt.point_images([rt.SISLens(1.0)], 0.3, 0.0, search_radius_arcsec=3.0), key=lambda t: t[0])
    assert len(imgs) == 2
    (x1, y1, m1), (x2, y2, m2) = imgs
    assert (x1, x2) == pytest.approx((-0.7, 1.3), abs=1e-6)
    assert (abs(m1), abs(m2)) == pytest.approx((1 / 0.3 - 1, 1 / 0.3 + 1), rel=1e-4)
    assert m1 < 0 < m2  # the inner image has negative parity


def test_sersic_b_and_total_flux():
    # REFERENCES (Graham & Driver 2005; Ciotti & Bertin 1999): b_4 = 7.669; b_n ~ 2n - 1/3 + 4/(405 n).
    assert float(rt.sersic_b(4.0)) == pytest.approx(7.669, abs=1e-3)
    for n in (1.0, 2.5, 6.0):
        assert float(rt.sersic_b(n)) == pytest.approx(2 * n - 1 / 3 + 4 / (405 * n), abs=2e-3)
        assert float(rt.sersic_b(n)) == pytest.approx(gammaincinv(2 * n, 0.5))
    # Graham & Driver (2005), eq. (4): the profile integrates to the given total flux (radial quad).
    tot, _ = integrate.quad(lambda r: 2 * np.pi * r * float(rt.sersic_surface_brightness(
        np.array([r]), np.array([0.0]), total_flux=5.0, r_eff_arcsec=1.3, n=3.0)[0]), 0, np.inf, limit=400)
    assert tot == pytest.approx(5.0, rel=1e-6)


def test_psf_kernels():
    # Moffat (1969): the profile integrates to 1; the Gaussian kernel's FWHM is the one asked for.
    tot, _ = integrate.quad(lambda r: 2 * np.pi * r * float(rt.psf_profile(r, 0.8, "moffat", 3.0)), 0, np.inf)
    assert tot == pytest.approx(1.0, rel=1e-6)
    k = rt.psf_kernel(1.0, 0.05)
    assert k.sum() == pytest.approx(1.0)
    mid = k[k.shape[0] // 2]
    above = np.flatnonzero(mid >= mid.max() / 2)
    assert (above[-1] - above[0] + 1) * 0.05 == pytest.approx(1.0, abs=0.06)


def test_noise_level_of_empty_sky():
    # Poisson statistics (common practice): sky-subtracted empty pixels scatter by sqrt(N)/t.
    rng = np.random.default_rng(3)
    img = rt.add_noise(np.zeros((200, 200)), sky_counts_per_s=50.0, exptime_s=100.0, read_noise_e=5.0, rng=rng)
    assert img.std() == pytest.approx(rt.noise_sigma_counts_per_s(50.0, 100.0, 5.0), rel=0.02)
    assert abs(img.mean()) < 0.01


def test_simulated_ring_points_lie_on_sis_einstein_radius():
    # Narayan & Bartelmann (1996): a source on the axis of an SIS is imaged into a ring at theta_E.
    sim = rt.simulate_field(shape=(60, 60), pixel_scale_arcsec=0.2, center_x=29.5, center_y=29.5,
                            lenses=[rt.SISLens(1.5)], sources=[rt.SersicSource(100.0, 0.2, 1.0)], seed=1)
    pts = np.array(sim.arc_points_xy)
    assert len(pts) == 72
    assert np.hypot(pts[:, 0] - 29.5, pts[:, 1] - 29.5) * 0.2 == pytest.approx(np.full(72, 1.5), abs=1e-4)
    assert sim.image.shape == (60, 60)
