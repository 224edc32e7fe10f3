"""A hot (bad) column, a CCD column raised along its whole length, must be masked, not read as arcs.

References: hot and bad columns are masked before photometry (common practice in CCD reduction); the lens light
is astropy's ``Sersic2D`` and the ring an astropy ``Ring2D`` annulus, both blurred by astropy's
``Gaussian2DKernel`` (astropy.convolution); the ring's radius is the annulus's mid radius.
"""

import numpy as np
import pytest
from astropy.convolution import Gaussian2DKernel, convolve_fft
from astropy.modeling.models import Ring2D, Sersic2D

from lensmass.core.cutout_cleaning import hot_lines
from lensmass.core.ringfinder import find_ring
from tests.core.test_image_cross import _cross_field

SIZE, CENTRE, RING_MID, FWHM = 96, 47.6, 16.0, 3.0


def _field(seed: int, hot_offset: float) -> np.ndarray:
    yy, xx = np.mgrid[0:SIZE, 0:SIZE].astype(float)
    light = Sersic2D(amplitude=6.0, r_eff=6.0, n=4.0, x_0=CENTRE, y_0=CENTRE, ellip=0.3, theta=0.5)(xx, yy)
    ring = Ring2D(amplitude=4.0, x_0=CENTRE, y_0=CENTRE, r_in=RING_MID - 1.0, width=2.0)(xx, yy)
    img = convolve_fft(light + ring, Gaussian2DKernel(FWHM / 2.355), boundary="fill")
    img = img + np.random.default_rng(seed).normal(0.0, 1.0, img.shape)
    img[:, int(CENTRE) + 1] += hot_offset  # a hot column through the lens
    return img


@pytest.mark.parametrize("seed", [1, 2])
def test_ring_through_a_hot_column_is_measured_as_without_it(seed):
    clean = find_ring(_field(seed, 0.0))
    hot = find_ring(_field(seed, 40.0))
    assert clean.found and abs(clean.radius_pix / RING_MID - 1) < 0.05
    assert hot.found and abs(hot.radius_pix / RING_MID - 1) < 0.05
    assert any("hot or bad column" in w for w in hot.warnings)


@pytest.mark.parametrize("seed", [1, 2])
def test_einstein_cross_through_a_hot_column_within_five_percent(seed):
    # The SIE cross of tests/core/test_image_cross.py (images solved from the SIE deflection of Keeton 2001, astropy
    # Sersic2D light and Gaussian2D images), theta_E = 14 pixels, with a column 80 noise sigma hot through the lens
    # (before hot_lines: 0.27 and 0.73 of theta_E, the column's own peaks read as arcs).
    img, _ = _cross_field(seed)
    img[:, 48] += 80.0
    found = find_ring(img)
    assert found.found and abs(found.radius_pix / 14.0 - 1) < 0.05


def test_hot_lines_leave_galaxies_and_noise_alone():
    img = _field(3, 0.0)
    assert not hot_lines(img).any()
    img[30, :] += 5.0  # a row raised by 5 noise sigma
    m = hot_lines(img)
    assert m[30].all() and m.sum() == SIZE


def test_a_noiseless_round_galaxy_has_no_hot_line():
    """A noiseless simulation (astropy ``Sersic2D`` centred on a pixel, plus a ``Ring2D``): its centre column and row
    beat their neighbours everywhere, but by an excess that falls away from the galaxy, so nothing is masked."""
    yy, xx = np.mgrid[0:101, 0:101].astype(float)
    img = Sersic2D(amplitude=10.0, r_eff=8.0, n=4.0, x_0=50, y_0=50)(xx, yy)
    img += Ring2D(amplitude=1.0, x_0=50, y_0=50, r_in=15.0, width=2.0)(xx, yy)
    assert not hot_lines(img).any()
    img[:, 20] += 0.5  # a hot column in the same noiseless image is still found
    assert hot_lines(img)[:, 20].all() and hot_lines(img).sum() == img.shape[0]
