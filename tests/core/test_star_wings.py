"""A saturated star's wings must not join the lens to its neighbours (issue 14).

A bright star's Moffat wings lift a broad pedestal over the cutout. Segmented at a fixed threshold, the
lens, a compact neighbour and the wings become one object whose peak is the neighbour's, and the ring is then
searched about the wrong centre. The fields here are made only with outside models: astropy.modeling Sersic2D
(pixel-integrated by astropy.convolution.discretize_model) for the lens, a Gaussian ring blurred by an astropy
Gaussian2DKernel, a Gaussian2D neighbour, and a Moffat2D star (Moffat 1969; alpha 1.5 has the broad wings of
real seeing) clipped at a saturation level after the noise, as a detector clips it.
"""

import numpy as np
from astropy.convolution import Gaussian2DKernel, convolve_fft, discretize_model
from astropy.modeling.models import Gaussian2D, Moffat2D, Sersic2D

from lensmass.core.ringfinder import find_ring

N = 96
LENS = (48.0, 48.0)
RING_PIX = 16.0


def _field(seed: int, star_amplitude: float = 1.5e4) -> np.ndarray:
    rng = np.random.default_rng(seed)
    lens = discretize_model(Sersic2D(amplitude=40, r_eff=6, n=4, x_0=LENS[0], y_0=LENS[1], ellip=0.2, theta=0.5),
                            (0, N), (0, N), mode="oversample", factor=5)
    yy, xx = np.mgrid[:N, :N]
    r = np.hypot(xx - LENS[0], yy - LENS[1])
    ring = 6.0 * np.exp(-0.5 * (r - RING_PIX) ** 2) * (1 + 0.5 * np.cos(np.arctan2(yy - LENS[1], xx - LENS[0])))
    img = convolve_fft(lens + ring, Gaussian2DKernel(1.2))
    img += discretize_model(Gaussian2D(amplitude=150, x_mean=44, y_mean=20, x_stddev=1.3, y_stddev=1.3),
                            (0, N), (0, N))
    img += Moffat2D(amplitude=star_amplitude, x_0=74, y_0=6, gamma=3.0, alpha=1.5)(xx, yy)
    return np.minimum(img + rng.normal(0, 1.0, img.shape), 3000.0)


def test_ring_found_about_the_lens_beside_a_saturated_star():
    ok = 0
    for seed in range(4):
        res = find_ring(_field(seed))
        assert np.hypot(res.center_x - LENS[0], res.center_y - LENS[1]) < 2
        ok += bool(res.found and abs(res.radius_pix / RING_PIX - 1) <= 0.05)
    # Before the local-background segmentation this gave 1 of 4 within 5% (measured 2026-12-03).
    assert ok >= 3, ok
