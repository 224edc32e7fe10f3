"""Two Sersic components for lens light that one Sersic cannot follow: a bulge and a disc, or a PSF's halo.

A single elliptical Sersic blurred by a Gaussian fitted to a bulge (n ~ 4) inside a disc (n ~ 1) of another
shape, or to a galaxy seen through a PSF with a halo (a diffraction-limited core with scattered-light wings),
leaves a smooth leftover a few seeing widths across: inside an Einstein ring it merges with the ring and pulls
its peak inward. Two elliptical Sersic components with a shared centre, sky and Gaussian PSF are fitted jointly
(indices in :data:`BULGE_N_BOUNDS` and :data:`DISC_N_BOUNDS`, each with its own size, axis ratio and angle) and
kept only when the Bayesian information criterion prefers them by :data:`BIC_MARGIN` (Schwarz 1978; a difference
above 10 is "very strong" evidence, Kass & Raftery 1995, common practice). A sum of two centred, radially
falling profiles falls radially too, so the pair cannot make a ring; bright pixels above it (arcs) are left out
as in the single fit. The ring finder calls it only for a ring measured wider than a few seeing widths
(:data:`lensmass.core.ringfinder.MISFIT_WIDTH_PSF`), with the ring masked.

References
----------
Sersic (1968), Atlas de Galaxias Australes; Graham & Driver (2005), PASA 22, 118 (profile);
Kormendy (1977), ApJ 218, 333 and Freeman (1970), ApJ 160, 811 (bulge n = 4 and exponential disc n = 1,
common practice); Schwarz (1978), Ann. Stat. 6, 461 (BIC); Kass & Raftery (1995), JASA 90, 773.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy.special import gammainc
from threadpoolctl import threadpool_limits

from lensmass.core.lenslight import (CENTER_RANGE_PIX, PSF_SIGMA_MAX_PIX, PSF_SIGMA_MIN_PIX, Q_MIN, LensLightModel,
                                     _evaluate_model, _finite, _fit_grid, _Recent, _robust_rounds)
from lensmass.core.progress import StopCallback, check_stop
from lensmass.core.robust_lm import soft_l1_cost
from lensmass.core.sersic import sersic_b
from lensmass.core.sersic_pixels import (blurred_sersic_jacobian, blurred_sersic_on_grid, core_pixels,
                                        grid_and_core_terms)

#: Index ranges of the two components (a bulge is concentrated; a disc near exponential, a PSF halo near Gaussian).
BULGE_N_BOUNDS = (1.5, 8.0)
DISC_N_BOUNDS = (0.5, 2.0)
#: The two components are kept when their BIC is lower than the single Sersic's by at least this much.
BIC_MARGIN = 10.0
#: Soft-L1 scale (sigma), as the single fit.
SOFT_SCALE = 3.0
MAX_NFEV = 60


def bulge_and_disc(image: np.ndarray, light: LensLightModel, *, mask: np.ndarray | None = None,
                   initial: LensLightModel | None = None, should_stop: StopCallback = None) -> LensLightModel:
    """``light`` (a single-Sersic fit of the same galaxy) or, when the BIC prefers it by :data:`BIC_MARGIN`, a
    two-component model (two elliptical Sersic components, shared centre, sky and PSF).

    ``mask`` (True = left out) is the single fit's; ``initial``, an earlier two-component answer of the same
    galaxy (the ring finder's refit), starts the fit. The returned model's ``sersic_n``, ``r_eff_pix``,
    ``axis_ratio`` and ``angle_deg`` are the brighter component's, ``total_flux`` the sum; ``components``
    holds both.

    Examples
    --------
    An astropy Sersic2D bulge (n = 4, R_e = 3 px) inside an exponential disc (R_e = 12 px, q = 0.5, turned
    50 degrees), pixel-integrated (astropy ``discretize_model``) and blurred by a Gaussian of FWHM 3 px:

    >>> from astropy.convolution import Gaussian2DKernel, convolve_fft, discretize_model
    >>> from astropy.modeling.models import Sersic2D
    >>> from lensmass.core.lenslight import fit_lens_light
    >>> bulge = Sersic2D(amplitude=40.0, r_eff=3.0, n=4.0, x_0=40.3, y_0=39.6, ellip=0.1, theta=0.3)
    >>> disc = Sersic2D(amplitude=3.0, r_eff=12.0, n=1.0, x_0=40.3, y_0=39.6, ellip=0.5, theta=1.2)
    >>> img = discretize_model(bulge + disc, (0, 81), (0, 81), mode="oversample", factor=8)
    >>> img = convolve_fft(img, Gaussian2DKernel(3.0 / 2.3548)) + np.random.default_rng(3).normal(0, 0.05, img.shape)
    >>> one = fit_lens_light(img, 40, 40)
    >>> two = bulge_and_disc(img, one)
    >>> len(two.components), round(two.psf_fwhm_pix, 1)
    (2, 3.0)
    """
    if not (light.ok and light.total_flux > 0 and light.r_eff_pix > 0):  # nothing to split (a fit with no flux)
        return light
    img = np.asarray(image, float) if np.asarray(image).dtype.kind != "f" else np.asarray(image)
    cx0, cy0, rf, noise = light.center_x, light.center_y, light.fit_radius_pix, light.noise_sigma
    binned, cnt, xx, yy, f = _fit_grid(img, cx0, cy0, rf, mask)
    rr = np.hypot(xx - cx0, yy - cy0)
    sel = (cnt > 0) & (rr <= rf) & (rr >= 1.0)
    vs = binned[sel]
    if vs.size < 60:
        return light
    noise_bin = noise / np.sqrt(np.maximum(cnt[sel], 1))
    dxx, dyy = (xx - cx0).astype(np.float32), (yy - cy0).astype(np.float32)
    core = core_pixels((0.0, 0.0), dxx, dyy, f, reach=CENTER_RANGE_PIX)
    at_sel = np.flatnonzero(sel)
    # Parameters: the single fit's nine (bulge: log flux, log R_e, n, q, angle, x0, y0, sky, log PSF sigma),
    # then the disc's log flux, log R_e, n, q, angle. The angles are offsets from ``start``; the centre too.
    start = np.zeros(14)
    start[4], start[13] = light.angle_deg, light.angle_deg
    rel = start.copy()  # the model is computed on offsets from the single fit's centre (float32, as that fit)
    start[5], start[6] = cx0, cy0
    p0 = _starting_point(light, initial)
    lo = np.array([-np.inf, np.log(0.3), BULGE_N_BOUNDS[0], Q_MIN, -np.inf, -CENTER_RANGE_PIX, -CENTER_RANGE_PIX,
                   -np.inf, np.log(PSF_SIGMA_MIN_PIX), -np.inf, np.log(0.5), DISC_N_BOUNDS[0], Q_MIN, -np.inf])
    hi = np.array([np.inf, np.log(3 * rf), BULGE_N_BOUNDS[1], 1.0 / Q_MIN, np.inf, CENTER_RANGE_PIX, CENTER_RANGE_PIX,
                   np.inf, np.log(PSF_SIGMA_MAX_PIX), np.inf, np.log(3 * rf), DISC_N_BOUNDS[1], 1.0 / Q_MIN, np.inf])
    p0 = np.clip(p0, lo + 1e-9, hi - 1e-9)

    def halves(q):
        disc = np.concatenate([q[9:14], q[5:7], [0.0], q[8:9]])
        return q[:9], disc

    terms = _Recent(lambda q: grid_and_core_terms(q, dxx, dyy, f, core), keep=4)

    def model_of(q):
        b, d = halves(q)
        return (blurred_sersic_on_grid(b, dxx, dyy, f, core, terms(b)).ravel()[at_sel]
                + blurred_sersic_on_grid(d, dxx, dyy, f, core, terms(d)).ravel()[at_sel])

    model_sel = _Recent(model_of)
    weight = np.ones(vs.size)

    def residuals(p):
        check_stop(should_stop)
        with np.errstate(over="ignore", invalid="ignore"):
            return _finite(weight * (model_sel(p + rel) - vs) / noise_bin, 1e6)

    def jacobian(p):
        b, d = halves(p + rel)
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            jb = blurred_sersic_jacobian(b, dxx, dyy, f, core, terms(b)).reshape(9, -1)[:, at_sel]
            jd = blurred_sersic_jacobian(d, dxx, dyy, f, core, terms(d)).reshape(9, -1)[:, at_sel]
        jac = np.empty((14, at_sel.size))
        jac[:9] = jb
        jac[5:7] += jd[5:7]
        jac[8] += jd[8]
        jac[9:14] = jd[:5]
        return _finite(jac.T * (weight / noise_bin)[:, None], 0.0)

    with threadpool_limits(1):
        sol, p = _robust_rounds(residuals, jacobian, p0, lo, hi, rel, model_sel, vs, noise_bin, weight)
    # BIC on the pixels both fits use (Schwarz 1978): -2 ln L ~ twice the soft-L1 cost; 5 more parameters.
    single = _single_on_grid(light, xx, yy)[sel]
    keep = weight > 0
    n_pix = int(keep.sum())
    cost1 = soft_l1_cost(((single - vs) / noise_bin)[keep], SOFT_SCALE)
    with np.errstate(over="ignore", invalid="ignore"):
        cost2 = soft_l1_cost(((model_sel(p + rel) - vs) / noise_bin)[keep], SOFT_SCALE)
    gain = 2 * (cost1 - cost2) - 5 * np.log(max(n_pix, 2))
    if not np.isfinite(gain) or gain < BIC_MARGIN:
        return light
    return _two_component_model(img.shape, p + start, light, halves, gain)


def _starting_point(light: LensLightModel, initial: LensLightModel | None) -> np.ndarray:
    """A start: an earlier two-component answer, else the single fit's light split into a compact bulge and a
    disc of the single fit's shape (which follows the disc)."""
    if initial is not None and len(initial.components) == 2:
        b, d = initial.components
        dx, dy = initial.center_x - light.center_x, initial.center_y - light.center_y
        return np.array([np.log(b["flux"]), np.log(b["r_eff_pix"]), b["n"], b["axis_ratio"],
                         b["angle_deg"] - light.angle_deg, dx, dy, initial.sky,
                         np.log(initial.psf_fwhm_pix / 2.3548), np.log(d["flux"]), np.log(d["r_eff_pix"]), d["n"],
                         d["axis_ratio"], d["angle_deg"] - light.angle_deg])
    flux, re = light.total_flux, light.r_eff_pix
    psf_sigma = max(light.psf_fwhm_pix / 2.3548, 1.0)
    return np.array([np.log(0.3 * flux), np.log(max(0.3 * re, 0.6)), 4.0, min(light.axis_ratio + 0.2, 1.0), 0.0,
                     0.0, 0.0, light.sky, np.log(psf_sigma), np.log(0.7 * flux), np.log(max(re, 1.0)), 1.0,
                     light.axis_ratio, 0.0])


def _single_on_grid(light: LensLightModel, xx: np.ndarray, yy: np.ndarray) -> np.ndarray:
    """The single fit's model averaged over the fit's bins (the full-size model, binned as the data)."""
    f = int(round(xx[0, 1] - xx[0, 0])) if xx.shape[1] > 1 else 1
    x0, y0 = int(round(xx[0, 0] + 0.5 - 0.5 * f)), int(round(yy[0, 0] + 0.5 - 0.5 * f))
    ny, nx = xx.shape
    cut = np.asarray(light.model[y0:y0 + ny * f, x0:x0 + nx * f], float)
    return cut.reshape(ny, f, nx, f).mean(axis=(1, 3))


def _half_light_radius(comps: list[dict]) -> float:
    """Circularised half-light radius of the sum of the components (Graham & Driver 2005, eq. 2: the light
    inside R of one Sersic is its total times the regularised incomplete gamma P(2n, b_n (R/R_e)^(1/n)))."""
    total = sum(c["flux"] for c in comps)
    radii = np.geomspace(0.05, 50.0, 400) * max(c["r_eff_pix"] for c in comps)
    inside = sum(c["flux"] * gammainc(2 * c["n"], sersic_b(c["n"]) * (radii / c["r_eff_pix"]) ** (1 / c["n"]))
                 for c in comps)
    return float(np.interp(0.5 * total, inside, radii))


def _two_component_model(shape, p, light: LensLightModel, halves, gain: float) -> LensLightModel:
    b, d = halves(p)
    comps: list[dict[str, Any]] = []
    for name, q in (("bulge", b), ("disc", d)):
        ratio, angle = (q[3], q[4]) if q[3] <= 1.0 else (1.0 / q[3], q[4] + 90.0)
        comps.append({"component": name, "flux": float(np.exp(q[0])), "r_eff_pix": float(np.exp(q[1])),
                      "n": float(q[2]), "axis_ratio": float(ratio), "angle_deg": float(angle % 180.0)})
    model = _evaluate_model(shape, b, light.noise_sigma) + _evaluate_model(shape, d, light.noise_sigma)
    main = max(comps, key=lambda c: c["flux"])
    note = (f"Lens light: two Sersic components (n {comps[0]['n']:.1f}, R_e {comps[0]['r_eff_pix']:.1f} px; "
            f"n {comps[1]['n']:.1f}, R_e {comps[1]['r_eff_pix']:.1f} px: a bulge and a disc, or the halo of the PSF) "
            f"fit better than one Sersic profile (BIC lower by {gain:.0f}).")
    cx, cy = float(p[5]), float(p[6])
    return LensLightModel(
        model=model, residual=light.residual + light.model - model, center_x=cx, center_y=cy,
        total_flux=sum(c["flux"] for c in comps), r_eff_pix=_half_light_radius(comps), sersic_n=main["n"],
        axis_ratio=main["axis_ratio"], angle_deg=main["angle_deg"], sky=float(p[7]), noise_sigma=light.noise_sigma,
        fit_radius_pix=light.fit_radius_pix, psf_fwhm_pix=float(2.3548 * np.exp(p[8])),
        method="two elliptical Sersic components (bulge + disc) with a shared centre, blurred by a fitted Gaussian "
               "PSF, robust (soft-L1) least squares, chosen over one Sersic by the BIC",
        ok=True, notes=[n for n in light.notes if "lens-light fit" not in n] + [note], components=comps)
