"""From a float image to display colours: limits, stretch, colour map, invert.

Pure numpy (no Qt), so it is testable alone. The work is split so that a display
change redoes only what it must:

1. :meth:`DisplayPipeline.limits` -- the display limits of a layer, cached per
   (layer, limits); only a new image or new limits recompute them.
2. :func:`colour_table` -- a 65536-entry table of 32-bit colours for a stretch,
   colour map and invert. Building it touches 65536 numbers, not the image.
3. :func:`quantise` turns the pixels shown to 16-bit levels (0 .. 65534; 65535
   marks masked/NaN pixels) and one table look-up (``numpy.take``) gives their
   colours. The canvas does this only for the visible part, at about one sample
   per screen pixel.

Stretches and intervals are astropy.visualization's (linear, square root,
logarithmic, asinh; min-max, percentiles, zscale of IRAF as implemented there); all but zscale are
written out here with numpy (tested against astropy) so the window starts without importing it.
Colour maps are matplotlib's perceptually uniform ones plus gray.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from lensmass.core.errors import LensInputError

#: Stretch names shown to the user -> factory of the astropy stretch.
STRETCHES = ("linear", "square root", "logarithmic", "asinh")

#: Limit choices: name -> description for tooltips.
LIMITS = {
    "min-max": "full range of the finite pixels",
    "99.5%": "central 99.5% of the pixels",
    "99%": "central 99% of the pixels",
    "97%": "central 97% of the pixels",
    "zscale": "IRAF zscale interval (astropy ZScaleInterval)",
}

#: The limit choice that uses the low and high values the user typed or dragged to.
MANUAL = "manual"

#: Colour maps: grey and matplotlib's perceptually uniform sequential maps.
COLORMAPS = ("gray", "viridis", "magma", "inferno", "cividis")

LEVELS = 65535  # levels 0 .. LEVELS-1 hold data; LEVELS itself marks a masked pixel
MASKED_LEVEL = LEVELS
#: Colour of masked (NaN) pixels: a quiet blue-grey, distinct from every map's ends.
MASKED_RGB = (72, 80, 96)

#: Pixels sampled for percentile limits on large images (a regular sub-grid).
_SAMPLE_TARGET = 500_000


#: The stretches' parameters: astropy.visualization's LogStretch(a=1000) and AsinhStretch(a=0.1).
LOG_A, ASINH_A = 1000.0, 0.1


def _stretch(name: str):
    """The stretch as a function of x in [0, 1], written out as astropy.visualization defines them
    (LinearStretch, SqrtStretch, LogStretch, AsinhStretch; tests/gui/test_display_controls.py checks
    them against astropy): written here so that the window's start does not import astropy.visualization."""
    if name == "linear":
        return lambda x: x
    if name == "square root":
        return np.sqrt
    if name == "logarithmic":
        return lambda x: np.log(LOG_A * x + 1.0) / np.log(LOG_A + 1.0)
    if name == "asinh":
        return lambda x: np.arcsinh(x / ASINH_A) / np.arcsinh(1.0 / ASINH_A)
    raise ValueError(f"Unknown stretch '{name}': use one of {', '.join(STRETCHES)}.")


def sample_pixels(data: np.ndarray, target: int = _SAMPLE_TARGET) -> np.ndarray:
    """The finite pixels of a regular sub-grid of about ``target`` pixels."""
    step = max(1, int(np.sqrt(data.size / target)))
    sub = data[::step, ::step]
    return sub[np.isfinite(sub)]


def image_limits(data: np.ndarray, limits: str) -> tuple[float, float]:
    """Lower and upper display limits of ``data`` for a choice of :data:`LIMITS`.

    Examples
    --------
    >>> image_limits(np.arange(100.0).reshape(10, 10), "min-max")
    (0.0, 99.0)
    """
    finite = sample_pixels(data)
    if finite.size == 0:
        return 0.0, 1.0
    if limits == "min-max":
        lo, hi = float(finite.min()), float(finite.max())
    elif limits == "zscale":
        from astropy.visualization import ZScaleInterval

        lo, hi = ZScaleInterval().get_limits(finite)
    elif limits.endswith("%") and limits in LIMITS:
        # the central p% of the pixels, as astropy.visualization.PercentileInterval (tested against it)
        tail = (100.0 - float(limits[:-1])) / 2.0
        lo, hi = np.percentile(finite, [tail, 100.0 - tail])
    else:
        raise ValueError(f"Unknown limits '{limits}': use one of {', '.join(LIMITS)}.")
    lo, hi = float(lo), float(hi)
    if not hi > lo:
        hi = lo + (abs(lo) * 1e-6 or 1.0)
    return lo, hi


def quantise(data: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """``data`` clipped to [lo, hi] as uint16 levels; NaN pixels get :data:`MASKED_LEVEL`."""
    scale = (LEVELS - 1) / (hi - lo)
    work = np.subtract(data, lo, dtype=np.float32)
    work *= np.float32(scale)
    nan = np.isnan(work)
    np.clip(work, 0, LEVELS - 1, out=work)
    has_nan = bool(nan.any())
    if has_nan:
        work[nan] = 0
    levels = work.astype(np.uint16)
    if has_nan:
        levels[nan] = MASKED_LEVEL
    return levels


@lru_cache(maxsize=64)
def colour_table(stretch: str, colormap: str, invert: bool) -> np.ndarray:
    """65536 colours (uint32 0xffRRGGBB) for the levels of :func:`quantise`.

    Examples
    --------
    >>> t = colour_table("linear", "gray", False)
    >>> hex(int(t[0])), hex(int(t[LEVELS - 1]))
    ('0xff000000', '0xffffffff')
    """
    x = np.linspace(0.0, 1.0, LEVELS)
    y = np.clip(_stretch(stretch)(x), 0.0, 1.0)
    if invert:
        y = 1.0 - y
    if colormap == "gray":
        rgb = np.repeat(y[:, None], 3, axis=1)
    elif colormap in COLORMAPS:
        import matplotlib

        rgb = matplotlib.colormaps[colormap](y)[:, :3]
    else:
        raise ValueError(f"Unknown colour map '{colormap}': use one of {', '.join(COLORMAPS)}.")
    rgb8 = np.round(rgb * 255).astype(np.uint32)
    table = np.empty(LEVELS + 1, dtype=np.uint32)
    table[:LEVELS] = 0xFF000000 | (rgb8[:, 0] << 16) | (rgb8[:, 1] << 8) | rgb8[:, 2]
    r, g, b = MASKED_RGB
    table[MASKED_LEVEL] = 0xFF000000 | (r << 16) | (g << 8) | b
    return table


@dataclass(frozen=True)
class DisplayChoice:
    """What the user chose to see: layer, limits, stretch, colour map, invert."""

    layer: str = "image"
    limits: str = "99.5%"
    stretch: str = "asinh"
    colormap: str = "gray"
    invert: bool = False
    manual_limits: tuple[float, float] | None = None  # used when ``limits`` is :data:`MANUAL`


def parse_limits(low: str, high: str) -> tuple[float, float]:
    """Typed low and high display limits as numbers, low below high.

    Examples
    --------
    >>> parse_limits("-0.5", "12")
    (-0.5, 12.0)
    """
    values = []
    for name, text in (("low", low), ("high", high)):
        try:
            value = float(str(text).strip().replace(",", "."))
        except ValueError:
            raise LensInputError(f"The {name} display limit must be a number, got '{text}'; type a number such "
                                 "as 0 or 1e3.") from None
        if not np.isfinite(value):
            raise LensInputError(f"The {name} display limit must be a finite number, got '{text}'; type a number.")
        values.append(value)
    lo, hi = values
    if not hi > lo:
        raise LensInputError(f"The low display limit ({lo:g}) must be below the high one ({hi:g}); swap or "
                             "change them.")
    return lo, hi


def dragged_limits(lo: float, hi: float, dx: float, dy: float) -> tuple[float, float]:
    """Display limits after a contrast drag of (dx, dy) widget widths and heights.

    Dragging right lowers the middle of the window by ``dx`` window widths (the image brightens),
    dragging up narrows it by a factor ``exp(3 dy)`` (more contrast), down widens it.

    Examples
    --------
    >>> dragged_limits(0.0, 10.0, 0.1, 0.0)
    (-1.0, 9.0)
    >>> lo, hi = dragged_limits(0.0, 10.0, 0.0, -0.2)
    >>> round(hi - lo, 3)
    5.488
    """
    mid, width = 0.5 * (lo + hi), hi - lo
    mid -= dx * width
    width *= float(np.exp(3.0 * dy))
    width = max(width, abs(mid) * 1e-6, 1e-30)
    return mid - 0.5 * width, mid + 0.5 * width


class DisplayPipeline:
    """The float layers of the open image and their display limits, cached per (layer, limits).

    ``layers`` maps a layer name ("image", "lens light", "residual") to its float
    array. Replace arrays with :meth:`set_layer` (drops that layer's cached limits).
    The canvas quantises and colours only the part it shows (:func:`quantise`,
    :func:`colour_table`), so a stretch or colour-map change costs the screen's
    pixels, not the image's.
    """

    def __init__(self) -> None:
        self._layers: dict[str, np.ndarray] = {}
        self._limits: dict[tuple[str, str], tuple[float, float]] = {}

    def set_layer(self, name: str, data: np.ndarray | None) -> None:
        self._limits = {k: v for k, v in self._limits.items() if k[0] != name}
        if data is None:
            self._layers.pop(name, None)
        else:
            self._layers[name] = np.asarray(data, dtype=np.float32)

    def clear(self) -> None:
        self._layers.clear()
        self._limits.clear()

    def has_layer(self, name: str) -> bool:
        return name in self._layers

    def data(self, layer: str) -> np.ndarray:
        return self._layers[layer]

    def limits(self, layer: str, limits: str) -> tuple[float, float]:
        """Display limits (lo, hi) of ``layer`` for a choice of :data:`LIMITS` (cached)."""
        key = (layer, limits)
        if key not in self._limits:
            self._limits[key] = image_limits(self._layers[layer], limits)
        return self._limits[key]

    def limits_for(self, choice: DisplayChoice) -> tuple[float, float]:
        """(lo, hi) of a display choice: the typed ones for :data:`MANUAL`, else :meth:`limits`."""
        if choice.limits == MANUAL and choice.manual_limits is not None:
            return float(choice.manual_limits[0]), float(choice.manual_limits[1])
        return self.limits(choice.layer, choice.limits if choice.limits in LIMITS else "99.5%")

    def levels(self, layer: str, limits: str) -> tuple[np.ndarray, tuple[float, float]]:
        """Quantised levels of the whole ``layer`` and the (lo, hi) limits used."""
        lo_hi = self.limits(layer, limits)
        return quantise(self._layers[layer], *lo_hi), lo_hi

    def colours(self, choice: DisplayChoice, flip_rows: bool = False) -> np.ndarray:
        """(ny, nx) C-ordered uint32 colours of the whole chosen layer.

        Row 0 is the first stored row, or the last one with ``flip_rows`` (FITS
        images are shown with row 0 at the bottom).
        """
        levels = quantise(self._layers[choice.layer], *self.limits_for(choice))
        if flip_rows:
            levels = levels[::-1]
        return np.take(colour_table(choice.stretch, choice.colormap, bool(choice.invert)), levels)
