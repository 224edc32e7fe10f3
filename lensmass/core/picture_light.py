"""The lens light of an 8-bit picture (PNG/JPEG/TIFF), shown in the picture's own values.

A picture's values went through a display stretch: a Sersic profile fitted to them describes the
stretch more than the galaxy (a per-band asinh colour PNG of a lens whose r band gives n = 2.0,
R_eff = 18.9 pixels, tuning seed 531234 of :mod:`lensmass.core.realistic_fields`: n = 0.78, R_eff =
38 pixels on the picture's values, and a residual where the ring barely shows). So the stretch is
undone first (an asinh of a strength, as the ring finder undoes it; the strength whose model fits the
picture best), the Sersic is fitted there with the ring finder's masks and its ring left out, and the
model is stretched back: model and residual are in picture values, the Sersic parameters are those of
the linearised light, valid as far as the assumed stretch is.
"""

from __future__ import annotations

import numpy as np

from lensmass.core.lenslight import LensLightModel, fit_lens_light
from lensmass.core.progress import StopCallback


def restretch(flux: np.ndarray, strength: float, top_value: float) -> np.ndarray:
    """Linearised flux back to picture values: the inverse of
    :func:`lensmass.core.colour_separation.linearise`, ``v = top asinh(x) / strength`` (strength 0: a
    square-root stretch, ``v = top sqrt(x)``).

    Examples
    --------
    >>> from lensmass.core.colour_separation import linearise
    >>> v = np.array([[[0.0, 40.0, 255.0]]])
    >>> np.round(restretch(linearise(v, 4.5), 4.5, 255.0), 6)
    array([[[  0.,  40., 255.]]])
    """
    flux = np.asarray(flux, float)
    if strength == 0:  # a square-root stretch
        return float(top_value) * np.sqrt(np.clip(flux, 0, None))
    return float(top_value) * np.arcsinh(flux) / float(strength)


def _undo(values: np.ndarray, strength: float, top_value: float) -> np.ndarray:
    """Picture values to linearised flux (strength 0: a square-root stretch), the inverse of :func:`restretch`."""
    if strength == 0:
        return (values / top_value) ** 2
    from lensmass.core.colour_separation import linearise

    return linearise(values[..., None], strength)[..., 0]


#: Stretches tried for a picture's lens light: asinh strengths from nearly linear (a linear stretch, or the
#: colours of a colour-keeping one) to strong per-band asinh, the range of
#: :data:`lensmass.core.colour_separation.LOCUS_STRENGTHS`, and a square root (strength 0 here).
PICTURE_STRENGTHS = (0.05, 2.0, 3.5, 4.5, 6.0, 8.0, 0.0)
#: The strengths are judged on the galaxy inside the ring (this share of its radius) or, with no ring, within
#: :data:`CORE_PIX` of the centre, where the lens outshines any arc and the stretch bends its profile most (on
#: the whole fitted disc the sky's many pixels decide, and a nearly linear strength won with the core left
#: 2-3x worse: tuning seeds 531234-531260, per-band asinh, Lupton and square-root pictures).
CORE_SHARE = 0.7
#: The ring is left out of the fit up to this share of its radius either side of it.
RING_HALF_SHARE = 0.4
CORE_PIX = 8.0


def picture_lens_light(picture: np.ndarray, ring, *, should_stop: StopCallback = None) -> LensLightModel:
    """The lens light of ``picture`` (grey values 0-255 or 0-1) fitted on its linearised values, with the
    ring finder's masks (``ring.masks``) and its ring (``ring``, a RingResult) left out; model and residual
    are returned in picture values (residual NaN on masked pixels).

    The stretch is not known: each of :data:`PICTURE_STRENGTHS` is tried and the one whose model, stretched
    back, leaves the smallest mean absolute residual on the galaxy inside the ring (:data:`CORE_SHARE`) is kept.
    The colour of a picture does not tell its intensity stretch (a colour-keeping stretch keeps the band
    ratios linear while the intensity goes through an asinh), so the fit's own quality chooses.
    """
    from lensmass.core.ring_pictures import PEDESTAL_SIGMAS
    from lensmass.core.ring_sectors import ring_pixels
    from lensmass.core.sky_level import remove_sky_pedestal

    values = np.asarray(picture, float)
    top = 255.0 if np.nanmax(values) > 1.0 else 1.0
    hidden = ring.masks.mask if ring.masks is not None else ~np.isfinite(values)
    clipped = values >= top * (1 - 0.5 / 255)  # at the picture's top value: the stretch clipped the flux there
    hidden = hidden | clipped
    # at most RING_HALF_SHARE of the radius either side: a picture's arc image can make the ring look as wide
    # as its radius (tuning seed 531260, Lupton: a mask 12 pixels either side of 13 left no galaxy to fit)
    on_ring = ring_pixels(values.shape, ring, RING_HALF_SHARE) if ring.found else np.zeros(values.shape, bool)
    yy, xx = np.ogrid[0:values.shape[0], 0:values.shape[1]]
    reach = CORE_SHARE * ring.radius_pix if ring.found else CORE_PIX
    r2 = (xx - ring.center_x) ** 2 + (yy - ring.center_y) ** 2
    inside = (r2 <= max(reach, 2.0) ** 2) & (r2 > 1.0)  # the fit leaves out the central pixel
    best, best_cost, best_strength = None, np.inf, PICTURE_STRENGTHS[0]
    for strength in PICTURE_STRENGTHS:
        flux, pedestal, _ = remove_sky_pedestal(_undo(values, strength, top), PEDESTAL_SIGMAS)
        light = fit_lens_light(np.where(hidden, np.nan, flux), ring.center_x, ring.center_y, mask=on_ring,
                               should_stop=should_stop)
        if not light.ok:
            continue
        model = np.minimum(restretch(light.model + pedestal, strength, top), top)  # the picture clips at its top
        used = inside & ~hidden & np.isfinite(values)
        cost = float(np.mean(np.abs(values[used] - model[used]))) if used.any() else np.inf
        if cost < best_cost:
            light.model = model
            best, best_cost, best_strength = light, cost, strength
    if best is None:  # no galaxy light at any strength: the last (failed) fit, in picture values
        light.model = np.minimum(restretch(light.model + pedestal, strength, top), top)
        best = light
    best.residual = np.where(hidden, np.nan, values - best.model)
    if clipped.any():
        best.notes.append(f"{int(clipped.sum())} pixels at the picture's top value (clipped by its stretch) were left "
                          "out of the fit and the residual.")
    how = "a square root" if best_strength == 0 else f"an asinh of strength {best_strength:g}"
    best.method += f"; fitted on the picture with its stretch undone as {how}"
    best.notes.append(f"An 8-bit picture: its display stretch was undone before the Sersic fit (as {how}, the "
                      "asinh or square-root stretch that fitted the galaxy best), so the Sersic index and R_eff hold only as far as that stretch does; the "
                      "model and the residual are shown in the picture's values.")
    return best
