"""Measurements of one segment of a label image: its light's second-moment shape, the level where it meets
another segment, and the segments beside it (helpers of :mod:`lensmass.core.cutout_masks`)."""

from __future__ import annotations

import numpy as np
from scipy.ndimage import binary_dilation


def moment_shape(light: np.ndarray, xx: np.ndarray, yy: np.ndarray) -> tuple[float, float]:
    """Elongation (major over minor axis of the second moments) and major-axis angle (degrees from +x) of
    ``light`` at pixel coordinates ``xx``, ``yy`` (negative values count as none); NaN when there is no light.
    A Gaussian of standard deviations 4 and 2 pixels has elongation 2 (its moments are the variances):

    Examples
    --------
    >>> yy, xx = np.mgrid[-30:31, -30:31]
    >>> e, a = moment_shape(np.exp(-0.5 * ((xx / 4.0) ** 2 + (yy / 2.0) ** 2)), xx, yy)
    >>> round(e, 2), round(a % 180.0, 1)
    (2.0, 0.0)
    """
    w = np.clip(light, 0, None)
    tot = float(w.sum())
    if tot <= 0:
        return float("nan"), float("nan")
    mx, my = float((w * xx).sum() / tot), float((w * yy).sum() / tot)
    dx, dy = xx - mx, yy - my
    cxx, cyy, cxy = (w * dx * dx).sum() / tot, (w * dy * dy).sum() / tot, (w * dx * dy).sum() / tot
    ev, vec = np.linalg.eigh(np.array([[cxx, cxy], [cxy, cyy]]))
    return float(np.sqrt(max(ev[1], 1e-9) / max(ev[0], 1e-9))), float(np.degrees(np.arctan2(vec[1, 1], vec[0, 1])))


def saddle_level(labels: np.ndarray, sm: np.ndarray, sl: tuple[slice, slice], label: int) -> float:
    """The light level of ``sm`` where segment ``label`` (bounding box ``sl``) meets another segment (the highest
    of its pixels next to one: the saddle of a deblended blend), or its faintest pixel when it touches none."""
    ny, nx = labels.shape
    y0, y1 = max(0, sl[0].start - 1), min(ny, sl[0].stop + 1)
    x0, x1 = max(0, sl[1].start - 1), min(nx, sl[1].stop + 1)
    box = labels[y0:y1, x0:x1]
    own = box == label
    others = (box != 0) & ~own
    edge = own & binary_dilation(others)
    vals = sm[y0:y1, x0:x1]
    return float(vals[edge].max()) if edge.any() else float(vals[own].min())


def touching_labels(labels: np.ndarray, label: int) -> set[int]:
    """Labels of the segments within 2 pixels of segment ``label``."""
    ys, xs = np.nonzero(labels == label)
    if ys.size == 0:
        return set()
    y0, y1 = max(0, ys.min() - 3), min(labels.shape[0], ys.max() + 4)
    x0, x1 = max(0, xs.min() - 3), min(labels.shape[1], xs.max() + 4)
    box = labels[y0:y1, x0:x1]
    around = binary_dilation(box == label, iterations=2)
    return set(np.unique(box[around]).tolist()) - {0, label}
