"""A counter-image beyond 0.6 of its arc's radius told by the isothermal flux ratio
(lensmass.core.counter_image.COUNTER_FAR_SHARE, COUNTER_FLUX_BAND_LOW).

For a singular isothermal sphere a source at beta has its images at theta_E + beta and theta_E - beta on opposite
sides, with flux ratio |mu-| / mu+ = (theta_E - beta) / (theta_E + beta) (common practice; Schneider, Ehlers & Falco
1992; Narayan & Bartelmann 1996, eq. 29): a source close to the axis gives a counter-image nearly as bright as the arc
at 0.7-0.8 of its radius. The fields are ray traced: an astropy Gaussian2D source mapped through the SIS lens equation
beta = theta - theta_E theta / |theta| (surface brightness conserved), blurred by an astropy Gaussian2DKernel PSF,
with unit white noise.
"""

from __future__ import annotations

import numpy as np
from astropy.convolution import Gaussian2DKernel, convolve_fft
from astropy.modeling.models import Gaussian2D

from lensmass.core.counter_image import find_counter_image

THETA_E, FWHM, N, CENTRE = 15.0, 3.0, 81, 40.0


def _sis_pair(b: float, seed: int) -> np.ndarray:
    """Residual of an SIS arc (source at b theta_E towards +x) and its counter-image, with unit white noise."""
    yy, xx = np.mgrid[0:N, 0:N].astype(float)
    dx, dy = xx - CENTRE, yy - CENTRE
    r = np.hypot(dx, dy) + 1e-9
    bx, by = dx - THETA_E * dx / r, dy - THETA_E * dy / r  # the SIS lens equation
    source = Gaussian2D(amplitude=10.0, x_mean=b * THETA_E, y_mean=0.0, x_stddev=1.2, y_stddev=1.2)(bx, by)
    sky = convolve_fft(source, Gaussian2DKernel(FWHM / (2 * np.sqrt(2 * np.log(2)))), boundary="fill")
    return sky + np.random.default_rng(seed).normal(0.0, 1.0, sky.shape)


def test_a_counter_image_near_the_arc_with_the_isothermal_flux_ratio_is_found():
    # b = 0.12 and 0.15: the counter-image at 0.79 and 0.74 of the arc's radius, 0.79 and 0.74 as bright
    for b in (0.12, 0.15):
        for seed in (1, 2, 3):
            inner = find_counter_image(_sis_pair(b, seed), CENTRE, CENTRE, THETA_E * (1 + b), 0.0, 1.0, FWHM)
            assert abs(inner - THETA_E * (1 - b)) <= FWHM / 2, (b, seed, inner)
            assert abs(0.5 * (THETA_E * (1 + b) + inner) / THETA_E - 1) <= 0.05


def test_a_far_fainter_peak_near_the_arc_is_other_light():
    # a compact peak at 0.75 of a Gaussian2D arc's radius: a fifth as bright as an isothermal counter-image there
    # would be is other light; 0.7 as bright is paired (its radius within a FWHM)
    yy, xx = np.mgrid[0:81, 0:81].astype(float)
    arc = Gaussian2D(10.0, 64.0, 40.0, 1.5, 6.0)(xx, yy)  # 24 pixels to the right, stretched tangentially
    noise = np.random.default_rng(5).normal(0, 0.3, xx.shape)
    arc_flux = 2 * np.pi * 10.0 * 1.5 * 6.0
    for amplitude, expected in ((0.2 * 0.75 * arc_flux / (2 * np.pi * 1.7 ** 2), False),
                                (0.7 * 0.75 * arc_flux / (2 * np.pi * 1.7 ** 2), True)):
        peak = Gaussian2D(amplitude, 40.0 - 0.75 * 24, 40.0, 1.7, 1.7)(xx, yy)
        inner = find_counter_image(arc + peak + noise, 40.0, 40.0, 24.0, 0.0, 0.3, 4.0)
        assert np.isfinite(inner) == expected, (amplitude, inner)
        assert not expected or abs(inner - 0.75 * 24) <= 4.0
