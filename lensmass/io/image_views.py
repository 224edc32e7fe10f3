"""Views of images for people: display limits from percentiles, and colour composites of
several bands (each band stretched, then stacked as red, green, blue)."""

from __future__ import annotations

import os
from pathlib import Path
from typing import Sequence

import numpy as np

from lensmass.core.errors import LensInputError


def display_limits(data: np.ndarray, low: float = 0.5, high: float = 99.7, max_samples: int = 250_000
                   ) -> tuple[float, float]:
    """Percentile display limits from a regular subsample of the finite pixels (fast on 8k x 8k).

    Examples
    --------
    >>> lo, hi = display_limits(np.arange(100.0).reshape(10, 10), 0, 100)
    >>> lo, hi
    (0.0, 99.0)
    """
    step = max(1, int(np.sqrt(data.size / max_samples)))
    sub = data[::step, ::step]
    sub = sub[np.isfinite(sub)]
    if sub.size == 0:
        return 0.0, 1.0
    lo, hi = np.percentile(sub, [low, high])
    if hi <= lo:
        hi = lo + 1.0
    return float(lo), float(hi)


def colour_composite(
    red: np.ndarray,
    green: np.ndarray,
    blue: np.ndarray,
    *,
    stretch: float = 5.0,
    limits: Sequence[tuple[float, float]] | None = None,
) -> np.ndarray:
    """An RGB picture (ny, nx, 3) in 0..1 from three aligned bands, for looking only.

    Each band is scaled between its display limits and passed through an asinh
    stretch of softening ``stretch``; NaN pixels become black. Measurements use one
    band (the grey data), never this picture.

    Examples
    --------
    >>> rgb = colour_composite(np.ones((2, 2)), np.zeros((2, 2)), np.zeros((2, 2)))
    >>> rgb.shape
    (2, 2, 3)
    """
    bands = [np.asarray(b, float) for b in (red, green, blue)]
    if any(b.ndim != 2 for b in bands) or len({b.shape for b in bands}) != 1:
        shapes = ", ".join("x".join(map(str, b.shape)) for b in bands)
        raise LensInputError(f"A colour composite needs three aligned 2-D bands of one size, got {shapes}; "
                             "resample the bands onto one pixel grid first.")
    out = np.empty(bands[0].shape + (3,), float)
    for k, b in enumerate(bands):
        lo, hi = limits[k] if limits is not None else display_limits(b)
        scaled = np.clip((b - lo) / (hi - lo if hi > lo else 1.0), 0, 1)
        out[..., k] = np.arcsinh(stretch * scaled) / np.arcsinh(stretch)
    out[~np.isfinite(out)] = 0.0
    return out


def load_colour_composite(paths: Sequence[str | os.PathLike], *, hdu=None, stretch: float = 5.0) -> np.ndarray:
    """Read three aligned FITS bands (red, green, blue) and return :func:`colour_composite`."""
    if len(paths) != 3:
        raise LensInputError(f"A colour composite needs exactly three band files (red, green, blue), got {len(paths)}.")
    from lensmass.io.images import load_image

    images = [load_image(p, hdu=hdu) for p in paths]
    if images[0].wcs is not None and all(im.wcs is not None for im in images):
        ref = images[0]
        for im in images[1:]:
            ra0, dec0 = ref.pixel_to_sky(0.0, 0.0)
            x, y = im.sky_to_pixel(ra0, dec0)
            if im.shape != ref.shape or abs(float(x)) > 0.5 or abs(float(y)) > 0.5:
                raise LensInputError(f"{Path(im.path).name} is not aligned with {Path(ref.path).name} "
                                     "(different grid or WCS): resample the bands onto one grid first.")
    return colour_composite(*(im.data for im in images), stretch=stretch)
