"""Manifests: the list of candidates of a triage queue or a batch run.

A manifest is a CSV or ECSV table, one row per candidate. Recognised columns
(all optional except that each row needs something to measure for ``batch``):

``id``              candidate name (default: the image's file name, else ``row-N``)
``image``           image path, relative to the manifest's folder
``points``          file of marked image positions (x, y), relative to the manifest
``theta_e_arcsec``  Einstein radius, with ``theta_e_err`` its 1-sigma error
``z_l``, ``z_s``    lens and source redshifts, with ``z_l_err``, ``z_s_err``
``ra_deg``, ``dec_deg`` (or ``ra``, ``dec``)  position of the candidate
``notes``           free text

A folder of images also makes a queue (one candidate per image, sorted by name).
Cells are parsed row by row: a bad cell marks that row's ``problem`` (one sentence)
and never stops the others from being read.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass, field
from pathlib import Path

from lensmass.core.errors import LensInputError
from lensmass.io.images import IMAGE_SUFFIXES

NUMERIC_COLUMNS = ("theta_e_arcsec", "theta_e_err", "z_l", "z_l_err", "z_s", "z_s_err", "ra_deg", "dec_deg")
ALIASES = {"ra": "ra_deg", "dec": "dec_deg", "name": "id", "theta_e": "theta_e_arcsec", "zl": "z_l", "zs": "z_s"}


@dataclass
class ManifestRow:
    """One candidate. Numbers are floats or None when the cell is empty."""

    index: int
    id: str
    image: Path | None = None
    points: Path | None = None
    theta_e_arcsec: float | None = None
    theta_e_err: float | None = None
    z_l: float | None = None
    z_l_err: float | None = None
    z_s: float | None = None
    z_s_err: float | None = None
    ra_deg: float | None = None
    dec_deg: float | None = None
    notes: str = ""
    problem: str | None = None
    extra: dict = field(default_factory=dict)


@dataclass
class Manifest:
    """The candidates and where they came from (a table file or a folder)."""

    source: Path
    rows: list[ManifestRow]

    @property
    def folder(self) -> Path:
        return self.source if self.source.is_dir() else self.source.parent

    @property
    def name(self) -> str:
        return self.source.name if self.source.is_dir() else self.source.stem

    def by_id(self) -> dict[str, ManifestRow]:
        return {r.id: r for r in self.rows}


def read_table_cells(path: str | Path, what: str = "table") -> tuple[list[str], list[dict[str, str]]]:
    """Column names and rows (dicts of stripped strings) of a CSV or ECSV file.

    Raises :class:`LensInputError` with one sentence when the file is missing or unreadable.
    """
    path = Path(path)
    if not path.is_file():
        raise LensInputError(f"The {what} '{path}' does not exist: check the path.")
    try:
        if path.suffix.lower() == ".ecsv":
            from astropy.table import Table

            table = Table.read(path, format="ascii.ecsv")
            names = list(table.colnames)
            rows = []
            for rec in table:
                cells = {}
                for n in names:
                    v = rec[n]
                    masked = getattr(v, "mask", False) is True or str(v) == "--"
                    cells[n.strip()] = "" if masked else str(v).strip()
                rows.append(cells)
            return [n.strip() for n in names], rows
        with open(path, newline="", encoding="utf-8-sig") as fh:
            lines = [ln for ln in fh if ln.strip() and not ln.lstrip().startswith("#")]
        reader = csv.DictReader(lines)
        names = [n.strip() for n in (reader.fieldnames or [])]
        rows = [{(k or "").strip(): (v or "").strip() if isinstance(v, str) else "" for k, v in r.items()}
                for r in reader]
    except (OSError, UnicodeDecodeError, csv.Error, ValueError) as exc:
        raise LensInputError(
            f"Cannot read the {what} '{path}' ({type(exc).__name__}): save it as CSV or ECSV with a header row."
        ) from None
    if not names:
        raise LensInputError(f"The {what} '{path}' is empty: it needs a header row and one row per entry.")
    from lensmass.core.limits import unique_names

    unique_names(names, f"{what} '{path.name}'", lambda n: n.strip().lower())
    return names, rows


def parse_number(text: str, column: str) -> float | None:
    """A cell to a float (None when empty); ValueError with a readable reason otherwise."""
    if text is None or text.strip() == "" or text.strip().lower() in ("nan", "--", "null", "none"):
        return None
    try:
        value = float(text)
    except ValueError:
        raise ValueError(f"column {column} holds '{text}', which is not a number") from None
    if not math.isfinite(value):
        raise ValueError(f"column {column} holds '{text}', which is not a finite number")
    return value


def _canonical(name: str) -> str:
    key = name.strip().lower()
    return ALIASES.get(key, key)


def read_manifest(path: str | Path) -> Manifest:
    """Read a manifest table, or list a folder of images, into a :class:`Manifest`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "m.csv").write_text("id,theta_e_arcsec,z_l,z_s\\nA1,1.2,0.3,1.1\\nA2,x,0.3,1.1\\n")
    >>> m = read_manifest(d / "m.csv")
    >>> m.rows[0].theta_e_arcsec, m.rows[1].problem
    (1.2, "column theta_e_arcsec holds 'x', which is not a number")
    """
    path = Path(path)
    if path.is_dir():
        return _folder_manifest(path)
    names, cells = read_table_cells(path, "manifest")
    from lensmass.core.limits import unique_names

    unique_names(names, f"manifest '{path.name}'", _canonical)
    rename = {n: _canonical(n) for n in names}
    known = set(NUMERIC_COLUMNS) | {"id", "image", "points", "notes", "z_s_min", "z_s_max", "pixel_scale_arcsec"}
    if not known & set(rename.values()):
        raise LensInputError(f"'{path.name}' has none of the manifest columns (id, image, points, theta_e_arcsec, "
                             "z_l, z_s ...) in its header row: is it the manifest you meant?")
    base = path.parent
    rows: list[ManifestRow] = []
    for i, raw in enumerate(cells):
        rec = {rename.get(k, _canonical(k)): v for k, v in raw.items()}
        row = ManifestRow(index=i, id=rec.get("id", "") or "")
        problems = []
        for col in NUMERIC_COLUMNS:
            try:
                setattr(row, col, parse_number(rec.get(col, ""), col))
            except ValueError as exc:
                problems.append(str(exc))
        for col in ("image", "points"):
            if rec.get(col):
                p = Path(rec[col]).expanduser()
                setattr(row, col, p if p.is_absolute() else base / p)
        row.notes = rec.get("notes", "") or ""
        row.extra = {k: v for k, v in rec.items() if k not in NUMERIC_COLUMNS + ("id", "image", "points", "notes")}
        if not row.id:
            row.id = row.image.name if row.image else f"row-{i + 1}"
        row.problem = "; ".join(problems) or None
        rows.append(row)
    _check_unique_ids(path, rows)
    return Manifest(path, rows)


def _check_unique_ids(path: Path, rows: list[ManifestRow]) -> None:
    seen: dict[str, int] = {}
    for r in rows:
        if r.id in seen:
            raise LensInputError(
                f"Manifest '{path}' names candidate '{r.id}' twice (rows {seen[r.id] + 1} and {r.index + 1}): "
                "give every row its own id."
            )
        seen[r.id] = r.index


def _is_image(p: Path) -> bool:
    name = p.name.lower()
    return p.is_file() and not name.startswith(".") and any(name.endswith(s) for s in IMAGE_SUFFIXES)


def _folder_manifest(folder: Path) -> Manifest:
    images = sorted(p for p in folder.iterdir() if _is_image(p))
    if not images:
        raise LensInputError(
            f"The folder '{folder}' holds no images (FITS, PNG, JPEG or TIFF): choose the folder of candidates "
            "or a manifest table."
        )
    rows = [ManifestRow(index=i, id=p.name, image=p) for i, p in enumerate(images)]
    return Manifest(folder, rows)
