"""The command line's ring-finder answer quotes the Python API's stated interval (lensmass.core.ring_message).

The field is tests/core/test_unpaired_arc.py's lone arc (astropy.modeling Sersic2D lens, Gaussian2D source behind a
singular isothermal sphere, Narayan & Bartelmann 1996, eq. 29), written as FITS with astropy.io.fits. A lone arc's
answer is never confident, so the command line prints its warning (theta_E with its 1- and 2-sigma bounds in
pixels) among the notes and its theta_E line in arcsec: both must be the API's stated bounds (pixels times the
given pixel scale). Main 134dd82 wrote the warning's bounds from the lone-arc table before the measured error and
the tail term were joined to them.
"""

from __future__ import annotations

from astropy.io import fits

from lensmass.cli import main
from lensmass.core.einstein import find_ring_on_image
from lensmass.core.ring_interval import interval_bounds, interval_text
from lensmass.io.images import load_image
from tests.core.test_ring_message import BOUNDS, assert_quotes_stated_bounds
from tests.core.test_unpaired_arc import _sis_arc

SCALE = 0.1  # arcsec per pixel


def test_the_command_lines_lone_arc_quotes_the_apis_stated_bounds(tmp_path, capsys):
    path = tmp_path / "lone_arc.fits"
    fits.PrimaryHDU(_sis_arc(2, 0.8, 0.2)[0].astype("float32")).writeto(path)
    ring = find_ring_on_image(load_image(path))
    assert ring.found and not ring.confident
    assert main(["measure", str(path), "--auto-ring", "--accept-weak", "--pixel-scale", str(SCALE), "--zl", "0.4",
                 "--zs", "1.5", "--samples", "300"]) == 0
    shown = capsys.readouterr().out
    warning = next(line for line in shown.splitlines() if BOUNDS.search(line) and "lone arc" in line)
    assert_quotes_stated_bounds(ring, warning)
    lo2, lo1, hi1, hi2 = interval_bounds(ring)
    on_sky = interval_text(ring.radius_pix * SCALE, [b * SCALE for b in (lo2, lo1, hi1, hi2)], "arcsec", 3)
    assert "theta_E from the ring finder: " + on_sky in shown, (on_sky, shown)
