"""A neighbour galaxy outside the ring that did not move the first search's answer: once it is fitted and subtracted
and the ring found again within a seeing FWHM, the subtraction is kept for the passes after the companion pass
(core/companion_pass.py, _held_inside), and the answer names it.

Outside references: the lens is astropy.modeling's Sersic2D (de Vaucouleurs, n = 4: de Vaucouleurs 1948), the
neighbour a round Sersic2D (n = 1.5, R_e 2.5 pixels) at 1.5 theta_E, the ring astropy's Ring2D (a uniform annulus
1.5 pixels wide at 16 pixels); all integrated over pixels by astropy's discretize_model and blurred by astropy's
Gaussian2DKernel (Gaussian seeing), through tests/core/test_companion_light.py's image builder. An Einstein ring's
light lies at one radius in every direction (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.modeling.models import Ring2D, Sersic2D

from lensmass.core.ringfinder import find_ring
from tests.core.test_companion_light import CX, CY, THETA_E, _image

NEIGHBOUR_DISTANCE = 1.5 * THETA_E
ANGLE = 2.0


@pytest.mark.parametrize("seed", [909911, 909912])
def test_neighbour_outside_the_ring_stays_subtracted(seed):
    """The ring (16 pixels) is found within 5% and the answer says the galaxy outside it was subtracted. Before the
    change the companion search's ring (within a FWHM of the first answer) was dropped with the subtraction; the same
    galaxy was then subtracted by core/inner_neighbour.py and named "joined to the lens's light" on these seeds."""
    neighbour = Sersic2D(amplitude=3.0, r_eff=2.5, n=1.5, x_0=CX + NEIGHBOUR_DISTANCE * np.cos(ANGLE),
                         y_0=CY + NEIGHBOUR_DISTANCE * np.sin(ANGLE), ellip=0.1, theta=0.3)
    ring = Ring2D(amplitude=0.15, x_0=CX, y_0=CY, r_in=THETA_E - 0.75, width=1.5)
    found = find_ring(_image(neighbour + ring, seed), auto_mask=False)
    assert found.found and abs(found.radius_pix / THETA_E - 1) < 0.05, (found.radius_pix, found.message)
    assert any("outside the ring" in w and w.endswith("Sersic and subtracted.") for w in found.warnings), found.warnings
