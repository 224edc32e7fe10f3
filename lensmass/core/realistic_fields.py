"""Inject-and-recover cutouts that look like survey cutouts, not like our clean demo fields.

Each cutout is drawn from a seed: a lens galaxy (elliptical Sersic light, SIE mass with an
external shear) and a background source ray-traced through it (half of them an irregular, clumpy
source of our own, half a real galaxy cut from the Hubble Deep Field image that scikit-image
ships, see :func:`hubble_stamps`), plus what a real cutout holds besides: neighbouring galaxies,
now and then a companion galaxy overlapping the lens's light, stars with Moffat (1969) wings, a
lens centre a few pixels off the cutout centre; or a non-lens (an elliptical, a spiral, a ring
galaxy, a galaxy pair, a star beside a galaxy, pure noise). Pixel scales run from 0.05" to 0.26"
and the seeing FWHM from 0.1" to 1.0" (never below 1.8 pixels: survey images are sampled). Three
bands (g, r, i) are rendered with our own colours (lens light red, arcs blue), and an 8-bit
stretched RGB picture can be made from them, as survey viewers show cutouts.

Everything is in units of the pixel noise (sky-limited, sigma = 1 per pixel in every band), so
the brightness draws say directly how visible a feature is. The truth (``radius_pix``, centre,
kind) is kept with each cutout. This is the project's own generator; the populations are
invented, chosen to cover the hard cases, not to follow any survey's statistics.

References
----------
Kormann, Schneider & Bartelmann (1994), A&A 284, 285 (SIE; critical curve of area pi theta_E^2);
Moffat (1969), A&A 3, 455 (PSF); Lupton et al. (2004), PASP 116, 133 (asinh stretch of colour
pictures: common practice for survey cutouts); Williams et al. (1996), AJ 112, 1335 (the Hubble Deep
Field; the picture is a public-domain NASA image, shipped as ``skimage.data.hubble_deep_field``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np
from scipy.ndimage import binary_dilation, gaussian_filter, map_coordinates
from scipy.signal import fftconvolve

from lensmass.core import raytrace as rt
from lensmass.core.colour_pictures import CLIP_PERCENTILE, STRETCHES, _stretch_8bit, colour_picture  # noqa: F401
from lensmass.core.ring_interval import truth_inside

#: Kinds of cutout the generator makes.
LENS_KINDS = ("ring", "arc", "ring+neighbour", "ring+star", "arc+neighbour", "arc+star")
NONLENS_KINDS = ("elliptical", "spiral", "ring galaxy", "galaxy pair", "star + galaxy", "pure noise")
#: Colours (g, r, i flux per unit i flux) of our invented populations: red lens light, blue arcs.
COLOUR_LENS = (0.35, 0.7, 1.0)
COLOUR_ARC = (1.0, 0.8, 0.6)
COLOUR_DISC = (0.8, 0.85, 0.9)
#: Share of lenses and of ellipticals with a companion galaxy overlapping their light (inside a lens's ring).
COMPANION_SHARE = 0.15
#: Source morphologies: our clumpy irregulars and real galaxies from the Hubble Deep Field picture.
SOURCE_KINDS = ("clumpy", "hubble")
#: Share of drawn sources that are real Hubble Deep Field galaxies.
HUBBLE_SOURCE_SHARE = 0.5


@dataclass
class Cutout:
    """One generated cutout.

    ``image`` is the r band (counts in units of the pixel noise); ``bands`` are g, r, i;
    ``truth`` holds ``is_lens``, ``kind``, ``radius_pix`` (SIE theta_E in pixels, NaN for
    non-lenses), ``center_x``/``center_y`` (pixels), ``psf_fwhm_pix``, ``pixel_scale_arcsec``
    and what else is in the field.
    """

    image: np.ndarray
    bands: np.ndarray
    pixel_scale_arcsec: float
    psf_fwhm_arcsec: float
    truth: dict = field(default_factory=dict)

    @property
    def psf_fwhm_pix(self) -> float:
        return self.psf_fwhm_arcsec / self.pixel_scale_arcsec


def _moffat_kernel(fwhm_pix: float, beta: float) -> np.ndarray:
    return rt.psf_kernel(fwhm_pix, 1.0, "moffat", beta, oversample=3)


def _sersic(xx, yy, flux, re, n, q, ang, x0, y0):
    return rt.sersic_surface_brightness(xx, yy, total_flux=flux, r_eff_arcsec=re, n=n, axis_ratio=q,
                                        angle_deg=ang, x0=x0, y0=y0)


def _grid(n: int, oversample: int):
    s = (np.arange(n * oversample) + 0.5) / oversample - 0.5
    return np.meshgrid(s, s)


def _bin(fine: np.ndarray, k: int) -> np.ndarray:
    n = fine.shape[0] // k
    return fine.reshape(n, k, n, k).mean(axis=(1, 3))


def _clumpy_source(rng, bx, by, x0, y0, size):
    """An irregular source: an off-centre exponential disc plus 3-8 Gaussian clumps (flux 1 in all)."""
    q, ang = rng.uniform(0.4, 1.0), rng.uniform(0, 180)
    out = 0.4 * _sersic(bx, by, 1.0, size, 1.0, q, ang, x0, y0)
    k = int(rng.integers(3, 9))
    r = size * 1.2 * np.sqrt(rng.uniform(0, 1, k))
    t = rng.uniform(0, 2 * np.pi, k)
    w = rng.uniform(0.3, 1.5, k)
    w = 0.6 * w / w.sum()
    sig = size * rng.uniform(0.15, 0.45, k)
    for cx, cy, wi, si in zip(x0 + r * np.cos(t), y0 + r * np.sin(t), w, sig):
        out = out + wi / (2 * np.pi * si * si) * np.exp(-((bx - cx) ** 2 + (by - cy) ** 2) / (2 * si * si))
    return out


@dataclass(frozen=True)
class GalaxyStamp:
    """A real galaxy cut from a picture: background-subtracted light (other objects zeroed), its
    flux-weighted centre (``x``, ``y``, stamp pixels) and half-light radius ``r50`` (stamp pixels)."""

    light: np.ndarray
    x: float
    y: float
    r50: float


@lru_cache(maxsize=1)
def hubble_stamps(min_area_pix: int = 150) -> tuple[GalaxyStamp, ...]:
    """Resolved galaxies of the Hubble Deep Field picture shipped by scikit-image, cut out once a process.

    The picture (``skimage.data.hubble_deep_field``: WFPC2, Williams et al. 1996; a public-domain NASA
    image, 8-bit colour) is made grey, its sky (median) subtracted and segmented at 3 sky sigma and
    deblended (photutils ``detect_sources``/``deblend_sources``). Objects of at least ``min_area_pix``
    pixels that touch neither the picture's edge nor its saturated (255) pixels, stars with their
    diffraction spikes among those, are kept, each with the other objects' pixels set to zero.

    Examples
    --------
    >>> stamps = hubble_stamps()
    >>> len(stamps) > 50, all(s.r50 > 1 for s in stamps)
    (True, True)
    """
    import warnings

    from astropy.utils.exceptions import AstropyWarning
    from photutils.segmentation import deblend_sources, detect_sources
    from skimage.data import hubble_deep_field

    rgb = np.asarray(hubble_deep_field(), float)
    grey = rgb.mean(axis=2)
    sky = float(np.median(grey))
    noise = float(1.4826 * np.median(np.abs(grey - sky)))
    sm = gaussian_filter(grey - sky, 1.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AstropyWarning)
        segm = detect_sources(sm, 3 * noise / (2 * np.sqrt(np.pi)), n_pixels=30)
        segm = deblend_sources(sm, segm, n_pixels=30, contrast=0.01, progress_bar=False)
    labels = np.asarray(segm.data)
    saturated = binary_dilation((rgb >= 255).any(axis=2), iterations=3)
    out = []
    ny, nx = labels.shape
    for lab, sl in zip(segm.labels, segm.slices):
        ys, xs = sl
        if ys.start == 0 or xs.start == 0 or ys.stop >= ny or xs.stop >= nx:
            continue
        sel = labels[sl] == lab
        if sel.sum() < min_area_pix or saturated[sl][sel].any():
            continue
        grow = binary_dilation(np.pad(sel, 3), iterations=2)
        y0, x0 = ys.start - 3, xs.start - 3
        cut = (grey - sky)[max(y0, 0):ys.stop + 3, max(x0, 0):xs.stop + 3]
        if cut.shape != grow.shape:
            continue
        light = np.clip(np.where(grow, cut, 0.0), 0.0, None)
        tot = light.sum()
        yy, xx = np.mgrid[0:light.shape[0], 0:light.shape[1]]
        mx, my = float((light * xx).sum() / tot), float((light * yy).sum() / tot)
        r = np.hypot(xx - mx, yy - my).ravel()
        order = np.argsort(r)
        cum = np.cumsum(light.ravel()[order])
        r50 = float(r[order][np.searchsorted(cum, 0.5 * tot)])
        out.append(GalaxyStamp((light / tot).astype(np.float32), mx, my, max(r50, 1.0)))
    return tuple(out)


def _hubble_source(rng, bx, by, x0, y0, size):
    """A real galaxy (:func:`hubble_stamps`, drawn by ``rng``) centred on (x0, y0) in the source plane,
    turned by a random angle, mirrored half the time, its half-light radius scaled to 0.8-1.4 ``size``."""
    stamps = hubble_stamps()
    st = stamps[int(rng.integers(len(stamps)))]
    ang = rng.uniform(0, 2 * np.pi)
    flip = -1.0 if rng.uniform() < 0.5 else 1.0
    k = st.r50 / (size * rng.uniform(0.8, 1.4))  # stamp pixels per source-plane pixel
    dx, dy = bx - x0, by - y0
    u = (np.cos(ang) * dx + np.sin(ang) * dy) * k * flip + st.x
    v = (-np.sin(ang) * dx + np.cos(ang) * dy) * k + st.y
    return map_coordinates(st.light, [v.ravel(), u.ravel()], order=1, cval=0.0).reshape(bx.shape)


def _spiral(xx, yy, x0, y0, re, q, ang, rng):
    """An exponential disc with two logarithmic arms and knots (our own shape, flux about 1)."""
    c, s = np.cos(np.radians(ang)), np.sin(np.radians(ang))
    dx, dy = xx - x0, yy - y0
    xp, yp = c * dx + s * dy, (-s * dx + c * dy) / q
    r = np.hypot(xp, yp) + 1e-9
    phi = np.arctan2(yp, xp)
    pitch = rng.uniform(0.2, 0.45)
    arms = 1 + 0.8 * np.cos(2 * (phi - np.log(r / re) / np.tan(pitch)))
    disc = np.exp(-1.678 * r / re) * arms
    return disc / (disc.sum() + 1e-30)


def make_cutout(seed: int, kind: str | None = None, *, lens: bool | None = None, size: int | None = None,
                theta_e_over_fwhm: tuple[float, float] = (1.5, 6.0), source: str | None = None,
                companion: bool | None = None) -> Cutout:
    """Draw one cutout from ``seed``.

    Parameters
    ----------
    seed : int
        Everything follows from it.
    kind : str, optional
        One of :data:`LENS_KINDS` or :data:`NONLENS_KINDS`; default drawn (lens or not by ``lens``).
    size : int, optional
        Side in pixels; default large enough for the ring and its surroundings (64-128), and for
        a star 5" from the lens (up to 256).
    theta_e_over_fwhm : (lo, hi)
        Range of the Einstein radius in units of the seeing FWHM.
    source : str, optional
        The lensed source's morphology, one of :data:`SOURCE_KINDS`; default drawn (a real Hubble
        Deep Field galaxy with probability :data:`HUBBLE_SOURCE_SHARE`). The draw and the real
        galaxy's pick, angle and size come from their own stream of ``seed``, so the rest of the
        field is the same for either source.
    companion : bool, optional
        Put a companion galaxy on the lens's light (lenses and ellipticals only); default drawn, with
        probability :data:`COMPANION_SHARE`, from its own stream of ``seed`` (the rest of the field is the
        same either way).

    Examples
    --------
    >>> c = make_cutout(3, "ring+star")
    >>> c.truth["is_lens"], c.image.shape == c.bands.shape[1:]
    (True, True)
    """
    rng = np.random.default_rng(seed)
    if kind is None:
        if lens is None:
            lens = bool(rng.uniform() < 0.67)
        kinds = LENS_KINDS if lens else NONLENS_KINDS
        kind = kinds[int(rng.integers(len(kinds)))]
    is_lens = kind in LENS_KINDS
    # Pixel scale, seeing and Einstein radius (5-26 pixels: what a cutout shows), drawn until they agree.
    while True:
        scale = float(rng.uniform(0.05, 0.26))
        fwhm = float(rng.uniform(max(0.1, 1.8 * scale), 1.0))
        fwhm_pix = fwhm / scale
        lo, hi = max(theta_e_over_fwhm[0], 5.0 / fwhm_pix), min(theta_e_over_fwhm[1], 26.0 / fwhm_pix)
        if lo < hi:
            break
    te_pix = float(fwhm_pix * rng.uniform(lo, hi))
    beta = float(rng.uniform(2.5, 4.5))
    if size is None:
        size = int(np.clip(2 * np.ceil(2.6 * te_pix) + 8, 64, 128))
        if "star" in kind:  # room for the star 3.5-5" from the lens at fine pixel scales too
            size = int(min(max(size, 2 * np.ceil(5.0 / scale) + 12), 256))
    ov = 3
    xx, yy = _grid(size, ov)
    c0 = (size - 1) / 2
    cx, cy = c0 + rng.uniform(-2.5, 2.5), c0 + rng.uniform(-2.5, 2.5)
    zero = np.zeros_like(xx)
    comps = {"lens": zero, "arc": zero, "other": [zero, zero, zero]}
    truth: dict[str, Any] = {"kind": kind, "is_lens": is_lens, "seed": seed, "pixel_scale_arcsec": scale,
             "psf_fwhm_arcsec": fwhm, "psf_fwhm_pix": fwhm_pix, "moffat_beta": beta,
             "center_x": float(cx), "center_y": float(cy), "radius_pix": float("nan"), "extras": []}

    def add_other(img, colour):
        for b in range(3):
            comps["other"][b] = comps["other"][b] + img * colour[b]

    # Main galaxy (the lens, or the non-lens galaxy): elliptical Sersic light, peak 30-400 x noise.
    lens_q, lens_ang = float(rng.uniform(0.55, 1.0)), float(rng.uniform(0, 180))
    re_pix = float(te_pix * rng.uniform(0.4, 1.2)) if is_lens else float(rng.uniform(3, 14))
    gal_n = float(rng.uniform(2.5, 5.0))
    lens_light = _sersic(xx, yy, 1.0, re_pix, gal_n, lens_q, lens_ang, cx, cy)
    if kind != "pure noise" and kind != "spiral":
        comps["lens"] = lens_light
    if is_lens:
        q_m = float(np.clip(lens_q + rng.normal(0, 0.1), 0.55, 1.0))
        g = rng.uniform(0, 0.05)
        gang = rng.uniform(0, np.pi)
        lenses = [rt.SIELens(te_pix, q_m, lens_ang + rng.normal(0, 10), cx, cy),
                  rt.ExternalShear(g * np.cos(2 * gang), g * np.sin(2 * gang), cx, cy)]
        bx, by = rt.source_positions(lenses, xx, yy)
        arcish = kind.startswith("arc")
        off = te_pix * (rng.uniform(0.25, 0.5) if arcish else rng.uniform(0.0, 0.07))  # rings: source near the axis
        t = rng.uniform(0, 2 * np.pi)
        src_size = float(max(te_pix * rng.uniform(0.06, 0.15), 0.7))
        sx0, sy0 = cx + off * np.cos(t), cy + off * np.sin(t)
        comps["arc"] = _clumpy_source(rng, bx, by, sx0, sy0, src_size)
        rng_src = np.random.default_rng([seed, 14])
        real = rng_src.uniform() < HUBBLE_SOURCE_SHARE
        if source not in (None, *SOURCE_KINDS):
            raise ValueError(f"source must be one of {SOURCE_KINDS}")
        if source == "hubble" or (source is None and real):
            comps["arc"] = _hubble_source(rng_src, bx, by, sx0, sy0, src_size)
            truth["source"] = "hubble"
        else:
            truth["source"] = "clumpy"
        truth.update(radius_pix=te_pix, theta_e_arcsec=te_pix * scale, mass_axis_ratio=q_m, shear=float(g),
                     source_offset_pix=float(off))
    # Everything else in the field.
    if kind in ("ring+neighbour", "arc+neighbour") or (kind in ("elliptical", "galaxy pair") and rng.uniform() < 0.3):
        d = te_pix * rng.uniform(1.3, 1.8) if is_lens else rng.uniform(8, 0.45 * size)
        t = rng.uniform(0, 2 * np.pi)
        nx_, ny_ = cx + d * np.cos(t), cy + d * np.sin(t)
        img = _sersic(xx, yy, 1.0, rng.uniform(0.8, 2.5), rng.uniform(1, 4), rng.uniform(0.5, 1), rng.uniform(0, 180),
                      nx_, ny_)
        add_other(img * rng.uniform(0.15, 0.6), _random_colour(rng))
        truth["extras"].append(("neighbour", float(nx_), float(ny_)))
    stars = []
    if kind in ("ring+star", "arc+star", "star + galaxy"):
        d_arcsec = rng.uniform(3.5, 5.0)
        d = min(d_arcsec / scale, 0.45 * size)
        d = max(d, 1.4 * te_pix) if is_lens else max(d, 6.0)
        d = min(d, 0.47 * size)
        t = rng.uniform(0, 2 * np.pi)
        stars.append((cx + d * np.cos(t), cy + d * np.sin(t), rng.uniform(0.5, 8.0)))
    if kind == "galaxy pair":
        d = rng.uniform(1.0, 3.0) / scale
        d = float(np.clip(d, 2.5 * re_pix, 0.4 * size))
        t = rng.uniform(0, 2 * np.pi)
        img = _sersic(xx, yy, 1.0, re_pix * rng.uniform(0.5, 1.2), rng.uniform(2, 5), rng.uniform(0.5, 1),
                      rng.uniform(0, 180), cx + d * np.cos(t), cy + d * np.sin(t))
        add_other(img * rng.uniform(0.3, 1.0), COLOUR_LENS)
        truth["extras"].append(("companion", float(cx + d * np.cos(t)), float(cy + d * np.sin(t))))
    if kind == "spiral":
        disc = _spiral(xx, yy, cx, cy, re_pix * 1.5, rng.uniform(0.4, 1.0), rng.uniform(0, 180), rng)
        disc = disc * ov * ov * rng.uniform(0.5, 1.5)
        bulge = lens_light * rng.uniform(0.1, 0.5)
        comps["lens"] = bulge
        add_other(disc, COLOUR_DISC)
    if kind == "ring galaxy":
        # A bulge inside a star-forming ring: our non-lens look-alike of an Einstein ring.
        rr_ring = rng.uniform(2.0, 4.0) * re_pix
        rr_ring = float(min(rr_ring, 0.4 * size))
        q_r, a_r = rng.uniform(0.4, 1.0), np.radians(rng.uniform(0, 180))
        dx, dy = xx - cx, yy - cy
        xp, yp = np.cos(a_r) * dx + np.sin(a_r) * dy, (-np.sin(a_r) * dx + np.cos(a_r) * dy) / q_r
        width = rr_ring * rng.uniform(0.12, 0.3)
        ring = np.exp(-0.5 * ((np.hypot(xp, yp) - rr_ring) / width) ** 2)
        ring *= 1 + 0.7 * np.cos(np.arctan2(yp, xp) * rng.integers(1, 4) + rng.uniform(0, 6))
        add_other(ring / ring.sum() * ov * ov * rng.uniform(0.4, 1.2), COLOUR_ARC)
        truth["ring_galaxy_radius_pix"] = rr_ring
    # Random extra neighbours anywhere (realistic crowding), for half the cutouts.
    if rng.uniform() < 0.5:
        for _ in range(int(rng.integers(1, 3))):
            px_, py_ = rng.uniform(0, size, 2)
            if np.hypot(px_ - cx, py_ - cy) < (2.2 * te_pix if is_lens else 10):
                continue
            img = _sersic(xx, yy, 1.0, rng.uniform(0.8, 3), rng.uniform(1, 4), rng.uniform(0.4, 1), rng.uniform(0, 180),
                          px_, py_)
            add_other(img * rng.uniform(0.05, 0.4), _random_colour(rng))
            truth["extras"].append(("field galaxy", float(px_), float(py_)))

    _add_overlapping_companion(seed, kind, is_lens, te_pix, re_pix, cx, cy, xx, yy, add_other, truth, companion)

    # Brightness (in units of the pixel noise after the PSF): lens peak 30-400, arcs 4-20 per pixel.
    kern = _moffat_kernel(fwhm_pix, beta)
    lens_peak = rng.uniform(30, 400)
    lens_img = _bin(comps["lens"], ov)
    lens_img = _blur(lens_img, kern)
    if lens_img.max() > 0:
        lens_img *= lens_peak / lens_img.max()
    unit = lens_peak / max(_blur(_bin(lens_light, ov), kern).max(), 1e-30)
    bands = np.zeros((3, size, size))
    for b in range(3):
        bands[b] += lens_img * COLOUR_LENS[b]
        bands[b] += _blur(_bin(comps["other"][b], ov), kern) * unit
    if is_lens:
        arc = _blur(_bin(comps["arc"], ov), kern)
        arc_peak = rng.uniform(4.0, 20.0)
        arc *= arc_peak / max(arc.max(), 1e-30)
        truth["arc_peak_snr"] = float(arc_peak)
        for b in range(3):
            bands[b] += arc * COLOUR_ARC[b] / COLOUR_ARC[1]
    for sx, sy, amp in stars:
        star = _point(size, sx, sy, fwhm_pix, beta)
        peak = lens_peak * amp
        colour = _random_colour(rng)
        for b in range(3):
            bands[b] += star * peak / star.max() * colour[b]
        truth["extras"].append(("star", float(sx), float(sy)))
    bands += rng.normal(0.0, 1.0, bands.shape)
    return Cutout(bands[1].astype(np.float32), bands.astype(np.float32), scale, fwhm, truth)


def _add_overlapping_companion(seed, kind, is_lens, te_pix, re_pix, cx, cy, xx, yy, add_other, truth,
                               wanted: bool | None) -> None:
    """For :data:`COMPANION_SHARE` of the lenses and of the ellipticals, a small red galaxy of the lens's group
    sitting on the lens's light, inside the ring (0.35-0.9 theta_E; an elliptical's at 0.5-2.5 R_e), 3-25% of the
    lens's flux (``wanted`` forces it on or off). Drawn from its own stream of ``seed``, so every other part of
    the field is as without it."""
    if kind not in (*LENS_KINDS, "elliptical"):
        return
    rng = np.random.default_rng([seed, 21])
    drawn = bool(rng.uniform() < COMPANION_SHARE)
    if not (drawn if wanted is None else wanted):
        return
    d = te_pix * rng.uniform(0.35, 0.9) if is_lens else re_pix * rng.uniform(0.5, 2.5)
    t = rng.uniform(0, 2 * np.pi)
    x0, y0 = cx + d * np.cos(t), cy + d * np.sin(t)
    size = max((te_pix if is_lens else re_pix) * rng.uniform(0.1, 0.35), 0.8)
    img = _sersic(xx, yy, rng.uniform(0.03, 0.25), size, rng.uniform(1.0, 4.0), rng.uniform(0.6, 1.0),
                  rng.uniform(0, 180), x0, y0)
    add_other(img, COLOUR_LENS)
    truth["extras"].append(("companion", float(x0), float(y0)))


def _random_colour(rng) -> tuple[float, float, float]:
    t = rng.uniform(0, 1)  # 0 blue .. 1 red
    return (1.0 - 0.7 * t, 0.8, 0.6 + 0.4 * t)


def _blur(img: np.ndarray, kern: np.ndarray) -> np.ndarray:
    return fftconvolve(img, kern, mode="same")


def _point(size: int, x0: float, y0: float, fwhm_pix: float, beta: float) -> np.ndarray:
    """A Moffat star integrated over pixels (3 x 3 sub-samples)."""
    xx, yy = _grid(size, 3)
    return _bin(rt.psf_profile(np.hypot(xx - x0, yy - y0), fwhm_pix, "moffat", beta), 3)


def make_sample(n_lenses: int, n_nonlenses: int, *, first_seed: int = 0, **kwargs) -> list[Cutout]:
    """``n_lenses`` lenses cycling through :data:`LENS_KINDS`, then ``n_nonlenses`` non-lenses through
    :data:`NONLENS_KINDS`, with seeds ``first_seed, first_seed + 1, ...``."""
    out = [make_cutout(first_seed + i, LENS_KINDS[i % len(LENS_KINDS)], **kwargs) for i in range(n_lenses)]
    out += [make_cutout(first_seed + n_lenses + i, NONLENS_KINDS[i % len(NONLENS_KINDS)], **kwargs)
            for i in range(n_nonlenses)]
    return out


def binomial_interval(k: int, n: int, level: float = 0.95) -> tuple[float, float]:
    """Clopper & Pearson (1934) exact interval of a rate seen ``k`` times in ``n`` (scipy's beta quantiles).

    Examples
    --------
    >>> lo, hi = binomial_interval(0, 100)
    >>> lo, round(hi, 4)  # 1 - 0.025 ** (1 / 100)
    (0.0, 0.0362)
    """
    from scipy.stats import beta

    a = (1 - level) / 2
    lo = float(beta.ppf(a, k, n - k + 1)) if k > 0 else 0.0
    hi = float(beta.ppf(1 - a, k + 1, n - k)) if k < n else 1.0
    return lo, hi


def is_hard_ring(cutout: Cutout) -> bool:
    """The issue's hard case: a ring (source near the lens axis) with a neighbour or a star in the
    cutout, of radius at least 2.5 seeing FWHM."""
    t = cutout.truth
    return t["kind"] in ("ring+neighbour", "ring+star") and t["radius_pix"] >= 2.5 * cutout.psf_fwhm_pix


def recovery_figures(cutouts, results, *, within: float = 0.05) -> dict:
    """Figures of a finder run over generated cutouts.

    ``results`` are ring-finder answers (objects with ``found``, ``confident``, ``radius_pix``,
    ``radius_err_pix``), one per cutout. Returns counts and rates: ``found`` (fraction of lenses
    found), ``within`` (fraction of lenses found within ``within`` of the truth), ``bias`` and
    ``scatter`` (median and 1.4826 MAD of the fractional radius error of found lenses), ``cover1`` /
    ``cover2`` (fraction of found lenses whose truth is inside the stated 1 / 2 sigma interval,
    :func:`lensmass.core.ring_interval.truth_inside`: asymmetric where the finder states it so),
    ``false_confident`` (fraction of non-lenses given a confident ring) with its 95% Clopper-Pearson
    interval ``false_confident_interval``, and ``hard_within`` (fraction of the :func:`is_hard_ring`
    lenses found within ``within``; ``n_hard`` of them).
    """
    lens = [(c, r) for c, r in zip(cutouts, results) if c.truth["is_lens"]]
    non = [(c, r) for c, r in zip(cutouts, results) if not c.truth["is_lens"]]
    found = [(c, r) for c, r in lens if r.found]
    frac = np.array([r.radius_pix / c.truth["radius_pix"] - 1 for c, r in found])
    in1 = np.array([truth_inside(r, c.truth["radius_pix"], 1) for c, r in found], bool)
    in2 = np.array([truth_inside(r, c.truth["radius_pix"], 2) for c, r in found], bool)
    hard = [bool(r.found and abs(r.radius_pix / c.truth["radius_pix"] - 1) <= within) for c, r in lens
            if is_hard_ring(c)]
    n_conf = int(sum(bool(r.confident and r.found) for _, r in non))
    n_l = max(len(lens), 1)
    out = {
        "n_lenses": len(lens), "n_nonlenses": len(non), "n_found": len(found),
        "found": len(found) / n_l,
        "within": float(np.sum(np.abs(frac) <= within)) / n_l,
        "bias": float(np.median(frac)) if frac.size else float("nan"),
        "scatter": float(1.4826 * np.median(np.abs(frac - np.median(frac)))) if frac.size else float("nan"),
        "cover1": float(np.mean(in1)) if in1.size else float("nan"),
        "cover2": float(np.mean(in2)) if in2.size else float("nan"),
        "false_confident": n_conf / len(non) if non else float("nan"),
        "false_confident_interval": binomial_interval(n_conf, len(non)) if non else (float("nan"), float("nan")),
        "false_found": float(np.mean([r.found for _, r in non])) if non else float("nan"),
        "n_hard": len(hard),
        "hard_within": float(np.mean(hard)) if hard else float("nan"),
    }
    return out


def format_figures(fig: dict) -> str:
    """One line of :func:`recovery_figures` for test output and benchmark scripts."""
    lo, hi = fig["false_confident_interval"]
    return (f"{fig['n_lenses']} lenses: found {fig['found']:.0%}, within 5% {fig['within']:.0%}, "
            f"bias {fig['bias']:+.1%}, scatter {fig['scatter']:.1%}, inside 1 sigma {fig['cover1']:.0%}, "
            f"inside 2 sigma {fig['cover2']:.0%}; ring >= 2.5 FWHM with a neighbour or a star within 5%: "
            f"{fig['hard_within']:.0%} of {fig['n_hard']}; {fig['n_nonlenses']} non-lenses: confident ring "
            f"{fig['false_confident']:.1%} (95% interval {lo:.1%}-{hi:.1%}; any ring {fig['false_found']:.0%})")
