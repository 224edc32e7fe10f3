"""SIE + external shear (lensmass.core.sie, image_finder, caustics, time_delay) against outside sources.

Sources named beside each check: Keeton (2001, arXiv:astro-ph/0102341), Kormann, Schneider & Bartelmann
(1994, A&A 284, 285), Narayan & Bartelmann (1996, arXiv:astro-ph/9606001), scipy quadrature and astropy
distances.
"""

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM
from scipy import integrate

from lensmass.core.caustics import caustic, critical_curve, cut, polygon_area
from lensmass.core.image_finder import find_images
from lensmass.core.sie import (
    SIEShear,
    convergence,
    deflection,
    fermat_potential,
    hessian,
    lens_mapping,
    magnification,
    mean_convergence_radius,
    position_angle_deg,
    potential,
    shear,
    sie_deflection,
    source_position,
)
from lensmass.core.time_delay import delay_days_from_fermat, time_delay_distance_mpc

LENSES = [SIEShear(1.3, 0.55, 0.4, 0.1, -0.2), SIEShear(0.9, 0.85, -1.1, 0.0, 0.0, 0.06, -0.04),
          SIEShear(2.0, 0.3, 2.0, -0.3, 0.2, -0.08, 0.02)]
RNG = np.random.default_rng(7)
PX = RNG.uniform(-3, 3, 40)
PY = RNG.uniform(-3, 3, 40)


@pytest.mark.parametrize("lens", LENSES)
def test_deflection_is_gradient_of_potential(lens):
    # alpha = grad psi (Narayan & Bartelmann 1996, eq. 26); psi = x alpha_x + y alpha_y (Keeton 2001, isothermal)
    h = 1e-5
    gx = (potential(lens, PX + h, PY) - potential(lens, PX - h, PY)) / (2 * h)
    gy = (potential(lens, PX, PY + h) - potential(lens, PX, PY - h)) / (2 * h)
    ax, ay = deflection(lens, PX, PY)
    np.testing.assert_allclose(gx, ax, atol=1e-6)
    np.testing.assert_allclose(gy, ay, atol=1e-6)


@pytest.mark.parametrize("lens", LENSES)
def test_divergence_is_twice_convergence_and_curl_free(lens):
    # div alpha = 2 kappa, curl alpha = 0 (Narayan & Bartelmann 1996, eq. 27); numerical derivatives
    h = 1e-5
    axp, _ = deflection(lens, PX + h, PY)
    axm, _ = deflection(lens, PX - h, PY)
    _, ayp = deflection(lens, PX, PY + h)
    _, aym = deflection(lens, PX, PY - h)
    div = (axp - axm) / (2 * h) + (ayp - aym) / (2 * h)
    np.testing.assert_allclose(div, 2 * convergence(lens, PX, PY), rtol=1e-6)
    _, ay_xp = deflection(lens, PX + h, PY)
    _, ay_xm = deflection(lens, PX - h, PY)
    ax_yp, _ = deflection(lens, PX, PY + h)
    ax_ym, _ = deflection(lens, PX, PY - h)
    np.testing.assert_allclose((ay_xp - ay_xm) / (2 * h), (ax_yp - ax_ym) / (2 * h), atol=1e-6)
    # the analytic Hessian against the same numerical derivatives
    hxx, hyy, hxy = hessian(lens, PX, PY)
    np.testing.assert_allclose(hxx, (axp - axm) / (2 * h), atol=1e-5)
    np.testing.assert_allclose(hyy, (ayp - aym) / (2 * h), atol=1e-5)
    np.testing.assert_allclose(hxy, (ay_xp - ay_xm) / (2 * h), atol=1e-5)


def test_deflection_against_integral_of_the_convergence():
    # Deflection of any elliptically symmetric kappa(xi), xi^2 = x^2 + y^2/q^2 (major axis along x), from a 1-D
    # integral of the convergence (Schramm 1990; Keeton 2001, eqs. 4-5; the form recalled from memory, checked a
    # second way by its SIS limit alpha = theta_E): alpha_x = q x J0, alpha_y = q y J1,
    # J_n = int_0^1 kappa(xi(u)) / (1 - (1 - q^2) u)^(n + 1/2) du, xi(u)^2 = u (x^2 + y^2 / (1 - (1 - q^2) u)).
    theta_e, q = 1.4, 0.6
    lens = SIEShear(theta_e, q)

    def kappa(xi):  # kappa = (theta_E / 2) / sqrt(q x^2 + y^2 / q) = (theta_E / 2) / (sqrt(q) xi)
        return theta_e / (2 * np.sqrt(q) * xi)

    for x, y in [(0.7, 0.3), (-1.9, 1.2), (0.2, -2.5), (3.0, 0.01)]:
        def j(n):
            def f(t):
                return kappa(np.sqrt(t * (x * x + y * y / (1 - (1 - q * q) * t)))) / (1 - (1 - q * q) * t) ** (n + 0.5)
            return integrate.quad(f, 0, 1, limit=200)[0]

        ax, ay = sie_deflection(lens, x, y)
        assert ax == pytest.approx(q * x * j(0), rel=1e-7)
        assert ay == pytest.approx(q * y * j(1), rel=1e-7)
    # the SIS limit of that integral: alpha = theta_E
    sis = SIEShear(theta_e, 1.0)
    assert np.hypot(*sie_deflection(sis, 0.6, 0.8)) == pytest.approx(theta_e, rel=1e-12)


def test_sis_limit_closed_forms():
    # SIS: alpha = theta_E r_hat, kappa = gamma = theta_E / (2 r), psi = theta_E r, mu = r / (r - theta_E)
    # (Narayan & Bartelmann 1996, sec. 3.3); q -> 1 must approach these smoothly
    theta_e = 1.1
    r = np.hypot(PX, PY)
    for q in (1.0, 1 - 1e-7, 1 - 1e-3):
        lens = SIEShear(theta_e, q, 0.7)
        tol = 1e-6 if q > 0.9999 else 2e-3
        ax, ay = deflection(lens, PX, PY)
        np.testing.assert_allclose(ax, theta_e * PX / r, rtol=tol, atol=tol)
        np.testing.assert_allclose(ay, theta_e * PY / r, rtol=tol, atol=tol)
        np.testing.assert_allclose(convergence(lens, PX, PY), theta_e / (2 * r), rtol=tol)
        g1, g2 = shear(lens, PX, PY)
        np.testing.assert_allclose(np.hypot(g1, g2), theta_e / (2 * r), rtol=tol)
        np.testing.assert_allclose(potential(lens, PX, PY), theta_e * r, rtol=tol)
        np.testing.assert_allclose(magnification(lens, PX, PY), r / (r - theta_e), rtol=10 * tol)


@pytest.mark.parametrize("lens", LENSES)
def test_lens_mapping_matches_parts(lens):
    bx, by, a11, a22, a12 = lens_mapping(lens, PX, PY)
    sx, sy = source_position(lens, PX, PY)
    hxx, hyy, hxy = hessian(lens, PX, PY)
    np.testing.assert_allclose([bx, by], [sx, sy], atol=1e-13)
    np.testing.assert_allclose([a11, a22, a12], [1 - hxx, 1 - hyy, -hxy], atol=1e-12)


@pytest.mark.parametrize("q", [0.3, 0.6, 0.95])
def test_critical_curve_area_is_pi_theta_e_squared(q):
    # intermediate-axis normalisation: the SIE critical curve q x'^2 + y'^2/q = theta_E^2 encloses pi theta_E^2
    # (Kormann, Schneider & Bartelmann 1994); det A = 0 on the curve, here also with shear
    lens = SIEShear(1.7, q, 0.9, 0.2, 0.1)
    x, y = critical_curve(lens, 20001)
    assert polygon_area(x, y) == pytest.approx(np.pi * 1.7**2, rel=1e-6)
    sheared = SIEShear(1.7, q, 0.9, 0.2, 0.1, 0.07, -0.05)
    x, y = critical_curve(sheared, 101)
    assert np.all(np.abs(1 / magnification(sheared, x, y)) < 1e-9)


@pytest.mark.parametrize("q", [0.4, 0.7, 1.0])
def test_mean_convergence_radius_against_quadrature(q):
    # mean kappa inside the circle of radius R is one: integrate kappa over the disc with scipy dblquad
    lens = SIEShear(1.2, q, 0.3)
    radius = float(mean_convergence_radius(1.2, q))
    inner = integrate.quad(lambda phi: float(convergence(lens, np.cos(phi), np.sin(phi))), 0, 2 * np.pi)[0]
    mass = inner * radius  # int_0^R int kappa r dr dphi with kappa proportional to 1/r
    assert mass / (np.pi * radius**2) == pytest.approx(1.0, rel=1e-8)


def test_image_finder_sis_pair_and_parity():
    # SIS: images at theta_E + beta and theta_E - beta on opposite sides, magnifications
    # theta / (theta - theta_E) (Narayan & Bartelmann 1996, eqs. 51-53)
    im = find_images(SIEShear(1.5, 1.0, 0.0, 0.3, -0.1), 0.3 + 0.4, -0.1)
    order = np.argsort(im.x)
    np.testing.assert_allclose(im.x[order], [0.3 - 1.1, 0.3 + 1.9], atol=1e-9)
    np.testing.assert_allclose(im.magnification[order], [-1.1 / (1.5 - 1.1) * 1, 1.9 / 0.4], rtol=1e-6)


@pytest.mark.parametrize("lens", LENSES)
def test_image_finder_solves_lens_equation_and_counts(lens):
    # every image maps back to the source; inside the caustic of an SIE + shear 4 images, outside the caustic
    # but inside the cut 2 (common practice; Kormann, Schneider & Bartelmann 1994, sec. 4)
    cx, cy = caustic(lens, 2001)
    centre = np.array([cx.mean(), cy.mean()])
    for frac, expect in ((0.3, 4), (0.999, 4)):
        for k in range(6):
            ang = 2 * np.pi * k / 6 + 0.1
            # a source a fraction of the way from the caustic's middle to the caustic along a ray
            d = np.hypot(cx - centre[0], cy - centre[1])
            dirs = np.arctan2(cy - centre[1], cx - centre[0])
            j = np.argmin(np.abs(np.angle(np.exp(1j * (dirs - ang)))))
            bx, by = centre + frac * d[j] * np.array([np.cos(dirs[j]), np.sin(dirs[j])])
            im = find_images(lens, bx, by)
            sx, sy = source_position(lens, im.x, im.y)
            np.testing.assert_allclose(sx, bx, atol=1e-9)
            np.testing.assert_allclose(sy, by, atol=1e-9)
            assert im.n == expect
    # a source far outside the cut: a single image
    ux, uy = cut(lens)
    far = 2.5 * np.max(np.hypot(ux - lens.x0, uy - lens.y0))
    assert find_images(lens, lens.x0 + far, lens.y0).n == 1


def test_images_are_stationary_points_of_the_fermat_potential():
    # Fermat's principle: images sit where grad tau = 0 (Narayan & Bartelmann 1996, sec. 2.5)
    lens = LENSES[1]
    im = find_images(lens, 0.05, 0.03)
    h = 1e-6
    for x, y in zip(im.x, im.y):
        gx = (fermat_potential(lens, x + h, y, 0.05, 0.03) - fermat_potential(lens, x - h, y, 0.05, 0.03)) / (2 * h)
        gy = (fermat_potential(lens, x, y + h, 0.05, 0.03) - fermat_potential(lens, x, y - h, 0.05, 0.03)) / (2 * h)
        assert abs(gx) < 1e-7 and abs(gy) < 1e-7


def test_sis_time_delay_closed_form():
    # Delta t_AB = (1 + z_l) / (2c) (D_l D_s / D_ls) (theta_A^2 - theta_B^2) (Narayan & Bartelmann 1996; in
    # the project's shared REFERENCES.md), distances from astropy directly
    cosmo = FlatLambdaCDM(H0=70, Om0=0.3)
    z_l, z_s, theta_e, beta = 0.5, 2.0, 1.2, 0.3
    lens = SIEShear(theta_e)
    im = find_images(lens, beta, 0.0)
    a, b = np.argmax(im.x), np.argmin(im.x)  # A at theta_E + beta (minimum), B at theta_E - beta (saddle)
    tau = fermat_potential(lens, im.x, im.y, beta, 0.0)
    days = float(delay_days_from_fermat(tau[b] - tau[a], time_delay_distance_mpc(z_l, z_s, cosmo)))
    d_l = cosmo.angular_diameter_distance(z_l)
    d_s = cosmo.angular_diameter_distance(z_s)
    d_ls = cosmo.angular_diameter_distance(z_l, z_s)
    ta, tb = (np.abs(im.x[[a, b]]) * u.arcsec).to(u.rad).value
    expected = ((1 + z_l) / (2 * const.c) * d_l * d_s / d_ls * (ta**2 - tb**2)).to(u.day).value
    assert days == pytest.approx(expected, rel=1e-6)
    assert days > 0  # the saddle-point image B arrives after the minimum A


def test_sis_delay_interval_carries_the_redshift_errors():
    # The SIS closed form Delta t_AB = (1 + z_l)/(2c) (D_l D_s / D_ls)(theta_A^2 - theta_B^2) (Narayan & Bartelmann
    # 1996; the project's shared REFERENCES.md) evaluated by astropy on independently drawn Gaussian redshifts gives the
    # interval the delay must have when only the redshifts are uncertain.
    from lensmass.core.time_delay import delay_draws_days

    cosmo = FlatLambdaCDM(H0=70, Om0=0.3)
    z_l, z_s, z_l_err, z_s_err, theta_e, beta = 0.5, 2.0, 0.05, 0.2, 1.2, 0.3
    lens = SIEShear(theta_e)
    im = find_images(lens, beta, 0.0)
    a, b = np.argmax(im.x), np.argmin(im.x)
    tau = fermat_potential(lens, im.x, im.y, beta, 0.0)
    days = delay_draws_days(np.full(50, tau[b] - tau[a]), z_l, z_s, cosmo, z_l_err=z_l_err, z_s_err=z_s_err,
                            n=4000, seed=3)
    rng = np.random.default_rng(11)
    zl = rng.normal(z_l, z_l_err, 4000)
    zs = rng.normal(z_s, z_s_err, 4000)
    d_l = cosmo.angular_diameter_distance(zl)
    d_s = cosmo.angular_diameter_distance(zs)
    d_ls = cosmo.angular_diameter_distance(zl, zs)
    ta, tb = (np.abs(im.x[[a, b]]) * u.arcsec).to(u.rad).value
    expected = ((1 + zl) / (2 * const.c) * d_l * d_s / d_ls * (ta**2 - tb**2)).to(u.day).value
    # percentiles of two independent 4000-draw samples agree to a few per cent of the spread
    width = np.percentile(expected, 84) - np.percentile(expected, 16)
    np.testing.assert_allclose(np.percentile(days, [2.5, 16, 50, 84, 97.5]),
                               np.percentile(expected, [2.5, 16, 50, 84, 97.5]), atol=0.1 * width)
    assert width > 0.05 * np.median(expected)  # the redshift errors do widen the delay


def test_position_angle_convention():
    # x east, y north: a major axis along +y (north) has PA 0; along +x (east) PA 90 (common practice: PA east of north)
    assert float(position_angle_deg(np.pi / 2)) == pytest.approx(0.0)
    assert float(position_angle_deg(0.0)) == pytest.approx(90.0)
