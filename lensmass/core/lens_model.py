"""Longer than 500 lines because the fit's summary (parameters, images, delays, masses) is one unit with
the pixel wrapper that all three front ends call; the posterior itself lives in lens_model_fit.py.

From marked images and arcs to an SIE + external shear model with intervals, predicted images,
time delays and masses: the one function the window, the command line and Python call.

:func:`fit_lens_model` works in pixels on an image (like :mod:`lensmass.core.einstein`): positions are
0-based column/row, mapped to arcsec offsets (x east, y north) through the image's 2 x 2 pixel matrix
(WCS) or the user's pixel scale. :func:`fit_lens_model_arcsec` does the same on sky offsets.

Every result says which model and assumptions made each number: ``models`` and ``notes`` as in
:func:`lensmass.core.estimate.estimate`, plus ``lens_model`` (the model's parameters with medians
and 68/95% intervals, the priors, the predicted images and the time delays).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any

import numpy as np

from lensmass.core.caustics import caustic, critical_curve, cut
from lensmass.core.errors import LensInputError
from lensmass.core.image_finder import find_images
from lensmass.core.lens_model_fit import (
    KINDS,
    LensModelFit,
    LensPriors,
    MarkedSystems,
    sample_lens_model,
)
from lensmass.core.lone_arc import lone_arc_ratio_quantiles, lone_arc_theta_e_draws
from lensmass.core.progress import ProgressCallback, StopCallback
from lensmass.core.sie import (
    THETA_E_CONVENTION,
    fermat_potential,
    mean_convergence_radius,
    position_angle_deg,
)
from lensmass.core.uncertainty import summarize

#: Default 1-sigma error of a marked position, pixels (a click is good to about half a pixel).
DEFAULT_POINT_ERR_PIX = 0.5
MODEL_NAME = "SIE + external shear"
#: Posterior draws carried through to images, magnifications and delays.
PREDICTION_DRAWS = 200
#: A lone arc (no counter-image) bounds theta_E without measuring it: the one rule of
#: :mod:`lensmass.core.lone_arc` (its ``"points"`` table, the median distance of marked points) gives the range.


def _circular_summary(values_deg: np.ndarray, period: float = 180.0) -> dict[str, Any]:
    """Median and intervals of an angle defined modulo ``period``, unwrapped about its circular mean."""
    v = np.asarray(values_deg, float)
    k = 2 * np.pi / period
    mean = np.angle(np.mean(np.exp(1j * k * v))) / k
    unwrapped = mean + (v - mean + period / 2) % period - period / 2
    s = summarize(unwrapped)
    median = float(s["median"])  # type: ignore[arg-type]
    i68: list[float] = list(s["interval68"])  # type: ignore[call-overload]
    i95: list[float] = list(s["interval95"])  # type: ignore[call-overload]
    shift = median % period - median  # median in [0, period); the intervals move with it
    return {"median": median + shift, "interval68": [a + shift for a in i68], "interval95": [a + shift for a in i95]}


def _check_inputs(x, y, system, kind):
    x = np.asarray(x, float).ravel()
    y = np.asarray(y, float).ravel()
    system = np.asarray([str(s) for s in np.ravel(system)]) if system is not None else np.full(x.size, "1")
    kind = np.asarray([str(k).strip().lower() for k in np.ravel(kind)]) if kind is not None else np.full(x.size, "image")
    if not (x.size == y.size == system.size == kind.size):
        raise LensInputError("Each marked point needs an x, a y, a system and a kind; some columns are shorter.")
    if x.size == 0:
        raise LensInputError("No points to fit: mark the images or arc points of the lensed source first.")
    if not np.all(np.isfinite(x) & np.isfinite(y)):
        raise LensInputError(f"Point {int(np.flatnonzero(~(np.isfinite(x) & np.isfinite(y)))[0]) + 1} is not a "
                             "finite position; fix or remove it.")
    bad = [k for k in kind if k not in KINDS]
    if bad:
        raise LensInputError(f"Unknown point kind '{bad[0]}': each point is an 'image' or an 'arc' point.")
    n_constraints = 0
    for s in dict.fromkeys(system.tolist()):
        sel = system == s
        if sel.sum() < 2:
            raise LensInputError(f"System '{s}' has a single point, which says nothing about the lens: mark its "
                                 "other images or more arc points, or remove it.")
        pts = np.unique(np.round(np.c_[x[sel], y[sel]], 6), axis=0)
        if len(pts) < sel.sum():
            raise LensInputError(f"System '{s}' has two points at the same position; remove the repeat.")
        n_constraints += 2 * (int(sel.sum()) - 1)
    return x, y, system, kind, n_constraints


def _lone_arc(system: np.ndarray, kind: np.ndarray, x: np.ndarray, y: np.ndarray, cx: float, cy: float) -> bool:
    """One system, arc points only, all on one side of the centre (no counter-image marked)."""
    if len(set(system.tolist())) != 1 or np.any(kind != "arc"):
        return False
    ang = np.sort(np.mod(np.arctan2(y - cy, x - cx), 2 * np.pi))
    gaps = np.diff(np.concatenate([ang, [ang[0] + 2 * np.pi]]))
    return bool(gaps.max() > np.pi)  # a gap of more than 180 deg: everything lies on one side


def _match(obs_x, obs_y, pred_x, pred_y):
    """Indices of the predicted image nearest each observed one (one-to-one where possible)."""
    from scipy.optimize import linear_sum_assignment

    if pred_x.size == 0:
        return np.full(obs_x.size, -1)
    d = np.hypot(obs_x[:, None] - pred_x[None, :], obs_y[:, None] - pred_y[None, :])
    rows, cols = linear_sum_assignment(d)
    out = np.full(obs_x.size, -1)
    out[rows] = cols
    return out


def fit_lens_model_arcsec(
    x,
    y,
    system=None,
    kind=None,
    *,
    point_err_arcsec: float | np.ndarray,
    center: tuple[float, float, float] | None = None,
    light_shape: tuple[float, float, float] | None = None,
    source_scale: Mapping[str, float] | None = None,
    shear_sigma: float | None = None,
    draws: int = 4000,
    method: str = "auto",
    seed: int | None = 1,
    progress: ProgressCallback = None,
    should_stop: StopCallback = None,
    summary: bool = True,
) -> tuple[LensModelFit, dict[str, Any] | None]:
    """Fit and summarise on sky offsets (arcsec, x east, y north); returns (fit, summary).

    ``summary=False`` skips the predicted images and delays (summary None): for calibration sweeps.

    ``center`` = (x, y, sigma) of the lens light (arcsec), ``light_shape`` = (q, angle_rad, sigma_q);
    ``source_scale`` maps a system to its D_ls/D_s relative to the reference (first) system.

    Examples
    --------
    >>> from lensmass.core.image_finder import find_images
    >>> from lensmass.core.sie import SIEShear
    >>> quad = find_images(SIEShear(1.3, 0.75, 0.4), 0.06, -0.04)
    >>> fit, summary = fit_lens_model_arcsec(quad.x, quad.y, point_err_arcsec=0.025, draws=1000)
    >>> lo, hi = summary["parameters"]["theta_e_arcsec"]["interval95"]
    >>> bool(lo < 1.3 < hi)
    True
    """
    x, y, system, kind, n_constraints = _check_inputs(x, y, system, kind)
    err = np.broadcast_to(np.asarray(point_err_arcsec, float), x.shape).copy()
    if not np.all(np.isfinite(err) & (err > 0)):
        raise LensInputError("The position error of the marks must be a positive number; check the click error.")
    span = float(max(np.ptp(x), np.ptp(y), np.max(err)))
    cx0 = center[0] if center is not None else float(np.mean(x))
    cy0 = center[1] if center is not None else float(np.mean(y))
    rmax = float(np.max(np.hypot(x - cx0, y - cy0)))
    lone = _lone_arc(system, kind, x, y, cx0, cy0)
    if lone and x.size < 5:
        raise LensInputError(f"A single arc needs at least 5 marked points along it, got {x.size}: mark more of "
                             "the arc (or its counter-image).")
    kw = {} if shear_sigma is None else {"shear_sigma": float(shear_sigma)}
    priors = LensPriors(center=center, light_shape=light_shape, theta_e_max=max(3 * rmax, 10 * np.max(err)),
                        center_box=(float(np.min(x) - 0.1 * span), float(np.max(x) + 0.1 * span),
                                    float(np.min(y) - 0.1 * span), float(np.max(y) + 0.1 * span)),
                        lone_arc=lone, has_arcs=bool(np.any(kind == "arc")), **kw)
    data = MarkedSystems(x, y, system, kind, err, dict(source_scale or {}))
    fit = sample_lens_model(data, priors, draws=draws, method=method, seed=seed, progress=progress,
                            should_stop=should_stop)
    return fit, (summarize_fit(fit, n_constraints, lone) if summary else None)


def summarize_fit(fit: LensModelFit, n_constraints: int, lone_arc: bool) -> dict[str, Any]:
    """Medians and intervals of the model parameters, sources, predicted images, chi^2 and caveats."""
    data = fit.posterior.data
    priors = fit.posterior.priors
    lens = fit.lenses()
    te = np.asarray(lens.theta_e)
    params: dict[str, dict] = {
        "theta_e_arcsec": summarize(te),
        "mean_kappa_radius_arcsec": summarize(mean_convergence_radius(te, lens.q)),
        "axis_ratio": summarize(lens.q),
        "position_angle_deg": _circular_summary(position_angle_deg(lens.angle_rad)),
        "shear": summarize(lens.shear),
        "shear_angle_deg": _circular_summary(position_angle_deg(lens.shear_angle_rad)),
        "center_x_arcsec": summarize(lens.x0),
        "center_y_arcsec": summarize(lens.y0),
    }
    best = fit.lenses(fit.best).take(0)
    best_sources = {k: (float(v[0][0]), float(v[1][0])) for k, v in fit.sources(fit.best).items()}
    sources = fit.sources()
    source_summary = {k: {"x_arcsec": summarize(v[0]), "y_arcsec": summarize(v[1])} for k, v in sources.items()}
    rng = np.random.default_rng(0)
    pick = rng.choice(fit.draws.shape[0], size=min(PREDICTION_DRAWS, fit.draws.shape[0]), replace=False)
    images: list[dict] = []
    chi2 = 0.0
    notes: list[str] = list(fit.notes)
    for name in data.systems:
        sel = (data.system == name)
        f = float(data.scale.get(name, 1.0))
        ox, oy = data.x[sel], data.y[sel]
        is_img = data.kind[sel] == "image"
        bl = best.scaled(f)
        bx, by = best_sources[name]
        pred = find_images(bl, bx, by)
        if is_img.any():
            m = _match(ox[is_img], oy[is_img], pred.x, pred.y)
            sig = data.point_err[sel][is_img]
            # posterior spread of each matched image's magnification and Fermat potential
            mus, taus = [], []
            for i in pick:
                li = lens.take(i).scaled(f)
                sx, sy = float(sources[name][0][i]), float(sources[name][1][i])
                pi = find_images(li, sx, sy, n_angles=2048)
                mi = _match(ox[is_img], oy[is_img], pi.x, pi.y)
                ok = mi >= 0
                mu = np.full(ox[is_img].size, np.nan)
                tau = np.full(ox[is_img].size, np.nan)
                mu[ok] = pi.magnification[mi[ok]]
                tau[ok] = fermat_potential(li, pi.x[mi[ok]], pi.y[mi[ok]], sx, sy)
                mus.append(mu)
                taus.append(tau)
            mu_draws, tau_draws = np.array(mus), np.array(taus)
            for k, (xo, yo) in enumerate(zip(ox[is_img], oy[is_img])):
                j = m[k]
                entry = {"system": name, "marked_x_arcsec": float(xo), "marked_y_arcsec": float(yo),
                         "magnification": summarize(mu_draws[:, k]), "_fermat_draws": tau_draws[:, k]}
                if j >= 0:
                    res = float(np.hypot(pred.x[j] - xo, pred.y[j] - yo))
                    chi2 += (res / sig[k]) ** 2
                    entry.update(model_x_arcsec=float(pred.x[j]), model_y_arcsec=float(pred.y[j]),
                                 residual_arcsec=res, model_magnification=float(pred.magnification[j]))
                else:
                    chi2 += np.inf
                    entry.update(model_x_arcsec=None, model_y_arcsec=None, residual_arcsec=None)
                images.append(entry)
            unmatched = sorted(set(range(pred.n)) - set(int(v) for v in m))
            for j in unmatched:
                images.append({"system": name, "marked_x_arcsec": None, "marked_y_arcsec": None,
                               "model_x_arcsec": float(pred.x[j]), "model_y_arcsec": float(pred.y[j]),
                               "model_magnification": float(pred.magnification[j]), "residual_arcsec": None,
                               "magnification": None, "_fermat_draws": None})
            if unmatched:
                notes.append(f"System {name}: the model predicts {pred.n} images but {int(is_img.sum())} were "
                             f"marked; the unmarked ones are listed (look for them; a faint one may be hidden in "
                             "the lens light).")
            if int(is_img.sum()) > pred.n:
                notes.append(f"System {name}: more images were marked ({int(is_img.sum())}) than the best model "
                             f"makes ({pred.n}); check that all belong to one source.")
        if (~is_img).any():
            # arc points: the linearised image-plane offset of each point from the best source
            from lensmass.core.sie import lens_mapping

            ax_, ay_ = ox[~is_img], oy[~is_img]
            sbx, sby, a11, a22, a12 = lens_mapping(bl, ax_, ay_)
            det = a11 * a22 - a12 * a12
            rx, ry = sbx - bx, sby - by
            dx = (a22 * rx - a12 * ry) / det
            dy = (-a12 * rx + a11 * ry) / det
            for k in range(ax_.size):
                images.append({"system": name, "kind": "arc", "marked_x_arcsec": float(ax_[k]),
                               "marked_y_arcsec": float(ay_[k]),
                               "residual_arcsec": float(np.hypot(dx[k], dy[k])), "_fermat_draws": None})
    dof = (n_constraints + (2 if priors.center is not None else 0) + (2 if priors.light_shape is not None else 0)
           - fit.posterior.n_params)
    n_image_points = int(np.sum(data.kind == "image"))
    if n_image_points and not np.any(data.kind == "arc"):
        chi2_note = "image-plane chi^2 of the marked images about the best model's images"
    else:
        chi2 = float(fit.posterior.chi2(fit.best))
        chi2_note = ("chi^2 of the best model, linearised in the image plane, with the arc points' spread about "
                     "their source included in their errors")
    degeneracy = []
    if n_constraints + (2 if priors.center is not None else 0) - 7 < 1:
        degeneracy.append(
            f"The marks give {n_constraints} constraints{' plus the lens-light centre' if priors.center else ''} "
            f"for 7 lens parameters: the axis ratio, the shear and their angles are not fixed separately by "
            f"the data; the priors decide them ({'; '.join(priors.describe()[1:3])}). theta_E and the "
            "mass inside the critical curve are the numbers to trust; q and shear are shown for completeness.")
    if lone_arc:
        cx_, cy_ = (priors.center[:2] if priors.center is not None else (float(best.x0), float(best.y0)))
        r_arc = float(np.median(np.hypot(data.x - cx_, data.y - cy_)))
        te = lone_arc_theta_e_draws(data.x, data.y, cx_, cy_, te.size)
        lo_f, hi_f = lone_arc_ratio_quantiles([0.025, 0.975], "points")
        params["theta_e_arcsec"] = summarize(te)
        params["mean_kappa_radius_arcsec"] = summarize(mean_convergence_radius(te, lens.q))
        te_s = params["theta_e_arcsec"]
        degeneracy.append(
            "A single arc without a counter-image: it lies outside the critical curve by the unknown offset of "
            "the source (or straddles it), so theta_E is bounded, not measured: 95% range "
            f"{te_s['interval95'][0]:.3g}-{te_s['interval95'][1]:.3g} arcsec, about {lo_f:.2f}-{hi_f:.2f} times the "
            "arc's distance "
            f"{r_arc:.3g} arcsec from the lens centre (the spread of 1400 inject-and-recover trials with SIE + shear "
            "lenses, axis ratio 0.5-0.9, shear up to 0.1). Mark the counter-image to measure it.")
    crit = critical_curve(best)
    caus = caustic(best)
    cutc = cut(best)
    return {
        "model": MODEL_NAME,
        "theta_e_convention": THETA_E_CONVENTION,
        "parameters": params,
        "best": {"theta_e_arcsec": float(best.theta_e), "axis_ratio": float(best.q),
                 "position_angle_deg": float(position_angle_deg(best.angle_rad)), "shear": float(best.shear),
                 "shear_angle_deg": float(position_angle_deg(best.shear_angle_rad)),
                 "center_x_arcsec": float(best.x0), "center_y_arcsec": float(best.y0),
                 "gamma1": float(best.gamma1), "gamma2": float(best.gamma2),
                 "angle_rad": float(best.angle_rad)},
        "sources": {k: {"best_x_arcsec": best_sources[k][0], "best_y_arcsec": best_sources[k][1], **v}
                    for k, v in source_summary.items()},
        "images": images,
        "chi2": float(chi2),
        "chi2_meaning": chi2_note,
        "dof": int(dof),
        "n_constraints": int(n_constraints),
        "priors": priors.describe(),
        "degeneracies": degeneracy,
        "lone_arc": bool(lone_arc),
        "sampler": fit.method,
        "n_draws": int(fit.draws.shape[0]),
        "notes": notes,
        "_critical_curve": crit,
        "_caustic": caus,
        "_cut": cutc,
        "_theta_e_draws": te,
    }


# ------------------------------------------------------------------------------------- on an image
def _image_geometry(image, pixel_scale_arcsec, pixel_matrix_arcsec):
    from lensmass.core.einstein import _geometry

    matrix, scale, scale_err, to_sky, _, notes = _geometry(image, pixel_scale_arcsec, None, pixel_matrix_arcsec)
    return matrix, scale, scale_err, to_sky, notes


def _time_delays(summary: dict, z_l, z_s_of: Mapping[str, float | None], cosmo, z_l_err: float = 0.0,
                 z_s_err: float = 0.0, seed: int | None = 1) -> list[dict]:
    """Delays of each marked image relative to the first marked image of its system (days): the model's
    Fermat-potential draws times D_dt draws from the redshifts and their errors, in the chosen cosmology."""
    from lensmass.core.cosmology import cosmology_label
    from lensmass.core.time_delay import delay_draws_days, time_delay_distance_mpc

    out = []
    for name in dict.fromkeys(e["system"] for e in summary["images"]):
        entries = [e for e in summary["images"] if e["system"] == name and e.get("_fermat_draws") is not None]
        zs = z_s_of.get(name)
        if len(entries) < 2 or z_l is None or zs is None:
            continue
        ddt = float(time_delay_distance_mpc(z_l, zs, cosmo))
        ref = entries[0]["_fermat_draws"]
        for k, e in enumerate(entries[1:], start=2):
            days = delay_draws_days(e["_fermat_draws"] - ref, float(z_l), float(zs), cosmo, z_l_err=z_l_err,
                                    z_s_err=z_s_err, seed=None if seed is None else seed + k)
            out.append({"system": name, "image": k, "relative_to": 1, "delay_days": summarize(days),
                        "time_delay_distance_mpc": ddt, "cosmology": cosmology_label(cosmo),
                        "z_l_err": float(z_l_err), "z_s_err": float(z_s_err)})
    return out


def fit_lens_model(
    x,
    y,
    system=None,
    kind=None,
    *,
    image=None,
    pixel_scale_arcsec: float | None = None,
    pixel_matrix_arcsec: np.ndarray | None = None,
    point_err_pix: float = DEFAULT_POINT_ERR_PIX,
    center: tuple[float, float] | None = None,
    center_err_pix: float | None = None,
    light_axis_ratio: float | None = None,
    light_position_angle_deg: float | None = None,
    light_axis_ratio_err: float = 0.1,
    z_l: float | None = None,
    z_s: float | Mapping[str, float] | None = None,
    estimate_options: dict | None = None,
    estimate_fn: Callable[..., dict] | None = None,
    draws: int = 4000,
    method: str = "auto",
    seed: int | None = 1,
    progress: ProgressCallback = None,
    should_stop: StopCallback = None,
) -> dict[str, Any]:
    """Fit an SIE + external shear to marked points on an image and derive the masses.

    Parameters
    ----------
    x, y : array_like
        Marked positions, 0-based column and row of the array as stored in the file.
    system : array_like of str, optional
        Which source each point belongs to (default: all one system).
    kind : array_like of {"image", "arc"}, optional
        ``image``: one of the multiple images of a compact source (or of one knot of it);
        ``arc``: a point somewhere along an extended arc. Default: all images.
    image : LoadedImage-like, optional
        Supplies the pixel matrix (WCS) and pixel scale; or give ``pixel_scale_arcsec``.
    point_err_pix : float
        1-sigma error of each marked position in pixels (default 0.5; stated in the output).
    center, center_err_pix : optional
        The lens-light centre (pixels) and its error (default: the point error) as a prior.
    light_axis_ratio, light_position_angle_deg, light_axis_ratio_err : optional
        The lens light's axis ratio and position angle (east of north) as a prior on the mass shape.
    z_l, z_s : optional
        Redshifts; ``z_s`` a number for all systems or a mapping system -> z_s. With them the masses
        (via :func:`lensmass.core.estimate.estimate`, fed the posterior draws of theta_E) and the time
        delays are given; a system without its own z_s shares the reference (first system's) scaling.
    estimate_options : dict, optional
        Passed to ``estimate`` (cosmology, z_l_err, z_s_err, samples, seed, ...).

    Returns
    -------
    dict
        The estimate keys (``theta_e_arcsec`` is the model's median), ``theta_e_err_arcsec``, ``method``,
        ``center_x``, ``center_y`` (pixels), ``lens_model`` (see :func:`summarize_fit`, with positions
        also in pixels and ``time_delays``), ``notes`` and ``models``.

    Examples
    --------
    >>> from lensmass.core.sie import SIEShear
    >>> im = find_images(SIEShear(1.0, 0.8, 0.3), 0.05, 0.02)
    >>> r = fit_lens_model(50 + im.x / 0.05, 50 + im.y / 0.05, pixel_scale_arcsec=0.05, point_err_pix=0.5,
    ...                    center=(50, 50), draws=1000)
    >>> abs(r["theta_e_arcsec"] - 1.0) < 0.05
    True

    Examples
    --------
    The four images of a source behind an SIE (theta_E = 1.3", q = 0.75) with a little shear, marked
    on an image of 0.05" pixels (north up, east left):

    >>> from lensmass.core.image_finder import find_images
    >>> from lensmass.core.sie import SIEShear
    >>> quad = find_images(SIEShear(1.3, 0.75, 0.4, 0.0, 0.0, 0.03, -0.02), 0.06, -0.04)
    >>> x, y = 100 - quad.x / 0.05, 100 + quad.y / 0.05
    >>> r = fit_lens_model(x, y, pixel_scale_arcsec=0.05, center=(100, 100), z_l=0.4, z_s=1.5, draws=1000,
    ...                    estimate_options={"samples": 500})
    >>> lo, hi = r["lens_model"]["parameters"]["theta_e_arcsec"]["interval95"]
    >>> bool(lo < 1.3 < hi), "lens_model" in r["models"]
    (True, True)
    """
    from lensmass.core.cosmology import resolve_cosmology

    matrix, scale, scale_err, to_sky, geo_notes = _image_geometry(image, pixel_scale_arcsec, pixel_matrix_arcsec)
    px = np.asarray(x, float).ravel()
    py = np.asarray(y, float).ravel()
    if not (np.isfinite(point_err_pix) and point_err_pix > 0):
        raise LensInputError(f"The click error must be a positive number of pixels, got {point_err_pix}.")
    ref = (float(center[0]), float(center[1])) if center is not None else (float(np.mean(px)), float(np.mean(py)))
    ex, ey = matrix @ np.vstack([px - ref[0], py - ref[1]])
    err_arcsec = float(point_err_pix) * scale
    centre_prior = None
    if center is not None:
        c_err = float(center_err_pix if center_err_pix is not None else point_err_pix) * scale
        if not (np.isfinite(c_err) and c_err > 0):
            raise LensInputError("The lens-centre error must be a positive number of pixels.")
        centre_prior = (0.0, 0.0, c_err)
    light = None
    if light_axis_ratio is not None:
        q = float(light_axis_ratio)
        if not (0 < q <= 1):
            raise LensInputError(f"The lens light's axis ratio must be in (0, 1], got {q:g}.")
        if light_position_angle_deg is None:
            raise LensInputError("The lens light's axis ratio needs its position angle too (degrees east of north).")
        # position angle east of north -> direction in the (east, north) frame of the fit
        light = (q, float(np.radians(90.0 - float(light_position_angle_deg))), float(light_axis_ratio_err))
    systems_order = list(dict.fromkeys(str(s) for s in (np.ravel(system) if system is not None else ["1"] * px.size)))
    cosmo = resolve_cosmology((estimate_options or {}).get("cosmology"))
    z_s_of: dict[str, float] = {}
    if isinstance(z_s, Mapping):
        z_s_of = {str(k): float(v) for k, v in z_s.items() if v is not None}
    elif z_s is not None:
        z_s_of = {s: float(z_s) for s in systems_order}
    scales: dict[str, float] = {}
    notes: list[str] = list(geo_notes)
    ref_name = systems_order[0]
    if z_l is not None and z_s_of:
        from lensmass.core.cosmology import angular_diameter_distances_mpc

        ref_z = z_s_of.get(ref_name, next(iter(z_s_of.values())))
        for s in systems_order:
            zs = z_s_of.get(s)
            if zs is None:
                notes.append(f"System {s} has no source redshift: it is given the reference system's D_ls/D_s.")
                continue
            if zs <= float(z_l):
                raise LensInputError(f"System {s}: the source redshift {zs:g} is not behind the lens (z_l = "
                                     f"{float(z_l):g}); check the redshifts.")
            _, d_s, d_ls = angular_diameter_distances_mpc(np.array([float(z_l), float(z_l)]),
                                                          np.array([ref_z, zs]), cosmo)
            scales[s] = float((d_ls[1] / d_s[1]) / (d_ls[0] / d_s[0]))
    fit, summary = fit_lens_model_arcsec(ex, ey, system, kind, point_err_arcsec=err_arcsec, center=centre_prior,
                                         light_shape=light, source_scale=scales, draws=draws, method=method,
                                         seed=seed, progress=progress, should_stop=should_stop)
    inv = np.linalg.inv(matrix)

    def to_pix(ax, ay):
        if ax is None:
            return None, None
        d = inv @ np.array([ax, ay], float)
        return float(ref[0] + d[0]), float(ref[1] + d[1])

    for e in summary["images"]:
        e["marked_x"], e["marked_y"] = to_pix(e.get("marked_x_arcsec"), e.get("marked_y_arcsec"))
        e["model_x"], e["model_y"] = to_pix(e.get("model_x_arcsec"), e.get("model_y_arcsec"))
    for key in ("_critical_curve", "_caustic", "_cut"):
        cx_, cy_ = summary[key]
        d = inv @ np.vstack([cx_, cy_])
        summary[key + "_pix"] = (ref[0] + d[0], ref[1] + d[1])
    best = summary["best"]
    cxp, cyp = to_pix(best["center_x_arcsec"], best["center_y_arcsec"])
    z_l_err = float((estimate_options or {}).get("z_l_err") or 0.0)
    z_s_err = float((estimate_options or {}).get("z_s_err") or 0.0)
    summary["time_delays"] = _time_delays(summary, z_l, {s: z_s_of.get(s, z_s_of.get(ref_name)) for s in systems_order}
                                          if z_s_of else {}, cosmo, z_l_err, z_s_err, seed)
    summary["point_err_pix"] = float(point_err_pix)
    summary["point_err_arcsec"] = err_arcsec
    summary["pixel_scale_arcsec"] = scale
    summary["reference_system"] = ref_name
    summary["source_scale"] = scales
    summary["reference_pixel"] = [ref[0], ref[1]]
    summary["pixel_matrix_arcsec"] = [[float(v) for v in row] for row in matrix]
    notes.append(f"Position error of every mark: {point_err_pix:g} px = {err_arcsec:.3g} arcsec (1 sigma"
                 f"{'; the default' if point_err_pix == DEFAULT_POINT_ERR_PIX else ''}).")
    te_draws = summary["_theta_e_draws"]
    if scale_err > 0:  # the pixel-scale error scales every angle together
        te_draws = te_draws * (1 + np.random.default_rng(seed).normal(0, scale_err / scale, te_draws.size))
    summary["theta_e_quantiles_arcsec"] = theta_e_quantiles(te_draws)
    if estimate_fn is not None:  # the same theta_E draws as masses_from_lens_model (the window's budget)
        te_model = model_theta_e_draws(summary)
        i68 = np.percentile(te_model, [16, 84])
        result = dict(estimate_fn(float(np.median(te_model)), float(0.5 * (i68[1] - i68[0])), te_model))
        result["theta_e_err_arcsec"] = float(0.5 * (i68[1] - i68[0]))
        result["theta_e_from"] = "lens model"
    elif z_l is not None and z_s_of:
        result = masses_from_lens_model({"lens_model": summary}, z_l,
                                        z_s_of.get(ref_name, next(iter(z_s_of.values()))),
                                        **dict(estimate_options or {}))
    else:
        te_model = model_theta_e_draws(summary)
        i68 = np.percentile(te_model, [16, 84])
        result = {"theta_e_arcsec": float(np.median(te_model)), "theta_e_err_arcsec": float(0.5 * (i68[1] - i68[0])),
                  "notes": [], "models": {}}
        notes.append("No redshifts given: only the lens model and theta_E, no masses or time delays.")
    ra, dec = (None, None)
    if to_sky is not None:
        r_, d_ = to_sky(cxp, cyp)
        ra, dec = float(r_), float(d_)
    result.update({
        "center_x": cxp, "center_y": cyp, "center_ra": ra, "center_dec": dec,
        "center_source": f"mass centre of the best-fitting {MODEL_NAME} model",
        "method": f"lens model: {MODEL_NAME} fitted to {px.size} marked points ({summary['sampler']} posterior)",
        "n_points": int(px.size),
        "pixel_scale_arcsec": scale,
        "fit_axis_ratio": summary["parameters"]["axis_ratio"]["median"],
        "fit_position_angle_deg": summary["parameters"]["position_angle_deg"]["median"],
        "points_xy": [[float(a), float(b)] for a, b in zip(px, py)],
        "lens_model": summary,
    })
    result["notes"] = notes + summary["degeneracies"] + summary["notes"] + list(result.get("notes", []))
    models = dict(result.get("models", {}))
    models["theta_e_arcsec"] = (f"{MODEL_NAME} fitted to the marks; {THETA_E_CONVENTION}; median of the posterior, "
                                "whose draws carry into every mass below")
    models["lens_model"] = ("SIE (Kormann, Schneider & Bartelmann 1994) + external shear; priors: "
                            + "; ".join(summary["priors"]))
    if summary["time_delays"]:
        from lensmass.core.cosmology import cosmology_label

        z_text = (f"the redshift errors (z_l +- {z_l_err:g}, z_s +- {z_s_err:g}, Gaussian) propagated through D_dt"
                  if (z_l_err or z_s_err) else "redshifts taken as exact (no z_l or z_s error given)")
        models["time_delays"] = ("Fermat-potential differences of the model images (posterior draws) times "
                                 f"(1 + z_l) D_l D_s / (c D_ls) in the {cosmology_label(cosmo)} cosmology; {z_text}")
    result["models"] = models
    return result


#: Percent levels at which a result keeps the theta_E posterior (JSON-friendly; the window and sessions
#: redraw it from these, so every front end carries the same draws into the masses).
THETA_E_QUANTILE_LEVELS = tuple(np.linspace(0.0, 100.0, 401))
#: Draws redrawn from the kept quantiles (and their seed): the same numbers in the window and the command line.
MODEL_DRAWS = 4000
MODEL_DRAWS_SEED = 1


def theta_e_quantiles(draws) -> list[float]:
    """The theta_E posterior as its quantiles at THETA_E_QUANTILE_LEVELS (arcsec)."""
    return [float(v) for v in np.percentile(np.asarray(draws, float), THETA_E_QUANTILE_LEVELS)]


def model_theta_e_draws(lens_model: Mapping[str, Any], system: str | None = None) -> np.ndarray:
    """Posterior draws of theta_E (arcsec) of a fitted model (its ``lens_model`` entry), redrawn by inverse-CDF
    sampling of the kept quantiles; for another ``system`` than the reference, scaled by its D_ls/D_s
    relative to the reference source (theta_E of an isothermal lens is proportional to D_ls/D_s).

    Examples
    --------
    >>> lm = {"theta_e_quantiles_arcsec": list(np.linspace(0.9, 1.1, 401)), "source_scale": {"b": 1.2}}
    >>> round(float(np.median(model_theta_e_draws(lm, "b"))), 2)
    1.2
    """
    q = np.asarray(lens_model["theta_e_quantiles_arcsec"], float)
    u = np.random.default_rng(MODEL_DRAWS_SEED).uniform(0.0, 100.0, MODEL_DRAWS)
    scale = 1.0 if system is None else float((lens_model.get("source_scale") or {}).get(system, 1.0))
    return np.interp(u, THETA_E_QUANTILE_LEVELS, q) * scale


def masses_from_lens_model(result: Mapping[str, Any], z_l, z_s, *, system: str | None = None,
                           **estimate_options) -> dict[str, Any]:
    """The mass budget (:func:`lensmass.core.estimate.estimate`) from a fitted lens model's theta_E posterior.

    ``result`` is a :func:`fit_lens_model` result (or one kept in a session); ``system`` picks whose
    theta_E (scaled by its D_ls/D_s); ``z_l``, ``z_s`` and ``estimate_options`` (errors, cosmology,
    samples, seed, ...) as for ``estimate``. The result's ``models`` and ``notes`` say which model and
    priors gave theta_E. The window's Mass budget, ``lensmass model`` and :func:`fit_lens_model` all
    call this, so they give the same numbers for the same inputs.
    """
    from lensmass.core.estimate import estimate

    lm = result["lens_model"]
    draws = model_theta_e_draws(lm, system)
    out = dict(estimate(float(np.median(draws)), z_l, z_s, theta_e_draws=draws, **estimate_options))
    i68 = np.percentile(draws, [16, 84])
    out["theta_e_err_arcsec"] = float(0.5 * (i68[1] - i68[0]))
    out["theta_e_from"] = "lens model"
    ref = lm.get("reference_system")
    scaled = system is not None and ref is not None and system != ref and \
        float((lm.get("source_scale") or {}).get(system, 1.0)) != 1.0
    models = dict(out.get("models") or {})
    models["theta_e_arcsec"] = (f"{lm.get('model', MODEL_NAME)} fitted to the marks; "
                                f"{lm.get('theta_e_convention', THETA_E_CONVENTION)}; median of the posterior, whose "
                                "draws carry into every mass below"
                                + (f"; scaled from system {ref} by this source's D_ls/D_s" if scaled else ""))
    models["lens_model"] = ("SIE (Kormann, Schneider & Bartelmann 1994) + external shear; priors: "
                            + "; ".join(lm.get("priors") or []))
    out["models"] = models
    out["notes"] = [f"theta_E from the lens model ({lm.get('model', MODEL_NAME)}, {lm.get('sampler', '')} posterior), "
                    "not from a circle through the marks; its assumptions are listed with each number."] \
        + list(out.get("notes") or [])
    return out


def chi2_text(summary: Mapping[str, Any]) -> str:
    """The chi^2 sentence of a summary: with no more constraints than parameters it is zero by construction."""
    if summary["dof"] <= 0:
        return (f"the marks give {summary['n_constraints']} constraints on the lens beyond the source positions, "
                f"too few to test the fit (chi^2 {summary['chi2']:.2g}); the priors fill in the rest")
    return f"chi^2 {summary['chi2']:.3g} for {summary['dof']} degrees of freedom ({summary['chi2_meaning']})"


def model_curves(summary: Mapping[str, Any], n: int = 721) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Critical curve (pixels), caustic and cut (arcsec, source plane) of the best model of a stored
    summary (the ``lens_model`` entry of a result, also after a JSON round trip)."""
    from lensmass.core.sie import SIEShear

    b = summary["best"]
    lens = SIEShear(b["theta_e_arcsec"], b["axis_ratio"], b["angle_rad"], b["center_x_arcsec"],
                    b["center_y_arcsec"], b["gamma1"], b["gamma2"])
    inv = np.linalg.inv(np.asarray(summary["pixel_matrix_arcsec"], float))
    ref = np.asarray(summary["reference_pixel"], float)
    cx, cy = critical_curve(lens, n)
    d = inv @ np.vstack([cx, cy])
    return {"critical_curve_pix": (ref[0] + d[0], ref[1] + d[1]), "caustic_arcsec": caustic(lens, n),
            "cut_arcsec": cut(lens, n), "critical_curve_arcsec": (cx, cy)}


__all__ = ["DEFAULT_POINT_ERR_PIX", "MODEL_NAME", "fit_lens_model", "fit_lens_model_arcsec", "lone_arc_theta_e_draws",
           "masses_from_lens_model", "model_curves", "model_theta_e_draws", "summarize_fit", "theta_e_quantiles"]
