"""The one exception type users see as a single clear sentence."""

from __future__ import annotations


class LensInputError(ValueError):
    """Bad input, described in one sentence that names the problem and the fix.

    The command line prints ``str(error)`` and exits non-zero; the window shows
    it beside the offending field. Never raise it with a traceback-style message.
    """
