"""A second, independently written maker of lens cutouts, unlike lensmass.core.realistic_fields (issue 14).

The finder and its calibration were tuned on the project's own generator; this one is written from
scratch on general-purpose libraries (astropy.modeling's Sersic2D, Moffat2D, Gaussian2D and AiryDisk2D,
astropy.convolution, scipy) to see whether the FITS route holds on fields made another way. It puts in
what real survey cutouts have and that generator lacks, several at once per field:

- the sky: an unsubtracted pedestal of 100-1000 noise units, or a gradient, or a slightly wrong
  subtraction; image units from 1e-4 to 1e4 (e-/s, ADU, nanomaggies);
- noise: sky-dominated Poisson counts (the galaxy's own shot noise too), or white noise smoothed by a
  2-3 pixel kernel (a resampled, co-added image) and rescaled;
- the PSF: Gaussian, elliptical Moffat, or space-like (an Airy core, a Gaussian halo and four
  diffraction spikes);
- the lens: a bulge and a disc of different shape and angle (an isophote twist), sometimes a companion
  overlapping it; SIE mass of axis ratio 0.4-1 with external shear up to 0.15 (quads, folds, two arcs
  or one arc besides near-axis rings);
- defects: cosmic rays, a hot, dead or NaN column, a saturated star with a bleed trail, a NaN or zero
  border (a cutout at a survey edge); the FITS writer can store int16 with BSCALE/BZERO and a rotated WCS;
- non-lenses: edge-on discs, mergers with tidal tails, star-forming rings around ellipticals (the
  hardest: one band shows no colour), galaxy groups, ellipticals with a star.

Truth: ``radius_pix`` is the SIE's theta_E in the intermediate-axis normalisation (the critical curve of
the SIE alone encloses pi theta_E^2; :data:`lensmass.core.sie.THETA_E_CONVENTION`), the convention of
lensmass.core.realistic_fields, drawn with the project's ray tracer (lensmass.core.raytrace.SIELens,
ExternalShear, source_positions; Kormann et al. 1994). :func:`check_circular_convention` checks it on a
circular lens: the images of a source on the axis lie at theta_E (SIS, Narayan & Bartelmann 1996).

Seeds: tune on 550000-559999, check on 650000-659999; 700000-899999 are never used here.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from astropy.convolution import convolve_fft
from astropy.modeling.models import AiryDisk2D, Gaussian2D, Moffat2D, Sersic2D
from scipy.ndimage import gaussian_filter

from lensmass.core import raytrace as rt

LENS_KINDS = ("ring", "ring+neighbour", "ring+star", "quad", "fold", "two arcs", "one arc")
NONLENS_KINDS = ("edge-on disc", "merger", "star-forming ring", "group", "elliptical+star")
PSF_KINDS = ("gaussian", "elliptical moffat", "space")
OVERSAMPLE = 3


@dataclass
class StressField:
    """One cutout: ``image`` in its own units (may hold NaN), the truth, and what was put in it."""

    image: np.ndarray
    pixel_scale_arcsec: float
    psf_fwhm_pix: float
    noise_sigma: float  # per-pixel sky noise, image units
    truth: dict = field(default_factory=dict)
    features: list[str] = field(default_factory=list)
    lens_light: np.ndarray | None = None  # the lens galaxy's own light (bulge, disc), blurred, noise-free, image units
    #: The other lights put in, blurred, noise-free, image units, for oracles (the image minus one of them is the field
    #: without it, up to the noise it added): "neighbour", "companion" (None when absent), "star", "arc" (zeros).
    parts: dict = field(default_factory=dict)


def _sersic(xx, yy, re, n, q, ang_rad, x0, y0):
    """astropy's Sersic2D (amplitude 1 at R_e); ellip = 1 - q."""
    return Sersic2D.evaluate(xx, yy, 1.0, re, n, x0, y0, 1.0 - q, ang_rad)


def _psf(rng, kind: str, fwhm: float) -> np.ndarray:
    """A normalised PSF image on the oversampled grid (FWHM ``fwhm`` fine pixels)."""
    h = int(np.ceil(4 * fwhm)) + 6
    if kind == "space":
        h = int(np.ceil(8 * fwhm)) + 6
    yy, xx = np.mgrid[-h:h + 1, -h:h + 1].astype(float)
    if kind == "gaussian":
        s = fwhm / 2.3548
        k = Gaussian2D.evaluate(xx, yy, 1.0, 0.0, 0.0, s, s, 0.0)
    elif kind == "elliptical moffat":
        alpha_b = rng.uniform(2.5, 4.5)
        gamma = fwhm / (2 * np.sqrt(2 ** (1 / alpha_b) - 1))
        e = rng.uniform(0.0, 0.15)
        t = rng.uniform(0, np.pi)
        u, v = np.cos(t) * xx + np.sin(t) * yy, (-np.sin(t) * xx + np.cos(t) * yy) / (1 - e)
        k = Moffat2D.evaluate(u, v, 1.0, 0.0, 0.0, gamma, alpha_b)
    else:
        # Airy core (first zero at 1.22 lambda/D = FWHM / 0.84 / ...): AiryDisk2D's radius is the first zero,
        # 1.2197 / 1.0290 times the FWHM (common practice for a circular aperture).
        k = AiryDisk2D.evaluate(xx, yy, 1.0, 0.0, 0.0, fwhm * 1.2197 / 1.0290)
        k = k + 0.02 * Gaussian2D.evaluate(xx, yy, 1.0, 0.0, 0.0, 2.5 * fwhm, 2.5 * fwhm, 0.0)
        t = rng.uniform(0, np.pi / 2)
        for a in (t, t + np.pi / 2):
            d_perp = np.abs(-np.sin(a) * xx + np.cos(a) * yy)
            along = np.abs(np.cos(a) * xx + np.sin(a) * yy)
            k = k + 0.004 * np.exp(-0.5 * (d_perp / 0.5) ** 2) * np.exp(-along / (3 * fwhm))
    return k / k.sum()


def _bin(fine: np.ndarray) -> np.ndarray:
    k = OVERSAMPLE
    ny, nx = fine.shape[0] // k, fine.shape[1] // k
    return fine.reshape(ny, k, nx, k).mean(axis=(1, 3))


def _source(rng, bx, by, x0, y0, size):
    """Our source: an exponential Sersic2D disc plus 2-5 Gaussian2D knots, total about one unit."""
    q, ang = rng.uniform(0.3, 1.0), rng.uniform(0, np.pi)
    out = _sersic(bx, by, size, rng.uniform(0.5, 1.5), q, ang, x0, y0)
    out = out / max(out.max(), 1e-30)
    for _ in range(int(rng.integers(2, 6))):
        r, t = size * 1.5 * np.sqrt(rng.uniform()), rng.uniform(0, 2 * np.pi)
        s = size * rng.uniform(0.1, 0.4)
        out = out + rng.uniform(0.3, 1.5) * Gaussian2D.evaluate(bx, by, 1.0, x0 + r * np.cos(t), y0 + r * np.sin(t),
                                                                 s, s * rng.uniform(0.5, 1), rng.uniform(0, np.pi))
    return out


def _point(xx, yy, x0, y0):
    """A point on the fine grid (the PSF makes it a star): the fine pixel nearest (x0, y0)."""
    out = np.zeros_like(xx)
    k = OVERSAMPLE
    iy, ix = int(np.clip(round((y0 + 0.5) * k - 0.5), 0, xx.shape[0] - 1)), int(np.clip(round((x0 + 0.5) * k - 0.5), 0,
                                                                                          xx.shape[1] - 1))
    out[iy, ix] = k * k
    return out


def make_stress_field(seed: int, kind: str | None = None) -> StressField:
    """Draw one cutout from ``seed`` (a lens when ``kind`` is one of :data:`LENS_KINDS`)."""
    rng = np.random.default_rng(seed)
    if kind is None:
        kinds = LENS_KINDS + NONLENS_KINDS
        kind = kinds[int(rng.integers(len(kinds)))]
    is_lens = kind in LENS_KINDS
    feats: list[str] = []
    psf_kind = PSF_KINDS[int(rng.integers(3))]
    while True:
        if psf_kind == "space":
            scale = float(rng.uniform(0.03, 0.065))
            fwhm = float(rng.uniform(max(0.06, 2.0 * scale), 0.16))
        else:
            scale = float(rng.uniform(0.12, 0.27))
            fwhm = float(rng.uniform(max(0.45, 2.0 * scale), 1.3))
        fwhm_pix = fwhm / scale
        lo, hi = max(1.5, 5.0 / fwhm_pix), min(6.0, 26.0 / fwhm_pix)
        if lo < hi:
            break
    te = float(fwhm_pix * rng.uniform(lo, hi))
    feats.append(f"psf {psf_kind}")
    size = int(np.clip(2 * np.ceil(2.7 * te) + 10, 64, 160))
    if kind in ("ring+star", "elliptical+star"):
        size = int(min(max(size, 2 * np.ceil(4.0 / scale) + 10), 200))
    k = OVERSAMPLE
    s = (np.arange(size * k) + 0.5) / k - 0.5
    xx, yy = np.meshgrid(s, s)
    c0 = (size - 1) / 2
    cx, cy = c0 + rng.uniform(-3, 3), c0 + rng.uniform(-3, 3)
    truth: dict[str, Any] = {"kind": kind, "is_lens": is_lens, "seed": seed, "radius_pix": float("nan"),
                             "center_x": float(cx), "center_y": float(cy), "psf_fwhm_pix": fwhm_pix,
                             "pixel_scale_arcsec": scale, "extras": []}
    # Light in units of the sky noise after the PSF (peaks set below).
    lens_fine = np.zeros_like(xx)
    nb_fine = np.zeros_like(xx)
    comp_fine = np.zeros_like(xx)
    other_fine = np.zeros_like(xx)
    ang = rng.uniform(0, np.pi)
    q_l = rng.uniform(0.5, 1.0)
    re_b = te * rng.uniform(0.3, 1.0) if is_lens else rng.uniform(3, 12)
    bulge = _sersic(xx, yy, re_b, rng.uniform(3.0, 5.5), q_l, ang, cx, cy)
    lens_fine += bulge / bulge.max()
    if rng.uniform() < 0.5:  # a disc of another shape and angle: a colour/shape gradient in one band
        disc = _sersic(xx, yy, re_b * rng.uniform(1.5, 3.0), 1.0, rng.uniform(0.3, 0.9),
                       ang + rng.normal(0, 0.4), cx, cy)
        lens_fine += rng.uniform(0.01, 0.08) * disc / disc.max()
        feats.append("bulge+disc")
    arc_fine = np.zeros_like(xx)
    if is_lens:
        q_m = float(np.clip(rng.uniform(0.4, 1.0), 0.4, 1.0))
        g = rng.uniform(0, 0.15)
        ga = rng.uniform(0, np.pi)
        lenses = [rt.SIELens(te, q_m, np.degrees(ang) + rng.normal(0, 15), cx, cy),
                  rt.ExternalShear(g * np.cos(2 * ga), g * np.sin(2 * ga), cx, cy)]
        bx, by = rt.source_positions(lenses, xx, yy)
        if kind.startswith("ring"):
            off = te * rng.uniform(0.0, 0.07)
        elif kind == "quad":
            off = te * rng.uniform(0.03, 0.15) * (1.2 - q_m + g)
        elif kind == "fold":
            off = te * rng.uniform(0.15, 0.3) * (1.2 - q_m + g)
        elif kind == "two arcs":
            off = te * rng.uniform(0.3, 0.6)
        else:
            off = te * rng.uniform(0.6, 0.9)
        t = rng.uniform(0, 2 * np.pi)
        src_size = float(max(te * rng.uniform(0.05, 0.14), 0.6))
        arc_fine = _source(rng, bx, by, cx + off * np.cos(t), cy + off * np.sin(t), src_size)
        truth.update(radius_pix=te, theta_e_arcsec=te * scale, mass_axis_ratio=q_m, shear=float(g),
                     source_offset_pix=float(off))
        feats.append(f"q {q_m:.2f}")
        if g > 0.08:
            feats.append("shear > 0.08")
    # Other things in the field.
    if kind == "ring+neighbour" or (is_lens and rng.uniform() < 0.15):
        d = te * rng.uniform(1.2, 1.9)
        t = rng.uniform(0, 2 * np.pi)
        nb = _sersic(xx, yy, rng.uniform(0.7, 2.5), rng.uniform(1, 4), rng.uniform(0.5, 1), rng.uniform(0, np.pi),
                     cx + d * np.cos(t), cy + d * np.sin(t))
        nb_fine = rng.uniform(0.1, 0.6) * nb / nb.max()
        other_fine += nb_fine
        feats.append("neighbour")
        truth["extras"].append("neighbour")
    if is_lens and rng.uniform() < 0.12:  # a companion overlapping the lens
        d = te * rng.uniform(0.4, 0.8)
        t = rng.uniform(0, 2 * np.pi)
        comp = _sersic(xx, yy, re_b * rng.uniform(0.3, 0.7), 4.0, rng.uniform(0.6, 1), 0.0, cx + d * np.cos(t),
                       cy + d * np.sin(t))
        comp_fine = rng.uniform(0.1, 0.4) * comp / comp.max()
        other_fine += comp_fine
        feats.append("companion")
    stars = []
    if kind in ("ring+star", "elliptical+star") or rng.uniform() < 0.1:
        d = min(max(rng.uniform(3.0, 4.5) / scale, 1.5 * te + 3), 0.45 * size)
        t = rng.uniform(0, 2 * np.pi)
        stars.append((cx + d * np.cos(t), cy + d * np.sin(t), rng.uniform(0.3, 6.0)))
        feats.append("star")
    if kind == "edge-on disc":
        lens_fine *= 0.3
        disc = _sersic(xx, yy, rng.uniform(6, 16), 1.0, rng.uniform(0.08, 0.25), ang, cx, cy)
        lens_fine += disc / disc.max()
        if rng.uniform() < 0.5:  # a dust lane along the major axis
            dperp = -np.sin(ang) * (xx - cx) + np.cos(ang) * (yy - cy)
            lens_fine *= 1 - 0.6 * np.exp(-0.5 * (dperp / 0.8) ** 2)
    elif kind == "merger":
        d = rng.uniform(6, 14)
        t = rng.uniform(0, 2 * np.pi)
        x2, y2 = cx + d * np.cos(t), cy + d * np.sin(t)
        g2 = _sersic(xx, yy, rng.uniform(2, 6), rng.uniform(1, 4), rng.uniform(0.4, 1), rng.uniform(0, np.pi), x2, y2)
        other_fine += rng.uniform(0.3, 1.0) * g2 / g2.max()
        for sign in (1, -1):  # two curved tidal tails of knots and diffuse light
            r0, phi0 = rng.uniform(8, 25), t + sign * rng.uniform(0.5, 1.5)
            phis = phi0 + sign * np.linspace(0, rng.uniform(1.0, 2.5), 40)
            rs = r0 * (1 + 0.3 * np.linspace(0, 1, 40))
            w = rng.uniform(1.0, 2.5)
            amp = rng.uniform(0.02, 0.1)
            for ph, rr in zip(phis, rs):
                other_fine += amp * Gaussian2D.evaluate(xx, yy, 1.0, cx + rr * np.cos(ph), cy + rr * np.sin(ph), w, w, 0.0)
        truth["extras"].append("tidal tails")
    elif kind == "star-forming ring":
        rr = rng.uniform(1.5, 4.0) * re_b
        rr = min(rr, 0.4 * size)
        q_r, a_r = rng.uniform(0.55, 1.0), rng.uniform(0, np.pi)
        ox, oy = rng.normal(0, 0.08 * rr, 2)
        dx, dy = xx - cx - ox, yy - cy - oy
        u, v = np.cos(a_r) * dx + np.sin(a_r) * dy, (-np.sin(a_r) * dx + np.cos(a_r) * dy) / q_r
        width = rr * rng.uniform(0.05, 0.2)
        ring = np.exp(-0.5 * ((np.hypot(u, v) - rr) / width) ** 2)
        phi = np.arctan2(v, u)
        knots = np.ones_like(ring)
        for _ in range(int(rng.integers(4, 12))):
            p = rng.uniform(-np.pi, np.pi)
            knots += rng.uniform(0.5, 3.0) * np.exp(-0.5 * (((phi - p + np.pi) % (2 * np.pi) - np.pi) / 0.15) ** 2)
        other_fine += rng.uniform(0.03, 0.15) * ring * knots / (ring * knots).max()
        truth["ring_galaxy_radius_pix"] = float(rr)
    elif kind == "group":
        for _ in range(int(rng.integers(2, 5))):
            d, t = rng.uniform(8, 0.4 * size), rng.uniform(0, 2 * np.pi)
            gm = _sersic(xx, yy, rng.uniform(2, 8), rng.uniform(2.5, 5), rng.uniform(0.5, 1), rng.uniform(0, np.pi),
                         cx + d * np.cos(t), cy + d * np.sin(t))
            other_fine += rng.uniform(0.2, 1.0) * gm / gm.max()
    for _ in range(int(rng.integers(0, 3))):  # field galaxies anywhere
        px_, py_ = rng.uniform(0, size, 2)
        if np.hypot(px_ - cx, py_ - cy) < (2.3 * te if is_lens else 12):
            continue
        fg = _sersic(xx, yy, rng.uniform(0.8, 4), rng.uniform(0.7, 4), rng.uniform(0.3, 1), rng.uniform(0, np.pi), px_, py_)
        other_fine += rng.uniform(0.03, 0.3) * fg / fg.max()
    # Blur (astropy convolve_fft on the fine grid), bin, scale to noise units.
    kern = _psf(rng, psf_kind, fwhm_pix * k)

    def blur(a):
        return _bin(convolve_fft(a, kern, boundary="fill", normalize_kernel=False, allow_huge=True))

    lens_img = blur(lens_fine)
    lens_peak = rng.uniform(30, 400)
    norm = lens_peak / max(lens_img.max(), 1e-30)
    img = (lens_img + blur(other_fine)) * norm
    star_img = np.zeros_like(img)
    if stars:
        pts = sum(a * _point(xx, yy, sx, sy) for sx, sy, a in stars)
        one = blur(_point(xx, yy, c0, c0)).max()
        star_img = blur(pts) * lens_peak / max(one, 1e-30)
        img = img + star_img  # star peak = amp x lens peak
    arc_img = np.zeros_like(img)
    if is_lens:
        arc = blur(arc_fine)
        arc_peak = rng.uniform(4.0, 20.0)
        arc_img = arc * arc_peak / max(arc.max(), 1e-30)
        img = img + arc_img
        truth["arc_peak_snr"] = float(arc_peak)
    # Noise and sky.
    ny = nx = size
    noise_kind = rng.choice(["white", "poisson", "correlated"], p=[0.3, 0.4, 0.3])
    sky = 0.0
    if noise_kind == "poisson":
        sig = rng.uniform(100, 1000)  # sky counts a pixel sig^2: the sky stands sig noise units up
        sky_e = sig * sig
        counts = rng.poisson(np.clip(img * sig + sky_e, 0, None)).astype(float)
        img = counts / sig  # noise units again: the sky sits at sqrt(sky_e) = 100-1000 sigma
        sky = float(np.sqrt(sky_e))
        feats.append("poisson")
    else:
        n = rng.normal(0, 1, (ny, nx))
        if noise_kind == "correlated":
            ks = rng.uniform(0.85, 1.3)  # a 2-3 pixel FWHM kernel
            n = gaussian_filter(n, ks)
            n /= n.std()
            feats.append("correlated noise")
        img = img + n
    yy_p, xx_p = np.mgrid[0:ny, 0:nx]
    sky_mode = rng.choice(["pedestal", "gradient", "subtracted"], p=[0.4, 0.3, 0.3])
    if sky_mode == "pedestal":
        if noise_kind != "poisson":
            sky = rng.uniform(100, 1000)
            img = img + sky
        feats.append("pedestal")
    else:
        img = img - sky + rng.uniform(-1, 1)  # subtracted, a little wrongly
        sky = 0.0
        if sky_mode == "gradient":
            gx, gy = rng.normal(0, 1, 2)
            img = img + (gx * (xx_p - c0) + gy * (yy_p - c0)) * rng.uniform(5, 20) / (size * np.hypot(gx, gy))
            feats.append("gradient")
    # Defects.
    if rng.uniform() < 0.35:
        for _ in range(int(rng.integers(2, 9))):
            x0_, y0_ = rng.integers(0, nx), rng.integers(0, ny)
            n_pix = int(rng.integers(1, 5))
            ddx, ddy = rng.choice([-1, 0, 1], 2)
            for j in range(n_pix):
                xj, yj = x0_ + j * ddx, y0_ + j * ddy
                if 0 <= xj < nx and 0 <= yj < ny:
                    img[yj, xj] += rng.uniform(20, 500)
        feats.append("cosmic rays")
    if rng.uniform() < 0.15:
        col = int(rng.integers(0, nx))
        what = rng.choice(["hot", "dead", "nan"])
        img[:, col] = {"hot": img[:, col] + rng.uniform(20, 200), "dead": 0.0, "nan": np.nan}[what]
        feats.append(f"{what} column")
    if rng.uniform() < 0.15:
        # A saturated star with a bleed trail along the columns, away from the lens.
        d, t = rng.uniform(0.3, 0.45) * size, rng.uniform(0, 2 * np.pi)
        sx, sy = int(cx + d * np.cos(t)), int(cy + d * np.sin(t))
        if 2 <= sx < nx - 2 and 2 <= sy < ny - 2:
            r2 = (xx_p - sx) ** 2 + (yy_p - sy) ** 2
            fw = fwhm_pix
            st = 3e4 * np.exp(-0.5 * r2 / (fw / 2.355) ** 2) + 300 * (1 + r2 / fw ** 2) ** -2.5
            level = float(np.nanmedian(img)) + rng.uniform(1500, 5000)
            img = img + st
            sat = img >= level
            bleed = int(rng.integers(5, 25))
            for dy in range(-bleed, bleed + 1):
                if 0 <= sy + dy < ny:
                    sat[sy + dy, max(0, sx - 1):sx + 2] = True
            img[sat] = level
            feats.append("saturated star")
    if rng.uniform() < 0.15:
        w = int(rng.uniform(0.05, 0.25) * size)
        side = int(rng.integers(4))
        fill = np.nan if rng.uniform() < 0.5 else 0.0
        sl = [(slice(None), slice(0, w)), (slice(None), slice(nx - w, nx)), (slice(0, w), slice(None)),
              (slice(ny - w, ny), slice(None))][side]
        img[sl] = fill
        feats.append("NaN border" if np.isnan(fill) else "zero border")
    unit = float(10 ** rng.uniform(-4, 4))
    if abs(np.log10(unit)) > 2:
        feats.append("units 1e%+d" % int(np.round(np.log10(unit))))
    truth["sky_noise_units"] = float(sky)
    parts = {"neighbour": (blur(nb_fine) * norm * unit).astype(np.float32) if nb_fine.any() else None,
             "companion": (blur(comp_fine) * norm * unit).astype(np.float32) if comp_fine.any() else None,
             "star": (star_img * unit).astype(np.float32), "arc": (arc_img * unit).astype(np.float32)}
    return StressField((img * unit).astype(np.float32), scale, fwhm_pix, unit, truth, feats,
                       (lens_img * norm * unit).astype(np.float32), parts)


def make_stress_sample(n_lenses: int, n_nonlenses: int, first_seed: int) -> list[StressField]:
    """``n_lenses`` lenses through :data:`LENS_KINDS`, then ``n_nonlenses`` through :data:`NONLENS_KINDS`."""
    out = [make_stress_field(first_seed + i, LENS_KINDS[i % len(LENS_KINDS)]) for i in range(n_lenses)]
    out += [make_stress_field(first_seed + n_lenses + i, NONLENS_KINDS[i % len(NONLENS_KINDS)])
            for i in range(n_nonlenses)]
    return out


def write_fits(f: StressField, path, *, int16: bool = False, rotate_deg: float = 0.0) -> None:
    """The cutout as a FITS file with a TAN WCS of the field's pixel scale turned by ``rotate_deg``; ``int16``
    stores scaled 16-bit integers (BSCALE/BZERO over the finite range, NaN as BLANK; FITS 4.0)."""
    from astropy.io import fits

    data = np.asarray(f.image, float)
    h = fits.Header()
    ny, nx = data.shape
    s = f.pixel_scale_arcsec / 3600.0
    c, sn = np.cos(np.radians(rotate_deg)), np.sin(np.radians(rotate_deg))
    h.update(CTYPE1="RA---TAN", CTYPE2="DEC--TAN", CRPIX1=nx / 2 + 0.5, CRPIX2=ny / 2 + 0.5, CRVAL1=211.37,
             CRVAL2=-12.84, CUNIT1="deg", CUNIT2="deg", CD1_1=-s * c, CD1_2=s * sn, CD2_1=s * sn, CD2_2=s * c)
    if int16:
        finite = np.isfinite(data)
        lo, hi = float(np.min(data[finite])), float(np.max(data[finite]))
        bscale = max((hi - lo) / 65000.0, 1e-30)
        bzero = lo + 32768 * bscale + 0.5 * bscale
        q = np.where(finite, np.round((data - bzero) / bscale), -32768).clip(-32768, 32767).astype(np.int16)
        hdu = fits.PrimaryHDU(q, header=h)
        hdu.header["BSCALE"], hdu.header["BZERO"], hdu.header["BLANK"] = bscale, bzero, -32768
    else:
        hdu = fits.PrimaryHDU(data.astype(np.float32), header=h)
    hdu.writeto(path, overwrite=True)


def check_circular_convention(theta_e_pix: float = 12.0) -> float:
    """Largest distance (pixels) from ``theta_e_pix`` of points that the ray tracer maps onto a source on the
    axis of a circular SIE: zero for the SIS (Narayan & Bartelmann 1996, eq. 29: the ring is at theta_E)."""
    ang = np.linspace(0, 2 * np.pi, 73)
    x, y = 40 + theta_e_pix * np.cos(ang), 40 + theta_e_pix * np.sin(ang)
    bx, by = rt.source_positions([rt.SIELens(theta_e_pix, 1.0, 0.0, 40.0, 40.0)], x, y)
    return float(np.max(np.hypot(bx - 40, by - 40)))
