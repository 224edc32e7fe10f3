"""Reading a session dict back into a :class:`lensmass.io.session.Session`: every field is checked
and a bad one is named in one sentence; relative image paths resolve against the session's folder.
"""

from __future__ import annotations

import math
import os
from pathlib import Path
from typing import Any, Mapping

from lensmass.core.errors import LensInputError
from lensmass.core.limits import MC_SAMPLES_MAX, SEED_MAX
from lensmass.core.uncertainty import DEFAULT_SAMPLES, DEFAULT_SEED
from lensmass.io.session import (
    ARC_SHAPES,
    CENTRE_HOW,
    ArcSystem,
    CosmologyChoice,
    DisplaySettings,
    ImageRef,
    LensCentre,
    Session,
    migrate,
)


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

    def pair(self, value, where, *, optional=False) -> tuple[float | None, float | None] | None:
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
        return [self.pair(p, f"{where}[{i}]") for i, p in enumerate(value)]  # type: ignore[misc]  # never None here


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


def session_from_dict(data: Mapping[str, Any], base_dir, source: str) -> Session:
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
    seed = d.get("mc_seed", DEFAULT_SEED)
    return Session(
        image=image_ref,
        display=display,
        centre=centre,
        z_l=r.number(d.get("z_l"), "z_l", optional=True, positive=True),
        z_l_err=r.number(d.get("z_l_err", 0.0), "z_l_err", nonneg=True),
        cosmology=cosmology,
        concentration=conc,
        halo_definition=r.text(d.get("halo_definition", "200c"), "halo_definition", choices=("200c", "200m", "vir")),
        mc_samples=r.integer(d.get("mc_samples", DEFAULT_SAMPLES), "mc_samples", minimum=1, maximum=MC_SAMPLES_MAX),
        mc_seed=r.integer(seed, "mc_seed", optional=True, minimum=0, maximum=SEED_MAX),
        arcs=arcs,
        ring=r.obj(d.get("ring"), "ring", optional=True),
        notes=r.text(d.get("notes", ""), "notes"),
        panels={str(k): dict(v) for k, v in panels.items()},
        extra={k: v for k, v in d.items() if k not in known},
    )
