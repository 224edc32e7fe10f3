"""An answer whose half-maximum band reaches inside the search's inner radius is not resolved from the lens centre,
whatever the fitted seeing says (lensmass.core.core_residual.unresolved_inward, refit_answer_kept).

Outside references: a difference of two concentric Gaussians (astropy Gaussian2D), the residual a lens-light model
too concentrated or blurred by the wrong PSF leaves at the core, is common practice for such a mismatch; the rings
are astropy's Ring2D blurred by Gaussian2DKernel, the seeing FWHM 2.3548 sigma (astropy's gaussian_sigma_to_fwhm).
Stress tuning seeds 1005043 and 1005105 (space PSFs whose fitted FWHM ran to its 0.47-pixel bound, true 2.4-3.1
pixels; arcs at 5.24 and a refit's ring at 4.55 pixels against true rings at 10.3) are what the rule was built on.
"""

from __future__ import annotations

import numpy as np
from astropy.convolution import Gaussian2DKernel, convolve_fft
from astropy.modeling.models import Gaussian2D, Ring2D
from astropy.stats import gaussian_fwhm_to_sigma

from lensmass.core.core_residual import flag_core_answer, refit_answer_kept, unresolved_inward
from lensmass.core.ring_result import RingResult
from lensmass.core.ringfinder import DEFAULT_MIN_RADIUS_PIX, find_ring

YY, XX = np.mgrid[0:81, 0:81]
NOISE = np.random.default_rng(3).normal(0.0, 0.01, XX.shape)


def _search(residual: np.ndarray) -> RingResult:
    image = residual + NOISE
    return find_ring(image, 40.0, 40.0, residual=image, auto_mask=False)


def _ring(r_in: float, width: float, fwhm: float) -> np.ndarray:
    return convolve_fft(Ring2D(1.0, 40, 40, r_in=r_in, width=width)(XX, YY), Gaussian2DKernel(fwhm * gaussian_fwhm_to_sigma))


def _answer(radius: float, width: float, coverage: float = 0.8) -> RingResult:
    empty = np.array([])
    return RingResult(True, False, "ring", radius, 0.3, 10.0, coverage, 40.0, 40.0, 1.0, 0.0, 0.1, empty, empty,
                      empty, empty, empty, 1.0, None, None, ring_width_pix=width)


def test_core_mismatch_is_unresolved_and_rings_are_not():
    """The core mismatch's 'ring' (about 4 pixels, its band reaching the centre) is flagged; a ring at 12 pixels
    (3-pixel seeing) and a small true ring at 5 pixels (2 FWHM of a 2.5-pixel seeing) are not."""
    core = Gaussian2D(1.0, 40, 40, 3.0, 3.0)(XX, YY) - Gaussian2D(1.5, 40, 40, 1.5, 1.5)(XX, YY)
    found = _search(core)
    assert found.found and found.radius_pix < 5.0
    assert unresolved_inward(found, DEFAULT_MIN_RADIUS_PIX)
    for r_in, width, fwhm, truth in ((11.0, 2.0, 3.0, 12.0), (5.0, 1.0, 2.5, 5.5)):
        ring = _search(_ring(r_in, width, fwhm))
        assert abs(ring.radius_pix / truth - 1) < 0.1  # found there (a blurred small ring's peak moves inward)
        assert not unresolved_inward(ring, DEFAULT_MIN_RADIUS_PIX)


def test_refit_answer_at_the_core_does_not_replace_a_resolved_one():
    """Seed 1005105's pattern: first arcs at 10.1 pixels (8.5 wide), the refit's ring at 4.55 (4 wide): kept first."""
    assert refit_answer_kept(_answer(10.1, 8.5, 0.33), _answer(4.55, 4.0, 1.0), DEFAULT_MIN_RADIUS_PIX) is False
    # A broad band farther out than the first answer is a small ring's, not a core residual moving the answer in:
    # the usual rules decide (first weak arcs at 5.68 pixels, 2 wide; the refit's at 5.94, 6 wide).
    assert refit_answer_kept(_answer(5.68, 2.0, 0.42), _answer(5.94, 6.0, 0.58), DEFAULT_MIN_RADIUS_PIX) is None


def test_resolved_refit_ring_replaces_a_core_answer():
    """Seed 1005043's pattern: first arcs at 5.24 pixels (4.5 wide), the refit's ring at 10.5 (83% of directions)
    replaces them; arcs farther out (under 60% of directions) leave the usual rules to decide."""
    assert refit_answer_kept(_answer(5.24, 4.5, 0.42), _answer(10.5, 6.5, 0.83), DEFAULT_MIN_RADIUS_PIX) is True
    assert refit_answer_kept(_answer(5.24, 4.5, 0.42), _answer(10.5, 6.5, 0.4), DEFAULT_MIN_RADIUS_PIX) is None
    assert refit_answer_kept(_answer(12.0, 5.0), _answer(12.2, 5.0), DEFAULT_MIN_RADIUS_PIX) is None


def test_core_answer_is_flagged_and_a_resolved_ring_is_not():
    """The final answer at the core (seed 1005105's 4.55-pixel 'ring', 4 wide) is not confident and its message asks
    for a check by eye; a resolved ring's answer (12 pixels, 5 wide) is left as it was."""
    core, ring = _answer(4.55, 4.0, 1.0), _answer(12.0, 5.0, 1.0)
    core.confident = ring.confident = True
    core.message = ring.message = "A ring at 4.55 +- 0.30 pixels."
    flag_core_answer(core, DEFAULT_MIN_RADIUS_PIX)
    flag_core_answer(ring, DEFAULT_MIN_RADIUS_PIX)
    assert not core.confident and "not separated from the lens centre" in core.message
    assert "check it by eye" in core.message and core.radius_pix == 4.55
    assert ring.confident and ring.message == "A ring at 4.55 +- 0.30 pixels." and not ring.warnings
