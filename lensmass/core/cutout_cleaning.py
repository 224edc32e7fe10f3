"""Cleaning a cutout before it is segmented: blank and hot lines, saturated stars, a sky left in it, cosmic rays.

Real survey cutouts carry what a clean simulation lacks: a zero or NaN border where the cutout meets a
survey's edge, dead and hot columns, stars clipped at the detector's full well with bleed trails, cosmic rays and
hot pixels, and sometimes an unsubtracted or sloping sky. :func:`prepare_cutout` finds each (our own
rules, on numpy/scipy/astropy) so the ring finder and the window's masks leave them out.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.ndimage import binary_dilation

#: An object with this many pixels at the image's highest value is saturated (common practice: a detector's
#: full well or the file's top code clips a bright star flat; a bleed trail runs from it along the columns).
SATURATED_MIN_PIXELS = 5


def saturated_pixels(image: np.ndarray) -> np.ndarray:
    """True where a pixel holds the image's highest finite value and at least :data:`SATURATED_MIN_PIXELS`
    do (a clipped, saturated star and its bleed trail); all False otherwise.

    Examples
    --------
    >>> img = np.random.default_rng(0).normal(size=(30, 30))
    >>> img[10:13, 5:8] = 900.0
    >>> int(saturated_pixels(img).sum()), int(saturated_pixels(np.arange(16.0).reshape(4, 4)).sum())
    (9, 0)
    """
    img = np.asarray(image, float)
    finite = np.isfinite(img)
    if not finite.any():
        return np.zeros(img.shape, bool)
    top = float(np.max(img[finite]))
    flat = img == top
    return flat if int(flat.sum()) >= SATURATED_MIN_PIXELS else np.zeros(img.shape, bool)


#: A pixel standing this many noise sigmas above its surroundings, with its second-faintest edge neighbour below
#: :data:`SHARP_NEIGHBOUR_FRACTION` of its height, is sharper than any sampled PSF: a cosmic ray or a hot pixel.
SHARP_MIN_SNR = 6.0
#: A sampled PSF (FWHM >= 1.8 pixels) puts about 40% of its peak in each edge neighbour of the peak pixel
#: (a Gaussian of that FWHM: exp(-1 / (2 * 0.76^2)) = 0.42; common practice: stars are never sharper); an
#: off-centre star of 1.8 px FWHM sampled at pixel centres has its second-faintest edge neighbour at ~0.2
#: (tests/core/test_stress_fields.py), so the limit sits below that.
SHARP_NEIGHBOUR_FRACTION = 0.15


def sharp_pixels(image: np.ndarray, noise_sigma: float) -> np.ndarray:
    """Cosmic rays and hot pixels: pixels sharper than the PSF, grown by two pixels (a short track with them).

    A pixel is sharp when it is the brightest of its 3 x 3 box, stands :data:`SHARP_MIN_SNR` noise sigmas
    above the median of the 5 x 5 box
    around it and above its second-faintest edge neighbour, and that neighbour rises less than
    :data:`SHARP_NEIGHBOUR_FRACTION` of its height (a track of a few pixels is still sharp across), and it
    stands higher than the light around it (a noise peak on a bright galaxy's core is not taken). In the
    spirit of the Laplacian edge test of van Dokkum (2001), PASP 113, 1420, with our own thresholds;
    ``image`` has its sky subtracted.

    Examples
    --------
    >>> rng = np.random.default_rng(0)
    >>> yy, xx = np.mgrid[0:40, 0:40]
    >>> img = 50 * np.exp(-((xx - 20) ** 2 + (yy - 20) ** 2) / (2 * 0.9 ** 2)) + rng.normal(0, 1, xx.shape)
    >>> img[8, 5:8] += 80.0
    >>> m = sharp_pixels(img, 1.0)
    >>> bool(m[8, 6]), bool(m[20, 20])
    (True, False)
    """
    img = np.asarray(image, float)
    finite = np.isfinite(img)
    filled = np.where(finite, img, 0.0)
    p = np.pad(filled, 1, mode="edge")
    n, so, w, e = p[:-2, 1:-1], p[2:, 1:-1], p[1:-1, :-2], p[1:-1, 2:]
    # The second-faintest of the four edge neighbours by a sorting network (a full sort is slower).
    second = np.minimum(np.maximum(np.minimum(n, so), np.minimum(w, e)), np.minimum(np.maximum(n, so), np.maximum(w, e)))
    drop = filled - second  # above the second-faintest edge neighbour (a track's pixel has two bright ones)
    cand = finite & (drop > SHARP_MIN_SNR * noise_sigma)
    ys, xs = np.nonzero(cand)
    if ys.size:  # a local peak of its 3 x 3 box
        box3 = np.lib.stride_tricks.sliding_window_view(p, (3, 3))[ys, xs]
        top = box3.reshape(ys.size, 9).max(axis=1) <= filled[ys, xs]
        ys, xs = ys[top], xs[top]
    sharp = np.zeros(img.shape, bool)
    if ys.size:  # the 5 x 5 median only where it matters (a median filter of the whole image is slow)
        win = np.lib.stride_tricks.sliding_window_view(np.pad(filled, 2, mode="edge"), (5, 5))[ys, xs]
        bg = np.median(win.reshape(ys.size, 25), axis=1)
        v = filled[ys, xs]
        height = v - bg
        ok = ((height > SHARP_MIN_SNR * noise_sigma) & (drop[ys, xs] > (1 - SHARP_NEIGHBOUR_FRACTION) * height)
              & (height > bg))  # not a noise peak on a bright core
        sharp[ys[ok], xs[ok]] = True
    return binary_dilation(sharp, iterations=2) if sharp.any() else sharp


#: A hot line (a column or row raised along its length: a CCD's hot or bad column, common practice) is brighter than
#: both its neighbours in the same row (column) in at least this share of its finite pixels, where noise gives
#: about a third (three exchangeable values) and a galaxy's ridge only where the galaxy stands above the noise, ...
HOT_LINE_SHARE = 0.9
#: ... on at least this many finite pixels, ...
HOT_LINE_MIN_PIXELS = 24
#: ... raised by about the same amount along its length: the lower quartile of its excess over its neighbours' mean
#: is at least this share of the upper quartile. A hot column adds a constant (with noise of sigma, a line raised
#: enough to pass the share test keeps this ratio near 0.5 or above); the centre line of a noiseless round galaxy
#: (a simulation) beats its neighbours everywhere too, by an excess that falls steeply away from the galaxy.
HOT_LINE_EVENNESS = 0.25


def hot_lines(image: np.ndarray) -> np.ndarray:
    """True on whole columns and rows brighter than both their neighbours in at least :data:`HOT_LINE_SHARE` of
    their finite pixels (a hot or bad column adds a constant along it; noise puts a pixel above both neighbours a
    third of the time, however correlated, and a galaxy only where it outshines the noise). A line of one value is
    left to :func:`lensmass.core.sky_level.blank_lines`. (h21a, stress fields, FITS route: hard rings with a hot
    column were 5 of 12 within 5% on tuning seeds 635000-635699; masking them: hard rings +4 -0 there, +5 -0 on
    check seeds 637000-639999, all lenses +13 -1, no confident non-lens.)

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> img = rng.normal(0, 1, (64, 64))
    >>> yy, xx = np.mgrid[0:64, 0:64]
    >>> img += 300 * np.exp(-((xx - 32) ** 2 + (yy - 32) ** 2) / 18.0)  # a galaxy: no line
    >>> img[:, 20] += 30.0
    >>> m = hot_lines(img)
    >>> bool(m[5, 20]), bool(m[5, 32]), int(m.sum())
    (True, False, 64)
    """
    a = np.asarray(image, float)
    out = np.zeros(a.shape, bool)
    if a.ndim != 2 or min(a.shape) < 3:
        return out
    for axis in (0, 1):
        b = a if axis == 0 else a.T  # lines are columns of b
        mid, left, right = b[:, 1:-1], b[:, :-2], b[:, 2:]
        with np.errstate(invalid="ignore"):
            above = (mid > left) & (mid > right)
        n = (np.isfinite(mid) & np.isfinite(left) & np.isfinite(right)).sum(axis=0)
        hot = (n >= HOT_LINE_MIN_PIXELS) & (above.sum(axis=0) >= HOT_LINE_SHARE * np.maximum(n, 1))
        idx = np.flatnonzero(hot)
        if idx.size:
            excess = mid[:, idx] - 0.5 * (left[:, idx] + right[:, idx])
            low, high = np.nanpercentile(excess, [25, 75], axis=0)
            idx = idx[low >= HOT_LINE_EVENNESS * high]
        idx = idx + 1
        if axis == 0:
            out[:, idx] = True
        else:
            out[idx, :] = True
    return out


@dataclass
class CleanCutout:
    """A cutout made ready for segmenting (:func:`prepare_cutout`): ``image`` with blank lines set to NaN and
    the sky plane ``sky`` (an image, or 0.0) subtracted; ``mask`` the blank lines, cosmic rays and hot pixels
    (and the caller's mask); ``saturated`` the clipped pixels; ``notes`` what was done, in sentences."""

    image: np.ndarray
    mask: np.ndarray
    saturated: np.ndarray
    sky: np.ndarray | float
    notes: list[str] = field(default_factory=list)


def prepare_cutout(image: np.ndarray, mask: np.ndarray | None = None,
                   grid: tuple[tuple[int, int], int, int] | None = None) -> CleanCutout:
    """Blank rows and columns (:func:`lensmass.core.sky_level.blank_lines`), hot ones (:func:`hot_lines`), saturated pixels (found first,
    while a clipped star's top is still flat), the sky plane (:func:`lensmass.core.sky_level.sky_plane`;
    ``grid`` as there, so the plane fitted on a box can be taken from the whole image) and cosmic rays
    (:func:`sharp_pixels`). The ring finder and the window's masks both start here.

    Examples
    --------
    >>> rng = np.random.default_rng(5)
    >>> img = 400.0 + rng.normal(0, 1, (60, 60))
    >>> img[:, :6] = 0.0
    >>> img[30, 30] += 300.0
    >>> c = prepare_cutout(img)
    >>> bool(c.mask[10, 2]), bool(c.mask[30, 30]), round(float(np.nanmedian(c.image)))
    (True, True, 0)
    """
    from lensmass.core.sky_level import blank_lines, robust_sigma, sky_plane

    img = np.asarray(image, float)
    ny, nx = img.shape
    notes = []
    saturated = saturated_pixels(img)
    out_mask = np.zeros(img.shape, bool) if mask is None else np.asarray(mask, bool).copy()
    blank = blank_lines(img)
    if blank.any():
        img = np.where(blank, np.nan, img)
        out_mask |= blank
        notes.append(f"{int(blank.sum())} pixels in rows or columns of one value (a blank border, a dead column) "
                     "are masked.")
    hot = hot_lines(img) & ~blank
    if hot.any():  # masked, not blanked: a NaN line through the lens would cut its segment in two
        out_mask |= hot
        notes.append(f"{int(hot.sum())} pixels in rows or columns raised along their length (a hot or bad column) "
                     "are masked.")
    sky = sky_plane(img, grid=grid)
    if not np.isscalar(sky):
        notes.append("A sky level or gradient left in the cutout (a plane fitted to its edge pixels) was subtracted "
                     "before the search.")
        (fy, fx), ox, oy = grid if grid is not None else (img.shape, 0, 0)
        sky = np.broadcast_to(sky, (fy, fx))
        img = img - sky[oy:oy + ny, ox:ox + nx]
    noise = robust_sigma(img[:: max(1, ny // 128), :: max(1, nx // 128)])
    if np.isfinite(noise) and noise > 0:
        hits = sharp_pixels(img, noise)
        if hits.any():
            out_mask |= hits
            notes.append("Cosmic rays or hot pixels (sharper than any star) are masked.")
    return CleanCutout(img, out_mask, saturated, sky, notes)
