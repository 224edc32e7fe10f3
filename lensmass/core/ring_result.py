"""The ring finder's answer (:class:`RingResult`), on its own so every ring module can use it."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from lensmass.core.lenslight import LensLightModel


@dataclass
class RingResult:
    """What the ring finder saw.

    ``radius_pix`` / ``radius_err_pix``: ring radius (sqrt(a b) of the ellipse through the
    ridge points, or the circle radius) and its 1-sigma error, in pixels: half the width of the 1-sigma interval
    ``radius_lo_pix``-``radius_hi_pix`` (2 sigma: ``radius_lo2_pix``-``radius_hi2_pix``), which is asymmetric where
    the calibrated error is (a lone or unpaired arc: :mod:`lensmass.core.ring_interval`); count coverage with the bounds. ``kind`` is
    "ring", "arcs" or "none". ``points_x``/``points_y`` are the per-sector ridge points.
    ``residual`` is the lens-subtracted image the finder searched.
    """

    found: bool
    confident: bool
    kind: str
    radius_pix: float
    radius_err_pix: float
    score: float
    coverage: float
    center_x: float
    center_y: float
    axis_ratio: float
    angle_deg: float
    fit_rms_pix: float
    points_x: np.ndarray
    points_y: np.ndarray
    profile_radius_pix: np.ndarray
    profile: np.ndarray
    profile_err: np.ndarray
    noise_sigma: float
    residual: np.ndarray | None
    lens_light: LensLightModel | None
    message: str = ""
    warnings: list[str] = field(default_factory=list)
    ring_width_pix: float = float("nan")
    center_source: str = "the light peak near the image centre"
    center_hint: str = ""
    masks: Any = None
    paired: bool = False
    radius_internal_err_pix: float = float("nan")
    #: A lone arc's own radius (its profile peak, pixels) before the lone-arc rule turned it into theta_E; NaN else.
    lone_arc_radius_pix: float = float("nan")
    #: An arc paired with a counter-image found on the far side (ring_shapes._counter_pair): the arc's own radius
    #: (pixels), to which the stated interval's lower side reaches (ring_interval.COUNTER_PAIR_LOW_SHARES); NaN else.
    pair_arc_radius_pix: float = float("nan")
    #: Bounds of the stated 1-sigma (15.87-84.13%) and 2-sigma (2.275-97.725%) intervals of the radius, pixels
    #: (:func:`lensmass.core.ring_interval.state_interval`); NaN when nothing was found.
    radius_lo_pix: float = float("nan")
    radius_hi_pix: float = float("nan")
    radius_lo2_pix: float = float("nan")
    radius_hi2_pix: float = float("nan")
    #: An asymmetric error's -2, -1, +1, +2 sigma offsets from the radius (pixels) and the error it came with
    #: (:func:`lensmass.core.ring_interval.hold_shape`); None for a symmetric error.
    interval_shape_pix: tuple[float, float, float, float] | None = None
    interval_base_err_pix: float = float("nan")
    #: A tail term joined in quadrature to the 2-sigma sides only (pixels; 0: none): far misses a normal error does not
    #: reach (:data:`lensmass.core.ring_interval.RING_TAIL_SHARE` of the radius on a FITS image; an 8-bit picture's
    #: larger one, :func:`lensmass.core.ring_pictures.add_picture_tail`).
    interval_tail_pix: float = 0.0
    #: The coverage calibration of the stated interval: (floor share, 1-sigma factor, 2-sigma factor) of its answer
    #: type (:mod:`lensmass.core.interval_scale`; (0, 1, 1): none), and the -2, -1, +1, +2 sigma bounds before it.
    interval_scale: tuple[float, float, float] = (0.0, 1.0, 1.0)
    interval_unscaled_pix: tuple[float, float, float, float] | None = None
    #: The error was set from the positions of compact images (an image cross: ring_shapes._image_cross); the ridge
    #: scatter and width :func:`lensmass.core.ring_confidence._calibrate` reads belong to the candidate it replaced,
    #: so their terms are not added to it.
    error_from_images: bool = False
    #: The texts of the message and warnings that quote the answer's radius or interval, each with its template
    #: (:mod:`lensmass.core.ring_message`: filled again from the answer once its interval is stated).
    quoted_texts: dict[str, str] = field(default_factory=dict)

    def refuse(self, why: str, message: str) -> None:
        """Report no ring: ``why`` (what was seen and why it is not a ring) joins the warnings, ``message`` (the
        fix) replaces the answer's message."""
        self.warnings.append(why)
        self.found, self.confident, self.kind = False, False, "none"
        self.message = message


def answer_noun(kind: str) -> str:
    """The answer's kind as a message opens with it: "A ring", "Arcs".

    >>> answer_noun("ring"), answer_noun("arcs")
    ('A ring', 'Arcs')
    """
    return "Arcs" if kind == "arcs" else f"A {kind}"
