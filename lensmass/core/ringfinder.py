"""Automatic Einstein-ring finder on the lens-subtracted image.

Longer than 500 lines because the routes of :func:`find_ring`, the two-pass search, the profile search and
the measurement of its candidates are one search sharing its state; its parts live in their own modules:
:mod:`~lensmass.core.ring_result` (the answer), :mod:`~lensmass.core.ring_sectors` (the sector grid and profiles),
:mod:`~lensmass.core.ring_confidence` (calibrated errors, the confident rule), :mod:`~lensmass.core.ring_pictures`
(8-bit pictures), :mod:`~lensmass.core.ring_shapes` (elliptical rings, lone arcs, arc pairs) and
:mod:`~lensmass.core.cutout_masks` (the masks). The names this module has always offered are re-exported.

Method (our own):

0. Masks and centre (:mod:`lensmass.core.cutout_masks`): the cutout is segmented and
   deblended; stars (PSF-like) and neighbouring galaxies (not tangentially elongated) are
   masked in the lens-light fit and in the search, with any pixels painted by hand. The
   centre is the user's, or the compact non-star light peak nearest the cutout centre; how it
   was chosen is always reported (``center_source``), with a hint when it is uncertain.
1. Lens light: an elliptical Sersic fit (:mod:`lensmass.core.lenslight`) is subtracted. An 8-bit
   colour picture is searched instead on its arc images (:mod:`lensmass.core.colour_separation`:
   blue minus the lens core's colour times red, the stretch read from the lens's own pixels, in units
   of its own noise at each radius),
   where the lens light cancels by its colour, with no model of it.
2. The residual around the centre is binned in radius (half-pixel bins) and in
   ``n_sectors`` equal sectors of azimuth. Three azimuthal profiles are searched: the mean of
   the sector means, with the larger of the pixel-noise error and the scatter between
   sectors over sqrt(n_sectors); the median of the sector means with its pixel-noise error
   (x 1.2533, the efficiency of a median of Gaussian values); and the mean of the brightest
   quarter of the sectors (arcs, which hardly move the other two). The errors include a 1%
   systematic floor on the lens-light model, so a bright core's misfit is no ring.
3. Candidates are the peaks of those profiles that stand out from their surroundings by 3
   sigma (prominence; a galaxy core's residual falling steadily outwards is not a ring).
   Up to :data:`MAX_CANDIDATES` are measured (not only the strongest: a star's or a
   neighbour's residual can outshine the ring, and the median profile's peaks are candidates
   too, as it does not see such a residual); the one seen in the most directions, weighted
   by its significance up to the confident level, is kept (:func:`~lensmass.core.ring_shapes._strength`). Two arcs on opposite sides at different radii give theta_E as
   their mean radius; a lone arc on one side gives theta_E by the one lone-arc rule (:mod:`lensmass.core.lone_arc`). The lens
   light is refitted with the ring masked and the search repeated (the second answer replaces the
   first when it finds the ring at the same radius; on the FITS route, for a ring, only within 2% of it, a larger
   move being the refit's misfit merged with the ring, unless the first fit spread over the ring). A partial ring
   is then searched again in elliptical annuli of the shape that makes it sharpest (:mod:`lensmass.core.elliptical_annuli`,
   radius sqrt(q x'^2 + y'^2 / q), the SIE's intermediate-axis theta_E), kept when it ranks higher, and
   from half its radius outwards in the ring shapes of elongated SIEs across the light's major axis
   (:func:`~lensmass.core.ring_shapes._across_light_pass`), which collect a ring the circles see in pieces.
4. In each sector where the ring is detected (3 sigma), the ridge radius is measured on the
   profile weighted by sqrt(r) (undoing the inward shift of a blurred ring, see
   :mod:`lensmass.core.ridge`), for a ring only inside its half-maximum band (a brighter peak farther out in
   that sector, another object's leftover light, is no ridge point: :func:`_ring_ridge`); those ridge points
   (``points_x``/``points_y``, usable by a lens-model fit) are fitted by an ellipse about the centre
   (theta_E = sqrt(a b)), or a circle (arcs seen in under half the directions only when their directions do not pose an
   ellipse, or pose one flatter than a lens makes: :mod:`lensmass.core.arc_directions`); a first harmonic of their radius (a source off the lens axis,
   r = theta_E + beta cos(phi - phi_beta)) is taken off them first when an F-test asks for it
   (:mod:`lensmass.core.ring_harmonics`).
5. Errors: the fit's standard error with the systematic terms of the refit and of a ring
   barely resolved from the galaxy, then the calibrated floors and terms of what the finder sees of
   :func:`~lensmass.core.ring_confidence._calibrate` (rings, single arcs) and, for 8-bit stretched pictures,
   :data:`~lensmass.core.ring_pictures.STRETCHED_SYSTEMATIC`. The answer states a 1- and a 2-sigma interval
   (``radius_lo_pix`` ... ``radius_hi2_pix``, :mod:`lensmass.core.ring_interval`), asymmetric for a lone or unpaired arc.

``score`` is the significance of the ring peak in sigma; ``coverage`` the fraction of
sectors where it is detected. ``confident`` is calibrated on generated non-lenses: see
:func:`~lensmass.core.ring_confidence._calibrate`.
"""

from __future__ import annotations

import warnings as warnings_module
from typing import Any

import numpy as np
from scipy.ndimage import gaussian_filter
from scipy.signal import find_peaks

from lensmass.core.arc_directions import ARC_ELLIPSE_MIN_AXIS_RATIO, arcs_constrain_ellipse
from lensmass.core.arcfit import fit_circle
from lensmass.core.bulge_disc import bulge_and_disc
from lensmass.core.clipped_plateau import refuse_partial_in_lossless_core, widen_near_lossy_core
from lensmass.core.companion_pass import companion_pass
from lensmass.core.core_residual import core_replaces_ring, flag_core_answer, refit_answer_kept, ring_replaces_core
from lensmass.core.elliptical_annuli import radius_along
from lensmass.core.errors import LensInputError
from lensmass.core.faint_refit import mark_refitted, refit_under_candidate
from lensmass.core.inner_neighbour import subtract_inner_neighbour, subtraction_notes
from lensmass.core.inward_ridge import left_for_core
from lensmass.core.lenslight import fit_lens_light, robust_sigma
from lensmass.core.outer_sky import outer_sky_offset
from lensmass.core.peak_extent import peak_basin
from lensmass.core.profile_plateau import plateau_score
from lensmass.core.progress import ProgressCallback, StopCallback, check_stop, report
from lensmass.core.refit_hold import arcs_hold_refit
from lensmass.core.ridge import ridge_peak
from lensmass.core.ridge_clip import clipped_ellipse_fit
from lensmass.core.ring_harmonics import offset_source_term, remove_offset_source
from lensmass.core.ring_confidence import (ACROSS_MIN_DEG, CONFIDENT_COVERAGE, CONFIDENT_MAX_OFFSET,
                                           CONFIDENT_MAX_RMS_WIDTH, CONFIDENT_MAX_THICKNESS, CONFIDENT_MAX_WIDTH_PSF,
                                           CONFIDENT_MIN_WIDTH_PSF,
                                           CONFIDENT_MIN_AXIS_RATIO, CONFIDENT_SCORE, CONFIDENT_THICK_SCORE,
                                           CORRELATED_NOISE_FACTOR, DISC_ALIGN_DEG, DISC_AXIS_RATIO, RING_COVERAGE,
                                           RING_FLOOR, SAMPLING_FWHM_PIX, SINGLE_ARC_SYSTEMATIC,
                                           UNRESOLVED_PSF_RATIO, UNRESOLVED_SYSTEMATIC, _calibrate, _flag_unresolved)
from lensmass.core.ring_pictures import (COLOUR_CORE_PIX, COLOUR_MASK_GROW_PIX, COLOUR_MASK_STRENGTH, GREY_STRENGTHS,
                                         LOSSY_ASSUMED_QUALITY, LOSSY_ERROR_SCALE, LOSSY_NOISE_FLOOR,
                                         LOSSY_NOISE_LAG_PIX, PEDESTAL_SIGMAS, PICTURE_CORE_RATIO,
                                         STRENGTH_SPREAD_SHARE, STRETCHED_SYSTEMATIC, STRETCH_DISAGREE_SHARE,
                                         STRETCH_SINGLE_SYSTEMATIC, _colour_search, _jpeg_quality, add_picture_tail,
                                         _outside_picture_core, _refuse_core_residual, _stretched_grey_search,
                                         _undo_grey_stretch, blue_excess, colour_mask_image, colour_masks,
                                         lossy_error_scale)
from lensmass.core.ring_interval import RING_TAIL_SHARE, state_interval
from lensmass.core.ring_message import CHECK_BY_EYE, STATED, close_unconfident, quote, restate, weak_opening
from lensmass.core.ring_result import RingResult, answer_noun
from lensmass.core.ring_sectors import (BIN_PIX, MASK_HALF_WIDTHS, _sector_grid, _sector_profiles, _smooth_profile,
                                        _top_sectors_profile, ring_pixels)
from lensmass.core.ring_shapes import (ELLIPSE_CANDIDATES, ELLIPSE_GAIN, ELLIPSE_MAX_COVERAGE, ELLIPSE_MAX_MOVE,
                                       ELLIPSE_MIN_RADIUS_PIX, ELLIPSE_RHO_SPAN, LONE_ARC_DIRECTEDNESS,
                                       PAIR_SYSTEMATIC, SIE_FACTOR_ERROR_SHARE, _follow_shape,
                                       _choose, _pair_of_arcs, _sie_ring_correction)
from lensmass.core.sky_level import remove_sky_pedestal

__all__ = [  # the names this module has always offered (most now live in the ring_* modules)
    "ACROSS_MIN_DEG", "BIN_PIX", "COLOUR_CORE_PIX", "COLOUR_MASK_GROW_PIX", "COLOUR_MASK_STRENGTH",
    "CONFIDENT_COVERAGE", "CONFIDENT_MAX_OFFSET", "CONFIDENT_MAX_RMS_WIDTH", "CONFIDENT_MAX_THICKNESS",
    "CONFIDENT_MAX_WIDTH_PSF", "CONFIDENT_MIN_WIDTH_PSF", "CONFIDENT_MIN_AXIS_RATIO", "CONFIDENT_SCORE",
    "CONFIDENT_THICK_SCORE",
    "CORRELATED_NOISE_FACTOR", "DEFAULT_MAX_RADIUS_PIX", "DEFAULT_MIN_RADIUS_PIX", "DISC_ALIGN_DEG", "DISC_AXIS_RATIO",
    "ELLIPSE_CANDIDATES", "ELLIPSE_GAIN", "ELLIPSE_MAX_COVERAGE", "ELLIPSE_MAX_MOVE", "ELLIPSE_MIN_RADIUS_PIX",
    "ELLIPSE_RHO_SPAN", "FIRST_PASS_SYSTEMATIC", "GREY_STRENGTHS", "LENS_MODEL_SYSTEMATIC", "LONE_ARC_DIRECTEDNESS",
    "LOSSY_ASSUMED_QUALITY", "LOSSY_ERROR_SCALE", "LOSSY_NOISE_FLOOR", "LOSSY_NOISE_LAG_PIX",
    "MASK_HALF_WIDTHS", "MAX_CANDIDATES", "MIN_COVERAGE", "MIN_PROMINENCE_SIGMA", "PAIR_SYSTEMATIC", "PEDESTAL_SIGMAS",
    "PICTURE_CORE_RATIO", "REFIT_SHIFT_SYSTEMATIC", "RING_COVERAGE", "RING_FLOOR", "RingResult", "SAMPLING_FWHM_PIX",
    "SIE_FACTOR_ERROR_SHARE", "SINGLE_ARC_SYSTEMATIC", "STRENGTH_SPREAD_SHARE", "STRETCHED_SYSTEMATIC",
    "STRETCH_DISAGREE_SHARE", "STRETCH_SINGLE_SYSTEMATIC", "UNRESOLVED_PSF_RATIO", "UNRESOLVED_SYSTEMATIC",
    "blue_excess", "colour_mask_image", "field_masks", "find_center", "find_ring", "lossy_error_scale", "ring_pixels",
]

#: Smallest fraction of sectors where a found arc is seen (3 of 24 sectors).
MIN_COVERAGE = 0.12
#: Default largest search radius in pixels.
DEFAULT_MAX_RADIUS_PIX = 300.0
DEFAULT_MIN_RADIUS_PIX = 3.0
#: Fractional accuracy assumed for the lens-light model (a systematic floor on the ring profile).
LENS_MODEL_SYSTEMATIC = 0.01
#: Share of the refit's shift of the ring radius kept as a systematic error (inject-and-recover runs:
#: what remains after the refit is up to about a third of its shift for theta_E ~ 2 FWHM, half at ~3).
REFIT_SHIFT_SYSTEMATIC = 0.5
#: Systematic fractional error of a first-pass radius the refit did not confirm (first passes came out
#: 1.5-6% too large in inject-and-recover runs).
FIRST_PASS_SYSTEMATIC = 0.05
#: A ring candidate is a peak of the azimuthal profile standing out by this many sigma (prominence).
MIN_PROMINENCE_SIGMA = 3.0
#: How many ring candidates (peaks of the azimuthal profile) are measured.
MAX_CANDIDATES = 5
#: The lens light is fitted again with two Sersic components (:func:`~lensmass.core.bulge_disc.bulge_and_disc`) when
#: the ring found on the ring-masked refit is wider than this many fitted seeing widths (FWHM): one Sersic's misfit
#: (a disc's or a PSF halo's leftover light) inside the ring merges with it and pulls its peak inward. Lensed rings
#: of the panel (benchmarks/ring_panel.py) are 0.9-2.7 seeing widths wide; stress rings measured 10-35% small,
#: 3-6 (benchmarks/stress_fields.py tuning seeds 540000-540149). It was 3.0; h26b: offering every ring the fit
#: (0.0, h25b) gained hard stress rings but the fit costs ~0.12 s CPU a call (0.11 s a stress cutout on average);
#: at 2.0 it runs on about a third of the narrower rings and kept the gains of every-ring on tuning seeds
#: 859000-859919 (436 ring-kind fields, paired with 3.0: within 5% +4 -0, hard rings +3 -0; every-ring +7 -4 and
#: +4 -1), 0.03 s CPU a stress cutout more, the speed benchmark's field unchanged (its ring 1.1 seeing widths wide);
#: check 862000-862678 (291): +4 -0, hard +2 -0; ours (bench_ring_realism 861000, 200 + 200): hard -1 of 42.
MISFIT_WIDTH_PSF = 2.0
#: The ring mask of that fit reaches at most this share of the ring's radius either side (the ring-masked refit's
#: mask, as wide as the merged ring, hid the light the second component has to follow).
MISFIT_MASK_SHARE = 0.2
#: The two-component answer replaces the ring only when it lies at least this share of the radius farther out: the
#: misfit pulls a ring inward (5-35% on the stress tuning seeds); smaller or inward moves are the second component
#: following a broad ring's own light (tests/core/test_ridge_ring.py's 0.12" ring moved 1.43" -> 1.46", truth 1.4").
#: Nor farther out than the merged ring's width: the ring was inside that peak (stress seed 570040's ring at
#: 12.3 pixels, 7.5 wide, went to 30 pixels, a neighbour's leftover light, on the two-component residual).
MISFIT_MIN_MOVE = 0.05
#: The refit (ring masked) replaces a ring only when it moves it by at most this share of its radius; a larger
#: move is its misfit (:func:`_two_pass_search`), and the FITS route keeps the first fit's ring, the move added to
#: its error (h14w). Tuning seeds: hard rings (a neighbour or a star, theta_E >= 2.5 FWHM) 570000-570169, within
#: 5% with the refit's ring / the first fit's for any first answer / for rings only: stress fields 64 / 76 / 71 of
#: 129, our generator 84 / 85 / - of 100; stress 571000-571209 (210 lenses of every kind): 43% / 42% / 45%, scatter
#: 8.1% / 8.0% / 7.0%, rings 61% / 60% / 66% of 90. Check seeds, main -> rings only: stress 575000-575509 all lenses
#: 40% -> 40% (any first answer: 37%, quads and folds lost), hard rings 57% -> 57% of 51; stress hard rings
#: 578000-578169 53% -> 53% of 129 (any first answer 57%); ours 576000-576399 54% -> 56%, 577000-577149 hard 85% -> 86%.
REFIT_MAX_MOVE = 0.02
#: A first lens-light fit with a Sersic index below this, flatter than an exponential disc (lens galaxies are n ~ 2-8,
#: discs n ~ 1: common practice), has spread its flat top over the ring, and the ring-masked refit's ring is taken
#: (:func:`_two_pass_search`): the demo ring (n 0.98) and tests/core/test_ridge_ring.py's de Vaucouleurs lenses (n
#: 0.54-0.56) had their first fit's ring 4-6% too large. The bound is the exponential's, not tuned; the first fits
#: of hard rings measured within 5% ran n 1.0-8 (tuning seeds 570000-570169 of both generators).
FIRST_FIT_MIN_SERSIC_N = 1.0


def find_center(image: np.ndarray, *, search_fraction: float = 0.25, smooth_pix: float = 2.0) -> tuple[float, float]:
    """The light peak near the image centre: brightest pixel of the smoothed image inside
    the central ``search_fraction`` of the field, refined by a 5 x 5 centroid.

    Examples
    --------
    >>> yy, xx = np.mgrid[0:50, 0:60]
    >>> img = np.exp(-((xx - 33.3) ** 2 + (yy - 21.6) ** 2) / 8.0)
    >>> x, y = find_center(img)
    >>> bool(np.hypot(x - 33.3, y - 21.6) < 0.2)  # the 5 x 5 centroid leans ~0.1 px toward the peak pixel
    True
    """
    img = np.asarray(image)
    ny, nx = img.shape
    hx, hy = max(2, int(nx * search_fraction)), max(2, int(ny * search_fraction))
    x0, x1, y0, y1 = nx // 2 - hx, nx // 2 + hx + 1, ny // 2 - hy, ny // 2 + hy + 1
    x0, y0 = max(0, x0), max(0, y0)
    pad = int(3 * smooth_pix) + 3
    ex0, ey0 = max(0, x0 - pad), max(0, y0 - pad)
    cut = np.asarray(img[ey0:min(ny, y1 + pad), ex0:min(nx, x1 + pad)], float)
    finite = np.isfinite(cut)
    if not finite.all():  # masked pixels take the median (a median of 10^6 pixels is half this function's time)
        cut = np.where(finite, cut, np.nanmedian(cut))
    sm = gaussian_filter(cut, smooth_pix)
    inner = sm[y0 - ey0:y1 - ey0, x0 - ex0:x1 - ex0]
    iy, ix = np.unravel_index(int(np.argmax(inner)), inner.shape)
    py, px = iy + y0 - ey0, ix + x0 - ex0
    win = sm[max(0, py - 2):py + 3, max(0, px - 2):px + 3]
    w = np.clip(win - win.min(), 0, None)
    gy, gx = np.mgrid[max(0, py - 2):py + 3, max(0, px - 2):px + 3][:, : win.shape[0], : win.shape[1]]
    if w.sum() > 0:
        return float((w * gx).sum() / w.sum() + ex0), float((w * gy).sum() / w.sum() + ey0)
    return float(px + ex0), float(py + ey0)


def find_ring(
    image: np.ndarray,
    center_x: float | None = None,
    center_y: float | None = None,
    *,
    subtract_lens_light: bool = True,
    residual: np.ndarray | None = None,
    min_radius_pix: float = DEFAULT_MIN_RADIUS_PIX,
    max_radius_pix: float | None = None,
    n_sectors: int = 24,
    mask: np.ndarray | None = None,
    auto_mask: bool = True,
    colour: np.ndarray | None = None,
    compressed: bool | float = False,
    stretched: bool = False,
    progress: ProgressCallback = None,
    should_stop: StopCallback = None,
) -> RingResult:
    """Find an Einstein ring (or arcs) around the lens centre.

    Parameters
    ----------
    image : 2-D array
        The image (NaN = masked).
    center_x, center_y : float, optional
        Lens centre; default the light peak near the image centre (:func:`find_center`).
    subtract_lens_light : bool
        Fit and subtract the lens light first (default). Ignored when ``residual`` is given.
    residual : 2-D array, optional
        An already lens-subtracted image to search instead.
    min_radius_pix, max_radius_pix : float
        Search annulus (default 3 pixels to min(300, distance to the nearest edge)).
    n_sectors : int
        Number of azimuthal sectors.
    mask : bool array, optional
        Pixels to leave out (True), e.g. painted by hand; added to the automatic mask.
    auto_mask : bool
        Segment the cutout and mask stars and neighbouring galaxies
        (:func:`lensmass.core.cutout_masks.cutout_masks`); the lens centre, when not given, is
        then the compact non-star light peak nearest the cutout centre.
    colour : array (ny, nx, 3), optional
        The RGB picture the image came from (8-bit stretched survey cutouts): arcs are told
        from lens light by being bluer, and the errors are widened for the stretch.
    compressed : bool or float
        The picture was stored with lossy compression (JPEG): its quality 1-100 (as
        :attr:`lensmass.io.images.LoadedImage.jpeg_quality` reads it from the file), or True when unknown
        (taken as :data:`~lensmass.core.ring_pictures.LOSSY_ASSUMED_QUALITY`). A colour picture's arc image has its noise read through
        the compression's smoothing (:data:`~lensmass.core.ring_pictures.LOSSY_NOISE_LAG_PIX`, :data:`~lensmass.core.ring_pictures.LOSSY_NOISE_FLOOR`), and the error
        is scaled by :func:`~lensmass.core.ring_pictures.lossy_error_scale` of the quality.
    stretched : bool
        ``image`` is a grey 8-bit picture (PNG/JPEG/TIFF, values 0-255 through a display stretch, not
        flux): the stretch is undone for the strengths :data:`~lensmass.core.ring_pictures.GREY_STRENGTHS`, the ring measured on
        each, their spread kept in the error; never confident.
    progress, should_stop : callables, optional
        Progress fraction 0..1 and cancellation (raises ``OperationCancelled``).

    Returns
    -------
    RingResult

    Examples
    --------
    A de Vaucouleurs lens galaxy (R_e = 8 pixels) with an Einstein ring of radius 15 pixels:

    >>> yy, xx = np.mgrid[0:81, 0:81]
    >>> r = np.hypot(xx - 40, yy - 40)
    >>> lens = np.exp(-7.67 * ((r / 8) ** 0.25 - 1))
    >>> ring = np.exp(-0.5 * ((r - 15) / 1.5) ** 2)
    >>> found = find_ring(lens + ring + np.random.default_rng(1).normal(0, 0.02, r.shape))
    >>> found.kind, found.confident, round(found.radius_pix)
    ('ring', True, 15)
    """
    img = np.asarray(image)
    if img.ndim != 2 or min(img.shape) < 8:
        raise LensInputError("The ring finder needs a 2-D image of at least 8 x 8 pixels.")
    _check_pixels(img)
    report(progress, 0.0)
    given = center_x is not None and center_y is not None
    ny, nx = img.shape
    if given:
        cx, cy = float(center_x), float(center_y)
    elif auto_mask:  # the masks choose the lens (the compact non-star peak nearest the centre): no light-peak search
        cx, cy = (nx - 1) / 2, (ny - 1) / 2
    else:
        cx, cy = find_center(img)
    if not (0 <= cx < nx and 0 <= cy < ny):
        raise LensInputError(f"The lens centre ({cx:.1f}, {cy:.1f}) is outside the {nx} x {ny} image; "
                             "give a centre inside it.")
    check_stop(should_stop)
    warnings: list[str] = []
    picture = None
    if stretched and colour is None and residual is None and subtract_lens_light:
        picture = np.asarray(img, float)
        img = _undo_grey_stretch(picture, GREY_STRENGTHS[len(GREY_STRENGTHS) // 2])
    pedestal, pedestal_note = 0.0, ""
    if residual is None:
        img, pedestal, pedestal_note = remove_sky_pedestal(img, PEDESTAL_SIGMAS)
    masks = None
    if auto_mask or mask is not None or colour is not None:
        reach = float(max_radius_pix) if max_radius_pix is not None else DEFAULT_MAX_RADIUS_PIX
        if colour is None:
            masks = _masks(img, cx, cy, given, reach, mask, colour, auto_mask, sky_fit=picture is None)
        else:
            masks = colour_masks(colour, img, _masks, cx, cy, given, reach, mask, colour, auto_mask)
        cx, cy = masks.center_x, masks.center_y
        img = np.where(masks.mask, np.nan, img - masks.sky)
        if residual is not None:
            residual = np.where(masks.mask, np.nan, residual)
    edge = min(cx, cy, nx - 1 - cx, ny - 1 - cy)
    rmax = float(max_radius_pix) if max_radius_pix is not None else float(min(DEFAULT_MAX_RADIUS_PIX, edge))
    rmax = min(rmax, float(np.hypot(nx, ny)))
    rmin = float(min_radius_pix)
    if rmax <= rmin + 4 * BIN_PIX:
        raise LensInputError("The lens centre is too close to the image edge to search for a ring; "
                             "give a centre farther from the edge or a larger search radius (`max_radius_pix`).")
    if (colour is not None or picture is not None) and residual is None and subtract_lens_light:
        rmin = _outside_picture_core(masks, cx, cy, rmin, rmax, None if colour is None else np.asarray(colour))
    if residual is not None:
        out = _search(np.asarray(residual), cx, cy, rmin, rmax, n_sectors, None, warnings, progress, should_stop,
                      elliptical=True)
    elif not subtract_lens_light:
        out = _search(img, cx, cy, rmin, rmax, n_sectors, None, warnings, progress, should_stop, elliptical=True)
    elif colour is not None:
        out = _colour_search(np.asarray(colour), img, cx, cy, rmin, rmax, n_sectors, progress, should_stop,
                             _jpeg_quality(compressed), ring_search=_search, two_pass_search=_two_pass_search,
                             masks_of=_masks)
        if _jpeg_quality(compressed) is not None:  # a ring at a clipped core's JPEG-fringed edge (clipped_plateau)
            widen_near_lossy_core(out, np.asarray(colour))
        else:  # arcs at a lossless picture's clipped core edge (clipped_plateau)
            refuse_partial_in_lossless_core(out, np.asarray(colour))
    elif picture is not None:
        out = _stretched_grey_search(picture, np.isnan(img), cx, cy, rmin, rmax, n_sectors, progress, should_stop,
                                     two_pass_search=_two_pass_search)
    else:
        out = flag_core_answer(_flag_unresolved(_two_pass_search(img, cx, cy, rmin, rmax, n_sectors, progress,
                                                                 should_stop)), rmin)
    plane = masks.sky if masks is not None and not np.isscalar(masks.sky) else None
    if out.lens_light is not None and plane is not None and np.shape(out.lens_light.model) == plane.shape:
        out.lens_light.model = out.lens_light.model + plane  # the sky plane, as the pedestal below
    if pedestal_note:
        out.warnings.insert(0, pedestal_note)
        if out.lens_light is not None:  # the light model describes the image as given: its sky included
            out.lens_light.model = out.lens_light.model + pedestal
            out.lens_light.sky += pedestal
    return _finish(out, masks, given, colour is not None or picture is not None, _jpeg_quality(compressed),
                   None if colour is None else np.asarray(colour))


def field_masks(image: np.ndarray, center: tuple[float, float] | None = None, *, picture: bool = False,
                max_radius_pix: float | None = None, colour: np.ndarray | None = None):
    """The masks and lens centre exactly as :func:`find_ring` makes them before its search (the window shows
    these): a grey 8-bit ``picture``'s stretch undone (as ``find_ring(stretched=True)``), a sky level left on
    the border subtracted, then, unless the image is an 8-bit ``picture``, blank lines, a sky plane, cosmic
    rays and saturated stars, then segmentation (:func:`lensmass.core.cutout_masks.cutout_masks`) of the image,
    or of a ``colour`` picture's linearised bands (:func:`~lensmass.core.ring_pictures.colour_mask_image`).

    Examples
    --------
    >>> yy, xx = np.mgrid[0:64, 0:64]
    >>> img = 500 + 100 * np.exp(-np.hypot(xx - 31, yy - 32) / 3) + 400 * np.exp(-np.hypot(xx - 52, yy - 12) ** 2 / 4)
    >>> m = field_masks(img + np.random.default_rng(0).normal(0, 1, img.shape))
    >>> round(m.center_x), round(m.center_y), bool(m.mask[12, 52]), bool(m.mask[32, 31])
    (31, 32, True, False)
    """
    img = np.asarray(image, float)
    _check_pixels(img)
    if picture and colour is None:
        img = _undo_grey_stretch(img, GREY_STRENGTHS[len(GREY_STRENGTHS) // 2])
    img = remove_sky_pedestal(img, PEDESTAL_SIGMAS)[0]
    ny, nx = img.shape
    given = center is not None
    cx, cy = (float(center[0]), float(center[1])) if center is not None else ((nx - 1) / 2, (ny - 1) / 2)
    reach = float(max_radius_pix) if max_radius_pix is not None else DEFAULT_MAX_RADIUS_PIX
    if colour is not None:
        return colour_masks(np.asarray(colour), img, _masks, cx, cy, given, reach, None, colour, True)
    return _masks(img, cx, cy, given, reach, None, colour, True, sky_fit=not picture)


def _check_pixels(img: np.ndarray) -> None:
    """One sentence, not a ring, for an image with nothing to measure: no finite pixel, or all of one value."""
    step = max(1, int(np.sqrt(img.size / 65536)))
    sample = img[::step, ::step]
    sample = sample[np.isfinite(sample)]
    if sample.size > 1 and sample.min() != sample.max():  # a regular sub-grid already shows two values
        return
    finite = np.isfinite(img)
    if not finite.any():
        raise LensInputError("The ring finder has nothing to measure: the image holds no usable pixel (all blank, NaN "
                             "or infinite); check the file or the image extension.")
    vals = img[finite]
    if float(np.max(vals)) == float(np.min(vals)):
        raise LensInputError(f"The ring finder has nothing to measure: every usable pixel of the image has the same "
                             f"value ({float(vals[0]):g}), with no sky noise and no galaxy; check the file or the image "
                             "extension.")


def _masks(img, cx, cy, given, rmax, mask, colour, auto_mask, *, sky_fit=False):
    """Automatic masks (stars, neighbours) and the lens centre, in a box around the centre; with ``sky_fit``,
    blank rows and columns masked and any sky left in the image subtracted first (``CutoutMasks.sky``)."""
    from lensmass.core.cutout_cleaning import prepare_cutout
    from lensmass.core.cutout_masks import CutoutMasks, cutout_masks
    from lensmass.core.sky_level import noise_correlation

    ny, nx = img.shape
    half = int(min(max(nx, ny), rmax + 24))
    # The box is around the user's centre, or around the image centre (where a cutout's lens is).
    bx, by = (cx, cy) if given else ((nx - 1) / 2, (ny - 1) / 2)
    x0, x1 = max(0, int(bx) - half), min(nx, int(bx) + half + 1)
    y0, y1 = max(0, int(by) - half), min(ny, int(by) + half + 1)
    centre = (cx - x0, cy - y0) if given else None
    box = np.asarray(img[y0:y1, x0:x1], float)
    extra = None if mask is None else np.asarray(mask, bool)[y0:y1, x0:x1]
    sky, saturated, notes = 0.0, None, []
    if sky_fit:
        # Blank lines, a sky left in the image (a pedestal, a gradient), cosmic rays and saturated stars, on the
        # box (FITS route only: a picture's sky is its stretch's); the plane is taken from the whole image.
        clean = prepare_cutout(box, extra, grid=((ny, nx), x0, y0))
        box, extra, saturated, sky, notes = clean.image, clean.mask, clean.saturated, clean.sky, clean.notes
    if not auto_mask:
        m = np.zeros(img.shape, bool) if mask is None else np.asarray(mask, bool).copy()
        if extra is not None:
            m[y0:y1, x0:x1] |= extra
        return CutoutMasks(m, np.zeros(img.shape, np.int32), [], cx, cy, "given" if given else "light peak", "",
                           notes, sky=sky)
    blue = None if colour is None else blue_excess(colour)[y0:y1, x0:x1]
    noise = robust_sigma(box[:: max(1, box.shape[0] // 128), :: max(1, box.shape[1] // 128)])
    if not np.isfinite(noise) or noise <= 0:
        noise = float(np.nanstd(box)) or 1.0
    m = cutout_masks(box, noise, center=centre if given else None, colour=blue, extra_mask=extra, saturated=saturated)
    if sky_fit:  # resampled or co-added images: their noise is correlated and the pixel sigma overstates significance
        m.noise_correlation = noise_correlation(box, (m.segments == 0) & ~m.mask)
    full = np.zeros(img.shape, bool)
    full[y0:y1, x0:x1] = m.mask
    seg = np.zeros(img.shape, np.int32)
    seg[y0:y1, x0:x1] = m.segments
    m.mask, m.segments, m.sky = full, seg, sky
    m.notes = notes + m.notes
    m.center_x, m.center_y = (cx, cy) if given else (m.center_x + x0, m.center_y + y0)
    for o in m.objects:
        o.x, o.y = o.x + x0, o.y + y0
    return m


def _finish(out: RingResult, masks, given: bool, colour: bool, quality: float | None = None,
            rgb: np.ndarray | None = None) -> RingResult:
    """Report the centre and the masks; calibrate the error; widen it for an 8-bit stretched picture
    (and scale it for a lossy-compressed one)."""
    out.masks = masks
    out = _calibrate(out)
    if masks is not None:
        out.center_source = masks.center_source
        out.center_hint = masks.center_hint
        if masks.center_hint:
            out.warnings.append(masks.center_hint)
        out.warnings.extend(masks.notes)
    elif given:
        out.center_source = "given"
    if colour:
        out.warnings.append("The picture is 8-bit and stretched: its values are not calibrated flux, so the lens "
                            "light cannot be modelled exactly; the radius error is widened by "
                            f"{STRETCHED_SYSTEMATIC:.0%} of the radius, and the ring is not called confident "
                            "(the seeing, which tells a lensed ring from a ring galaxy's, is not measurable "
                            "on it): use a FITS band, or mark the arcs, to confirm it.")
        _refuse_core_residual(out, masks, rgb)
        if out.found:
            out.radius_err_pix = float(np.hypot(out.radius_err_pix, STRETCHED_SYSTEMATIC * out.radius_pix))
        out.confident = False
        if quality is not None and out.found:
            scale = lossy_error_scale(quality)
            out.radius_err_pix *= scale
            out.warnings.append(f"The picture was stored with lossy compression (JPEG, quality {quality:.0f}), which "
                                f"blurs the colours of thin arcs: the radius error is scaled by {scale:.2f}; a PNG or "
                                "FITS cutout of the same field measures better.")
        add_picture_tail(out)
    elif out.found and np.isfinite(out.radius_pix):
        out.interval_tail_pix = float(RING_TAIL_SHARE * out.radius_pix)
    state_interval(out, picture=colour)
    restate(out)  # the message and warnings quote the stated interval
    close_unconfident(out)  # its confidence is final now
    return out


def _two_pass_search(img, cx, cy, rmin, rmax, n_sectors, progress, should_stop, follow_shape=True) -> RingResult:
    """Fit and subtract the lens light, search; refit with the ring masked (starting from the first fit's
    answer) and search again, keeping the refit's ring with its move as a systematic error; the FITS route
    (``follow_shape``) keeps the first fit's ring (seen all round) instead when the refit moved it by more than
    :data:`REFIT_MAX_MOVE` and the first fit did not spread over it (:func:`_spread_over_ring`), and follows
    the ring's shape (:func:`~lensmass.core.ring_shapes._follow_shape`)."""
    light = fit_lens_light(img, cx, cy, progress=lambda f: report(progress, 0.3 * f), should_stop=should_stop)
    if light.ok:
        cx, cy = light.center_x, light.center_y
    # The first pass places the mask of the refit (an ellipse fitted to its ridge points); its elliptical pass is
    # run only on the answer returned.
    first = _search(light.residual, cx, cy, rmin, rmax, n_sectors, light, list(light.notes), None, should_stop,
                    elliptical=False)
    if light.ok and follow_shape:
        img0 = img
        img, light, first = companion_pass(img, light, first, rmin, rmax, n_sectors, should_stop, _search)
        if img is img0:  # no companion subtracted: a neighbour joined to the lens's light (inner_neighbour)
            img, light, first = subtract_inner_neighbour(img, light, first, rmin, rmax, n_sectors, should_stop,
                                                         _search)
        cx, cy = light.center_x, light.center_y

    def first_answer() -> RingResult:
        report(progress, 1.0)
        if not first.found:
            return first
        if not follow_shape:
            return first
        ring, fit = _second_component(img, first, light, rmin, rmax, n_sectors, should_stop) if light.ok else (first, light)
        return _follow_shape(ring, fit.residual, ring.center_x, ring.center_y, rmin, rmax, n_sectors, fit,
                             list(fit.notes), should_stop, ring_search=_search)

    report(progress, 0.45)
    if not first.found and light.ok and follow_shape:
        # A candidate below the thresholds: its light may have gone into the lens-light fit (lensmass.core.faint_refit).
        rescued = refit_under_candidate(img, first, light, rmin, rmax, n_sectors, should_stop, _search)
        if rescued is not None:
            ring, fit = rescued
            report(progress, 1.0)
            return mark_refitted(_follow_shape(ring, fit.residual, ring.center_x, ring.center_y, rmin, rmax, n_sectors,
                                               fit, list(fit.notes), should_stop, ring_search=_search))
    if not first.found or not light.ok:
        return first_answer()
    # Second pass: the ring's own light biases the lens-light fit, so refit with the ring masked.
    mask = ring_pixels(img.shape, first)
    light2 = fit_lens_light(img, cx, cy, mask=mask, fit_radius_pix=light.fit_radius_pix, initial=light,
                            progress=lambda f: report(progress, 0.45 + 0.3 * f), should_stop=should_stop)
    if not light2.ok:
        return first_answer()
    light2.notes.extend(subtraction_notes(light))  # the image searched is still the one with the neighbour subtracted
    second = _search(light2.residual, light2.center_x, light2.center_y, rmin, rmax, n_sectors, light2,
                     list(light2.notes) + ["Lens light refitted with the ring masked."],
                     lambda f: report(progress, 0.75 + 0.25 * f), should_stop, elliptical=False)
    # The refit only de-biases the lens light under the ring; with a broad ring masked it can lose
    # its hold on the galaxy and leave a core residual that outshines the ring. A second answer that
    # is no ring, a ring elsewhere, or one in the lens core where the first was resolved from it
    # (core_residual), is not trusted over the first. Where the fitted seeing is off (at its lower bound on a space PSF),
    # the answers' own half-maximum bands tell the core from a resolved ring (core_residual.refit_answer_kept).
    by_core = refit_answer_kept(first, second, rmin)
    if by_core is False or (by_core is None and (
            not second.found or abs(second.radius_pix - first.radius_pix) > max(2.0, first.ring_width_pix)
            or core_replaces_ring(first, second, light.psf_fwhm_pix))):
        moved = f"put the peak at {second.radius_pix:.2f} pixels" if second.found else "found no ring"
        first = first_answer()
        first.radius_err_pix = float(np.hypot(first.radius_err_pix, FIRST_PASS_SYSTEMATIC * first.radius_pix))
        first.warnings.append(f"Refitting the lens light with the ring masked {moved}; the first fit's ring at "
                              f"{first.radius_pix:.2f} pixels is kept, with a {FIRST_PASS_SYSTEMATIC:.0%} systematic "
                              "error (check the residual image).")
        report(progress, 1.0)
        return first
    # How far the refit moved the ring (both measured in circles) measures the lens-light model's pull on it:
    # part of that pull may remain, so a share of the move is added to the radius error.
    shift = second.radius_pix - first.radius_pix
    refit_moved = abs(shift) > REFIT_MAX_MOVE * first.radius_pix
    # A first answer not separated from the centre that the refit's resolved ring replaces (by_core True) is not kept.
    if (follow_shape and refit_moved and by_core is not True and not _spread_over_ring(light, first.radius_pix)
            and (first.kind == "ring" or arcs_hold_refit(first))):
        # The refit moved the ring: with the ring masked, one Sersic is free to drop light under it that it cannot
        # follow (a disc's, a PSF halo's), which merges with the ring all round and pulls it inward and wider; the
        # robust (soft-L1) first fit gives the ring's pixels little weight. Unless that fit spread over the ring, the
        # FITS route keeps its ring (or arcs all but a ring), the refit's move as its systematic error. Arcs and images
        # seen in under NEAR_RING_COVERAGE of the directions keep the refit's answer (lensmass.core.refit_hold).
        ring, fit = _second_component(img, first, light, rmin, rmax, n_sectors, should_stop)
        ring = _follow_shape(ring, fit.residual, ring.center_x, ring.center_y, rmin, rmax, n_sectors, fit,
                             list(fit.notes), should_stop, ring_search=_search)
        ring.radius_err_pix = float(np.hypot(ring.radius_err_pix, REFIT_SHIFT_SYSTEMATIC * shift))
        what, it, kept = ("ring", "it", "ring is") if first.kind == "ring" else ("arcs", "them", "arcs are")
        ring.warnings.append(f"Refitting the lens light with the {what} masked moved the {what} by {shift:+.2f} "
                             f"pixels, as a galaxy's light the model cannot follow, left under {it}, does; the first "
                             f"fit's {kept} kept, with {REFIT_SHIFT_SYSTEMATIC:.0%} of that move in its error.")
        return ring
    second, light2 = _second_component(img, second, light2, rmin, rmax, n_sectors, should_stop)
    if follow_shape:
        second = _follow_shape(second, light2.residual, second.center_x, second.center_y, rmin, rmax, n_sectors,
                               light2, list(light2.notes) + ["Lens light refitted with the ring masked."], should_stop,
                               ring_search=_search)
    second.radius_err_pix = float(np.hypot(second.radius_err_pix, REFIT_SHIFT_SYSTEMATIC * shift))
    return second


def _spread_over_ring(light, radius_pix: float) -> bool:
    """The lens-light fit has spread over a ring of ``radius_pix``: its PSF FWHM is wider than
    :data:`~lensmass.core.ring_confidence.UNRESOLVED_PSF_RATIO` of the radius, or its Sersic index is below
    :data:`FIRST_FIT_MIN_SERSIC_N` (a flat top reaching the ring)."""
    return bool(light.psf_fwhm_pix > UNRESOLVED_PSF_RATIO * radius_pix or light.sersic_n < FIRST_FIT_MIN_SERSIC_N)


def _second_component(img, ring, light, rmin, rmax, n_sectors, should_stop):
    """``ring`` and ``light``, or, for a ring wider than :data:`MISFIT_WIDTH_PSF` seeing widths (one Sersic's misfit,
    a disc's or a PSF halo's leftover light, merged with the ring) where two Sersic components fit the light better
    with the ring masked (:func:`~lensmass.core.bulge_disc.bulge_and_disc`), the search on their residual: when it
    lies farther out by :data:`MISFIT_MIN_MOVE` of the radius up to the ring's width, or, for a ``ring`` in the lens
    core, when it is a resolved ring (:func:`~lensmass.core.core_residual.ring_replaces_core`)."""
    if not ring.ring_width_pix >= MISFIT_WIDTH_PSF * light.psf_fwhm_pix:
        return ring, light
    mask = ring_pixels(img.shape, ring, max_half_share=MISFIT_MASK_SHARE)
    two = bulge_and_disc(img, light, mask=mask, should_stop=should_stop)
    if two is light:
        return ring, light
    again = _search(two.residual, two.center_x, two.center_y, rmin, rmax, n_sectors, two,
                    list(two.notes) + ["Lens light refitted with the ring masked."], None, should_stop,
                    elliptical=False)
    moved_out = (1 + MISFIT_MIN_MOVE) * ring.radius_pix <= again.radius_pix <= ring.radius_pix + ring.ring_width_pix
    took = again.found and (moved_out or ring_replaces_core(ring, again, two.psf_fwhm_pix))
    return (again, two) if took else (ring, light)


def _prominent_peaks(profile: np.ndarray, err: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The peaks of a smoothed profile (scipy.signal.find_peaks) and their prominence in units of the profile's
    error there (0 where that ratio is not finite: an error that is infinite, NaN or zero carries no evidence)."""
    peaks, props = find_peaks(profile, prominence=0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        prominence = props["prominences"] / err[peaks]
    return peaks, np.where(np.isfinite(prominence), prominence, 0.0)


def _search(res, cx, cy, rmin, rmax, n_sectors, light, warnings, progress, should_stop, shape=None,
            elliptical=False) -> RingResult:
    """Profile analysis of a (lens-subtracted) image around (cx, cy): in circular annuli, then (for a ring
    candidate that is sharper so) in elliptical ones (:func:`~lensmass.core.ring_shapes._elliptical_pass`); ``shape`` = (axis ratio, angle
    in radians) searches elliptical annuli of that shape only, with ``rmin``, ``rmax`` elliptical radii;
    ``elliptical=True`` (the FITS route) follows the ring's shape (:func:`~lensmass.core.ring_shapes._follow_shape`)."""
    ny, nx = res.shape
    report(progress, 0.0)
    check_stop(should_stop)
    # Noise from the search region (a ring is a minority of its pixels).
    x0, x1 = max(0, int(cx - rmax)), min(nx, int(cx + rmax) + 1)
    y0, y1 = max(0, int(cy - rmax)), min(ny, int(cy + rmax) + 1)
    box = res[y0:y1, x0:x1]
    step = max(1, int(np.sqrt(box.size / 200_000)))
    sigma = robust_sigma(box[::step, ::step])
    if not np.isfinite(sigma) or sigma <= 0:
        sigma = float(np.nanstd(box)) or 1.0
    grid = _sector_grid(res.shape, cx, cy, rmin, rmax, n_sectors, *(shape or (1.0, 0.0)))
    sums, counts, radii = _sector_profiles(res, grid)
    if light is not None and light.ok:
        # The sky beyond the lens-light fit, measured there, is taken off (lensmass.core.outer_sky): a sky the fit
        # left a fraction of a sigma off is a plateau on which a noise bump far out reads as a ring.
        offset = outer_sky_offset(sums, counts, radii, light.fit_radius_pix, sigma)
        if offset is not None:
            sums = sums - offset[None, :] * counts
    report(progress, 0.5)
    with np.errstate(invalid="ignore", divide="ignore"):
        smean = sums / counts
    good = counts > 0
    n_good = good.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        prof = np.where(n_good > 0, np.nansum(np.where(good, smean, 0.0), axis=0) / n_good, np.nan)
        pix_err = sigma / np.sqrt(np.maximum(counts.sum(axis=0), 1))
        scatter = np.sqrt(np.nansum(np.where(good, (smean - prof) ** 2, 0.0), axis=0) / np.maximum(n_good - 1, 1))
        sec_err = scatter / np.sqrt(np.maximum(n_good, 1))
        # The median of the sector means: blind to a bright neighbour in one sector, and not
        # penalised by the real azimuthal brightness variation of a lopsided ring.
        with warnings_module.catch_warnings():  # radii with no pixel in any sector: NaN, said below
            warnings_module.simplefilter("ignore", RuntimeWarning)
            med = np.nanmedian(np.where(good, smean, np.nan), axis=0)
        med_err = 1.2533 * sigma * np.sqrt(np.nansum(np.where(good, 1.0 / counts, 0.0), axis=0)) / np.maximum(n_good, 1)
    err = np.maximum(pix_err, sec_err)
    if light is not None and light.ok:
        # The lens-light model is good to a few per cent at best: add that systematic floor, so
        # residuals of a bright galaxy's core cannot pass for a ring.
        msums, mcounts, _ = _sector_profiles(light.model, grid, offset=light.sky)
        with np.errstate(invalid="ignore", divide="ignore"):
            model_prof = msums.sum(axis=0) / np.maximum(mcounts.sum(axis=0), 1)
        err = np.hypot(err, LENS_MODEL_SYSTEMATIC * np.abs(model_prof))
        med_err = np.hypot(med_err, LENS_MODEL_SYSTEMATIC * np.abs(model_prof))
    enough = n_good >= max(3, n_sectors // 3)
    err = np.where(enough, err, np.inf)
    med_err = np.where(enough, med_err, np.inf)
    prof_s, med_s = _smooth_profile(prof), _smooth_profile(med)
    with np.errstate(invalid="ignore", divide="ignore"):
        snr = prof_s / err
        snr_med = med_s / med_err
    snr[~np.isfinite(snr)] = -np.inf
    snr_med[~np.isfinite(snr_med)] = -np.inf
    # Candidates are peaks of the mean profile that stand out from their surroundings (scipy
    # find_peaks prominence) by MIN_PROMINENCE_SIGMA: the residual of a bright galaxy's core falls
    # steadily outwards and is no ring however significant it is. The ring is the candidate where
    # the mean profile is most significant (robust to one bright sector); its score is the better
    # of the two significances there.
    peaks, prominence = _prominent_peaks(prof_s, err)
    keep = prominence >= MIN_PROMINENCE_SIGMA
    candidates = list(peaks[keep])
    scores = [max(snr[k], snr_med[k]) for k in peaks[keep]]
    # Arcs: a partial ring hardly moves the mean or the median of the sectors, so the profile of
    # the brightest quarter of the sectors is searched too. Choosing the brightest sectors lifts
    # that profile at every radius alike, so only how far a peak stands out from its
    # surroundings (prominence, in its own noise) counts as its significance.
    top, top_err = _top_sectors_profile(smean, counts, good, sigma, n_sectors)
    top_s, from_top = _smooth_profile(top), set()
    if light is not None and light.ok:
        top_err = np.hypot(top_err, LENS_MODEL_SYSTEMATIC * np.abs(model_prof))
    top_err = np.where(enough, top_err, np.inf)
    for k, pr in zip(*_prominent_peaks(top_s, top_err)):
        if pr < MIN_PROMINENCE_SIGMA:
            continue
        near = [i for i, c in enumerate(candidates) if abs(c - k) <= 2]
        if near:
            scores[near[0]] = max(scores[near[0]], pr)
        else:
            candidates.append(int(k))
            scores.append(float(pr))
            from_top.add(int(k))
    # Rings: a bright localised residual (a neighbour's leftover, a star's wing) lifts the mean profile over a
    # broad range of radii and can swallow a faint ring's peak; the median of the sector means does not see it,
    # so its peaks are candidates too, scored by their significance there.
    from_med = set()
    for k, pr in zip(*_prominent_peaks(med_s, med_err)):
        if pr < MIN_PROMINENCE_SIGMA or any(abs(c - k) <= 2 for c in candidates):
            continue
        candidates.append(int(k))
        scores.append(float(max(snr_med[k], pr)))
        from_med.add(int(k))
    candidates_arr = np.array(candidates, int)
    score_arr = np.array(scores, float)
    scores_ok = np.where(np.isfinite(score_arr), np.maximum(score_arr, 0.0), 0.0)
    best_score = float(scores_ok.max()) if scores_ok.size else (float(prominence.max()) if prominence.size else 0.0)
    if not scores_ok.size or best_score < 3.0:
        empty = RingResult(False, False, "none", float("nan"), float("nan"), best_score, 0.0, cx, cy, float("nan"),
                           float("nan"), float("nan"), np.array([]), np.array([]), radii, prof, err, sigma, res, light,
                           "No ring: no peak of the azimuthal profile stands out by 3 sigma around the centre "
                           f"(best {best_score:.1f} sigma).", warnings)
        report(progress, 1.0)
        return empty
    # Several candidates are measured, not only the strongest peak (a star's or a neighbour's
    # residual can outshine the ring in the azimuthal profile); the kept one is the candidate
    # seen in the most directions, among those found, weighted by its significance.
    order = np.argsort(-scores_ok)[:MAX_CANDIDATES if shape is None else ELLIPSE_CANDIDATES]
    tried = []
    for i in order:
        k = int(candidates_arr[i])
        p, ps = (top, top_s) if k in from_top else ((med, med_s) if k in from_med else (prof, prof_s))
        r0, width, left = _peak_ridge(k, radii, p, ps)
        # A peak on a plateau is scored by its height above it (lensmass.core.profile_plateau).
        score = plateau_score(float(scores_ok[i]), ps, top_err if k in from_top else (med_err if k in from_med else err), k)
        tried.append(_measure_candidate(score, res, cx, cy, n_sectors, light, list(warnings), sigma,
                                        sums, counts, smean, radii, p, (r0, width), err, shape))
        if left:
            # Its ridge left its own peak for a brighter one beside it (an unmasked star's residual): the candidate
            # is measured again inside its peak's basin and goes to the usual choice beside the first measurement
            # when it is a ring seen all round, or when the first found nothing (lensmass.core.peak_extent). Arcs
            # measured on a basin cut at a neighbour's rising wing do not replace arcs found at the neighbour
            # (tests/core/test_neighbour_outside_ring.py, seed 655903: weak arcs instead of the ring).
            r0, width, _ = _peak_ridge(k, radii, p, ps, in_basin=True)
            basin = _measure_candidate(score, res, cx, cy, n_sectors, light, list(warnings), sigma,
                                       sums, counts, smean, radii, p, (r0, width), err, shape)
            if left_for_core(tried[-1], basin):
                # Its ridge ran down to the lens core's residual: the basin's ring replaces it (inward_ridge).
                tried[-1] = basin
            elif basin.found and (basin.kind == "ring" or not tried[-1].found):
                tried.append(basin)
    report(progress, 1.0)
    best = _choose(tried)
    best = _pair_of_arcs(best, tried) if best.found and best.kind == "arcs" else best
    if shape is None and elliptical:
        best = _follow_shape(best, res, cx, cy, rmin, rmax, n_sectors, light, warnings, should_stop, ring_search=_search)
    return best


def _ring_ridge(radii: np.ndarray, profile: np.ndarray, r0: float, width: float) -> tuple[float, float]:
    """One sector's ridge radius on the ring at ``r0`` (FWHM ``width`` in the azimuthal mean), and the ridge of
    its whole (sqrt(r)-weighted) profile. The first is the second when that lies in the ring's half-maximum band
    (r0 -+ width / 2), else the ridge of the profile cut to that band (one bin of slack each side) when it lies
    inside the band, else NaN. The azimuthal mean's half-maximum band holds the ring in every direction (an
    elongated ring's radii widen it); a brighter peak outside it in one sector is another object's light (a
    neighbour's or a star's leftover at 1.2-1.9 theta_E), which the wider window takes for the ridge."""
    whole = ridge_peak(radii, profile, r0, width)
    band = 0.5 * width
    if abs(whole - r0) <= band:
        return whole, whole
    near = np.abs(radii - r0) <= band + BIN_PIX
    if np.isfinite(profile[near]).sum() < 5:
        return float("nan"), whole
    rr = ridge_peak(radii[near], profile[near], r0, width)
    return (rr if abs(rr - r0) < band else float("nan")), whole


def _peak_ridge(k: int, radii: np.ndarray, prof: np.ndarray, prof_s: np.ndarray,
                in_basin: bool = False) -> tuple[float, float, bool]:
    """Ridge radius and width (half-maximum of the smoothed profile) of the profile peak ``k``, and whether the ridge
    left the peak's basin (:func:`lensmass.core.peak_extent.peak_basin`); with ``in_basin`` a ridge that left it is
    sought again inside the basin."""
    half = 0.5 * prof_s[k]
    lo_i, hi_i = k, k
    while lo_i > 0 and prof_s[lo_i - 1] > half:
        lo_i -= 1
    while hi_i < len(radii) - 1 and prof_s[hi_i + 1] > half:
        hi_i += 1
    width = max(1.5, (hi_i - lo_i + 1) * BIN_PIX)
    r0 = ridge_peak(radii, prof * np.sqrt(radii), float(radii[k]), width)
    lo_b, hi_b = peak_basin(prof_s, k)
    left = not radii[lo_b] <= r0 <= radii[hi_b]
    if left and in_basin:
        lo_i, hi_i = max(lo_i, lo_b), min(hi_i, hi_b)
        width = max(1.5, (hi_i - lo_i + 1) * BIN_PIX)
        basin = (np.arange(radii.size) >= lo_b) & (np.arange(radii.size) <= hi_b)
        r0 = ridge_peak(radii, np.where(basin, prof * np.sqrt(radii), np.nan), float(radii[k]), width)
    return float(r0), float(width), left


def _measure_candidate(score, res, cx, cy, n_sectors, light, warnings, sigma, sums, counts, smean, radii, prof, ridge,
                       err, shape=None) -> RingResult:
    """Width, ridge points, coverage and the ellipse fit of the ring candidate whose profile peak has its ridge and
    width at ``ridge`` = (radius, width) (:func:`_peak_ridge`; ``radii`` are elliptical radii of ``shape`` = (axis
    ratio, angle in radians) when it is given)."""
    r0, width = ridge

    # Per-sector detection and ridge points.
    band = np.abs(radii - r0) <= max(1.0, 0.5 * width)
    sec_sum = (sums[:, band]).sum(axis=1)
    sec_cnt = counts[:, band].sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        sec_snr = sec_sum / (sigma * np.sqrt(sec_cnt))
    detected = (sec_cnt > 0) & (sec_snr >= 3.0)
    coverage = float(detected.mean())
    window = np.abs(radii - r0) <= max(2.0, 1.5 * width)
    wi = np.flatnonzero(window)
    px: Any = []
    py: Any = []
    rhos = []
    # A ring (seen in RING_COVERAGE of the directions) lies at one radius all round: its ridge is sought in its
    # half-maximum band; arcs and images lie at radii that differ by more than their profile's width.
    ring_like = coverage >= RING_COVERAGE
    whole_x: Any = []  # every sector's ridge of its whole window: their scatter stays in the error
    whole_y: Any = []
    for s in np.flatnonzero(detected):
        sp = np.where(counts[s, wi] > 0, smean[s, wi], np.nan) * np.sqrt(radii[wi])
        if np.isfinite(sp).sum() < 5:
            continue
        rr, whole = _ring_ridge(radii[wi], sp, r0, width) if ring_like else (ridge_peak(radii[wi], sp, r0, width),) * 2
        ang = -np.pi + (s + 0.5) * 2 * np.pi / n_sectors
        whole = float(radius_along(ang, whole, *shape)) if shape is not None else whole
        whole_x.append(cx + whole * np.cos(ang))
        whole_y.append(cy + whole * np.sin(ang))
        if not np.isfinite(rr):
            continue
        rhos.append(rr)
        if shape is not None:
            rr = float(radius_along(ang, rr, *shape))
        px.append(cx + rr * np.cos(ang))
        py.append(cy + rr * np.sin(ang))
    px, py, whole_x, whole_y = np.array(px), np.array(py), np.array(whole_x), np.array(whole_y)

    radius, radius_err, q, angle, rms = r0, width / 2.355 / np.sqrt(max(len(px), 1)), float("nan"), float("nan"), float("nan")
    offset = None
    # Arcs seen in under half the directions are fitted by an ellipse too when their doubled directions spread
    # (lensmass.core.arc_directions): a circle through arcs on an elongated ring's minor or major axis is 5-15% off.
    if len(px) >= 6 and (coverage >= 0.5 or arcs_constrain_ellipse(px, py, (cx, cy))):
        # A source off the lens axis adds a first harmonic to the ring's radius, which the ellipse about the centre
        # cannot follow: taken off the points when the ridge asks for it (lensmass.core.ring_harmonics); the plain
        # fit of the points as measured stays the floor of the error and the scatter.
        offset = offset_source_term(px, py, (cx, cy)) if coverage >= 0.5 else None
        fx, fy = (px, py) if offset is None else remove_offset_source(px, py, (cx, cy), offset)
        moved = offset is not None or len(whole_x) > len(px) or not np.array_equal(whole_x, px)
        try:
            ef = clipped_ellipse_fit(fx, fy, center=(cx, cy), point_err=BIN_PIX / np.sqrt(12),
                                     scatter_points=(whole_x, whole_y) if moved else None)
            min_q = 0.4 if coverage >= 0.5 else ARC_ELLIPSE_MIN_AXIS_RATIO
            if min_q <= ef.axis_ratio <= 1.0 and abs(ef.theta_e - r0) < 0.25 * r0:
                radius, radius_err, q, angle, rms = ef.theta_e, ef.theta_e_err, ef.axis_ratio, ef.angle_deg, ef.rms
                if offset is not None:
                    radius_err = max(radius_err, offset.constant_err)
                radius, radius_err = _sie_ring_correction(radius, radius_err, q, angle, light)
                if coverage < 0.5:
                    warnings.append(f"Arcs cover only {coverage:.0%} of the azimuth: the ellipse through them assumes "
                                    "the lens centre is at the light centre.")
            else:
                offset = None
        except LensInputError:
            offset = None
    if not np.isfinite(q) and shape is not None and len(px) >= 2:
        # Too few points for an ellipse of their own: the median elliptical radius of the ridge in the searched shape.
        radius, q, angle = float(np.median(rhos)), float(shape[0]), float(np.degrees(shape[1]))
        radius_err = float(max(width / 2.355, 1.2533 * np.std(rhos)) / np.sqrt(len(rhos)))
    if not np.isfinite(q) and len(px) >= 2:
        cf = fit_circle(px, py, center=(cx, cy), point_err=BIN_PIX / np.sqrt(12))
        radius, radius_err, rms = cf.radius, cf.radius_err, cf.rms
        q = 1.0
        if len(px) and coverage < 0.5:
            warnings.append(f"Arcs cover only {coverage:.0%} of the azimuth: the radius assumes the lens centre "
                            "is at the light centre.")
    confident = bool(score >= CONFIDENT_SCORE and coverage >= CONFIDENT_COVERAGE)
    kind = "ring" if coverage >= RING_COVERAGE else "arcs"
    found = bool(score >= 5.0 and coverage >= MIN_COVERAGE)
    if not found:
        kind = "none"
        msg = (f"No convincing ring: the best candidate at {r0:.1f} pixels is {score:.1f} sigma and seen in "
               f"{coverage:.0%} of directions.")
    elif confident:
        msg = f"{answer_noun(kind)} at {STATED} pixels ({score:.0f} sigma, seen in {coverage:.0%} of directions)."
    else:
        msg = f"{weak_opening(kind, score, coverage)}: {CHECK_BY_EYE}"
    if found and offset is not None:
        warnings.append(f"The ring's radius about the lens centre varies as theta_E + beta cos(phi - phi_beta), a source "
                        f"{offset.amplitude:.2f} pixels off the lens axis towards {np.degrees(offset.angle_rad):.0f} "
                        "degrees from +x: theta_E is the ring fitted with that first harmonic (an offset source) taken "
                        "off its ridge.")
    out = RingResult(found, confident, kind, float(radius), float(radius_err), score, coverage, cx, cy, float(q),
                     float(angle), float(rms), px, py, radii, prof, err, sigma, res, light, "", warnings, float(width))
    out.message = quote(out, msg)  # filled again once the interval is stated (_finish)
    return out
