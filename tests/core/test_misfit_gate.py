"""The gate of the bulge+disc refit for narrow rings (lensmass.core.misfit_gate, h26b).

Scenes are built from astropy models only: a Ring2D (pixel-integrated with discretize_model, blurred by a
Gaussian2DKernel) as the ring left in a residual, and an exponential Sersic2D (n = 1, Freeman 1970) as a disc's
leftover falling outward from the centre; the noise is Gaussian of known sigma.
"""

import numpy as np
from astropy.convolution import Gaussian2DKernel, convolve_fft, discretize_model
from astropy.modeling.models import Ring2D, Sersic2D
from astropy.stats import gaussian_fwhm_to_sigma

import lensmass.core.ringfinder as rf
from lensmass.core.misfit_gate import leftover_inside_ring

SIZE, CX, CY, FWHM, NOISE = 81, 40.2, 39.8, 3.0, 1.0


def _blurred(model) -> np.ndarray:
    pixels = discretize_model(model, (0, SIZE), (0, SIZE), mode="oversample", factor=5)
    return convolve_fft(pixels, Gaussian2DKernel(FWHM * gaussian_fwhm_to_sigma))


def _ring(radius: float, height: float) -> np.ndarray:
    ring = _blurred(Ring2D(amplitude=1.0, x_0=CX, y_0=CY, r_in=radius - 0.75, width=1.5))
    return height * ring / ring.max()


def _noise(seed: int) -> np.ndarray:
    return np.random.default_rng(seed).normal(0.0, NOISE, (SIZE, SIZE))


def _gate(residual: np.ndarray, radius: float) -> bool:
    # The ring's measured width: Ring2D's 1.5 px in quadrature with the seeing FWHM (an estimate, common practice).
    return leftover_inside_ring(residual, CX, CY, radius, float(np.hypot(1.5, FWHM)), FWHM, NOISE)


def test_ring_alone_keeps_the_gate_closed():
    """A ring with nothing inside it: neither flank test fires (over several noise draws)."""
    assert not any(_gate(_ring(14.0, 20.0) + _noise(seed), 14.0) for seed in range(5))


def test_disc_leftover_inside_ring_opens_the_gate():
    """An exponential leftover (R_e 8 px, centre 40 sigma) falling outward across a 14 px ring opens the gate."""
    disc = _blurred(Sersic2D(amplitude=1.0, r_eff=8.0, n=1.0, x_0=CX, y_0=CY, ellip=0.3, theta=0.5))
    residual = _ring(14.0, 20.0) + 40.0 * disc / disc.max()
    assert all(_gate(residual + _noise(seed), 14.0) for seed in range(5))


def test_light_outside_only_keeps_the_gate_closed():
    """Light raising only the outer flank (a wider Ring2D outside the ring) is no leftover inside it."""
    outside = _blurred(Ring2D(amplitude=1.0, x_0=CX, y_0=CY, r_in=17.0, width=6.0))
    residual = _ring(14.0, 20.0) + 10.0 * outside / outside.max()
    assert not any(_gate(residual + _noise(seed), 14.0) for seed in range(5))


def test_narrow_ring_on_bright_disc_is_offered_two_components(monkeypatch):
    """A faint narrow ring (Ring2D 1.5 px wide, 3 sigma high, theta_E 10 px) on a bulge (Sersic2D n = 4,
    R_e 5 px) inside a compact exponential disc (n = 1, R_e 6 px, q 0.3): one Sersic leaves the disc's light inside
    the ring and the finder offers the ring the two-component fit (withheld before h26b: the ring is narrower than
    ringfinder.MISFIT_WIDTH_PSF seeing widths), and the ring stays within 5% of Ring2D's mid-radius."""
    calls = []
    original = rf.bulge_and_disc

    def spy(*args, **kwargs):
        calls.append(1)
        return original(*args, **kwargs)

    monkeypatch.setattr(rf, "bulge_and_disc", spy)
    lens = _blurred(Sersic2D(amplitude=1.0, r_eff=5.0, n=4.0, x_0=CX, y_0=CY, ellip=0.2, theta=0.4)
                    + Sersic2D(amplitude=20.0, r_eff=6.0, n=1.0, x_0=CX, y_0=CY, ellip=0.7, theta=1.2))
    found = rf.find_ring(400.0 * lens / lens.max() + _ring(10.0, 3.0) + _noise(1))
    assert found.found and abs(found.radius_pix / 10.0 - 1) <= 0.05, found.radius_pix
    assert calls
