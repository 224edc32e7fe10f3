"""The lens-light fit on a bright galaxy with no seeing blur (issue 14: it once stopped at R_e = 1.9 px
for a 6 px de Vaucouleurs galaxy).

The reference galaxy is astropy's ``Sersic2D`` (astropy.modeling, a reference library), integrated
over each pixel (8 x 8 points), with no PSF. astropy measures ``r_eff`` along the major axis and
``ellip = 1 - b/a``; our fit reports the circularised radius, r_eff sqrt(b/a) (common practice:
both conventions keep the same isophote).
"""

import numpy as np
import pytest
from astropy.modeling.models import Sersic2D

from lensmass.core.lenslight import fit_lens_light


def _astropy_galaxy(x0, y0, *, n=4.0, r_circ=6.0, q=0.8, theta_rad=0.5, peak_sigma=1e5, size=96, seed=1):
    model = Sersic2D(amplitude=1.0, r_eff=r_circ / np.sqrt(q), n=n, x_0=x0, y_0=y0, ellip=1 - q, theta=theta_rad)
    ov = 8
    s = (np.arange(size * ov) + 0.5) / ov - 0.5
    xx, yy = np.meshgrid(s, s)
    img = model(xx, yy).reshape(size, ov, size, ov).mean(axis=(1, 3))
    img *= peak_sigma / img.max()
    return img + np.random.default_rng(seed).normal(0.0, 1.0, img.shape)


@pytest.mark.parametrize("x0, y0", [(47.0, 48.0), (47.5, 48.5), (47.3, 48.6)])
def test_bright_unblurred_de_vaucouleurs_galaxy(x0, y0):
    # Centre on a pixel centre, on a pixel corner and between: a peak of 1e5 sigma and no blur.
    m = fit_lens_light(_astropy_galaxy(x0, y0), x0, y0)
    assert m.r_eff_pix == pytest.approx(6.0, rel=0.03)
    assert m.sersic_n == pytest.approx(4.0, abs=0.2)
    assert m.axis_ratio == pytest.approx(0.8, abs=0.02)
    assert (m.angle_deg - np.degrees(0.5) + 90) % 180 - 90 == pytest.approx(0.0, abs=2.0)
    assert m.psf_fwhm_pix < 1.0  # no blur in the image: the fitted PSF stays under a pixel


def test_exponential_disc_with_seeing():
    # A blurred n = 1 disc (Gaussian PSF of 2 px sigma by scipy.ndimage.gaussian_filter): the fitted
    # PSF FWHM is 2.355 sigma (Gaussian FWHM, common practice).
    from scipy.ndimage import gaussian_filter

    clean = _astropy_galaxy(40.2, 41.7, n=1.0, r_circ=8.0, q=0.6, peak_sigma=2e3, size=84) - \
        np.random.default_rng(1).normal(0.0, 1.0, (84, 84))
    img = gaussian_filter(clean, 2.0) + np.random.default_rng(2).normal(0.0, 1.0, clean.shape)
    m = fit_lens_light(img, 40.2, 41.7)
    assert m.r_eff_pix == pytest.approx(8.0, rel=0.03)
    assert m.sersic_n == pytest.approx(1.0, abs=0.1)
    assert m.psf_fwhm_pix == pytest.approx(2.355 * 2.0, rel=0.1)
