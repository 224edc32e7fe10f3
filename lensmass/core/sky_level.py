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
    v = v[np.isfinite(v)]  # boolean indexing copies: both medians below may then work in place
    if v.size == 0:
        return float("nan")
    med = np.median(v, overwrite_input=True)
    np.subtract(v, med, out=v)
    np.abs(v, out=v)
    return float(1.4826 * np.median(v, overwrite_input=True))


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


def border_sky(data: np.ndarray, usable: np.ndarray | None = None,
               share: float = BORDER_FRACTION) -> tuple[float, float]:
    """Sky level and pixel noise at the image's border: the 3-sigma-clipped median and standard
    deviation (astropy ``sigma_clipped_stats``; clipping drops stars and galaxies that cross the rim)
    of a rim ``share`` (default :data:`BORDER_FRACTION`) of the shorter side wide, of its ``usable`` pixels
    (default all finite ones). NaN, NaN when the rim has under 20 such pixels.

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
    w = max(3, int(share * min(data.shape)))

    def frame(a: np.ndarray) -> np.ndarray:
        return np.concatenate([a[:w].ravel(), a[-w:].ravel(), a[w:-w, :w].ravel(), a[w:-w, -w:].ravel()])

    # The rim is cut out first and only then selected and widened to float64 (the whole image was copied
    # twice before: 10 ms of a 2048 x 2048 float32 cutout's 18).
    rim = frame(data)
    keep = np.isfinite(rim) if usable is None else np.isfinite(rim) & frame(np.asarray(usable, bool))
    rim = np.asarray(rim[keep][:: max(1, rim.size // RIM_SAMPLE)], float)
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


#: A constant sky left in the image is taken out when it exceeds this many pixel sigmas (an unsubtracted
#: pedestal is hundreds; the wings of a lens galaxy at the cutout's edge are under one).
PLANE_LEVEL_SIGMAS = 2.0
#: A sky gradient is taken out when it changes the sky by this many pixel sigmas across the image.
GRADIENT_SIGMAS = 1.0
#: Width of the frame of edge pixels the sky plane is fitted to, as a fraction of the shorter side.
FRAME_FRACTION = 0.12
#: At most about this many frame pixels are clipped and fitted (astropy's sigma_clip takes ~70 ms on the
#: 90 000 frame pixels of a 649 x 649 search box, ~12 ms on this many).
MAX_FRAME_PIXELS = 12000


def blank_lines(data: np.ndarray) -> np.ndarray:
    """True on whole rows and columns whose finite pixels all hold one value (a zero border of a cutout at
    a survey's edge, a dead column): such pixels carry no measurement (common practice: they are masked).
    When such lines would leave under a quarter of the finite pixels, nothing is marked.

    Examples
    --------
    >>> img = np.random.default_rng(0).normal(size=(20, 30))
    >>> img[:, :4] = 0.0
    >>> img[:, 11] = 0.0
    >>> m = blank_lines(img)
    >>> int(m.sum()), bool(m[5, 11]), bool(m[5, 12])
    (100, True, False)
    """
    a = np.asarray(data, float)
    out = np.zeros(a.shape, bool)
    if a.ndim != 2 or min(a.shape) < 3:
        return out
    with np.errstate(invalid="ignore"):
        for axis in (0, 1):
            hi, lo = np.nanmax(np.where(np.isfinite(a), a, -np.inf), axis=axis), np.nanmin(
                np.where(np.isfinite(a), a, np.inf), axis=axis)
            n = np.isfinite(a).sum(axis=axis)
            flat = (n >= 0.5 * a.shape[axis]) & (hi == lo)
            if axis == 0:
                out[:, flat] = True
            else:
                out[flat, :] = True
    finite = np.isfinite(a)
    if np.count_nonzero(finite & ~out) < 0.25 * np.count_nonzero(finite):
        return np.zeros(a.shape, bool)  # mostly lines of one value: a pattern, not a border; leave it to the caller
    return out


def sky_plane(data: np.ndarray, noise_sigma: float | None = None,
              grid: tuple[tuple[int, int], int, int] | None = None) -> np.ndarray | float:
    """The sky left in a cutout: a plane fitted to its frame of edge pixels, or 0.0 when there is none to speak of.

    The plane ``a + b x + c y`` is fitted by least squares to the finite pixels of the outer
    :data:`FRAME_FRACTION` of the image, after clipping sources (astropy ``sigma_clip``: 2.5 sigma above,
    4 below the median, by the MAD; common practice for sky estimates). It is returned (as an image)
    when its level exceeds :data:`PLANE_LEVEL_SIGMAS` pixel sigmas or its change across the image
    :data:`GRADIENT_SIGMAS`; a clean, sky-subtracted cutout gets 0.0 and stays as it is. ``grid`` =
    ((ny, nx), x0, y0) evaluates the plane on a larger image in which ``data`` starts at column x0, row y0.

    Examples
    --------
    >>> rng = np.random.default_rng(2)
    >>> yy, xx = np.mgrid[0:64, 0:80]
    >>> img = 300.0 + 0.2 * xx + rng.normal(0, 1, xx.shape) + 80 * np.exp(-np.hypot(xx - 40, yy - 32) / 3)
    >>> p = sky_plane(img)
    >>> round(float(p[32, 40]), 0), round(float(p[0, 79] - p[0, 0]), 0)
    (308.0, 16.0)
    >>> sky_plane(rng.normal(0, 1, (64, 64)))
    0.0
    """
    from astropy.stats import sigma_clip

    a = np.asarray(data, float)
    ny, nx = a.shape
    w = max(3, int(FRAME_FRACTION * min(ny, nx)))
    frame = np.zeros(a.shape, bool)
    frame[:w], frame[-w:], frame[:, :w], frame[:, -w:] = True, True, True, True
    frame &= np.isfinite(a)
    if frame.sum() < 30:
        return 0.0
    yy, xx = np.nonzero(frame)
    step = max(1, yy.size // MAX_FRAME_PIXELS)  # a regular subsample of a large frame is enough (and quick)
    yy, xx = yy[::step], xx[::step]
    v = a[yy, xx]
    keep = ~np.ma.getmaskarray(sigma_clip(v, sigma_lower=4.0, sigma_upper=2.5, maxiters=5, cenfunc="median",
                                          stdfunc="mad_std"))
    if keep.sum() < 30:
        return 0.0
    xc, yc = (nx - 1) / 2, (ny - 1) / 2
    design = np.column_stack([np.ones(keep.sum()), (xx[keep] - xc) / nx, (yy[keep] - yc) / ny])
    coef, *_ = np.linalg.lstsq(design, v[keep], rcond=None)
    sigma = noise_sigma if noise_sigma is not None else robust_sigma(v[keep] - design @ coef)
    if not (np.isfinite(sigma) and sigma > 0 and np.all(np.isfinite(coef))):
        return 0.0
    level, change = abs(coef[0]), abs(coef[1]) + abs(coef[2])
    if level <= PLANE_LEVEL_SIGMAS * sigma and change <= GRADIENT_SIGMAS * sigma:
        return 0.0
    (fy, fx), ox, oy = grid if grid is not None else ((ny, nx), 0, 0)
    gy, gx = np.ogrid[0:fy, 0:fx]
    return coef[0] + coef[1] * (gx - ox - xc) / nx + coef[2] * (gy - oy - yc) / ny


#: Half the side of the central piece :func:`noise_correlation` reads on a large image.
MAX_CORRELATION_SIDE = 96


def noise_correlation(data: np.ndarray, sky: np.ndarray | None = None) -> float:
    """How much the noise of a mean over many pixels exceeds the white-noise expectation (1 for white noise).

    The correlation of neighbouring sky pixels (``sky`` True; default all finite pixels), rho = 1 -
    var(difference of neighbours) / (2 var(pixel)), with robust variances of the image less its 9 x 9
    mean (galaxy wings and sky gradients out), is read as noise smoothed by a Gaussian of sigma s
    (rho = exp(-1 / (4 s^2))), whose means over large areas scatter 2 sqrt(pi) s times more than white
    noise's (common practice for resampled or co-added images). Never below 1.

    Examples
    --------
    >>> from scipy.ndimage import gaussian_filter
    >>> white = np.random.default_rng(3).normal(size=(128, 128))
    >>> round(noise_correlation(white), 1)
    1.0
    >>> 2.5 < noise_correlation(gaussian_filter(white, 1.0)) <= 3.5  # 2 sqrt(pi) = 3.5; the high-pass takes a little
    True
    """
    from scipy.ndimage import uniform_filter

    a = np.asarray(data, float)
    ok = np.isfinite(a) if sky is None else (np.isfinite(a) & np.asarray(sky, bool))
    ny, nx = a.shape
    if ny > 2 * MAX_CORRELATION_SIDE or nx > 2 * MAX_CORRELATION_SIDE:  # a central piece is enough (and quick)
        y0, x0 = max(0, ny // 2 - MAX_CORRELATION_SIDE), max(0, nx // 2 - MAX_CORRELATION_SIDE)
        sl = (slice(y0, y0 + 2 * MAX_CORRELATION_SIDE), slice(x0, x0 + 2 * MAX_CORRELATION_SIDE))
        a, ok = a[sl], ok[sl]
    if ok.sum() < 100:
        return 1.0
    filled = np.where(ok, a, float(np.median(a[ok])))
    hp = filled - uniform_filter(filled, size=9, mode="nearest")
    pair_x = ok[:, 1:] & ok[:, :-1]
    pair_y = ok[1:, :] & ok[:-1, :]
    diffs = np.concatenate([(hp[:, 1:] - hp[:, :-1])[pair_x], (hp[1:, :] - hp[:-1, :])[pair_y]])
    pix = robust_sigma(hp[ok])
    if diffs.size < 100 or not (np.isfinite(pix) and pix > 0):
        return 1.0
    rho = 1.0 - robust_sigma(diffs) ** 2 / (2.0 * pix * pix)
    if not rho > 0.05:
        return 1.0
    s = np.sqrt(-1.0 / (4.0 * np.log(min(rho, 0.99))))
    return float(max(1.0, 2.0 * np.sqrt(np.pi) * s))
