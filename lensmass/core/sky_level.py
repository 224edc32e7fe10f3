"""Robust sky statistics of an image, light enough (numpy only) for the window's start-up path.

:func:`robust_sigma` is the noise estimate every finder uses; :func:`bright_centre` tells whether a
freshly opened cutout has a bright galaxy at its centre (the window then fits its light on open).
"""

from __future__ import annotations

import numpy as np

#: A centre counts as bright when its smoothed peak stands this many sky sigmas above the sky.
BRIGHT_SIGMAS = 10.0
#: Half-width of the central box searched, as a fraction of the image's shorter side.
CENTRE_FRACTION = 0.15


def robust_sigma(values: np.ndarray) -> float:
    """1.4826 x median absolute deviation of the finite values (Gaussian-equivalent sigma; common practice).

    Examples
    --------
    >>> round(robust_sigma(np.random.default_rng(0).normal(0.0, 2.0, 100_000)), 1)
    2.0
    """
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return float("nan")
    return float(1.4826 * np.median(np.abs(v - np.median(v))))


def bright_centre(data: np.ndarray, sigmas: float = BRIGHT_SIGMAS, picture: bool = False,
                  centre_fraction: float = CENTRE_FRACTION) -> bool:
    """True when a source at least ``sigmas`` sky sigmas bright sits near the image centre.

    The sky level is the median of the finite pixels and its sigma 1.4826 x the median
    absolute deviation (a robust normal-equivalent width, common practice); the peak is
    the brightest 3 x 3 mean inside a central box of half-width
    ``centre_fraction`` x the shorter side (at least 3 pixels).

    ``picture``: an 8-bit stretched picture (PNG, JPEG), whose stretch widens the sky's spread
    and clips the galaxy: there the peak must stand 3 sigmas above the sky and at least half
    way from the sky to the brightest pixels (the 99.9th percentile).

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> sky = rng.normal(0.0, 1.0, (64, 64))
    >>> bright_centre(sky)
    False
    >>> yy, xx = np.mgrid[:64, :64]
    >>> bright_centre(sky + 50 * np.exp(-((xx - 32) ** 2 + (yy - 31) ** 2) / 18))
    True
    """
    data = np.asarray(data, dtype=np.float32)
    if data.ndim != 2 or min(data.shape) < 9:
        return False
    step = max(1, int(np.sqrt(data.size / 250_000)))  # a regular sub-grid is enough for the sky
    sample = data[::step, ::step]
    sample = sample[np.isfinite(sample)]
    if sample.size < 50:
        return False
    sky = float(np.median(sample))
    sigma = robust_sigma(sample)
    if not sigma > 0:
        return False
    ny, nx = data.shape
    half = max(3, int(centre_fraction * min(ny, nx)))
    cy, cx = ny // 2, nx // 2
    box = data[max(0, cy - half - 1): cy + half + 2, max(0, cx - half - 1): cx + half + 2]
    box = np.where(np.isfinite(box), box, sky)
    # 3 x 3 running mean by summed shifts (no scipy needed for a small box)
    smooth = sum(box[i: box.shape[0] - 2 + i, j: box.shape[1] - 2 + j] for i in range(3) for j in range(3)) / 9.0
    height = float(smooth.max()) - sky
    if picture:
        top = float(np.percentile(sample, 99.9))
        return bool(height > 3.0 * sigma and height > 0.5 * (top - sky))
    return bool(height > sigmas * sigma)


#: The rim used for :func:`border_sky`: this fraction of the shorter side (at least 3 pixels).
BORDER_FRACTION = 0.06
#: At most about this many rim pixels (a regular sub-sample) enter the clipped statistics: they fix the sky to
#: 0.4% of the noise (the median's standard error, 1.25 sigma / sqrt(n)), and the whole rim of a 2048 x 2048
#: image (940 000 pixels) cost 0.1 s, a fifth of the ring finder's time there.
RIM_SAMPLE = 100_000


def border_sky(data: np.ndarray) -> tuple[float, float]:
    """Sky level and pixel noise at the image's border: the 3-sigma-clipped median and standard
    deviation (astropy ``sigma_clipped_stats``; clipping drops stars and galaxies that cross the rim)
    of a rim :data:`BORDER_FRACTION` of the shorter side wide. NaN, NaN when the rim has no finite pixels.

    Examples
    --------
    >>> rng = np.random.default_rng(2)
    >>> img = 500.0 + rng.normal(0.0, 3.0, (80, 80))      # a sky left in the image, noise 3
    >>> img[30:50, 30:50] += 100.0                          # a galaxy, well inside the rim
    >>> sky, sigma = border_sky(img)
    >>> round(sky), round(sigma)
    (500, 3)
    """
    from astropy.stats import sigma_clipped_stats

    data = np.asarray(data)
    w = max(3, int(BORDER_FRACTION * min(data.shape)))
    rim = np.concatenate([data[:w].ravel(), data[-w:].ravel(), data[w:-w, :w].ravel(), data[w:-w, -w:].ravel()])
    rim = np.asarray(rim, float)
    rim = rim[np.isfinite(rim)][:: max(1, rim.size // RIM_SAMPLE)]
    if rim.size < 20:
        return float("nan"), float("nan")
    _, median, std = sigma_clipped_stats(rim, sigma=3.0, maxiters=10)
    return float(median), float(std)


def remove_sky_pedestal(data: np.ndarray, sigmas: float = 3.0) -> tuple[np.ndarray, float, str]:
    """Subtract a sky level left in an image (:func:`border_sky`) when it stands more than ``sigmas``
    noise sigmas from zero; segmentation and ring searches assume a sky-subtracted cutout.

    Returns the image (unchanged when there is no such level), the level subtracted (0.0 when none)
    and a sentence saying so ("" when none).

    Examples
    --------
    >>> img = 500.0 + np.random.default_rng(3).normal(0.0, 3.0, (64, 64))
    >>> out, sky, note = remove_sky_pedestal(img)
    >>> round(sky), round(float(np.median(out)))
    (500, 0)
    """
    sky, sigma = border_sky(data)
    if not (np.isfinite(sky) and sigma > 0 and abs(sky) > sigmas * sigma):
        return data, 0.0, ""
    note = (f"A sky level of {sky:.4g} ({sky / sigma:.0f} noise sigma) measured on the cutout's border was "
            "subtracted first.")
    return np.asarray(data, float) - sky, sky, note
