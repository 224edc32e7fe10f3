"""A JPEG file's quality, read back from its quantisation tables.

A JPEG encoder divides each 8 x 8 block's cosine coefficients by a quantisation table stored in the
file (ITU-T T.81, section B.2.4.1, the DQT segment). The Independent JPEG Group's library, which most
encoders use (Pillow among them), makes its tables by scaling the example tables of Annex K (K.1
luminance, K.2 chrominance) by the quality q in 1-100: a factor ``5000 / q`` percent below 50 and
``200 - 2 q`` percent from 50 up, each entry ``(base * factor + 50) // 100`` clipped to 1-255 (IJG
``jpeg_set_quality``; common practice). The quality whose scaled tables come nearest the file's (in
the logarithm of each entry, luminance counted twice) is the file's quality; for an IJG-made file
the match is exact, for another encoder's tables it is the IJG quality of the same coarseness.
"""

from __future__ import annotations

import numpy as np

#: ITU-T T.81 Annex K, table K.1 (luminance), natural (row-major) order.
ANNEX_K_LUMINANCE = np.array([
    16, 11, 10, 16, 24, 40, 51, 61,
    12, 12, 14, 19, 26, 58, 60, 55,
    14, 13, 16, 24, 40, 57, 69, 56,
    14, 17, 22, 29, 51, 87, 80, 62,
    18, 22, 37, 56, 68, 109, 103, 77,
    24, 35, 55, 64, 81, 104, 113, 92,
    49, 64, 78, 87, 103, 121, 120, 101,
    72, 92, 95, 98, 112, 100, 103, 99], dtype=np.int64)
#: ITU-T T.81 Annex K, table K.2 (chrominance), natural order.
ANNEX_K_CHROMINANCE = np.full(64, 99, dtype=np.int64)
ANNEX_K_CHROMINANCE[[0, 1, 2, 3, 8, 9, 10, 11, 16, 17, 18, 24, 25]] = [17, 18, 24, 47, 18, 21, 26, 66, 24, 26, 56,
                                                                        47, 66]


def ijg_table(base: np.ndarray, quality: int) -> np.ndarray:
    """The IJG library's table for ``quality`` (1-100) scaled from an Annex K ``base`` table (baseline: 1-255).

    Examples
    --------
    >>> ijg_table(ANNEX_K_LUMINANCE, 50)[:4].tolist(), ijg_table(ANNEX_K_LUMINANCE, 90)[:4].tolist()
    ([16, 11, 10, 16], [3, 2, 2, 3])
    """
    q = int(np.clip(quality, 1, 100))
    factor = 5000 // q if q < 50 else 200 - 2 * q
    return np.clip((np.asarray(base, np.int64) * factor + 50) // 100, 1, 255)


def quality_from_tables(tables: dict[int, list[int]] | None) -> float | None:
    """The IJG quality (1-100) nearest a JPEG's quantisation ``tables`` (Pillow's ``Image.quantization``:
    table number -> 64 entries in natural order), or None when there are none.

    Examples
    --------
    >>> import io
    >>> from PIL import Image
    >>> buf = io.BytesIO()
    >>> Image.new("RGB", (16, 16), (200, 120, 40)).save(buf, "JPEG", quality=83)
    >>> quality_from_tables(Image.open(buf).quantization)
    83.0
    """
    if not tables:
        return None
    found = [np.asarray(t, float).ravel() for _, t in sorted(tables.items())]
    if any(t.size != 64 or not np.all(t > 0) for t in found):
        return None
    bases = [ANNEX_K_LUMINANCE, ANNEX_K_CHROMINANCE]
    weights = [2.0, 1.0]
    qualities = np.arange(1, 101)
    cost = np.zeros(qualities.size)
    for i, t in enumerate(found[:2]):
        ref = np.array([ijg_table(bases[i], int(q)) for q in qualities], dtype=np.float64)
        cost += weights[i] * np.abs(np.log(ref) - np.log(t)).sum(axis=1)
    return float(qualities[int(np.argmin(cost))])
