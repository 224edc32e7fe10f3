"""The window's ring-finder answer shows the numbers the Python API's message quotes (lensmass.core.ring_message).

The field is tests/core/test_ring_message.py's full ring (astropy.modeling Sersic2D lens with an astropy Ring2D
annulus, blurred by astropy's Gaussian2DKernel), written as FITS with astropy.io.fits and opened in the window as a
user would; the user clicks the ring finder's button. The window's status line states the radius with its 1- and
2-sigma bounds; the API's message "A ring at r +- e pixels" must quote the same radius and the same 1-sigma sides.
"""

from __future__ import annotations

import re

from astropy.io import fits

from lensmass.core.einstein import find_ring_on_image
from lensmass.core.ring_interval import interval_bounds, interval_text
from lensmass.io.images import load_image
from tests.core.test_ring_message import PRINTED, assert_quotes_stated_interval, ring_field
from tests.gui.conftest import click_find_ring


def test_the_windows_ring_answer_is_the_apis_stated_interval(qtbot, make_window, tmp_path):
    path = tmp_path / "ring.fits"
    fits.PrimaryHDU(ring_field(935001).astype("float32")).writeto(path)
    api = find_ring_on_image(load_image(path))
    assert api.found and api.kind == "ring", api.message
    assert_quotes_stated_interval(api, api.message)

    window = make_window(load_panels=True)
    assert window.open_path(str(path))
    ring = click_find_ring(qtbot, window)
    shown = window.statusBar().currentMessage()
    assert ring.message == api.message and interval_bounds(ring) == interval_bounds(api)
    assert interval_text(api.radius_pix, interval_bounds(api), "px") in shown, shown
    m = re.search(r"found at (\d+\.\d\d) px \(1 sigma (\d+\.\d\d)-(\d+\.\d\d)", shown)
    r, lo, hi = (float(v) for v in m.groups())
    e = float(re.search(r"\+- (\d+\.\d\d) pixels", api.message).group(1))
    assert f"{api.radius_pix:.2f}" == m.group(1)
    tolerance = 3 * PRINTED  # the message's side and the status line's radius and bound, each rounded once
    assert abs(e - (hi - r)) <= tolerance and abs(e - (r - lo)) <= tolerance
