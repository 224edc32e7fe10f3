"""Points files: CSV with a header row, columns ``x,y`` (pixels) or ``ra,dec`` (degrees).

Optional columns for lens models: ``system`` (a label naming the background source a point belongs
to; points of one source share it) and ``kind`` (``image`` for one of the multiple images of a
compact source or knot, ``arc`` for a point anywhere along an extended arc).

Pixels follow the lensmass convention: 0-based column (x) and row (y) of the array
as stored in the file. Extra columns are ignored; blank lines and lines starting
with ``#`` are skipped. Column names are case-insensitive.
"""

from __future__ import annotations

import csv
import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.io.atomic import write_text_atomic


#: A points file is a short list; anything larger is the wrong file.
POINTS_FILE_MAX_BYTES = 10_000_000


@dataclass(frozen=True)
class PointsTable:
    """Positions read from a points file: ``frame`` is "pixel" (x, y) or "sky" (ra, dec in degrees)."""

    frame: str
    a: np.ndarray
    b: np.ndarray
    path: str = ""
    system: np.ndarray | None = None
    kind: np.ndarray | None = None

    def to_pixels(self, image) -> tuple[np.ndarray, np.ndarray]:
        """(x, y) pixels; sky positions are converted with the image's WCS.

        Positions off the sphere, or off the image (when there is one), are refused with one sentence.
        """
        from lensmass.core import limits

        name = Path(self.path).name or "the points file"
        if self.frame == "pixel":
            x, y = self.a, self.b
        else:
            limits.sky_position(self.a, self.b, f"A point of {name}", "give ra,dec in degrees")
            if image is None:
                return self.a, self.b
            x, y = image.sky_to_pixel(self.a, self.b)
        if image is not None:
            limits.on_image(x, y, image.shape, f"A point of {name}",
                            "check that the points belong to this image" + ("" if self.frame == "pixel" else
                                                                            " and its WCS"))
        return x, y


def read_points(path: str | os.PathLike) -> PointsTable:
    """Read a points CSV.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "pts.csv"
    >>> _ = p.write_text("x,y\\n10.5,20\\n11,21\\n12,19\\n")
    >>> t = read_points(p)
    >>> t.frame, t.a.tolist()
    ('pixel', [10.5, 11.0, 12.0])
    """
    p = Path(path)
    if not p.exists():
        raise LensInputError(f"No such points file: {p}; check the path.")
    if not p.is_file():
        raise LensInputError(f"The points file {p} is not an ordinary file; give the CSV of marked points.")
    if p.stat().st_size > POINTS_FILE_MAX_BYTES:
        raise LensInputError(f"The points file {p.name} is {p.stat().st_size / 1e6:.0f} MB, far more than a list of "
                             "marked points; check that it is the right file.")
    try:
        text = p.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError):
        raise LensInputError(f"Cannot read the points file {p.name}: it is not a text CSV file.") from None
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise LensInputError(f"The points file {p.name} is empty: it needs a header 'x,y' (or 'ra,dec') and one row per point.")
    rows = list(csv.reader(lines))
    header = [h.strip().lower() for h in rows[0]]
    if "x" in header and "y" in header:
        frame, ka, kb = "pixel", header.index("x"), header.index("y")
    elif "ra" in header and "dec" in header:
        frame, ka, kb = "sky", header.index("ra"), header.index("dec")
    else:
        raise LensInputError(f"The points file {p.name} needs a header row naming columns x,y (pixels) or ra,dec "
                             f"(degrees); its first line names {len(header)} other column(s).")
    a, b, systems, kinds = [], [], [], []
    ks = header.index("system") if "system" in header else None
    kk = header.index("kind") if "kind" in header else None
    for i, row in enumerate(rows[1:], start=2):
        if ks is not None:
            label = row[ks].strip() if ks < len(row) else ""
            if not label:
                raise LensInputError(f"Row {i} of {p.name} has no system label; name the source each point belongs to.")
            systems.append(label)
        if kk is not None:
            kind = row[kk].strip().lower() if kk < len(row) else ""
            if kind not in ("image", "arc"):
                raise LensInputError(f"Row {i} of {p.name} has kind '{kind}'; the kind column takes 'image' or 'arc'.")
            kinds.append(kind)
        try:
            va, vb = float(row[ka]), float(row[kb])
        except (IndexError, ValueError):
            raise LensInputError(f"Row {i} of {p.name} does not have two numbers in the {header[ka]},{header[kb]} "
                                 "columns; fix or delete that row.") from None
        if not (np.isfinite(va) and np.isfinite(vb)):
            raise LensInputError(f"Row {i} of {p.name} has a NaN or infinite position; fix or delete that row.")
        a.append(va)
        b.append(vb)
    if not a:
        raise LensInputError(f"The points file {p.name} has a header but no points; add one row per point.")
    return PointsTable(frame, np.array(a), np.array(b), str(p), np.array(systems) if ks is not None else None,
                       np.array(kinds) if kk is not None else None)


def write_points(path: str | os.PathLike, x, y, frame: str = "pixel") -> None:
    """Write points to a CSV (atomically), header ``x,y`` or ``ra,dec``."""
    names = ("x", "y") if frame == "pixel" else ("ra", "dec")
    fmt = "{:.4f},{:.4f}" if frame == "pixel" else "{:.8f},{:.8f}"
    body = "\n".join(fmt.format(float(u), float(v)) for u, v in zip(np.ravel(x), np.ravel(y)))
    write_text_atomic(path, f"{names[0]},{names[1]}\n{body}\n")
