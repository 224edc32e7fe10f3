"""The one exception type users see as a single clear sentence."""

from __future__ import annotations


class LensInputError(ValueError):
    """Bad input, described in one sentence that names the problem and the fix.

    The command line prints ``str(error)`` and exits non-zero; the window shows
    it beside the offending field. Never raise it with a traceback-style message.

    Examples
    --------
    >>> from lensmass import estimate
    >>> try:
    ...     estimate(1.2, 0.5, 0.3)
    ... except LensInputError as error:
    ...     print(error)
    The source must lie behind the lens: z_s must be larger than z_l (got z_l = 0.5, z_s = 0.3); check that the two redshifts are not swapped.
    """


def in_words(message: str, names: dict[str, str] | None = None) -> str:
    """A core message with each `parameter` name shown as the caller knows it.

    Core messages name the quantity in words and its Python parameter in backquotes
    (``The lens redshift (`z_l`) ...``). The command line passes its flag for each name
    (``{"z_l": "--zl"}``); names without an entry lose only the backquotes.

    Examples
    --------
    >>> in_words("The lens redshift (`z_l`) must be positive.", {"z_l": "--zl"})
    'The lens redshift (--zl) must be positive.'
    >>> in_words("Give `z_s` or `z_s_range`.")
    'Give z_s or z_s_range.'
    """
    import re

    names = names or {}
    return re.sub(r"`([A-Za-z_][A-Za-z0-9_]*)`", lambda m: names.get(m.group(1), m.group(1)), str(message))
