"""Seeing the arcs on open: when a freshly opened image has a bright galaxy at its centre,
fit its light in the background and switch to the residual, where the arcs stand out.

The test for "a bright centre" is pure numpy (:func:`bright_centre`); the window part
(:func:`offer_light_fit`) starts the window's lens-light fit through its task runner (progress
bar, Esc cancels) and says in the status line what it did and how to turn it off.
The choice is remembered in the window's settings under :data:`SETTING`.
"""

from __future__ import annotations

import numpy as np

#: QSettings key: fit the lens light when an image opens ("true"/"false"; default on).
SETTING = "view/light_on_open"
#: A centre counts as bright when its smoothed peak stands this many sky sigmas above the sky.
BRIGHT_SIGMAS = 10.0
#: Half-width of the central box searched, as a fraction of the image's shorter side.
CENTRE_FRACTION = 0.15
#: Larger images are survey frames, not cutouts around a lens: their light is fitted only when asked.
AUTO_MAX_PIXELS = 2048 * 2048
#: Milliseconds between looks at the canvas while waiting for its first paint (the fit starts after it).
_PAINT_POLL_MS = 20


def bright_centre(data: np.ndarray, sigmas: float = BRIGHT_SIGMAS, picture: bool = False) -> bool:
    """True when a source at least ``sigmas`` sky sigmas bright sits near the image centre.

    The sky level is the median of the finite pixels and its sigma 1.4826 x the median
    absolute deviation (a robust normal-equivalent width, common practice); the peak is
    the brightest 3 x 3 mean inside a central box of half-width
    ``CENTRE_FRACTION`` x the shorter side (at least 3 pixels).

    ``picture``: an 8-bit stretched picture (PNG, JPEG), whose stretch widens the sky's spread
    and clips the galaxy: there the peak must stand 3 sigmas above the sky and at least half
    way from the sky to the brightest pixels (the 99.9th percentile).

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> sky = rng.normal(0.0, 1.0, (64, 64))
    >>> bright_centre(sky)
    False
    >>> yy, xx = np.mgrid[:64, :64]
    >>> bright_centre(sky + 50 * np.exp(-((xx - 32) ** 2 + (yy - 31) ** 2) / 18))
    True
    """
    data = np.asarray(data, dtype=np.float32)
    if data.ndim != 2 or min(data.shape) < 9:
        return False
    step = max(1, int(np.sqrt(data.size / 250_000)))  # a regular sub-grid is enough for the sky
    sample = data[::step, ::step]
    sample = sample[np.isfinite(sample)]
    if sample.size < 50:
        return False
    sky = float(np.median(sample))
    sigma = 1.4826 * float(np.median(np.abs(sample - sky)))
    if not sigma > 0:
        return False
    ny, nx = data.shape
    half = max(3, int(CENTRE_FRACTION * min(ny, nx)))
    cy, cx = ny // 2, nx // 2
    box = data[max(0, cy - half - 1): cy + half + 2, max(0, cx - half - 1): cx + half + 2]
    box = np.where(np.isfinite(box), box, sky)
    # 3 x 3 running mean by summed shifts (no scipy needed for a small box)
    smooth = sum(box[i: box.shape[0] - 2 + i, j: box.shape[1] - 2 + j] for i in range(3) for j in range(3)) / 9.0
    height = float(smooth.max()) - sky
    if picture:
        top = float(np.percentile(sample, 99.9))
        return bool(height > 3.0 * sigma and height > 0.5 * (top - sky))
    return bool(height > sigmas * sigma)


def light_on_open_wanted(settings) -> bool:
    """The user's choice (default on)."""
    value = settings.value(SETTING)
    return value is None or str(value).lower() in ("true", "1")


def offer_light_fit(window, opened_name: str) -> bool:
    """After ``window`` opened an image: fit the lens light if wanted and the centre is bright.

    The fit starts once the canvas has painted the image (the image shows first, then the work
    begins). Returns True when a fit is on its way; the status line says what was done either way.
    """
    image = window.model.image
    if image is None or not light_on_open_wanted(window.settings):
        return False
    ny, nx = image.data.shape
    if ny * nx > AUTO_MAX_PIXELS:
        window.show_message(f"Opened {opened_name} ({nx} x {ny} pixels): too large a field to fit a lens galaxy's "
                            "light on open; crop a cutout around the lens, or use Fit lens light (Ctrl+L).")
        return False
    if not bright_centre(image.data, picture=getattr(image.loaded, "kind", "fits") != "fits"):
        window.show_message(f"Opened {opened_name}; no bright galaxy at the centre, so the image is shown as "
                            "stored (Fit lens light, Ctrl+L, shows a residual).")
        return False
    window.light_on_open_pending = image  # the window is not idle yet (see lensmass.gui.app.wait_until_idle)
    window.show_message(f"Opened {opened_name}: a bright galaxy sits at the centre; its light will be fitted "
                        "to show the arcs in the residual.", 0)
    _start_after_first_paint(window, image, opened_name, window.canvas.paint_count, tries=int(3000 / _PAINT_POLL_MS))
    return True


def _start_after_first_paint(window, image, opened_name: str, paints: int, tries: int) -> None:
    """Start the fit once the window is shown and has painted ``image``; give up if it closes or another opens."""
    from PySide6.QtCore import QTimer
    from shiboken6 import isValid

    if not isValid(window) or window.model.image is not image:
        if isValid(window) and window.light_on_open_pending is image:
            window.light_on_open_pending = None
        return  # the window is gone, or another image was opened meanwhile
    shown = window.isVisible()
    if tries > 0 and (not shown or window.canvas.paint_count == paints):
        # tied to the window: a window deleted meanwhile never gets the call
        QTimer.singleShot(_PAINT_POLL_MS, window, lambda: _start_after_first_paint(window, image, opened_name,
                                                                                   paints, tries - 1))
        return
    window.light_on_open_pending = None
    if not shown:
        return  # closed (or never shown): nobody to show the residual to
    if window.fit_lens_light(then_layer="residual", automatic=True):
        window.show_message(f"Opened {opened_name}: fitting the central galaxy's light to show the arcs in the "
                            "residual (Esc cancels; the Measure menu turns this off).", 0)
