"""Progress reporting and cancellation for long computations (used from worker threads).

Long-running core functions accept ``progress`` (called with a fraction 0..1) and
``should_stop`` (a callable returning True to cancel); cancelling raises
:class:`OperationCancelled`, which callers catch and show as "cancelled".
"""

from __future__ import annotations

from typing import Callable, Optional

ProgressCallback = Optional[Callable[[float], None]]
StopCallback = Optional[Callable[[], bool]]


class OperationCancelled(Exception):
    """The user cancelled a long computation (``should_stop()`` returned True)."""


def report(progress: ProgressCallback, fraction: float) -> None:
    """Call ``progress(fraction)`` if given, clamped to 0..1."""
    if progress is not None:
        progress(min(1.0, max(0.0, float(fraction))))


def check_stop(should_stop: StopCallback) -> None:
    """Raise :class:`OperationCancelled` when ``should_stop()`` says so."""
    if should_stop is not None and should_stop():
        raise OperationCancelled("cancelled")
