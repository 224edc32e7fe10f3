"""Aperture photometry of a generated Sersic galaxy (astropy's Sersic2D model as the reference)."""

import numpy as np
import pytest
from astropy.convolution import discretize_model
from astropy.modeling.models import Sersic2D

from lensmass.core.errors import LensInputError
from lensmass.core.photometry import (
    arc_band_mask,
    counts_to_magnitude,
    lens_aperture_photometry,
    residual_bright_mask,
)
from lensmass.core.sersic import sersic_enclosed_fraction, sersic_total_flux

SIZE, CENTRE, R_EFF, N, AMP, SKY = 121, 60.0, 6.0, 1.0, 50.0, 10.0


def _galaxy(ellip=0.0, theta=0.0):
    # Independent image: astropy.modeling Sersic2D integrated over each pixel (10x oversampling)
    model = Sersic2D(amplitude=AMP, r_eff=R_EFF, n=N, x_0=CENTRE, y_0=CENTRE, ellip=ellip, theta=theta)
    return discretize_model(model, (0, SIZE), (0, SIZE), mode="oversample", factor=10)


def _expected(radius, q=1.0):
    # Graham & Driver (2005), eqs. 2 and 4: total flux times the enclosed fraction
    return float(sersic_total_flux(AMP, R_EFF, N, q) * sersic_enclosed_fraction(radius, R_EFF, N))


def _arc(radius=8.0):
    yy, xx = np.indices((SIZE, SIZE))
    rr, ang = np.hypot(xx - CENTRE, yy - CENTRE), np.arctan2(yy - CENTRE, xx - CENTRE)
    image = 200.0 * np.exp(-0.5 * ((rr - radius) / 1.0) ** 2) * (np.abs(ang) < 0.8)
    points = [(CENTRE + radius * np.cos(a), CENTRE + radius * np.sin(a)) for a in np.linspace(-0.8, 0.8, 20)]
    return image, points


def test_recovers_the_sersic_flux_within_one_percent():
    rng = np.random.default_rng(1)
    image = _galaxy() + SKY + rng.normal(0, 0.05, (SIZE, SIZE))
    phot = lens_aperture_photometry(image, CENTRE, CENTRE, 8.0)
    assert phot.flux == pytest.approx(_expected(8.0), rel=0.01)
    assert phot.sky_per_pixel == pytest.approx(SKY, abs=0.01)
    assert 0 < phot.flux_err < 0.01 * phot.flux


def test_elliptical_aperture_on_an_elliptical_galaxy():
    # astropy's ellip = 1 - b/a and theta from +x counter-clockwise, as the photutils aperture
    q, theta = 0.7, 0.6
    image = _galaxy(ellip=1 - q, theta=theta) + SKY
    phot = lens_aperture_photometry(image, CENTRE, CENTRE, 9.0, axis_ratio=q, theta_rad=theta)
    assert phot.flux == pytest.approx(_expected(9.0, q), rel=0.01)


def test_marked_arc_points_are_masked_and_filled():
    arc, points = _arc()
    image = _galaxy() + SKY + arc
    unmasked = lens_aperture_photometry(image, CENTRE, CENTRE, 8.0)
    assert unmasked.flux > 1.1 * _expected(8.0)  # the arc would bias the lens light
    phot = lens_aperture_photometry(image, CENTRE, CENTRE, 8.0, arc_points_xy=points, arc_width_pix=6.0)
    assert phot.flux == pytest.approx(_expected(8.0), rel=0.01)
    assert phot.masked_in_aperture > 0


def test_residual_bright_pixels_are_masked():
    arc, _ = _arc()
    image = _galaxy() + SKY + arc
    phot = lens_aperture_photometry(image, CENTRE, CENTRE, 8.0, mask_residuals=True)
    assert phot.flux == pytest.approx(_expected(8.0), rel=0.01)
    bright = residual_bright_mask(image, CENTRE, CENTRE, 20.0)
    assert bright[int(CENTRE), int(CENTRE + 8)] and not bright[int(CENTRE), int(CENTRE - 8)]


def test_arc_band_mask_widens_points():
    mask = arc_band_mask((21, 21), [(10, 10)], 5.0)  # disc of radius 2.5 px: 21 pixel centres
    assert int(mask.sum()) == 21


def test_counts_to_magnitude():
    # m = ZP - 2.5 log10(counts / t) and sigma_m = 2.5/ln10 sigma_F/F (common practice)
    assert counts_to_magnitude(1000.0, 0.0, 25.0, exptime_s=10.0) == (20.0, 0.0)
    mag, err = counts_to_magnitude(100.0, 1.0, 25.0)
    assert err == pytest.approx(2.5 / np.log(10) * 0.01)


def test_bad_inputs_are_one_sentence():
    image = _galaxy() + SKY
    with pytest.raises(LensInputError, match="outside"):
        lens_aperture_photometry(image, 500.0, 60.0, 8.0)
    with pytest.raises(LensInputError, match="sky pixels"):
        lens_aperture_photometry(image, CENTRE, CENTRE, 8.0, annulus=(20.0, 30.0))
    with pytest.raises(LensInputError, match="not positive"):
        counts_to_magnitude(-5.0, 1.0, 25.0)
    with pytest.raises(LensInputError, match="exposure time .`exptime`."):
        counts_to_magnitude(5.0, 1.0, 25.0, exptime_s=0.0)


@pytest.mark.parametrize("n", [1.0, 2.0])
def test_complete_einstein_ring_masked_all_round(n):
    # A full ring hides whole rings of lens light; the lens light under it comes from a
    # Sersic-like law fitted to the rings around it. Reference: astropy Sersic2D (pixel-integrated)
    # summed by photutils in the same aperture without the ring; agreement to 3%.
    from photutils.aperture import CircularAperture, aperture_photometry

    size, c, r = 101, 50.0, 8.0
    lens = discretize_model(Sersic2D(amplitude=30.0, r_eff=5.0, n=n, x_0=c, y_0=c), (0, size), (0, size),
                            mode="oversample", factor=10)
    yy, xx = np.indices((size, size))
    ring = 100.0 * np.exp(-0.5 * ((np.hypot(xx - c, yy - c) - r) / 1.0) ** 2)
    points = [(c + r * np.cos(a), c + r * np.sin(a)) for a in np.linspace(0, 2 * np.pi, 16, endpoint=False)]
    truth = aperture_photometry(lens, CircularAperture((c, c), r))["aperture_sum"][0]
    noisy = lens + ring + 5.0 + np.random.default_rng(3).normal(0, 0.3, lens.shape)
    phot = lens_aperture_photometry(noisy, c, c, r, arc_points_xy=points, arc_width_pix=9.0)
    assert phot.flux == pytest.approx(truth, rel=0.03)
