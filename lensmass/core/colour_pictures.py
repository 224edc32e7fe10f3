"""Generated cutouts (:mod:`lensmass.core.realistic_fields`) as 8-bit colour pictures, through the stretches
survey viewers use (per-band asinh, Lupton et al. 2004's colour-keeping asinh via astropy, clipped square
root and linear), for the colour route's tests and benchmarks."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from lensmass.core.realistic_fields import Cutout


def _stretch_8bit(bands: np.ndarray, soft: float, top: float) -> np.ndarray:
    """Bands (3, ny, nx) -> 8-bit RGB (ny, nx, 3): i -> red, r -> green, g -> blue, an asinh stretch
    of each band on its own with one softening and one top value. A per-band stretch does NOT keep
    colours: the ratio of two bands in the picture depends on the brightness (Lupton et al. 2004,
    PASP 116, 133, sec. 2, stretch the total intensity instead, see :func:`colour_picture`)."""
    g, r, i = bands
    rgb = np.stack([i, r, g], axis=-1)
    v = np.arcsinh(np.clip(rgb, 0, None) / soft) / np.arcsinh(top / soft)
    return np.clip(np.round(255 * v), 0, 255).astype(np.uint8)


#: Stretches :func:`colour_picture` makes, as survey viewers' pictures come: a per-band asinh, the
#: colour-keeping asinh of the total intensity (Lupton et al. 2004; astropy's make_lupton_rgb) with a
#: strong and a mild softening, and per-band square-root and linear stretches clipped at a percentile.
STRETCHES = ("asinh", "lupton", "lupton-mild", "sqrt", "linear")
#: Percentile of each band mapped to 255 by the clipped square-root and linear stretches.
CLIP_PERCENTILE = 99.5


def colour_picture(cutout: Cutout, *, soft: float | None = None, top: float | None = None,
                   stretch: str = "asinh", band_scale: tuple[float, float, float] = (1.0, 1.0, 1.0)) -> np.ndarray:
    """The cutout as an 8-bit stretched RGB picture (ny, nx, 3), as survey viewers show it.

    The i band is red, r green, g blue, each multiplied by ``band_scale`` (g, r, i) first (a
    scale like (1.8, 1, 0.6) makes the red lens look white). ``stretch`` is one of
    :data:`STRETCHES`:

    - ``"asinh"``: each band on its own (:func:`_stretch_8bit`); ``soft`` (in noise units,
      default 2) sets where it turns from linear to logarithmic, ``top`` (default the 99.8th
      percentile of the i band) maps to 255.
    - ``"lupton"`` / ``"lupton-mild"``: astropy's ``make_lupton_rgb`` (Lupton et al. 2004): the
      asinh of the mean intensity applied as one factor to all bands, saturated pixels scaled to
      keep their colour. ``"lupton"`` has Q = 8 and ``stretch`` = 4 ``soft`` noise sigma (default 2:
      linear up to one sigma, the top at 1490 sigma);
      ``"lupton-mild"`` has Q = 3 and its top at the 99.8th percentile of the intensity.
    - ``"sqrt"`` / ``"linear"``: each band's square root (or the band itself) from 0 to its
      :data:`CLIP_PERCENTILE` percentile, clipped.

    Examples
    --------
    >>> from lensmass.core.realistic_fields import make_cutout
    >>> c = make_cutout(3, "ring")
    >>> [colour_picture(c, stretch=s).dtype.name for s in ("lupton", "sqrt")]
    ['uint8', 'uint8']
    """
    b = np.asarray(cutout.bands, float) * np.asarray(band_scale, float)[:, None, None]
    soft = 2.0 if soft is None else float(soft)
    if stretch == "asinh":
        top = float(np.percentile(b[2], 99.8)) if top is None else float(top)
        return _stretch_8bit(b, soft, max(top, 3 * soft))
    g, r, i = np.clip(b, 0, None)
    if stretch in ("lupton", "lupton-mild"):
        from astropy.visualization import make_lupton_rgb

        if stretch == "lupton":
            q, width = 8.0, 4.0 * soft  # linear up to width / Q = soft / 2 noise sigma
        else:
            q = 3.0
            top = float(np.percentile((g + r + i) / 3, 99.8)) if top is None else float(top)
            width = top * q / np.sinh(q)  # make_lupton_rgb maps intensity stretch * sinh(Q) / Q to 255
        with np.errstate(invalid="ignore", divide="ignore"):  # its 0 / 0 on blank pixels, set to 0 there
            return make_lupton_rgb(i, r, g, minimum=0.0, stretch=width, Q=q)
    if stretch in ("sqrt", "linear"):
        rgb = np.stack([i, r, g], axis=-1)
        tops = np.percentile(rgb.reshape(-1, 3), CLIP_PERCENTILE, axis=0)
        v = np.clip(rgb / np.maximum(tops, 1e-12), 0, 1)
        v = np.sqrt(v) if stretch == "sqrt" else v
        return np.round(255 * v).astype(np.uint8)
    raise ValueError(f"stretch must be one of {STRETCHES}")
