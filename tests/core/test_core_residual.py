"""The lens core's residual does not replace a resolved ring, and a resolved ring replaces it
(lensmass.core.core_residual).

Outside references: the seeing FWHM of a Gaussian PSF is 2.3548 sigma (astropy's gaussian_sigma_to_fwhm); that a
galaxy's core light is smeared over about a seeing FWHM, so a feature within 1.5 FWHM of the centre is not resolved
from it, is common practice. The small true ring is astropy's Ring2D (2 seeing FWHM) around astropy's Sersic2D
lens, integrated over pixels by discretize_model and blurred by Gaussian2DKernel (tests/core/test_companion_light.py's
image builder).
"""

from __future__ import annotations

import numpy as np
from astropy.modeling.models import Ring2D
from astropy.stats import gaussian_sigma_to_fwhm

from lensmass.core.core_residual import core_replaces_ring, in_core, ring_replaces_core
from lensmass.core.ring_result import RingResult
from lensmass.core.ringfinder import find_ring
from tests.core.test_companion_light import CX, CY, FWHM, _image

PSF_FWHM = 2.0 * gaussian_sigma_to_fwhm  # a Gaussian seeing of sigma 2 pixels: FWHM 4.71 pixels


def _answer(radius: float, score: float = 20.0, coverage: float = 0.7, kind: str = "ring") -> RingResult:
    empty = np.array([])
    return RingResult(True, False, kind, radius, 0.3, score, coverage, 40.0, 40.0, 1.0, 0.0, 0.1, empty, empty,
                      empty, empty, empty, 1.0, None, None)


def test_core_answer_does_not_replace_a_resolved_ring():
    """A refit's answer at 1 FWHM does not replace a first answer at 3 FWHM (stress tuning seed 685092: arcs at 8.27
    pixels, 2.5 fitted FWHM, truth 8.05; the refit, its PSF fitted 3.4 times wider, put a ring at 4.30 pixels)."""
    assert in_core(1.0 * PSF_FWHM, PSF_FWHM) and not in_core(1.6 * PSF_FWHM, PSF_FWHM)
    assert core_replaces_ring(_answer(3.0 * PSF_FWHM), _answer(1.0 * PSF_FWHM), PSF_FWHM)
    assert not core_replaces_ring(_answer(1.8 * PSF_FWHM), _answer(1.0 * PSF_FWHM), PSF_FWHM)  # neither resolved


def test_resolved_ring_replaces_a_core_answer():
    """A ring at 5 FWHM, surely real (12 sigma or more) and seen in 60% of the directions or more, replaces an answer
    at 0.9 FWHM (stress tuning seed 685378: a ring at 3.55 pixels, truth 19.46; the two-component lens light's
    residual showed the ring at 19.86 pixels, 24.5 sigma, 67% of the directions); arcs or a faint feature do not."""
    core = _answer(0.9 * PSF_FWHM)
    assert ring_replaces_core(core, _answer(5.0 * PSF_FWHM, 24.5, 0.67), PSF_FWHM)
    assert not ring_replaces_core(core, _answer(5.0 * PSF_FWHM, 24.5, 0.4, "arcs"), PSF_FWHM)
    assert not ring_replaces_core(core, _answer(5.0 * PSF_FWHM, 8.0, 0.67), PSF_FWHM)
    assert not ring_replaces_core(_answer(2.0 * PSF_FWHM), _answer(5.0 * PSF_FWHM, 24.5, 0.67), PSF_FWHM)


def test_small_true_ring_is_kept():
    """A true ring of 2 seeing FWHM (astropy's Ring2D at 6 pixels around a Sersic2D lens) is found within 5%: the
    rules leave rings outside the core alone."""
    ring = Ring2D(amplitude=0.6, x_0=CX, y_0=CY, r_in=2.0 * FWHM - 0.75, width=1.5)
    found = find_ring(_image(ring, 685901), auto_mask=False)
    assert found.found and abs(found.radius_pix / (2.0 * FWHM) - 1) < 0.05, found.message
