"""Core messages in the window's words: each `parameter` a message names becomes the field's name here.

Core messages name a quantity in words and its Python parameter in backquotes; the command line
shows its flag instead (``lensmass.cli.PARAMETER_FLAGS``) and the window the name of its field.
"""

from __future__ import annotations

from lensmass.core.errors import in_words
from lensmass.core.result_keys import MODEL_NOTE

#: Python parameter -> how the window's fields call it.
FIELD_NAMES = {
    "theta_e_arcsec": "θ_E", "theta_e_err": "θ_E error", "z_l": "z_l", "z_l_err": "z_l error", "z_s": "z_s",
    "z_s_err": "z_s error", "z_s_range": "z_s range", "z_s_distribution": "z_s table",
    "concentration": "concentration", "halo_definition": "halo boundary", "samples": "Monte Carlo draws",
    "zeropoint": "zeropoint", "zeropoint_key": "zeropoint keyword", "exptime": "exposure time",
    "pixel_scale_arcsec": "pixel scale",
}


def window_words(message: str) -> str:
    """``message`` with its parameter names as the window's fields call them."""
    return in_words(message, FIELD_NAMES)


#: The model note as the Mass budget panel says it (its models are in the rows' tooltips and the copied text).
WINDOW_MODEL_NOTE = ("Masses are model-dependent estimates: point at a row to see the model and assumptions "
                     "behind its number; Copy as text lists them all.")


def window_note(note: str) -> str:
    """A result's note as the window shows it (the model note says where the window lists the models)."""
    return WINDOW_MODEL_NOTE if note == MODEL_NOTE else window_words(note)
