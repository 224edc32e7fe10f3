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
    "pixel_scale_arcsec": "pixel scale", "pixel_scale_err_arcsec": "pixel-scale error", "center": "lens centre mark",
    "points": "marked points", "max_radius_pix": "search radius", "lens_mag": "lens magnitude",
    "r_eff_arcsec": "effective radius", "sersic_n": "Sersic index", "stellar_ml": "stellar M/L",
    "stellar_mass_msun": "stellar mass", "band": "band", "n_bins": "bins", "n_bootstrap": "bootstrap resamplings",
    "r_min": "inner radius", "r_max": "outer radius", "z_margin": "redshift margin", "zeta_radii": "zeta radii",
    "columns": "column mapping", "hdu": "HDU", "plane": "plane", "h0": "H0", "om0": "Omega_m", "ode0": "Omega_Lambda",
    "cosmology": "cosmology",
}


def window_words(message: str) -> str:
    """``message`` with its parameter names as the window's fields call them."""
    return in_words(message, FIELD_NAMES)


#: Inputs of the "Lens & source" panel that are not result keys, in words.
_INPUT_WORDS = {"h0": "Hubble constant", "om0": "matter density", "ode0": "dark-energy density",
                "concentration_value": "fixed NFW concentration", "concentration": "concentration relation"}


def input_words(key: str) -> str:
    """An input field or choice named in words, for undo texts and messages ("source redshift error").

    Redshifts, the cosmology and the halo boundary take their words from the key registry
    (:mod:`lensmass.core.result_keys`); ``<key>_err`` is "<words of key> error".

    >>> input_words("z_s_err")
    'source redshift error'
    >>> input_words("halo_definition")
    'halo boundary'
    """
    from lensmass.core.result_keys import RESULT_KEYS

    if key.endswith("_err"):
        return f"{input_words(key[:-4])} error"
    if key in _INPUT_WORDS:
        return _INPUT_WORDS[key]
    fact = RESULT_KEYS.get(key)
    if fact is None:
        return key.replace("_", " ")
    # a label that is a symbol (z_s) says less than the description ("source redshift")
    return fact.description if "_" in fact.label else fact.label


#: The model note as the Mass budget panel says it (its models are in the rows' tooltips and the copied text).
WINDOW_MODEL_NOTE = ("Masses are model-dependent estimates: point at a row to see the model and assumptions "
                     "behind its number; Copy as text lists them all.")


def window_note(note: str) -> str:
    """A result's note as the window shows it (the model note says where the window lists the models)."""
    return WINDOW_MODEL_NOTE if note == MODEL_NOTE else window_words(note)
