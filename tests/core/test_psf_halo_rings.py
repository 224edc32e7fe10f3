"""Rings around bulge+disc lenses seen through a PSF with a halo, made with general-purpose library models (h15a).

The PSF is astropy.modeling's AiryDisk2D (a diffraction-limited core: first dark ring at 1.22 lambda/D, FWHM 1.03
lambda/D, common practice) plus a wide Gaussian2D halo of scattered light holding 40% of the light, as
space-telescope PSFs have (a halo one Gaussian-blurred Sersic cannot follow; the halo's share and width follow
benchmarks/stress_fields.py's space-like PSF, an assumption of ours, not a measured PSF). The lens: a Sersic2D bulge (n = 4)
and a fainter exponential disc (n = 1) of another shape and angle; a star or a neighbouring galaxy beyond the ring.
The ring is the exact image of a circular Gaussian source on the axis of a singular isothermal sphere: the lens
equation beta = theta - theta_E theta / |theta| and conservation of surface brightness give I(theta) =
S(|theta| - theta_E), a ring centred on theta_E (Narayan & Bartelmann 1996, eq. 29; common practice). Truth: theta_E.

A check, not a fix: today's finder (4f45eac) measures these within 5% (11 of 12, median offset -0.8%). A lens-light
model with a fitted PSF wing in the ring-masked refit (branch h15a-wings, not merged) kept 11 of 12 within 5% but
moved them outward (median +1.4%, inside this check's 2%): the wing and the Sersic index trade, and the model
over-predicts the light under the masked ring.
"""

from __future__ import annotations

import numpy as np
from astropy.convolution import convolve_fft
from astropy.modeling.models import AiryDisk2D, Gaussian2D, Sersic2D

from lensmass.core.ringfinder import find_ring


def _psf(fwhm: float, halo_share: float) -> np.ndarray:
    h = int(8 * fwhm) + 4
    ky, kx = np.mgrid[-h:h + 1, -h:h + 1].astype(float)
    core = AiryDisk2D(amplitude=1.0, x_0=0.0, y_0=0.0, radius=fwhm * 1.2197 / 1.0290)(kx, ky)
    halo = Gaussian2D(amplitude=1.0, x_mean=0.0, y_mean=0.0, x_stddev=2.5 * fwhm, y_stddev=2.5 * fwhm)(kx, ky)
    return (1 - halo_share) * core / core.sum() + halo_share * halo / halo.sum()


def _beyond_the_ring(seed: int, t: float, xx: np.ndarray, yy: np.ndarray, c, theta_e: float) -> np.ndarray:
    """A neighbouring galaxy at 1.6 theta_E (odd seeds) or a star at 1.9 theta_E (a point the PSF makes a star)."""
    if seed % 2:
        d = 1.6 * theta_e
        return Sersic2D(amplitude=60.0, r_eff=2.0, n=2, x_0=c[0] + d * np.cos(t), y_0=c[1] + d * np.sin(t),
                        ellip=0.3, theta=t)(xx, yy)
    d = 1.9 * theta_e
    star = np.zeros_like(xx)
    star[int(round(c[1] + d * np.sin(t))), int(round(c[0] + d * np.cos(t)))] = 3000.0
    return star


def _field(seed: int) -> tuple[np.ndarray, float]:
    rng = np.random.default_rng(seed)
    yy, xx = np.mgrid[0:121, 0:121].astype(float)
    c = 60.0 + rng.uniform(-0.5, 0.5, 2)
    fwhm = rng.uniform(2.5, 3.5)
    theta_e = fwhm * rng.uniform(3.0, 4.5)  # a hard ring: >= 2.5 seeing FWHM
    ang = rng.uniform(0, np.pi)
    # (peak brightness, R_e / theta_E, n, ellipticity, angle): a bulge, and a disc of another shape and angle
    parts = [(400.0, 0.5, 4, 0.2, ang), (20.0, 1.8, 1, 0.5, ang + 0.7)]
    light = sum(peak * m / m.max() for peak, m in
                ((p, Sersic2D(1.0, k * theta_e, n, c[0], c[1], e, a)(xx, yy)) for p, k, n, e, a in parts))
    # SIS image of a Gaussian source on the axis: the source's profile centred on theta_E
    ring = 10.0 * np.exp(-0.5 * ((np.hypot(xx - c[0], yy - c[1]) - theta_e) / (0.1 * theta_e)) ** 2)
    other = _beyond_the_ring(seed, rng.uniform(0, 2 * np.pi), xx, yy, c, theta_e)
    sky = convolve_fft(light + ring + other, _psf(fwhm, 0.4), boundary="fill")
    return sky + rng.normal(0.0, 1.0, sky.shape), theta_e


SEEDS = list(range(150, 162))


def test_rings_around_a_bulge_and_disc_through_a_psf_with_a_halo():
    fields = [_field(s) for s in SEEDS]
    found = [find_ring(img) for img, _ in fields]
    off = [r.radius_pix / te - 1 if r.found else np.nan for r, (_, te) in zip(found, fields)]
    assert sum(abs(o) <= 0.05 for o in off) >= 10, np.round(off, 3)
    assert abs(np.nanmedian(off)) <= 0.02, np.round(off, 3)  # no systematic pull of the ring either way
