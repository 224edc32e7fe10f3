"""Seeing the arcs on open: when a freshly opened image has a bright galaxy at its centre,
fit its light in the background and switch to the residual, where the arcs stand out.

The test for "a bright centre" is :func:`lensmass.core.sky_level.bright_centre`; the window part
(:func:`offer_light_fit`) starts the window's lens-light fit through its task runner (progress
bar, Esc cancels) and says in the status line what it did and how to turn it off.
The choice is remembered in the window's settings under :data:`SETTING`.
"""

from __future__ import annotations

from lensmass.core.sky_level import bright_centre

#: QSettings key: fit the lens light when an image opens ("true"/"false"; default on).
SETTING = "view/light_on_open"
#: Larger images are survey frames, not cutouts around a lens: their light is fitted only when asked.
AUTO_MAX_PIXELS = 2048 * 2048
#: Milliseconds between looks at the canvas while waiting for its first paint (the fit starts after it).
_PAINT_POLL_MS = 20


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
    if image.lens_light is not None or window.tasks.busy:
        return  # the user's own work came first (the ring finder fits the lens light too): never overwrite it
    if window.fit_lens_light(then_layer="residual", automatic=True):
        window.show_message(f"Opened {opened_name}: fitting the central galaxy's light to show the arcs in the "
                            "residual (Esc cancels; the Measure menu turns this off).", 0)
