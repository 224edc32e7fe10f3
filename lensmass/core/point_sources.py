"""Is a round source as steep as a point source? A PSF-scaled test for stars whose PSF has a halo.

The half-maximum flux fraction (:data:`lensmass.core.cutout_masks.STAR_HALFMAX_FRACTION`) tells stars under a
Gaussian or Moffat PSF from galaxies, but a space-like PSF (an Airy core with a faint broad halo and diffraction
spikes) puts much of a star's light far outside its core: such stars hold only 27-33% inside their half maximum
(stress tuning seeds 962000-962059, ring+star: 14 stars under the space-like PSF, 12 of them taken for galaxies).
What still marks them is the core: a point source's light falls from half maximum to a few percent of its peak
within about one more FWHM (an Airy core reaches its first dark ring at 1.2 FWHM; common practice), while a
barely resolved galaxy of the same half-maximum share keeps 15-25% of its peak there.

:func:`wing_ratio` is the median light 1.6-2.4 half-maximum radii from the peak over the peak: a scale taken
from the source's own half-maximum size, so the test follows whatever PSF the image has. Measured on the
1-pixel-smoothed stress cutouts (962000-962059): stars mostly 0.04-0.12 (space-like PSF 0.06-0.09), while the
round neighbour galaxies of half-maximum share 0.25-0.33 measured 0.14 and 0.17 (ring+neighbour seeds 962300-962349).
"""

from __future__ import annotations

import numpy as np

#: Inner and outer radius of the wing annulus, in half-maximum radii.
WING_ANNULUS = (1.6, 2.4)
#: A round source whose wing ratio is at most this falls off as a point source does.
POINT_WING_RATIO = 0.125
#: The least half-maximum flux fraction of a star under a halo PSF (space-like PSF stars: 0.27-0.33).
HALO_STAR_HALFMAX_FRACTION = 0.25


def wing_ratio(smoothed: np.ndarray, x: float, y: float, halfmax_diameter_pix: float, peak: float) -> float:
    """Median of ``smoothed`` 1.6-2.4 half-maximum radii from (``x``, ``y``) over ``peak`` (NaN if no pixel).

    A Gaussian of 3 pixels FWHM keeps about 5% of its peak there:

    Examples
    --------
    >>> yy, xx = np.mgrid[0:41, 0:41]
    >>> g = np.exp(-4 * np.log(2) * ((xx - 20.0) ** 2 + (yy - 20.0) ** 2) / 3.0 ** 2)
    >>> round(wing_ratio(g, 20.0, 20.0, 3.0, 1.0), 2)
    0.05
    """
    ny, nx = smoothed.shape
    rh = 0.5 * halfmax_diameter_pix
    reach = int(np.ceil(WING_ANNULUS[1] * rh)) + 1
    x0, x1 = max(0, int(x) - reach), min(nx, int(x) + reach + 1)
    y0, y1 = max(0, int(y) - reach), min(ny, int(y) + reach + 1)
    yy, xx = np.mgrid[y0:y1, x0:x1]
    r = np.hypot(xx - x, yy - y)
    vals = smoothed[y0:y1, x0:x1][(r >= WING_ANNULUS[0] * rh) & (r <= WING_ANNULUS[1] * rh)]
    vals = vals[np.isfinite(vals)]
    if not vals.size or peak <= 0:
        return float("nan")
    return float(np.median(vals) / peak)


def steep_as_point_source(smoothed: np.ndarray, x: float, y: float, halfmax_diameter_pix: float, peak: float,
                          halfmax_fraction: float) -> bool:
    """A round source with a halo PSF's share of light inside its half maximum whose light falls as a point
    source's does (:func:`wing_ratio` at most :data:`POINT_WING_RATIO`)."""
    if halfmax_fraction < HALO_STAR_HALFMAX_FRACTION:
        return False
    return bool(wing_ratio(smoothed, x, y, halfmax_diameter_pix, peak) <= POINT_WING_RATIO)
