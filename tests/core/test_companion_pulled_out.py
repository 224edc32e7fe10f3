"""A neighbour galaxy whose wing lifts the ring's profile on its side: the ring found once the neighbour is fitted and
subtracted (core/companion_pass.py, _pulled_out) is kept though it lies less than a seeing FWHM inside the first answer.

Outside references: the lens is astropy.modeling's Sersic2D (de Vaucouleurs, n = 4: de Vaucouleurs 1948), the
neighbour a broad Sersic2D (n = 2, R_e 4 pixels) at 1.3 theta_E, the ring astropy's Ring2D (a uniform annulus 1.5
pixels wide at 16 pixels); all integrated over pixels by astropy's discretize_model and blurred by astropy's
Gaussian2DKernel (Gaussian seeing), through tests/core/test_companion_light.py's image builder. An Einstein ring's
light lies at one radius in every direction (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.modeling.models import Ring2D, Sersic2D

from lensmass.core.ringfinder import find_ring
from tests.core.test_companion_light import CX, CY, THETA_E, _image

NEIGHBOUR_DISTANCE = 1.3 * THETA_E
ANGLE = 0.5


@pytest.mark.parametrize("seed", [909901, 909902, 909903])
def test_ring_kept_once_the_neighbours_wing_is_subtracted(seed):
    """The ring (16 pixels) is found within 5%. Before the change the first search's arcs at 1.11-1.15 theta_E
    (seen in 25% of the directions, pulled out by the neighbour's wing) stood, as the companion search's ring at
    0.99-1.00 theta_E was not a full FWHM inside them, and the finder answered 0.81-0.84 theta_E on these seeds."""
    neighbour = Sersic2D(amplitude=3.0, r_eff=4.0, n=2.0, x_0=CX + NEIGHBOUR_DISTANCE * np.cos(ANGLE),
                         y_0=CY + NEIGHBOUR_DISTANCE * np.sin(ANGLE), ellip=0.2, theta=0.3)
    ring = Ring2D(amplitude=0.15, x_0=CX, y_0=CY, r_in=THETA_E - 0.75, width=1.5)
    found = find_ring(_image(neighbour + ring, seed), auto_mask=False)
    assert found.found and abs(found.radius_pix / THETA_E - 1) < 0.05, (found.radius_pix, found.message)
    # the answer names the model taken off the image it was measured on (kept over the ring-masked refit)
    assert any(w.endswith("Sersic and subtracted.") for w in found.warnings), found.warnings
