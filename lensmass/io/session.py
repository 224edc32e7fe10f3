"""Session files: everything needed to reopen a measurement where it was left.

The format is our own: one UTF-8 JSON object,

.. code-block:: text

    {
      "format": "lensmass-session",      # tag: refuses files that are not ours
      "schema": 1,                       # integer; newer than SCHEMA_VERSION is refused
      "saved_by": "lensmass 0.1.0", "saved_at": "2026-12-01T22:00:00+00:00",
      "image": {"path": "frames/field.fits",       # relative to the session file's folder
                "absolute_path": "/data/frames/field.fits",   # fallback hint only
                "hdu": 0, "plane": null, "pixel_scale_arcsec": null},
      "display": {"stretch": "asinh", "limits": "99.5%", "manual_limits": null,
                  "colormap": "gray", "invert": false, "layer": "image"},
      "centre": {"x": 101.5, "y": 98.0, "how": "hand"} | null,
      "z_l": 0.35, "z_l_err": 0.0,
      "cosmology": {"preset": "Planck18"} | {"h0": 70, "om0": 0.3, "ode0": null},
      "concentration": "duffy08", "halo_definition": "200c",
      "mc_samples": 10000, "mc_seed": 20261201,
      "arcs": [{"name": "A", "z_s": 1.2, "z_s_err": 0.0, "z_s_range": null,
                "shape": "circle", "points": [[x, y], ...], "images": [[x, y], ...],
                "fit": {...} | null}],
      "ring": {...} | null,             # last ring-finder result
      "notes": "free text",
      "panels": {"<panel name>": {...}} # opaque state of plug-in panels
    }

Pixel coordinates are 0-based with pixel centres on integers (numpy order is
``image[y, x]``). Unknown top-level keys are kept and written back, so a file
touched by a later minor version loses nothing. Older schemas are brought up
to date by the functions in :data:`MIGRATIONS` (one step per version). Loading
never modifies the file; saving is atomic (:mod:`lensmass.io.atomic`).

Autosaves (:mod:`lensmass.io.autosave`) are ordinary session files with an extra ``"autosave"`` block
(writer's process id, host and the session file they belong to) kept in
:func:`autosave_dir`; the ones whose writer is no longer running are offered
for recovery by :func:`list_recoverable`. Field checks on reading live in
:mod:`lensmass.io.session_read`. Both are reachable from here as before.
"""

from __future__ import annotations

import copy
import hashlib
import json
import os
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable, Mapping

from lensmass.core.errors import LensInputError
from lensmass.core.limits import JSON_DEPTH_MAX
from lensmass.core.uncertainty import DEFAULT_SAMPLES, DEFAULT_SEED

#: Top-level tag that marks a lensmass session file.
FORMAT_TAG = "lensmass-session"
#: The schema this program writes and the newest it can read.
SCHEMA_VERSION = 1
#: Oldest schema that can still be migrated to the current one.
OLDEST_SCHEMA = 1
#: Environment variable that overrides the user data folder (tests, portable installs).
DATA_DIR_ENV = "LENSMASS_DATA_DIR"
#: File name suffix of session files (a suggestion for dialogs; any name loads).
SESSION_SUFFIX = ".lensmass.json"
AUTOSAVE_SUFFIX = ".autosave.json"

ARC_SHAPES = ("circle", "ellipse")
CENTRE_HOW = ("hand", "found")

#: Largest session file read (bytes); sessions are kilobytes.
SESSION_MAX_BYTES = 64_000_000

#: schema n -> function turning a schema-n dict into a schema-(n+1) dict.
MIGRATIONS: dict[int, Callable[[dict], dict]] = {}


# --------------------------------------------------------------------------- data


@dataclass
class ImageRef:
    """Which image, which HDU/plane of it, and an optional pixel-scale override."""

    path: str | None = None
    hdu: int | str = 0
    plane: int | None = None
    pixel_scale_arcsec: float | None = None

    def exists(self) -> bool:
        """True when :attr:`path` names an existing file."""
        return bool(self.path) and Path(self.path).is_file()


@dataclass
class DisplaySettings:
    """How the image is shown; the values are the window's own vocabulary."""

    stretch: str = "asinh"
    limits: str = "99.5%"
    manual_limits: tuple[float, float] | None = None
    colormap: str = "gray"
    invert: bool = False
    layer: str = "image"


@dataclass
class LensCentre:
    """Lens centre in image pixels, set by hand or found by the program."""

    x: float
    y: float
    how: str = "hand"


@dataclass
class CosmologyChoice:
    """A preset name of astropy's, or a custom Lambda-CDM (flat when ode0 is None)."""

    preset: str | None = "Planck18"
    h0: float | None = None
    om0: float | None = None
    ode0: float | None = None

    def resolve(self):
        """The astropy cosmology (raises LensInputError for a bad choice)."""
        from lensmass.core.cosmology import resolve_cosmology

        if self.h0 is not None or self.om0 is not None or self.ode0 is not None:
            return resolve_cosmology(None, h0=self.h0, om0=self.om0, ode0=self.ode0)
        return resolve_cosmology(self.preset)


@dataclass
class ArcSystem:
    """One lensed source: its redshift (known +- err, or a range) and the clicked points.

    The range ``z_s_range`` is used only when ``z_s`` is None. ``fit`` holds the
    last circle/ellipse fit as the window produced it (JSON values).
    """

    name: str = "A"
    z_s: float | None = None
    z_s_err: float = 0.0
    z_s_range: tuple[float, float] | None = None
    shape: str = "circle"
    points: list[tuple[float, float]] = field(default_factory=list)
    images: list[tuple[float, float]] = field(default_factory=list)
    fit: dict | None = None


@dataclass
class Session:
    """The whole state of one measurement. ``to_dict``/``from_dict`` give the file form.

    Examples
    --------
    >>> s = Session(z_l=0.35, arcs=[ArcSystem("A", z_s=1.2, points=[(10.0, 12.5)])])
    >>> Session.from_dict(s.to_dict()) == s
    True
    """

    image: ImageRef = field(default_factory=ImageRef)
    display: DisplaySettings = field(default_factory=DisplaySettings)
    centre: LensCentre | None = None
    z_l: float | None = None
    z_l_err: float = 0.0
    cosmology: CosmologyChoice = field(default_factory=CosmologyChoice)
    concentration: str | float = "duffy08"
    halo_definition: str = "200c"
    mc_samples: int = DEFAULT_SAMPLES
    mc_seed: int | None = DEFAULT_SEED
    arcs: list[ArcSystem] = field(default_factory=list)
    ring: dict | None = None
    notes: str = ""
    panels: dict[str, dict] = field(default_factory=dict)
    #: Unknown top-level keys read from the file, written back unchanged.
    extra: dict[str, Any] = field(default_factory=dict)

    def to_dict(self, base_dir: str | os.PathLike | None = None) -> dict[str, Any]:
        """The JSON-ready dict; the image path is made relative to ``base_dir`` when given."""
        return _session_to_dict(self, base_dir)

    @classmethod
    def from_dict(cls, data: Mapping[str, Any], base_dir: str | os.PathLike | None = None,
                  source: str = "The session") -> "Session":
        """Build from a file dict (migrating older schemas); relative image paths resolve
        against ``base_dir``. Raises LensInputError naming ``source`` and the bad field."""
        return _session_from_dict(data, base_dir, source)

    def fingerprint(self) -> str:
        """A digest of the content (not of when it was saved): compare it with the one taken at
        the last save to know whether there are unsaved changes.

        Examples
        --------
        >>> a = Session(z_l=0.3)
        >>> a.fingerprint() == Session(z_l=0.3).fingerprint() != Session(z_l=0.31).fingerprint()
        True
        """
        data = self.to_dict()
        for key in ("saved_at", "saved_by"):
            data.pop(key, None)
        return hashlib.sha256(session_text(data).encode("utf-8")).hexdigest()

    def estimate_kwargs(self, arc: int | str = 0) -> dict[str, Any]:
        """Keyword arguments for :func:`lensmass.core.estimate.estimate` (all but theta_E).

        ``arc`` is an index into :attr:`arcs` or an arc system's name.
        """
        system = self.arc(arc)
        if self.z_l is None:
            raise LensInputError("The lens redshift is not set: enter z_l before estimating a mass.")
        if system.z_s is None and system.z_s_range is None:
            raise LensInputError(
                f"Arc system '{system.name}' has no source redshift: enter z_s or a z_s range."
            )
        return {
            "z_l": self.z_l,
            "z_s": system.z_s,
            "z_l_err": self.z_l_err,
            "z_s_err": system.z_s_err if system.z_s is not None else 0.0,
            "z_s_range": system.z_s_range if system.z_s is None else None,
            "cosmology": self.cosmology.resolve(),
            "concentration": self.concentration,
            "halo_definition": self.halo_definition,
            "samples": self.mc_samples,
            "seed": self.mc_seed,
        }

    def arc(self, which: int | str = 0) -> ArcSystem:
        """An arc system by index or name (LensInputError if there is none)."""
        if isinstance(which, str):
            for system in self.arcs:
                if system.name == which:
                    return system
            raise LensInputError(f"There is no arc system named '{which}': add it or pick one of the list.")
        if not 0 <= which < len(self.arcs):
            raise LensInputError("There is no arc system yet: add one and click its arc points.")
        return self.arcs[which]


# ------------------------------------------------------------------ dict <-> Session


def _image_paths(path: str | None, base_dir) -> tuple[str | None, str | None]:
    """(stored path, absolute hint) for an image path."""
    if not path:
        return None, None
    absolute = os.path.abspath(path)
    if base_dir is None:
        return absolute, absolute
    try:
        rel = os.path.relpath(absolute, os.path.abspath(base_dir))
    except ValueError:  # another drive on Windows: no relative path exists
        return absolute, absolute
    return Path(rel).as_posix(), absolute


def _pair_or_none(value) -> list[float] | None:
    return None if value is None else [float(value[0]), float(value[1])]


def _session_to_dict(s: Session, base_dir) -> dict[str, Any]:
    from lensmass import __version__

    stored, absolute = _image_paths(s.image.path, base_dir)
    if s.cosmology.h0 is not None or s.cosmology.om0 is not None or s.cosmology.ode0 is not None:
        cosmology: dict[str, Any] = {"h0": s.cosmology.h0, "om0": s.cosmology.om0, "ode0": s.cosmology.ode0}
    else:
        cosmology = {"preset": s.cosmology.preset}
    out: dict[str, Any] = dict(s.extra)
    out.update({
        "format": FORMAT_TAG,
        "schema": SCHEMA_VERSION,
        "saved_by": f"lensmass {__version__}",
        "saved_at": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "image": {"path": stored, "absolute_path": absolute, "hdu": s.image.hdu, "plane": s.image.plane,
                  "pixel_scale_arcsec": s.image.pixel_scale_arcsec},
        "display": {"stretch": s.display.stretch, "limits": s.display.limits,
                    "manual_limits": _pair_or_none(s.display.manual_limits), "colormap": s.display.colormap,
                    "invert": s.display.invert, "layer": s.display.layer},
        "centre": None if s.centre is None else {"x": s.centre.x, "y": s.centre.y, "how": s.centre.how},
        "z_l": s.z_l,
        "z_l_err": s.z_l_err,
        "cosmology": cosmology,
        "concentration": s.concentration,
        "halo_definition": s.halo_definition,
        "mc_samples": s.mc_samples,
        "mc_seed": s.mc_seed,
        "arcs": [
            {"name": a.name, "z_s": a.z_s, "z_s_err": a.z_s_err, "z_s_range": _pair_or_none(a.z_s_range),
             "shape": a.shape, "points": [[float(x), float(y)] for x, y in a.points],
             "images": [[float(x), float(y)] for x, y in a.images], "fit": a.fit}
            for a in s.arcs
        ],
        "ring": s.ring,
        "notes": s.notes,
        "panels": s.panels,
    })
    return out


def migrate(data: Mapping[str, Any], source: str = "The session",
            migrations: Mapping[int, Callable[[dict], dict]] | None = None,
            oldest: int | None = None) -> dict[str, Any]:
    """Check the format tag and bring an older schema up to :data:`SCHEMA_VERSION`.

    ``migrations`` maps schema n to a function returning the schema-(n+1) dict
    (default :data:`MIGRATIONS`) and ``oldest`` is the oldest schema accepted
    (default :data:`OLDEST_SCHEMA`); the input is never modified.

    Examples
    --------
    >>> old = {"format": FORMAT_TAG, "schema": 0, "lens_z": 0.3}
    >>> step = {0: lambda d: {**{k: v for k, v in d.items() if k != "lens_z"}, "z_l": d["lens_z"], "schema": 1}}
    >>> migrate(old, migrations=step, oldest=0)["z_l"]
    0.3
    """
    migrations = MIGRATIONS if migrations is None else migrations
    oldest = OLDEST_SCHEMA if oldest is None else oldest
    if not isinstance(data, Mapping):
        raise LensInputError(f"{source} is not a lensmass session (its JSON is not an object): open a session file.")
    tag = data.get("format")
    if tag != FORMAT_TAG:
        what = "has no format tag" if tag is None else f"is tagged '{str(tag)[:40]}'"
        raise LensInputError(f"{source} is not a lensmass session ({what}): open a file saved by lensmass.")
    version = data.get("schema")
    if not isinstance(version, int) or isinstance(version, bool):
        raise LensInputError(f"{source} has no valid schema number: it is damaged; open a backup or an autosave.")
    if version > SCHEMA_VERSION:
        raise LensInputError(
            f"{source} was made by a newer lensmass (schema {version}, this one reads up to "
            f"{SCHEMA_VERSION}); update lensmass to open it."
        )
    if version < oldest:
        raise LensInputError(
            f"{source} uses schema {version}, older than this lensmass can read (from {oldest}): "
            "open it with an older lensmass and save it again."
        )
    out = copy.deepcopy(dict(data))
    while out["schema"] < SCHEMA_VERSION:
        step = migrations.get(out["schema"])
        if step is None:
            raise LensInputError(
                f"{source} uses schema {out['schema']}, which this lensmass cannot convert: "
                "open it with the lensmass that wrote it and save it again."
            )
        before = out["schema"]
        try:
            out = dict(step(dict(out)))
        except (KeyError, IndexError, TypeError, ValueError, AttributeError):
            raise LensInputError(
                f"{source} uses schema {before} but lacks what that schema needs: it is damaged; "
                "open a backup or an autosave instead."
            ) from None
        if out.get("schema") != before + 1:
            out["schema"] = before + 1
    return out


# -------------------------------------------------------------------- files


def session_text(data: Mapping[str, Any]) -> str:
    """Strict JSON text of a session dict (NaN becomes null); LensInputError if a value cannot be written."""
    from lensmass.io.jsonout import to_jsonable

    try:
        return json.dumps(to_jsonable(dict(data)), indent=2, allow_nan=False, ensure_ascii=False) + "\n"
    except (TypeError, ValueError) as exc:
        raise LensInputError(
            f"The session holds a value that cannot be written as JSON ({exc}); nothing was saved."
        ) from None


def session_json(session: Session, base_dir: str | os.PathLike | None = None,
                 extra: Mapping[str, Any] | None = None) -> str:
    """The file text of a session; the image path is relative to ``base_dir`` when given."""
    data = session.to_dict(base_dir)
    if extra:
        data.update(extra)
    return session_text(data)


def save_session(path: str | os.PathLike, session: Session) -> Path:
    """Write ``session`` to ``path`` atomically; the image path is stored relative to it.

    If anything fails, the previous file at ``path`` is left exactly as it was.
    Returns the absolute path written.
    """
    from lensmass.io.atomic import write_text_atomic

    target = Path(path).absolute()
    text = session_json(session, target.parent)
    try:
        write_text_atomic(target, text)
    except OSError as exc:
        raise LensInputError(
            f"Could not save the session to '{target}' ({exc.strerror or exc}); choose another folder "
            "(any previous file there is unchanged)."
        ) from None
    return target


def _read_json(path: Path, what: str) -> Any:
    if not path.is_file():
        raise LensInputError(f"{what} '{path}' does not exist: check the path or pick the file again.")
    try:
        size = path.stat().st_size
        if size > SESSION_MAX_BYTES:
            raise LensInputError(f"{what} '{path}' is {size / 1e6:.0f} MB, far larger than any lensmass session "
                                 f"(they are kilobytes; at most {SESSION_MAX_BYTES // 10**6} MB is read): "
                                 "check that it is the file you meant.")
        raw = path.read_bytes()
    except OSError as exc:
        raise LensInputError(f"Cannot read {what.lower()} '{path}' ({exc.strerror or exc}): check its permissions.") from None
    if not raw.strip():
        raise LensInputError(f"{what} '{path}' is empty (half-written?): open a backup or an autosave instead.")
    try:
        data = json.loads(raw.decode("utf-8"))
        _check_depth(data, path, what)
        return data
    except RecursionError:
        raise LensInputError(f"{what} '{path}' is nested too deeply to be a lensmass session (more than "
                             f"{JSON_DEPTH_MAX} levels): open a session saved by lensmass.") from None
    except UnicodeDecodeError:
        raise LensInputError(f"{what} '{path}' is not a text file: open a session saved by lensmass.") from None
    except json.JSONDecodeError as exc:
        cut_short = exc.pos >= len(raw.decode("utf-8").rstrip()) - 1 or exc.msg.startswith("Unterminated string")
        if cut_short:
            raise LensInputError(
                f"{what} '{path}' ends too early (half-written?): open a backup or an autosave instead."
            ) from None
        raise LensInputError(
            f"{what} '{path}' is not valid JSON (line {exc.lineno}, column {exc.colno}): "
            "it is damaged; open a backup or an autosave instead."
        ) from None


def _check_depth(data: Any, path: Path, what: str) -> None:
    """Refuse JSON nested deeper than :data:`lensmass.core.limits.JSON_DEPTH_MAX` (walked without recursion)."""
    stack = [(data, 1)]
    while stack:
        value, depth = stack.pop()
        if depth > JSON_DEPTH_MAX:
            raise RecursionError
        children = value.values() if isinstance(value, dict) else value if isinstance(value, list) else ()
        stack.extend((v, depth + 1) for v in children if isinstance(v, (dict, list)))


def load_session(path: str | os.PathLike) -> Session:
    """Read a session file; never modifies it.

    Raises :class:`LensInputError` with one sentence for a missing file, text that
    is not JSON or was cut short, a file that is not a lensmass session, a newer
    schema than this program knows, or a field of the wrong type.
    """
    target = Path(path).absolute()
    data = _read_json(target, "Session file")
    return Session.from_dict(data, target.parent, source=f"Session file '{target.name}'")


def _session_from_dict(data: Mapping[str, Any], base_dir, source: str) -> Session:
    from lensmass.io.session_read import session_from_dict

    return session_from_dict(data, base_dir, source)


_AUTOSAVE_NAMES = frozenset({"RecoverableSession", "autosave_dir", "new_autosave_key", "_autosave_path", "write_autosave", "_pid_alive", "list_recoverable", "load_autosave", "discard_autosave"})


def __getattr__(name: str):
    """The autosave functions, reachable from this module as before (imported on first use: no cycle)."""
    if name in _AUTOSAVE_NAMES:
        from lensmass.io import autosave

        return getattr(autosave, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
