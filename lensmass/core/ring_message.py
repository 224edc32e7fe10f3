"""The numbers of the ring finder's answer, as its message and warnings quote them: from the answer itself.

A text that states the answer's radius or its interval is written as a template with slots (:data:`RADIUS`,
:data:`STATED`, :data:`STATED_BOUNDS`) and filled from the :class:`~lensmass.core.ring_result.RingResult` by
:func:`quote` (the text is kept beside its template on the answer); after the interval is stated
(:func:`lensmass.core.ring_interval.state_interval`), :func:`restate` fills every kept template again, so the
message's "+-" is the stated 1-sigma interval (asymmetric where it is) and never an error from before the later
terms: one source for each number.
"""

from __future__ import annotations

from lensmass.core.ring_interval import interval_bounds, interval_text

#: The answer's radius, pixels ("15.64").
RADIUS = "{radius}"
#: The radius and its stated 1-sigma interval, pixels: "15.64 +- 0.16", or "15.64 +0.20/-0.12" where the interval is
#: asymmetric at the printed precision.
STATED = "{radius +- 1 sigma}"
#: The radius with its stated 1- and 2-sigma bounds in pixels
#: (:func:`lensmass.core.ring_interval.interval_text`: "9.03 pixels (1 sigma 6.20-13.30, 2 sigma 4.50-17.80 pixels)").
STATED_BOUNDS = "{radius, 1 and 2 sigma bounds}"
#: How every message of an answer to be checked by eye ends (weak, barely resolved, refit-only and core answers):
#: :func:`lensmass.core.core_residual.flag_core_answer` finds such messages by it.
CHECK_BY_EYE = "check it by eye before trusting it."
#: The sentence :func:`close_unconfident` ends a found but unconfident answer's message with when it does not yet ask
#: for a check by eye (an answer stated as found before the calibrated "confident" turned it down).
NOT_CONFIDENT = f"It is not called confident: {CHECK_BY_EYE}"


def weak_opening(kind: str, score: float, coverage: float) -> str:
    """How a weak candidate's message opens (a template: the radius slot is filled by :func:`quote`), as the search,
    the refit-only pass and the unpaired-arc statement write it.

    >>> weak_opening("arcs", 7.04, 0.46)
    'A weak arcs candidate at {radius} pixels (7.0 sigma, 46% of directions)'
    """
    return f"A weak {kind} candidate at {RADIUS} pixels ({score:.1f} sigma, {coverage:.0%} of directions)"


def stated_text(out) -> str:
    """The radius and its 1-sigma interval from the answer's bounds (:func:`interval_bounds`: the stated ones, or
    radius -+ error before they are stated), two decimals.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> stated_text(SimpleNamespace(radius_pix=15.64, radius_err_pix=0.16))
    '15.64 +- 0.16'
    >>> stated_text(SimpleNamespace(radius_pix=12.5, radius_err_pix=1.0, radius_lo2_pix=10.0, radius_lo_pix=11.7,
    ...                             radius_hi_pix=13.9, radius_hi2_pix=16.0))
    '12.50 +1.40/-0.80'
    """
    r = float(out.radius_pix)
    _, lo, hi, _ = interval_bounds(out)
    below, above = f"{r - lo:.2f}", f"{hi - r:.2f}"
    return f"{r:.2f} +- {above}" if below == above else f"{r:.2f} +{above}/-{below}"


def fill(out, template: str) -> str:
    """``template`` with its slots filled from the answer ``out``.

    >>> from types import SimpleNamespace
    >>> fill(SimpleNamespace(radius_pix=15.0, radius_err_pix=0.5), f"A ring at {STATED} pixels, r = {RADIUS}.")
    'A ring at 15.00 +- 0.50 pixels, r = 15.00.'
    """
    text = template.replace(STATED_BOUNDS, interval_text(float(out.radius_pix), interval_bounds(out), "pixels"))
    return text.replace(STATED, stated_text(out)).replace(RADIUS, f"{float(out.radius_pix):.2f}")


def quote(out, template: str) -> str:
    """``template`` filled from ``out`` now, kept on ``out`` (``quoted_texts``) so :func:`restate` fills it again."""
    text = fill(out, template)
    out.quoted_texts[text] = template
    return text


def restate(out) -> None:
    """Fill again, from the answer as it now is, every kept template in the message and the warnings (a text
    replaced since, such as a refusal, holds none and is left as it is)."""
    kept = dict(out.quoted_texts)
    if not kept:
        return

    def again(text: str) -> str:
        for old, template in kept.items():
            if old and old in text:
                text = text.replace(old, fill(out, template))
        return text

    out.message = again(out.message)
    out.warnings = [again(w) for w in out.warnings]
    out.quoted_texts = {fill(out, t): t for t in kept.values()}


def close_unconfident(out) -> None:
    """End the message of a found answer that is not confident with :data:`NOT_CONFIDENT`, unless it already asks for a
    check by eye. The search states an answer before its confidence is final
    (:func:`lensmass.core.ring_confidence._calibrate`, the 8-bit picture rule): without this a ring turned down there,
    or a single arc (never confident), read as a confident statement.

    >>> from types import SimpleNamespace
    >>> out = SimpleNamespace(found=True, confident=False, message="A ring at 15.00 +- 0.50 pixels (21 sigma).")
    >>> close_unconfident(out)
    >>> out.message
    'A ring at 15.00 +- 0.50 pixels (21 sigma). It is not called confident: check it by eye before trusting it.'
    >>> close_unconfident(out)  # said once
    >>> out.message.count(CHECK_BY_EYE)
    1
    """
    if out.found and not out.confident and out.message and CHECK_BY_EYE not in out.message:
        out.message = f"{out.message} {NOT_CONFIDENT}"
