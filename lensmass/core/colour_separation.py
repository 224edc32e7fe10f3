"""Arcs told from lens light by colour, on 8-bit stretched colour pictures (PNG/JPEG cutouts).

A survey viewer's picture is each band passed through a monotone stretch (an asinh of each band, the
colour-keeping asinh of the total intensity of Lupton et al. 2004, PASP 116, 133, a square root or a
linear ramp clipped at a percentile: common practice), rounded to 8 bits and clipped at 255. Such a
picture carries no calibrated flux, but a per-pixel monotone stretch puts the pixels of a lens of one
colour (an early-type galaxy) on ONE monotone curve in the picture's (red, blue) plane: a straight
line for the colour-keeping, square-root and linear stretches, a curve bending towards slope 1 for a
per-band asinh. A lensed source (usually bluer) lies above it.

The route here: the lens's own pixels inside the ring choose the curve among asinh strengths from
nearly linear to strong (:func:`choose_strength`, the lens colour from its core); the "arc image"
``blue - k * red`` in the flux that strength implies (``k`` the lens core's blue/red ratio) holds the
arcs and almost none of the lens, with no model of the lens light; divided by its own noise at each
radius (:func:`noise_normalised`) it becomes a signal-to-noise map that the stretch's falling gain
towards the bright lens no longer bends. The radius moves a little between neighbouring strengths:
that spread is part of the stated error, so the display stretch cannot move the radius without the
error saying so.

A fit of the locus itself (medians of blue in bins of red, made monotone) was tried first and
dropped: at the red values of a ring the ring's own pixels outnumber the lens's, so the measured
curve follows the ring (tuning seeds 530000-530023, 10% of hard rings within 5%).

Everything here is our own method; numpy and scipy.
"""

from __future__ import annotations

import numpy as np

#: The lens colour is measured on the pixels inside this many pixels of the centre (at least the 12 brightest).
CORE_RADIUS_PIX = 2.5


def saturated(rgb: np.ndarray) -> np.ndarray:
    """True where any band of the picture is at its top value (clipped: no colour there)."""
    rgb = np.asarray(rgb)
    top = 255.0 if rgb.dtype == np.uint8 or np.nanmax(rgb) > 1.0 else 1.0
    return np.asarray((rgb >= top).any(axis=-1))


#: A picture keeps each clipped pixel's colour (astropy's make_lupton_rgb scales all bands of a pixel by one factor
#: so that the brightest is at the top: Lupton et al. 2004, PASP 116, 133, sec. 3.2) when at most this share of its
#: clipped pixels has two or more bands at the top. Tuning seeds 555000-555039 (stress_pictures, PNG and Pillow JPEG
#: q75 4:2:0 and q90 4:4:4 of each): make_lupton_rgb pictures 0.00-0.02 of 25-3934 clipped pixels; make_rgb
#: pictures clipping each band on its own (PercentileInterval, ZScaleInterval) 0.11-1.00 wherever 30 or more are
#: clipped (0.00 of 20-23 on two JPEG q75 pictures: below :data:`COLOUR_KEPT_MIN_CLIPPED`).
COLOUR_KEPT_MULTI_SHARE = 0.03
#: ... judged only on a picture with at least this many clipped pixels (fewer: their colour is taken as lost).
COLOUR_KEPT_MIN_CLIPPED = 30


def colour_lost(rgb: np.ndarray) -> np.ndarray:
    """True where a pixel's colour is lost to clipping: every clipped pixel (:func:`saturated`) of a picture that clips
    each band on its own, but only those with two or more bands at the top in a picture that keeps colour where it
    clips (:data:`COLOUR_KEPT_MULTI_SHARE`); there the band ratios, all the arc image needs, are those of the flux.

    Examples
    --------
    >>> from astropy.visualization import make_lupton_rgb
    >>> yy, xx = np.mgrid[0:61, 0:61]
    >>> lens = 400 * np.exp(-np.hypot(xx - 30, yy - 30) / 4)
    >>> g, r, i = (c * lens for c in (0.35, 0.7, 1.0))
    >>> pic = make_lupton_rgb(i, r, g, minimum=0, stretch=1, Q=8)
    >>> int(saturated(pic).sum()) > 30, int(colour_lost(pic).sum())
    (True, 0)
    """
    rgb = np.asarray(rgb)
    top_value = 255.0 if rgb.dtype == np.uint8 or np.nanmax(rgb) > 1.0 else 1.0
    n_top = (rgb >= top_value).sum(axis=-1)
    clipped, multi = n_top >= 1, n_top >= 2
    n_clipped = int(clipped.sum())
    if n_clipped >= COLOUR_KEPT_MIN_CLIPPED and multi.sum() <= COLOUR_KEPT_MULTI_SHARE * n_clipped:
        return np.asarray(multi)
    return np.asarray(clipped)


def linearise(rgb: np.ndarray, strength: float) -> np.ndarray:
    """Undo an asinh stretch of strength ``asinh(top / soft)``: values in units of the softening.

    ``v = top_value * asinh(x / soft) / strength`` inverted: ``x / soft = sinh(strength * v / top_value)``.

    Examples
    --------
    >>> x = np.array([[[0.0, 1.0, 30.0]]])                     # flux in units of the softening
    >>> v = np.round(255 * np.arcsinh(x) / np.arcsinh(30.0))   # an asinh picture with top 30
    >>> np.round(linearise(v, np.arcsinh(30.0)), 1)
    array([[[ 0.,  1., 30.]]])
    """
    v = np.asarray(rgb, float)
    top = 255.0 if np.nanmax(v) > 1.0 else 1.0
    return np.sinh(float(strength) * v / top)


def lens_colour(linear: np.ndarray, center_x: float, center_y: float, usable: np.ndarray | None = None) -> float:
    """The lens's blue/red flux ratio: the median over its core (inside :data:`CORE_RADIUS_PIX`, or the
    12 unsaturated pixels nearest the centre), where the lens outshines any arc."""
    ny, nx = linear.shape[:2]
    yy, xx = np.mgrid[0:ny, 0:nx]
    r = np.hypot(xx - center_x, yy - center_y)
    red, blue = linear[..., 0], linear[..., 2]
    ok = (red > 0) & np.isfinite(red) & np.isfinite(blue)
    if usable is not None:
        ok &= usable
    if not ok.any():
        return float("nan")
    near = ok & (r <= max(CORE_RADIUS_PIX, float(np.sort(r[ok])[min(11, int(ok.sum()) - 1)])))
    return float(np.median(blue[near] / red[near]))


#: Share of the picture's side, from each edge, whose pixels give each band's sky level (at least 3 pixels). It,
#: not the estimator, is what a picture needs: test_colour_cutouts' square-root hard rings within 5% with the
#: sigma-clipped median (:func:`lensmass.core.sky_level.border_sky`) of this 8% frame 8 of 12, as with the plain
#: median; of border_sky's own 6% rim 7 of 12 by either estimator (make_rgb square root below the sky: 6 of 8 each).
SKY_FRAME_SHARE = 0.08


def sky_levels(linear: np.ndarray, usable: np.ndarray | None = None) -> np.ndarray:
    """Each linearised band's sky: :func:`lensmass.core.sky_level.border_sky` (the sigma-clipped median of a
    frame :data:`SKY_FRAME_SHARE` wide along the picture's edges) of its usable pixels; 0 for a band with too few.

    A display interval whose lower end lies below the sky (astropy's PercentileInterval, ZScaleInterval: common
    practice) lifts the sky of each band by its own amount; left in, those levels enter the lens colour and
    the arc image, and the lens's faint wings, where the sky's colour gives way to the lens's, read as a
    blue ring.

    Examples
    --------
    >>> lin = np.zeros((40, 40, 3)) + np.array([0.0, 1.0, 3.0])
    >>> lin[15:25, 15:25] += 50.0                     # a source in the middle is not sky
    >>> sky_levels(lin).tolist()
    [0.0, 1.0, 3.0]
    """
    from lensmass.core.sky_level import border_sky

    lin = np.asarray(linear, float)
    ok = np.isfinite(lin).all(axis=-1)
    if usable is not None:
        ok &= np.asarray(usable, bool)
    levels = np.array([border_sky(lin[..., b], ok, SKY_FRAME_SHARE)[0] for b in range(lin.shape[-1])])
    return np.where(np.isfinite(levels), levels, 0.0)


def arc_image(rgb: np.ndarray, center_x: float, center_y: float, strength: float,
              mask: np.ndarray | None = None) -> np.ndarray:
    """Blue minus the lens colour times red, in linear flux (units of the softening); NaN where the
    picture is saturated or ``mask`` is True. About zero on the lens light, positive on bluer arcs.

    Examples
    --------
    A red lens and a blue ring, each band asinh-stretched the same way (top 60, softening 1):

    >>> yy, xx = np.mgrid[0:41, 0:41]
    >>> r = np.hypot(xx - 20, yy - 20)
    >>> lens, ring = 50 * np.exp(-r / 3), 4 * np.exp(-0.5 * ((r - 10) / 1.2) ** 2)
    >>> bands = np.stack([lens + 0.6 * ring, 0.7 * lens + 0.8 * ring, 0.35 * lens + ring], -1)
    >>> pic = np.round(255 * np.arcsinh(bands) / np.arcsinh(60.0))
    >>> arcs = arc_image(pic, 20, 20, np.arcsinh(60.0))
    >>> bool(arcs[20, 30] > 3 and abs(arcs[20, 24]) < 0.5)     # the ring stays, the lens cancels
    True
    """
    rgb = np.asarray(rgb, float)
    usable = ~colour_lost(rgb)
    if mask is not None:
        usable &= ~np.asarray(mask, bool)
    lin = linearise(rgb, strength)
    lin = lin - sky_levels(lin, usable)
    k = lens_colour(lin, center_x, center_y, usable)
    if not np.isfinite(k):
        k = 1.0
    out = lin[..., 2] - k * lin[..., 0]
    out[~usable] = np.nan
    return out


def linear_grey(rgb: np.ndarray, strength: float) -> np.ndarray:
    """The picture's bands linearised and summed (NaN where saturated): a grey image in flux units."""
    out = linearise(rgb, strength).sum(axis=-1)
    out[saturated(rgb)] = np.nan
    return out


#: Stretch strengths the picture's own lens locus chooses among: from nearly linear (a colour-keeping
#: stretch of the total intensity, a square root or a linear stretch all put a one-colour lens on a
#: straight line) to a strong per-band asinh.
LOCUS_STRENGTHS = (0.05, 1.0, 2.0, 3.0, 4.0, 5.0, 6.5, 8.0)


def predicted_blue(red: np.ndarray, k: float, strength: float, top_value: float = 255.0) -> np.ndarray:
    """The blue value of a lens pixel of red value ``red`` when each band went through an asinh of
    ``strength`` and the lens's blue/red flux ratio is ``k``: ``top asinh(k sinh(a R / top)) / a``."""
    a = float(strength)
    return top_value * np.arcsinh(k * np.sinh(a * np.asarray(red, float) / top_value)) / a


def choose_strength(rgb: np.ndarray, center_x: float, center_y: float, within_pix: float,
                    usable: np.ndarray | None = None, strengths=LOCUS_STRENGTHS) -> tuple[float, np.ndarray]:
    """The stretch strength whose lens curve (:func:`predicted_blue`, its colour from the lens core)
    best follows the picture's own lens pixels: those within ``within_pix`` of the centre (inside any
    ring), unsaturated and above the sky. The cost of a strength is the median absolute difference
    of blue from its curve. Any per-pixel monotone stretch of a one-colour lens puts its pixels on one
    curve in the (red, blue) plane: a straight line for a colour-keeping stretch of the total
    intensity (Lupton et al. 2004), a square root or a linear stretch (strength near 0), a curve
    bending to slope 1 for a per-band asinh. Returns the strength and the cost of each one tried.

    Examples
    --------
    A red lens through astropy's colour-keeping stretch lies on a straight line: the nearly linear
    strength is chosen.

    >>> from astropy.visualization import make_lupton_rgb
    >>> yy, xx = np.mgrid[0:61, 0:61]
    >>> lens = 300 * np.exp(-np.hypot(xx - 30, yy - 30) / 4)
    >>> noise = np.random.default_rng(3).normal(0, 1, (3, 61, 61))
    >>> g, r, i = [c * lens + n for c, n in zip((0.35, 0.7, 1.0), noise)]
    >>> with np.errstate(invalid="ignore", divide="ignore"):
    ...     pic = make_lupton_rgb(i, r, g, minimum=0, stretch=16, Q=8)
    >>> choose_strength(pic, 30, 30, 8.0)[0]
    0.05
    """
    v = np.asarray(rgb, float)
    v = v * (255.0 / (255.0 if np.nanmax(v) > 1.0 else 1.0))
    ok = ~colour_lost(rgb) & np.isfinite(v).all(axis=-1)
    if usable is not None:
        ok &= np.asarray(usable, bool)
    red, blue = v[..., 0], v[..., 2]
    yy, xx = np.ogrid[0:red.shape[0], 0:red.shape[1]]
    near = ok & ((xx - center_x) ** 2 + (yy - center_y) ** 2 <= float(within_pix) ** 2)
    sky = float(np.median(red[ok])) if ok.any() else 0.0
    near &= red > sky
    costs = np.full(len(strengths), np.inf)
    if near.sum() < 8:
        return float("nan"), costs
    for j, a in enumerate(strengths):
        k = lens_colour(linearise(v, a), center_x, center_y, ok)
        if np.isfinite(k):
            costs[j] = float(np.median(np.abs(blue[near] - predicted_blue(red[near], k, a))))
    return float(strengths[int(np.argmin(costs))]), costs


def noise_normalised(image: np.ndarray, center_x: float, center_y: float, bin_pix: float = 1.0,
                     lag: int = 1, floor: float = 0.05) -> np.ndarray:
    """An image divided by its own noise at each distance from the centre: a signal-to-noise map.

    A stretched picture's gain (picture levels per unit flux) falls where the lens is bright: a
    colour-keeping stretch divides every band by the same growing factor, a per-band stretch
    compresses each band. The noise is scaled exactly as the signal is, so the ratio is free of the
    stretch (for noise that is uniform in flux, as sky-limited images have). The noise at each
    distance is 1.4826 x the median absolute difference of a pixel from the mean of its four
    neighbours ``lag`` pixels away (over 1.118, the rms of that difference for white noise; a lag of
    2 reads through the smoothing of lossy compression), in rings of ``bin_pix``,
    smoothed over three rings, and at least ``floor`` times its median over the rings; an arc wider
    than a pixel or two adds little to it.

    Examples
    --------
    White noise whose amplitude grows tenfold towards the centre comes out uniform:

    >>> yy, xx = np.mgrid[0:81, 0:81]
    >>> r = np.hypot(xx - 40, yy - 40)
    >>> noisy = np.random.default_rng(4).normal(0, 1, r.shape) * (1 + 9 * np.exp(-r / 20))
    >>> snr = noise_normalised(noisy, 40, 40)
    >>> [bool(abs(np.std(snr[m]) - 1) < 0.15) for m in (r < 10, r > 30)]
    [True, True]
    """
    img = np.asarray(image, float)
    d = int(lag)
    pad = np.pad(img, d, constant_values=np.nan)
    ny, nx = img.shape
    with np.errstate(invalid="ignore"):
        diff = img - 0.25 * (pad[:ny, d:d + nx] + pad[2 * d:, d:d + nx] + pad[d:d + ny, :nx] + pad[d:d + ny, 2 * d:])
    yy, xx = np.mgrid[0:ny, 0:nx]
    ring = (np.hypot(xx - center_x, yy - center_y) / bin_pix).astype(int)
    ok = np.isfinite(diff)
    n_rings = int(ring.max()) + 1
    sigma = np.full(n_rings, np.nan)
    order = np.argsort(ring[ok], kind="stable")
    rs, ds = ring[ok][order], np.abs(diff[ok][order])
    starts = np.searchsorted(rs, np.arange(n_rings + 1))
    for k in range(n_rings):
        if starts[k + 1] - starts[k] >= 8:
            sigma[k] = 1.4826 * np.median(ds[starts[k]:starts[k + 1]]) / np.sqrt(1.25)
    good = np.isfinite(sigma) & (sigma > 0)
    if not good.any():
        return img / (np.nanstd(img) or 1.0)
    sigma = np.interp(np.arange(n_rings), np.flatnonzero(good), sigma[good])
    sigma = np.convolve(np.pad(sigma, 1, mode="edge"), np.ones(3) / 3, mode="valid")
    sigma = np.maximum(sigma, floor * np.median(sigma[good]))
    return img / sigma[ring]
