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

Autosaves are ordinary session files with an extra ``"autosave"`` block
(writer's process id, host and the session file they belong to) kept in
:func:`autosave_dir`; the ones whose writer is no longer running are offered
for recovery by :func:`list_recoverable`.
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
import os
import re
import socket
import uuid
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Callable, Mapping

from lensmass.core.errors import LensInputError
from lensmass.core.limits import JSON_DEPTH_MAX, MC_SAMPLES_MAX, SEED_MAX

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
    mc_samples: int = 10_000
    mc_seed: int | None = 20261201
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
        cosmology = {"h0": s.cosmology.h0, "om0": s.cosmology.om0, "ode0": s.cosmology.ode0}
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


class _Reader:
    """Typed field access with one-sentence errors naming the source and the field."""

    def __init__(self, source: str):
        self.source = source

    def fail(self, where: str, expected: str, got: Any) -> LensInputError:
        shown = repr(got)
        if len(shown) > 40:
            shown = shown[:37] + "..."
        return LensInputError(
            f"{self.source} has a bad value for '{where}' (expected {expected}, got {shown}): "
            "correct that field in the file or save the session again."
        )

    def number(self, value, where, *, optional=False, positive=False, nonneg=False) -> float | None:
        if value is None and optional:
            return None
        try:
            ok = isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)
        except OverflowError:  # an integer too large for a float
            ok = False
        if ok and positive and value <= 0:
            ok = False
        if ok and nonneg and value < 0:
            ok = False
        if not ok:
            kind = "a positive number" if positive else "a number >= 0" if nonneg else "a finite number"
            raise self.fail(where, kind + (" or null" if optional else ""), value)
        return float(value)

    def integer(self, value, where, *, optional=False, minimum=None, maximum=None) -> int | None:
        if value is None and optional:
            return None
        if not isinstance(value, int) or isinstance(value, bool) or (minimum is not None and value < minimum) \
                or (maximum is not None and value > maximum):
            limit = f" >= {minimum}" if minimum is not None else ""
            limit += f" and <= {maximum:,}" if maximum is not None else ""
            raise self.fail(where, f"a whole number{limit}" + (" or null" if optional else ""), value)
        return int(value)

    def text(self, value, where, *, optional=False, choices=None) -> str | None:
        if value is None and optional:
            return None
        if not isinstance(value, str) or (choices and value not in choices):
            expected = "one of " + ", ".join(choices) if choices else "text"
            raise self.fail(where, expected, value)
        return value

    def flag(self, value, where) -> bool:
        if not isinstance(value, bool):
            raise self.fail(where, "true or false", value)
        return value

    def obj(self, value, where, *, optional=False) -> dict | None:
        if value is None and optional:
            return None
        if not isinstance(value, dict):
            raise self.fail(where, "an object", value)
        return value

    def pair(self, value, where, *, optional=False) -> tuple[float, float] | None:
        if value is None and optional:
            return None
        if not isinstance(value, (list, tuple)) or len(value) != 2:
            raise self.fail(where, "a pair of numbers [a, b]", value)
        return (self.number(value[0], f"{where}[0]"), self.number(value[1], f"{where}[1]"))

    def points(self, value, where) -> list[tuple[float, float]]:
        if value is None:
            return []
        if not isinstance(value, list):
            raise self.fail(where, "a list of [x, y] pairs", value)
        return [self.pair(p, f"{where}[{i}]") for i, p in enumerate(value)]


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


def _resolve_image(image: dict, base_dir, r: _Reader) -> str | None:
    stored = r.text(image.get("path"), "image.path", optional=True)
    hint = r.text(image.get("absolute_path"), "image.absolute_path", optional=True)
    if not stored:
        return hint
    candidate = Path(stored)
    if not candidate.is_absolute() and base_dir is not None:
        candidate = Path(base_dir) / candidate
    candidate = Path(os.path.normpath(os.path.abspath(candidate)))
    if candidate.is_file() or not hint or not Path(hint).is_file():
        return str(candidate)
    return hint


def _session_from_dict(data: Mapping[str, Any], base_dir, source: str) -> Session:
    d = migrate(data, source)
    r = _Reader(source)
    known = {"format", "schema", "saved_by", "saved_at", "image", "display", "centre", "z_l", "z_l_err",
             "cosmology", "concentration", "halo_definition", "mc_samples", "mc_seed", "arcs", "ring", "notes",
             "panels", "autosave"}

    image = r.obj(d.get("image", {}), "image")
    hdu = image.get("hdu", 0)
    if not (isinstance(hdu, str) or (isinstance(hdu, int) and not isinstance(hdu, bool) and hdu >= 0)):
        raise r.fail("image.hdu", "an HDU number >= 0 or an extension name", hdu)
    image_ref = ImageRef(
        path=_resolve_image(image, base_dir, r),
        hdu=hdu,
        plane=r.integer(image.get("plane"), "image.plane", optional=True, minimum=0),
        pixel_scale_arcsec=r.number(image.get("pixel_scale_arcsec"), "image.pixel_scale_arcsec",
                                    optional=True, positive=True),
    )

    disp = r.obj(d.get("display", {}), "display")
    defaults = DisplaySettings()
    display = DisplaySettings(
        stretch=r.text(disp.get("stretch", defaults.stretch), "display.stretch"),
        limits=r.text(disp.get("limits", defaults.limits), "display.limits"),
        manual_limits=r.pair(disp.get("manual_limits"), "display.manual_limits", optional=True),
        colormap=r.text(disp.get("colormap", defaults.colormap), "display.colormap"),
        invert=r.flag(disp.get("invert", defaults.invert), "display.invert"),
        layer=r.text(disp.get("layer", defaults.layer), "display.layer"),
    )

    c = r.obj(d.get("centre"), "centre", optional=True)
    centre = None
    if c is not None:
        centre = LensCentre(r.number(c.get("x"), "centre.x"), r.number(c.get("y"), "centre.y"),
                            r.text(c.get("how", "hand"), "centre.how", choices=CENTRE_HOW))

    cos = r.obj(d.get("cosmology", {"preset": "Planck18"}), "cosmology")
    if any(cos.get(k) is not None for k in ("h0", "om0", "ode0")):
        cosmology = CosmologyChoice(
            preset=None,
            h0=r.number(cos.get("h0"), "cosmology.h0", positive=True),
            om0=r.number(cos.get("om0"), "cosmology.om0", positive=True),
            ode0=r.number(cos.get("ode0"), "cosmology.ode0", optional=True),
        )
    else:
        cosmology = CosmologyChoice(preset=r.text(cos.get("preset", "Planck18"), "cosmology.preset"))

    conc = d.get("concentration", "duffy08")
    if isinstance(conc, bool) or not isinstance(conc, (str, int, float)):
        raise r.fail("concentration", "a relation name or a number", conc)
    if not isinstance(conc, str):
        conc = r.number(conc, "concentration", positive=True)

    arcs_raw = d.get("arcs", [])
    if not isinstance(arcs_raw, list):
        raise r.fail("arcs", "a list of arc systems", arcs_raw)
    arcs = []
    for i, a in enumerate(arcs_raw):
        w = f"arcs[{i}]"
        a = r.obj(a, w)
        arcs.append(ArcSystem(
            name=r.text(a.get("name", chr(65 + i % 26)), f"{w}.name"),
            z_s=r.number(a.get("z_s"), f"{w}.z_s", optional=True, positive=True),
            z_s_err=r.number(a.get("z_s_err", 0.0), f"{w}.z_s_err", nonneg=True),
            z_s_range=r.pair(a.get("z_s_range"), f"{w}.z_s_range", optional=True),
            shape=r.text(a.get("shape", "circle"), f"{w}.shape", choices=ARC_SHAPES),
            points=r.points(a.get("points"), f"{w}.points"),
            images=r.points(a.get("images"), f"{w}.images"),
            fit=r.obj(a.get("fit"), f"{w}.fit", optional=True),
        ))

    panels = r.obj(d.get("panels", {}), "panels")
    for name, state in panels.items():
        r.obj(state, f"panels.{name}")
    seed = d.get("mc_seed", 20261201)
    return Session(
        image=image_ref,
        display=display,
        centre=centre,
        z_l=r.number(d.get("z_l"), "z_l", optional=True, positive=True),
        z_l_err=r.number(d.get("z_l_err", 0.0), "z_l_err", nonneg=True),
        cosmology=cosmology,
        concentration=conc,
        halo_definition=r.text(d.get("halo_definition", "200c"), "halo_definition", choices=("200c", "200m", "vir")),
        mc_samples=r.integer(d.get("mc_samples", 10_000), "mc_samples", minimum=1, maximum=MC_SAMPLES_MAX),
        mc_seed=r.integer(seed, "mc_seed", optional=True, minimum=0, maximum=SEED_MAX),
        arcs=arcs,
        ring=r.obj(d.get("ring"), "ring", optional=True),
        notes=r.text(d.get("notes", ""), "notes"),
        panels={str(k): dict(v) for k, v in panels.items()},
        extra={k: v for k, v in d.items() if k not in known},
    )


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


# ------------------------------------------------------------------- autosave


@dataclass(frozen=True)
class RecoverableSession:
    """An autosave left behind by a run that ended without closing cleanly."""

    key: str
    path: Path
    saved_at: datetime
    image_name: str | None
    origin: str | None
    """The session file it belongs to (None for a never-saved session)."""


def autosave_dir() -> Path:
    """Folder of autosaves: ``$LENSMASS_DATA_DIR/autosave`` or the user data folder's."""
    base = os.environ.get(DATA_DIR_ENV)
    if not base:
        import platformdirs

        base = platformdirs.user_data_dir("lensmass", appauthor=False)
    return Path(base) / "autosave"


def new_autosave_key() -> str:
    """A fresh key for one window's autosave (unique across processes)."""
    return f"{datetime.now(timezone.utc):%Y%m%dT%H%M%S}-{os.getpid()}-{uuid.uuid4().hex[:8]}"


def _autosave_path(key: str) -> Path:
    if not isinstance(key, str) or not re.fullmatch(r"[A-Za-z0-9_.-]{1,120}", key) or key.startswith("."):
        raise LensInputError(f"'{key}' is not a valid autosave key: use letters, digits, '-', '_' or '.'.")
    return autosave_dir() / f"{key}{AUTOSAVE_SUFFIX}"


def write_autosave(session: Session, key: str, origin: str | os.PathLike | None = None) -> Path:
    """Atomically write the autosave ``key`` (image path stored absolute); returns its path."""
    from lensmass.io.atomic import write_text_atomic

    target = _autosave_path(key)
    block = {"autosave": {"pid": os.getpid(), "host": socket.gethostname(),
                          "origin": None if origin is None else str(Path(origin).absolute())}}
    text = session_json(session, None, extra=block)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)  # our own data folder: made on first use
        write_text_atomic(target, text)
    except OSError as exc:
        raise LensInputError(f"Could not write the autosave in '{target.parent}' ({exc.strerror or exc}); "
                             f"set {DATA_DIR_ENV} to a writable folder.") from None
    return target


def _pid_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    if os.name != "posix":
        return False  # cannot tell cheaply: offer it; the user can decline
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except OSError:
        return False
    return True


def list_recoverable(include_running: bool = False) -> list[RecoverableSession]:
    """Autosaves whose writer is no longer running (a crash), newest first.

    A window discards its autosave when it closes cleanly, so what is left belongs
    to a run that crashed or was killed. Unreadable autosaves are skipped. With ``include_running`` the autosaves of
    live windows (this process included) are listed too.
    """
    folder = autosave_dir()
    if not folder.is_dir():
        return []
    try:
        candidates = sorted(folder.glob(f"*{AUTOSAVE_SUFFIX}"))
    except OSError:  # unreadable folder: nothing can be offered
        return []
    found = []
    for path in candidates:
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
            block = data.get("autosave") or {}
            image = (data.get("image") or {}).get("absolute_path") or (data.get("image") or {}).get("path")
            saved = datetime.fromisoformat(data.get("saved_at"))
            if saved.tzinfo is None:
                saved = saved.replace(tzinfo=timezone.utc)
            mtime = path.stat().st_mtime
        except (OSError, ValueError, TypeError, AttributeError):
            continue
        pid, host = block.get("pid"), block.get("host")
        if not include_running and isinstance(pid, int) and host == socket.gethostname() and _pid_alive(pid):
            continue
        found.append((saved, mtime, RecoverableSession(
            key=path.name[: -len(AUTOSAVE_SUFFIX)],
            path=path,
            saved_at=saved,
            image_name=Path(image).name if isinstance(image, str) and image else None,
            origin=block.get("origin"),
        )))
    found.sort(key=lambda item: item[:2], reverse=True)
    return [item[2] for item in found]


def load_autosave(key: str) -> Session:
    """The session stored in autosave ``key`` (the file is left in place)."""
    path = _autosave_path(key)
    data = _read_json(path, "Autosave")
    return Session.from_dict(data, path.parent, source=f"Autosave '{key}'")


def discard_autosave(key: str) -> None:
    """Delete autosave ``key`` (no error if it is already gone)."""
    path = _autosave_path(key)
    try:
        path.unlink()
    except FileNotFoundError:
        pass
    except OSError as exc:
        raise LensInputError(f"Could not delete the autosave '{path}' ({exc.strerror or exc}): remove it by hand.") from None
