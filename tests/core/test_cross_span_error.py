"""The image cross's SIE-shear span enters its error as a rectangular distribution's standard deviation.

Outside references: the standard deviation of a rectangular (uniform) distribution of half-width a is a / sqrt(3)
(JCGM 100:2008, the GUM, 4.3.7; checked here against scipy.stats.uniform); an SIS with external shear gamma images a
source on its axis at theta_E / (1 -+ gamma) (Narayan & Bartelmann 1996, from memory); the images are astropy
Gaussian2D spots with seeded Gaussian noise.
"""

import numpy as np
import pytest
from astropy.modeling.models import Gaussian2D
from scipy.stats import uniform

from lensmass.core.image_cross import END_SPAN_SD_SHARE, find_image_cross, shear_limit_theta_e
from lensmass.core.elliptical_annuli import sie_ring_factor

SIZE, CENTRE, FWHM = 80, 40.0, 3.0


def _cross_image(theta_e: float, gamma: float, seed: int) -> np.ndarray:
    """Four Gaussian2D images of a source on the axis of an SIS with shear gamma: the outer pair along x."""
    yy, xx = np.mgrid[0:SIZE, 0:SIZE]
    outer, inner = theta_e / (1.0 - gamma), theta_e / (1.0 + gamma)
    spots = [(CENTRE + outer, CENTRE), (CENTRE - outer, CENTRE), (CENTRE, CENTRE + inner), (CENTRE, CENTRE - inner)]
    sd = FWHM / 2.3548
    img = sum(Gaussian2D(25.0, x, y, sd, sd)(xx, yy) for x, y in spots)
    return img + np.random.default_rng(seed).normal(0.0, 1.0, img.shape)


def test_span_share_is_the_rectangular_standard_deviation():
    assert END_SPAN_SD_SHARE == pytest.approx(uniform(loc=-1.0, scale=2.0).std())


def test_truth_anywhere_in_the_span_is_covered_as_a_rectangular_distribution_says():
    """Light elongated along the inner pair (the SIE end at full weight), so half the span exceeds the SIE floor.
    With theta_E anywhere between the two ends (evenly spread over the span), a one-sigma interval of half the span
    held all of them; the rectangular standard deviation, joined with the images' position terms, holds 57.7% of
    a pure rectangular spread plus what those terms add; two sigma holds them all."""
    in1 = in2 = n = 0
    for seed, (theta_e, gamma) in enumerate([(14.0, 0.10), (16.0, 0.12), (12.0, 0.08), (18.0, 0.10)]):
        c = find_image_cross(_cross_image(theta_e, gamma, seed), CENTRE, CENTRE, 5.0, 28.0, FWHM,
                             light_angle_deg=90.0, light_axis_ratio=0.6)
        assert c is not None
        shear_end = shear_limit_theta_e(c.inner_pix, c.outer_pix)
        assert shear_end == pytest.approx(theta_e, rel=0.02)  # the SIS + shear truth sits at the shear end
        sie_end = np.sqrt(c.inner_pix * c.outer_pix) * sie_ring_factor(c.inner_pix / c.outer_pix)
        for u in (np.arange(50) + 0.5) / 50:
            truth = shear_end + u * (sie_end - shear_end)
            n += 1
            in1 += abs(truth - c.theta_e_pix) <= c.theta_e_err_pix
            in2 += abs(truth - c.theta_e_pix) <= 2 * c.theta_e_err_pix
    assert 0.55 <= in1 / n <= 0.76
    assert in2 == n
