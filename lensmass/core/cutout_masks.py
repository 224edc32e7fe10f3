"""What else is in a lens cutout: segmentation, stars, neighbours, the lens centre, and a mask.

Method (our own, on photutils segmentation and deblending):

1. The image, smoothed by a Gaussian of about one pixel, is segmented at
   :data:`THRESHOLD_SIGMA` times the pixel noise (photutils ``detect_sources``) and blended
   objects are split at their saddles (photutils ``deblend_sources``). When the object over the cutout
   centre peaks far from it (a bright star's wings or a sky left over joined the lens to a brighter
   neighbour), the cutout is segmented again above its local background (photutils ``Background2D``).
2. Each object is described by its peak signal-to-noise, the flux fraction inside its own
   half-maximum contour, and the elongation and orientation of its second moments.
   A star is PSF-like: a round object whose half-maximum contour holds a large share of its
   light (a Gaussian PSF holds 50%, a Moffat PSF of index 2.5-4.5 holds 34-42%; a blurred
   de Vaucouleurs galaxy much less; common practice: stars are the most concentrated objects).
3. The lens is the non-star object of good signal nearest the cutout centre (or the one at the
   user's centre); the hint says when another galaxy is about as close and as bright. When none lies
   near the centre, the segment over the centre is placed at its own light peak there (a lens on a
   brighter companion's wing, too faint a share of the blend to be deblended).
4. Everything that is neither the lens nor an arc is masked, grown by about its own
   half-maximum size: stars, neighbours, field galaxies. An arc is an object elongated
   tangentially about the lens centre (major axis within :data:`ARC_ANGLE_DEG` of the
   tangent, elongation at least :data:`ARC_ELONGATION`); in a colour image also any object
   bluer than the lens. A piece deblended from the lens's own blend is masked only when it stands out
   as a neighbour: far above its saddle, or round and not drawn out along the tangent, and alone at
   its distance from the centre (:func:`_bright_compact_neighbour`).
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np
from astropy.utils.exceptions import AstropyWarning
from scipy.ndimage import binary_dilation, gaussian_filter

from lensmass.core.cutout_cleaning import SATURATED_MIN_PIXELS, saturated_pixels
from lensmass.core.errors import LensInputError
from lensmass.core.peak_finding import local_peaks
from lensmass.core.point_sources import steep_as_point_source
from lensmass.core.segment_geometry import moment_shape, saddle_level, touching_labels

#: Segmentation threshold in units of the pixel noise (on the lightly smoothed image).
THRESHOLD_SIGMA = 3.0
#: Objects whose peak is below this many sigma are noise or faint arcs: never masked.
MIN_PEAK_SNR = 3.0
#: Only objects brighter than this (peak, in sigma) and than this fraction of the lens peak are masked.
MASK_MIN_PEAK_SNR = 15.0
MASK_MIN_LENS_RATIO = 0.05
#: photutils deblending contrast: a component must hold this fraction of its blend's flux to be split
#: off (lower values cut a lens galaxy and its ring into pieces that look like stars).
DEBLEND_CONTRAST = 0.05
#: Smallest object, pixels.
MIN_PIXELS = 6
#: Flux fraction inside the half-maximum contour above which a round object is PSF-like (a star).
STAR_HALFMAX_FRACTION = 0.33
#: A star touching other segments must peak this many times above the brightest of them.
STAR_BLEND_PEAK_RATIO = 3.0
#: A PSF-like object this round is a star even where it touches other segments.
STAR_ROUND_ELONGATION = 1.2
#: Largest elongation (a/b) of a star.
STAR_MAX_ELONGATION = 1.4
#: An object elongated at least this much, with its major axis within ARC_ANGLE_DEG of the tangent, is an arc.
ARC_ELONGATION = 1.6
ARC_ANGLE_DEG = 30.0
#: A piece of the lens's blend standing this many sigma above its saddle (on the 1-pixel-smoothed image),
#: not elongated along the tangent, is a neighbour and masked: generated arcs peak at 4-20 sigma a
#: pixel (less once smoothed), the compact neighbours at 1.3-1.8 theta_E that the finder took for the
#: ring stood 40-90 sigma up (calibration seeds 500000-500719).
NEIGHBOUR_CONTRAST_SNR = 25.0
#: ... or a round piece (elongation at most this, :data:`STAR_MAX_ELONGATION`: no arc drawn out along the ring)
#: standing at least :data:`ROUND_NEIGHBOUR_CONTRAST_SNR` above its saddle: a compact neighbour sitting on the lens's
#: and the ring's light stands only 5-20 sigma above the saddle, and unmasked its leftover light was taken for arcs
#: at 1.2-2 theta_E (h20c, stress tuning seeds 630000-631049, ring kinds: 5 of the 38 hard-ring misses of masses
#: q >= 0.6 had such a piece unmasked, 3 more a neighbour never split from the lens). Paired with main, hard rings
#: within 5%: tuning 630000-631049 182 -> 186 of 257 (+4 -0), check 634200-634899 112 -> 115 of 171 (+3 -0); our
#: generator (lensmass.core.realistic_fields) hard rings 634000-634399 +3 -0 of 400; no confident non-lens changed.
ROUND_NEIGHBOUR_ELONGATION = 1.4
ROUND_NEIGHBOUR_CONTRAST_SNR = 5.0
#: ... unless its own light (above the saddle) is drawn out along the tangent at all (elongation at least this,
#: major axis within :data:`ARC_ANGLE_DEG` of the tangent): a lensed arc on the lens's light, measured whole, can look
#: round (tests/core/test_neighbour_masks.py); the neighbours that were taken for arcs measured 1.05-1.21 above
#: their saddle, across the tangent when above 1.15.
ROUND_NEIGHBOUR_CORE_ARC_ELONGATION = 1.15
#: ... unless another object lies within this ratio of its distance from the lens centre, this far round
#: it: the bright knots of a ring (the demo group ring's images stand 40-100 sigma up).
RING_RADIUS_RATIO = 1.25
RING_APART_DEG = 60.0
#: Peak signal-to-noise an object needs to be taken as the lens.
LENS_MIN_PEAK_SNR = 8.0
#: A second galaxy this close (relative distance) and this bright makes the centre uncertain.
RIVAL_DISTANCE_RATIO = 1.5
RIVAL_PEAK_RATIO = 0.5


@dataclass
class FieldObject:
    """One segmented object. ``kind``: "lens", "star", "galaxy" (a neighbour) or "arc"."""

    label: int
    x: float
    y: float
    peak_snr: float
    flux: float
    area_pix: int
    halfmax_fraction: float
    halfmax_diameter_pix: float
    elongation: float
    angle_deg: float
    kind: str = "galaxy"  # "noise": too faint to matter; "faint": a knot left unmasked
    blue_excess: float = float("nan")
    #: How far the peak stands above its saddle with the blend it was split from (or above the
    #: segment's faintest pixel), in sigma.
    contrast_snr: float = float("nan")
    #: Its brightest pixels sit flat at the image's highest value (a saturated star; a bleed trail).
    saturated: bool = False
    #: Elongation and angle of its light above that saddle only (the light it adds to a blend: a piece of the lens's
    #: blend measured whole takes the shape of the lens's and the ring's light around it).
    core_elongation: float = float("nan")
    core_angle_deg: float = float("nan")


@dataclass
class CutoutMasks:
    """``mask`` is True for pixels to leave out (not lens, not arc); ``segments`` the label image
    (0 = sky); ``objects`` every segmented object; ``center_x``/``center_y`` the lens centre used,
    ``center_source`` how it was chosen and ``center_hint`` a sentence when it is uncertain; ``sky`` the
    sky plane the finder subtracts (0.0 when the cutout's sky was already subtracted)."""

    mask: np.ndarray
    segments: np.ndarray
    objects: list[FieldObject]
    center_x: float
    center_y: float
    center_source: str
    center_hint: str = ""
    notes: list[str] = field(default_factory=list)
    #: The sky plane taken out before segmenting (an image, or 0.0: none; :func:`lensmass.core.sky_level.sky_plane`).
    sky: np.ndarray | float = 0.0
    #: Noise of large-area means over its white-noise value (:func:`lensmass.core.sky_level.noise_correlation`).
    noise_correlation: float = 1.0

    @property
    def n_masked(self) -> int:
        return sum(o.kind in ("star", "galaxy") for o in self.objects)


def segment_objects(image: np.ndarray, noise_sigma: float, *, colour: np.ndarray | None = None,
                    smooth_pix: float = 1.0, saturated: np.ndarray | None = None,
                    local_background: bool = False) -> tuple[np.ndarray, list[FieldObject]]:
    """Segment and deblend ``image`` (photutils); return the label image and the objects.

    ``local_background``: detect above the image's smooth local background (:func:`_local_background`)
    rather than above zero.

    ``saturated`` (bool, same shape; default :func:`saturated_pixels` of ``image``) marks clipped pixels:
    an object holding :data:`~lensmass.core.cutout_cleaning.SATURATED_MIN_PIXELS` of them is a star.

    ``colour`` (optional, same shape) is a blue-excess image: positive where bluer than the
    lens; each object's mean of it is kept as ``blue_excess``.
    """
    from photutils.segmentation import deblend_sources, detect_sources

    img = np.asarray(image, float)
    finite = np.isfinite(img)
    if not finite.any():
        return np.zeros(img.shape, np.int32), []
    sm = gaussian_filter(np.where(finite, img, 0.0), smooth_pix)
    with warnings.catch_warnings():  # "no sources found" is an answer here (a blank cutout), not a warning
        warnings.simplefilter("ignore", AstropyWarning)
        threshold = THRESHOLD_SIGMA * noise_sigma / (2 * np.sqrt(np.pi) * smooth_pix)
        segm = detect_sources(sm, threshold, n_pixels=MIN_PIXELS, mask=~finite)
        if segm is None:
            return np.zeros(img.shape, np.int32), []
        if local_background:
            local = _local_background(sm, finite)
            if local is not None:
                segm = detect_sources(sm - local, threshold, n_pixels=MIN_PIXELS, mask=~finite) or segm
        if saturated is None:
            saturated = saturated_pixels(img)
        try:
            segm = deblend_sources(sm, segm, n_pixels=MIN_PIXELS, n_levels=32, contrast=DEBLEND_CONTRAST,
                                   progress_bar=False)
            # A saturated star outshines a galaxy beside it by far more than the contrast above: its blend is
            # split again at a contrast a hundred times finer, so the lens is not lost in the star's wings.
            sat_labels = [int(v) for v in np.unique(np.asarray(segm.data)[saturated]) if v]
            if sat_labels:
                segm = deblend_sources(sm, segm, n_pixels=MIN_PIXELS, labels=sat_labels, n_levels=32,
                                       contrast=DEBLEND_CONTRAST / 100, progress_bar=False)
        except (ValueError, TypeError):  # nothing to deblend
            pass
    labels = np.asarray(segm.data, np.int32)
    objects = []
    for lab, sl in zip(segm.labels, segm.slices):
        cut = labels[sl] == lab
        vals = sm[sl]
        v = np.where(cut, vals, 0.0)
        tot = float(v.sum())
        if tot <= 0:
            continue
        peak = float(v.max())
        half = cut & (vals >= 0.5 * peak)
        yy, xx = np.mgrid[sl[0], sl[1]]
        elong, ang = moment_shape(v, xx, yy)
        iy, ix = np.unravel_index(int(np.argmax(v)), v.shape)
        be = float(np.nanmean(colour[sl][cut])) if colour is not None else float("nan")
        base = saddle_level(labels, sm, sl, lab)
        core_elong, core_ang = moment_shape(np.where(cut, vals - base, 0.0), xx, yy)
        flat_top = int(np.count_nonzero(saturated[sl][cut])) >= SATURATED_MIN_PIXELS
        objects.append(FieldObject(int(lab), float(ix + sl[1].start), float(iy + sl[0].start), peak / noise_sigma, tot,
                                   int(cut.sum()), float(np.where(half, vals, 0).sum() / tot),
                                   float(2 * np.sqrt(half.sum() / np.pi)), elong, ang, blue_excess=be,
                                   contrast_snr=(peak - base) / noise_sigma, saturated=flat_top,
                                   core_elongation=core_elong, core_angle_deg=core_ang))
    peaks = {o.label: o.peak_snr for o in objects}
    for o in objects:
        if o.peak_snr < MIN_PEAK_SNR:
            o.kind = "noise"
        elif o.saturated:  # a flat top at the image's highest value: a saturated star, its bleed trail with it
            o.kind = "star"
        elif o.halfmax_fraction >= STAR_HALFMAX_FRACTION and o.elongation <= STAR_MAX_ELONGATION and o.peak_snr >= 5:
            # PSF-like, and not merely the compact core of a blend it was cut from (a galaxy's core
            # deblended from its ring holds much of its segment's light inside its half maximum too).
            # A very round one is a star even in a blend (a ring's clumps are drawn out along it).
            rivals = [peaks.get(lab, 0.0) for lab in touching_labels(labels, o.label)]
            if (not rivals or o.peak_snr >= STAR_BLEND_PEAK_RATIO * max(rivals)
                    or o.elongation <= STAR_ROUND_ELONGATION):
                o.kind = "star"
        elif (o.elongation <= STAR_ROUND_ELONGATION and o.peak_snr >= MASK_MIN_PEAK_SNR and _far_from_centre(o, img.shape)
              and steep_as_point_source(sm, o.x, o.y, o.halfmax_diameter_pix, o.peak_snr * noise_sigma,
                                        o.halfmax_fraction)):
            o.kind = "star"  # a round source as steep as a point source under a halo PSF (lensmass.core.point_sources)
    return labels, objects


def _local_background(sm: np.ndarray, finite: np.ndarray) -> np.ndarray | None:
    """The smooth background of ``sm`` on boxes of an eighth of the cutout (photutils Background2D: sigma-clipped
    medians, median-filtered over 3 x 3 boxes; common practice of source extraction), or None when it cannot be had."""
    from photutils.background import Background2D

    box = max(8, min(sm.shape) // 8)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AstropyWarning)
            return np.asarray(Background2D(sm, box, filter_size=3, mask=~finite).background, float)
    except ValueError:  # too few unmasked pixels in the boxes
        return None


def _lens_reach(shape: tuple[int, int]) -> float:
    """How far from the cutout centre (pixels) the lens is looked for first."""
    return max(6.0, 0.15 * min(shape))


def _far_from_centre(o: FieldObject, shape: tuple[int, int]) -> bool:
    """``o`` peaks farther from the cutout centre than a lens is looked for first (:func:`_lens_reach`)."""
    ny, nx = shape
    return bool(np.hypot(o.x - (nx - 1) / 2, o.y - (ny - 1) / 2) > _lens_reach(shape))


def _centre_swallowed(lens: FieldObject, labels: np.ndarray) -> bool:
    """The lens object covers the cutout centre but peaks farther from it than a lens may lie."""
    ny, nx = labels.shape
    c0x, c0y = (nx - 1) / 2, (ny - 1) / 2
    near = _lens_reach(labels.shape)
    return (int(labels[int(round(c0y)), int(round(c0x))]) == lens.label
            and bool(np.hypot(lens.x - c0x, lens.y - c0y) > near))


def _tangential(o: FieldObject, cx: float, cy: float) -> bool:
    radial = np.degrees(np.arctan2(o.y - cy, o.x - cx))
    diff = abs(((o.angle_deg - radial - 90.0) + 90.0) % 180.0 - 90.0)
    return o.elongation >= ARC_ELONGATION and diff <= ARC_ANGLE_DEG


def _core_tangential(o: FieldObject, cx: float, cy: float) -> bool:
    """The light ``o`` adds above its saddle is drawn out along the tangent about (cx, cy)
    (:data:`ROUND_NEIGHBOUR_CORE_ARC_ELONGATION`, :data:`ARC_ANGLE_DEG`)."""
    if not np.isfinite(o.core_elongation):
        return False
    radial = np.degrees(np.arctan2(o.y - cy, o.x - cx))
    diff = abs(((o.core_angle_deg - radial - 90.0) + 90.0) % 180.0 - 90.0)
    return o.core_elongation >= ROUND_NEIGHBOUR_CORE_ARC_ELONGATION and diff <= ARC_ANGLE_DEG


def _bright_compact_neighbour(o: FieldObject, objects: list[FieldObject], lens: FieldObject, cx: float,
                              cy: float) -> bool:
    """A piece of the lens's blend that stands :data:`NEIGHBOUR_CONTRAST_SNR` above its saddle (or, round as a
    galaxy and with its own light not drawn out along the tangent, :data:`ROUND_NEIGHBOUR_CONTRAST_SNR`), is not
    drawn out along the tangent and is alone at its distance from the centre: a neighbouring galaxy on
    the lens's light. The images of a lensed source come several to a radius (another piece within
    :data:`RING_RADIUS_RATIO` of its distance, at least :data:`RING_APART_DEG` round the centre), so
    such pieces are kept as the ring."""
    standing = o.contrast_snr >= NEIGHBOUR_CONTRAST_SNR or (o.elongation <= ROUND_NEIGHBOUR_ELONGATION
                                                            and o.contrast_snr >= ROUND_NEIGHBOUR_CONTRAST_SNR
                                                            and not _core_tangential(o, cx, cy))
    if not (standing and not _tangential(o, cx, cy)):
        return False
    r0, a0 = np.hypot(o.x - cx, o.y - cy), np.arctan2(o.y - cy, o.x - cx)
    for p in objects:
        if p is o or p is lens or p.peak_snr < MIN_PEAK_SNR or p.kind == "star":
            continue
        r1, a1 = np.hypot(p.x - cx, p.y - cy), np.arctan2(p.y - cy, p.x - cx)
        apart = abs((a1 - a0 + np.pi) % (2 * np.pi) - np.pi)
        if 1 / RING_RADIUS_RATIO <= r1 / max(r0, 1e-9) <= RING_RADIUS_RATIO and apart >= np.radians(RING_APART_DEG):
            return False
    return True


def _seat_on_central_peak(image: np.ndarray, objects: list[FieldObject], labels: np.ndarray, noise_sigma: float,
                          smooth_pix: float = 1.0) -> FieldObject | None:
    """The segment over the cutout centre, moved to its own light peak near the centre when its brightest pixel lies
    farther than :func:`_lens_reach` (a lens blended with a brighter companion, star or hot pixel that deblending did
    not split off keeps that object's peak as its position); None when it has no local maximum of
    :data:`LENS_MIN_PEAK_SNR` within reach. A galaxy's light peaks at its centre (common practice: cutouts are
    centred on the lens), so a peak of the segment near the cutout centre is the lens's own."""
    ny, nx = labels.shape
    c0x, c0y = (nx - 1) / 2, (ny - 1) / 2
    lab = int(labels[int(round(c0y)), int(round(c0x))])
    obj = next((o for o in objects if o.label == lab), None) if lab else None
    if obj is None or not _far_from_centre(obj, labels.shape):
        return None
    near = _lens_reach(labels.shape)
    sm = gaussian_filter(np.where(np.isfinite(image), image, 0.0), smooth_pix)
    yy, xx = np.mgrid[0:ny, 0:nx]
    inside = (labels == lab) & (np.hypot(xx - c0x, yy - c0y) <= near - 1)
    peak = local_peaks(sm, threshold=LENS_MIN_PEAK_SNR * noise_sigma, radius_pix=1, max_peaks=1, valid=inside)
    if not len(peak):
        return None
    obj.x, obj.y, obj.peak_snr = float(peak[0, 0]), float(peak[0, 1]), float(peak[0, 2] / noise_sigma)
    return obj


def choose_lens(objects: list[FieldObject], shape: tuple[int, int], labels: np.ndarray,
                center: tuple[float, float] | None) -> tuple[FieldObject | None, str, str]:
    """The lens object, how it was chosen, and a hint when the choice is uncertain."""
    ny, nx = shape
    if center is not None:
        ix = int(np.clip(round(center[0]), 0, nx - 1))
        iy = int(np.clip(round(center[1]), 0, ny - 1))
        lab = int(labels[iy, ix])
        lens = next((o for o in objects if o.label == lab), None)
        return lens, "given", ""
    c0x, c0y = (nx - 1) / 2, (ny - 1) / 2
    near = _lens_reach(shape)
    bright = [o for o in objects if o.peak_snr >= LENS_MIN_PEAK_SNR]
    cands = [o for o in bright if o.kind != "star" and np.hypot(o.x - c0x, o.y - c0y) <= near]
    if not cands:
        # No galaxy right at the centre. A star-like object there is most likely the lens's own core
        # (a cuspy galaxy deblended from its ring looks compact); failing that, galaxies farther out.
        central = [o for o in bright if np.hypot(o.x - c0x, o.y - c0y) <= near]
        cands = central or [o for o in bright if o.kind != "star" and np.hypot(o.x - c0x, o.y - c0y) <= 2 * near]
        cands = cands or bright
    if not cands:
        return None, "no galaxy above the noise: the cutout centre", (
            "No galaxy stands out near the cutout centre; give the lens centre in pixels (`center`) if there is one.")
    dist = np.array([np.hypot(o.x - c0x, o.y - c0y) for o in cands])
    order = np.argsort(dist)
    lens = cands[int(order[0])]
    # A star-like object much nearer the centre and part of the same blend is the lens's own core
    # (a cuspy galaxy deblended from its ring or arcs looks compact).
    for o in bright:
        d = np.hypot(o.x - c0x, o.y - c0y)
        if (o.kind == "star" and d < 0.5 * dist[order[0]] and d <= near
                and lens.label in touching_labels(labels, o.label)):
            lens, dist, order, cands = o, np.array([d]), np.array([0]), [o]
            return lens, "the compact light peak nearest the cutout centre (the core of the lens's blend)", ""
    how = "the compact light peak nearest the cutout centre that is not a star"
    hint = ""
    if lens.kind == "star":
        how = "the compact light peak nearest the cutout centre (compact enough to be a star)"
        hint = ("The object at the cutout centre is as compact as a star; it was taken as the lens: give the lens "
                "centre in pixels (`center`) if it is elsewhere.")
    elif len(order) > 1:
        rival = cands[int(order[1])]
        d0, d1 = dist[order[0]], dist[order[1]]
        if d1 <= RIVAL_DISTANCE_RATIO * max(d0, 3.0) and rival.peak_snr >= RIVAL_PEAK_RATIO * lens.peak_snr:
            hint = (f"Two galaxies are about equally near the cutout centre, at ({lens.x:.1f}, {lens.y:.1f}) and "
                    f"({rival.x:.1f}, {rival.y:.1f}); the first was taken as the lens: give the lens centre (`center`) if it is the other.")
    if not hint and dist[order[0]] > 0.2 * min(nx, ny):
        hint = (f"The lens was taken {dist[order[0]]:.0f} pixels from the cutout centre; give the lens centre "
                "in pixels (`center`) if the lens is elsewhere.")
    return lens, how, hint


def refine_peak(image: np.ndarray, x: float, y: float, smooth_pix: float = 1.5,
                reach_pix: int = 8) -> tuple[float, float]:
    """Sub-pixel light peak near (x, y): the 5 x 5 centroid of the smoothed image around its maximum
    within ``reach_pix`` pixels (NaN pixels, e.g. other objects, take the box's median)."""
    img = np.asarray(image, float)
    ny, nx = img.shape
    ix, iy = int(round(x)), int(round(y))
    x0, x1, y0, y1 = max(0, ix - reach_pix), min(nx, ix + reach_pix + 1), max(0, iy - reach_pix), min(ny, iy + reach_pix + 1)
    cut = img[y0:y1, x0:x1]
    sm = gaussian_filter(np.where(np.isfinite(cut), cut, np.nanmedian(cut)), smooth_pix)
    jy, jx = np.unravel_index(int(np.argmax(sm)), sm.shape)
    a0, a1, b0, b1 = max(0, jx - 2), min(sm.shape[1], jx + 3), max(0, jy - 2), min(sm.shape[0], jy + 3)
    win = sm[b0:b1, a0:a1]
    w = np.clip(win - win.min(), 0, None)
    if w.sum() <= 0:
        return float(x0 + jx), float(y0 + jy)
    gy, gx = np.mgrid[b0:b1, a0:a1]
    return float((w * gx).sum() / w.sum() + x0), float((w * gy).sum() / w.sum() + y0)


def cutout_masks(image: np.ndarray, noise_sigma: float, *, center: tuple[float, float] | None = None,
                 colour: np.ndarray | None = None, extra_mask: np.ndarray | None = None,
                 saturated: np.ndarray | None = None) -> CutoutMasks:
    """Segment the cutout, find the lens, and mask everything that is neither lens nor arc.

    Parameters
    ----------
    image : 2-D array
        The cutout (NaN = masked).
    noise_sigma : float
        Pixel noise.
    center : (x, y), optional
        The user's lens centre (0-based column, row); default chosen as described above.
    colour : 2-D array, optional
        Blue-excess image (positive = bluer than the lens): objects bluer than the lens are kept as arcs.
    extra_mask : bool array, optional
        Pixels the user masked by hand (added to the mask).
    saturated : bool array, optional
        Clipped pixels (default :func:`saturated_pixels` of ``image``): their objects are masked as stars.

    Examples
    --------
    >>> yy, xx = np.mgrid[0:64, 0:64]
    >>> img = 100 * np.exp(-np.hypot(xx - 31, yy - 32) / 3) + 400 * np.exp(-np.hypot(xx - 52, yy - 12) ** 2 / 4)
    >>> m = cutout_masks(img + np.random.default_rng(0).normal(0, 1, img.shape), 1.0)
    >>> round(m.center_x), round(m.center_y), bool(m.mask[12, 52]), bool(m.mask[32, 31])
    (31, 32, True, False)
    """
    img = np.asarray(image, float)
    if img.ndim != 2:
        raise LensInputError("Masks need a 2-D image.")
    labels, objects = segment_objects(img, noise_sigma, colour=colour, saturated=saturated)
    lens, how, hint = choose_lens(objects, img.shape, labels, center)
    if center is None and lens is not None and _centre_swallowed(lens, labels):
        # The segment over the cutout centre peaks far from it: a pedestal (a bright star's wings, a sky left
        # over) joined the lens to a brighter neighbour. Segment again above the local background.
        labels2, objects2 = segment_objects(img, noise_sigma, colour=colour, saturated=saturated,
                                            local_background=True)
        lens2, how2, hint2 = choose_lens(objects2, img.shape, labels2, center)
        if lens2 is not None and not _centre_swallowed(lens2, labels2):
            labels, objects, lens, how, hint = labels2, objects2, lens2, how2, hint2
    seated = None
    if center is None and (lens is None or _far_from_centre(lens, labels.shape)):
        # Still no lens near the centre: the segment over it keeps a far, brighter peak as its position.
        seated = _seat_on_central_peak(img, objects, labels, noise_sigma)
        if seated is not None:
            lens, how, hint = choose_lens(objects, img.shape, labels, center)
    if center is not None:
        cx, cy = float(center[0]), float(center[1])
    elif lens is not None:
        # Only the lens's own segment (and the sky) counts: a brighter neighbour or star a few pixels
        # away must not pull the centre (calibration seeds 500000-500719: 3 of 86 hard rings lost it so).
        own = np.where((labels == lens.label) | (labels == 0), img, np.nan)
        # A lens seated on its central peak is refined there, not drawn back to its segment's far brightest pixel.
        cx, cy = refine_peak(own, lens.x, lens.y, reach_pix=2 if lens is seated else 8)
    else:
        cx, cy = (img.shape[1] - 1) / 2, (img.shape[0] - 1) / 2
    lens_blue = lens.blue_excess if lens is not None else float("nan")
    touching = set()
    if lens is not None:
        around = binary_dilation(labels == lens.label, iterations=2)
        touching = set(np.unique(labels[around]).tolist()) - {0, lens.label}
    mask = np.zeros(img.shape, bool)
    for o in objects:
        if lens is not None and o.label == lens.label:
            o.kind = "lens"
            continue
        if (o.label in touching and o.peak_snr < lens.peak_snr and o.kind != "star"
                and not _bright_compact_neighbour(o, objects, lens, cx, cy)):
            # A piece split off the lens's own blend and fainter than its core: as likely a piece of
            # the ring or an arc as a neighbour, so it is not masked.
            o.kind = "faint" if o.kind in ("star", "galaxy") else o.kind
            continue
        if o.kind == "noise" or o.peak_snr < MASK_MIN_PEAK_SNR or (lens is not None and o.peak_snr < MASK_MIN_LENS_RATIO
                                                                  * lens.peak_snr):
            # Faint knots are left alone: the clumps of a ring or an arc look just like faint stars
            # and small galaxies, and a faint neighbour hardly moves the ring.
            if o.kind != "noise":
                o.kind = "faint"
            continue
        if o.kind != "star":
            bluer = colour is not None and np.isfinite(o.blue_excess) and o.blue_excess > max(lens_blue, 0) + 0.5
            o.kind = "arc" if (_tangential(o, cx, cy) or bluer) else "galaxy"
        if o.kind in ("star", "galaxy"):
            grow = int(np.clip(round(o.halfmax_diameter_pix), 2, 12))
            sel = labels == o.label
            mask |= binary_dilation(sel, iterations=grow)
    if lens is not None:
        mask &= labels != lens.label  # never mask the lens itself
    if extra_mask is not None:
        mask |= np.asarray(extra_mask, bool)
    notes = []
    n_star = sum(o.kind == "star" for o in objects)
    n_gal = sum(o.kind == "galaxy" for o in objects)
    if n_star or n_gal:
        notes.append(f"Masked {n_star} star(s) and {n_gal} neighbouring galaxy(ies) (photutils segmentation and "
                     "deblending; stars by their PSF-like shape).")
    return CutoutMasks(mask, labels, objects, float(cx), float(cy), how, hint, notes)
