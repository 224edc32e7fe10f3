"""The state of the window as a plain Python object (no Qt): testable without a window.

Longer than 500 lines because it is the window's one observable data model (marks, arc systems,
derived fits, typed-value validation and the check of stored marks against the open image); splitting it
would scatter one object's state.

:class:`WindowModel` holds the persistent part of a measurement as a
:class:`lensmass.io.session.Session` (image reference, display choice, arc
systems with points, images and z_s, lens centre, z_l, cosmology,
concentration, halo definition) plus what the window derives from it: the
loaded image, the texts the user typed, validation messages, the fit and the
estimate result of each arc system.

Widgets observe it: ``model.subscribe(callback)``; ``callback(topic)`` is called
with one of :data:`TOPICS` after a change. Edits that the user can undo go
through :mod:`lensmass.gui.undo`, which calls the ``add_*``/``move_*``/
``remove_*``/``set_*`` methods here. Numbers come from :mod:`lensmass.core`
only (via :mod:`lensmass.gui.measuring`).
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.uncertainty import DEFAULT_SAMPLES
from lensmass.io.session import ArcSystem, CosmologyChoice, DisplaySettings, ImageRef, LensCentre, Session

TOPICS = ("image", "display", "marks", "inputs", "fit", "result", "validation")

#: Input fields typed as text; the value of each is validated by :meth:`WindowModel.set_text`.
TEXT_FIELDS = ("z_l", "z_l_err", "z_s", "z_s_err", "h0", "om0", "ode0", "concentration_value")
#: Mark kinds: arc points and multiple images belong to a system; the centre is one per lens.
MARK_KINDS = ("point", "image")
CUSTOM_COSMOLOGY = "custom"


@dataclass
class ImageState:
    """The loaded image (a :class:`lensmass.io.images.LoadedImage`) and its derived layers."""

    loaded: Any
    lens_light: np.ndarray | None = None
    lens_light_note: str = ""
    #: Pixels painted out by hand (True = leave out), added to the automatic masks of the ring
    #: finder and the lens-light fit; None when nothing is painted.
    hand_mask: np.ndarray | None = None
    #: The automatic masks (stars, neighbours) of the last ring search or lens-light fit, for display.
    auto_mask: np.ndarray | None = None

    @property
    def path(self) -> str:
        return str(self.loaded.path)

    @property
    def data(self) -> np.ndarray:
        return self.loaded.data

    @property
    def wcs(self):
        return self.loaded.wcs

    @property
    def pixel_scale_arcsec(self) -> float | None:
        return self.loaded.pixel_scale_arcsec

    @property
    def residual(self) -> np.ndarray | None:
        return None if self.lens_light is None else self.loaded.data - self.lens_light

    @property
    def flip_rows(self) -> bool:
        """FITS images are shown with row 0 at the bottom; pictures with row 0 on top."""
        return getattr(self.loaded, "kind", "fits") == "fits"


@dataclass
class SystemFit:
    """The geometric measurement of one arc system, in image pixels and arcsec."""

    shape: str               # "circle", "ellipse" or "images"
    center_x: float
    center_y: float
    a_px: float
    b_px: float
    angle_deg: float
    theta_e_arcsec: float
    theta_e_err_arcsec: float
    n_points: int
    method: str
    warnings: tuple[str, ...] = ()
    #: -2, -1, +1, +2 sigma bounds of theta_E (arcsec) when theta_E is the ring finder's answer, else None
    bounds_arcsec: tuple[float, float, float, float] | None = None

    def to_json(self) -> dict:
        return {"shape": self.shape, "center_x": self.center_x, "center_y": self.center_y, "a_px": self.a_px,
                "b_px": self.b_px, "angle_deg": self.angle_deg, "theta_e_arcsec": self.theta_e_arcsec,
                "theta_e_err_arcsec": self.theta_e_err_arcsec, "n_points": self.n_points, "method": self.method,
                "warnings": list(self.warnings),
                **({} if self.bounds_arcsec is None else {"bounds_arcsec": list(self.bounds_arcsec)})}


@dataclass
class SystemState:
    """What the window derived for one arc system (never saved as such)."""

    fit: SystemFit | None = None
    fit_problem: str | None = None
    result: dict | None = None
    result_problem: str | None = None
    generation: int = 0


def _number_text(value) -> str:
    if value is None:
        return ""
    return f"{float(value):g}"


class WindowModel:
    """Observable state of one measurement. See the module docstring."""

    def __init__(self) -> None:
        self._observers: list[Callable[[str], None]] = []
        self.session = Session()
        self.image: ImageState | None = None
        self.session_path: str | None = None
        self.active = 0
        self.snap_to_ridge = False
        self.mc_samples = DEFAULT_SAMPLES
        self.texts: dict[str, str] = {k: "" for k in TEXT_FIELDS}
        self.texts["z_l_err"] = self.texts["z_s_err"] = "0"
        self.validation: dict[str, str] = {}
        self.derived: list[SystemState] = []
        #: The last lens-model fit (the Lens model dock's result), or None: the Mass budget uses its theta_E
        #: while the marks are the ones it was fitted to.
        self.lens_model: dict | None = None
        self.dirty = False
        self._muted = 0
        self._pending: list[str] = []
        self.add_system()
        self.dirty = False

    # -------------------------------------------------------------- observers
    def subscribe(self, callback: Callable[[str], None]) -> None:
        self._observers.append(callback)

    def unsubscribe(self, callback: Callable[[str], None]) -> None:
        if callback in self._observers:
            self._observers.remove(callback)

    def notify(self, *topics: str) -> None:
        if self._muted:
            self._pending.extend(t for t in topics if t not in self._pending)
            return
        for topic in topics:
            for callback in list(self._observers):
                callback(topic)

    class _Batch:
        def __init__(self, model: "WindowModel"):
            self.model = model

        def __enter__(self):
            self.model._muted += 1

        def __exit__(self, *exc):
            self.model._muted -= 1
            if not self.model._muted:
                pending, self.model._pending = self.model._pending, []
                self.model.notify(*pending)

    def batch(self) -> "WindowModel._Batch":
        """``with model.batch():`` -- one notification per topic at the end."""
        return WindowModel._Batch(self)

    def _changed(self, *topics: str) -> None:
        self.dirty = True
        self.notify(*topics)

    # ------------------------------------------------------------------ image
    def set_image(self, loaded, ref: ImageRef | None = None) -> None:
        """Show a newly loaded image (keeps marks: a session sets them separately)."""
        self.image = ImageState(loaded)
        self.session.image = ref or ImageRef(path=str(loaded.path))
        self.notify("image", "display")

    def set_lens_light(self, model_array: np.ndarray | None, note: str = "") -> None:
        if self.image is None:
            return
        self.image.lens_light = model_array
        self.image.lens_light_note = note
        if model_array is None and self.session.display.layer != "image":
            self.session.display.layer = "image"
        self.notify("image", "display")

    # ---------------------------------------------------------------- display
    @property
    def display(self) -> DisplaySettings:
        return self.session.display

    def set_display(self, **changes) -> None:
        """Change display choices (stretch, limits, colormap, invert, layer); not an undoable edit."""
        for key, value in changes.items():
            if not hasattr(self.session.display, key):
                raise KeyError(key)
            setattr(self.session.display, key, value)
        self.notify("display")

    # ---------------------------------------------------------------- systems
    @property
    def systems(self) -> list[ArcSystem]:
        return self.session.arcs

    @property
    def active_system(self) -> ArcSystem:
        return self.session.arcs[self.active]

    def next_system_name(self) -> str:
        used = {s.name for s in self.systems}
        for i in range(26 * 4):
            name = chr(65 + i % 26) + ("" if i < 26 else str(i // 26))
            if name not in used:
                return name
        return f"S{len(used) + 1}"

    def add_system(self, system: ArcSystem | None = None, index: int | None = None) -> int:
        """Insert an arc system (a new empty one by default); it becomes active."""
        if system is None:
            system = ArcSystem(name=self.next_system_name(), z_s=None, shape="circle")
            if self.systems:
                prev = self.active_system
                system.z_s, system.z_s_err, system.z_s_range = prev.z_s, prev.z_s_err, prev.z_s_range
        index = len(self.systems) if index is None else index
        self.session.arcs.insert(index, system)
        self.derived.insert(index, SystemState())
        self.select_system(index, notify=False)
        self._changed("marks", "inputs", "fit", "result")
        return index

    def remove_system(self, index: int) -> ArcSystem:
        system = self.session.arcs.pop(index)
        self.derived.pop(index)
        if not self.systems:
            self.session.arcs.append(ArcSystem(name="A"))
            self.derived.append(SystemState())
        self.select_system(min(self.active, len(self.systems) - 1), notify=False)
        self._changed("marks", "inputs", "fit", "result")
        return system

    def select_system(self, index: int, notify: bool = True) -> None:
        """Make system ``index`` the one clicks go to and the results show."""
        self.active = max(0, min(index, len(self.systems) - 1))
        s = self.active_system
        if s.z_s is not None:
            self.texts["z_s"] = _number_text(s.z_s)
        elif s.z_s_range is not None:
            self.texts["z_s"] = f"{s.z_s_range[0]:g}-{s.z_s_range[1]:g}"
        else:
            self.texts["z_s"] = ""
        self.texts["z_s_err"] = _number_text(s.z_s_err)
        self.validation.pop("z_s", None)
        self.validation.pop("z_s_err", None)
        if notify:
            self.notify("marks", "inputs", "fit", "result", "validation")

    def set_system_shape(self, index: int, shape: str) -> None:
        self.systems[index].shape = shape
        self._changed("marks")

    # ------------------------------------------------------------------ marks
    def _marks(self, kind: str, system: int) -> list:
        if kind == "point":
            return self.systems[system].points
        if kind == "image":
            return self.systems[system].images
        raise KeyError(kind)

    def add_mark(self, kind: str, system: int, xy: tuple[float, float], index: int | None = None) -> int:
        marks = self._marks(kind, system)
        index = len(marks) if index is None else index
        marks.insert(index, (float(xy[0]), float(xy[1])))
        self._changed("marks")
        return index

    def move_mark(self, kind: str, system: int, index: int, xy: tuple[float, float], final: bool = True) -> None:
        """Move a mark; ``final=False`` during a drag (the undo command makes it final)."""
        if kind == "centre":
            self.set_centre(xy)
            return
        self._marks(kind, system)[index] = (float(xy[0]), float(xy[1]))
        if final:
            self._changed("marks")
        else:
            self.notify("marks")

    def remove_mark(self, kind: str, system: int, index: int) -> tuple[float, float]:
        xy = self._marks(kind, system).pop(index)
        self._changed("marks")
        return xy

    @property
    def centre(self) -> tuple[float, float] | None:
        c = self.session.centre
        return None if c is None else (c.x, c.y)

    def set_centre(self, xy: tuple[float, float] | None, how: str = "hand") -> None:
        self.session.centre = None if xy is None else LensCentre(float(xy[0]), float(xy[1]), how)
        self._changed("marks")

    # ----------------------------------------------------------------- inputs
    def set_text(self, key: str, text: str) -> None:
        """Store what the user typed in field ``key`` and validate it."""
        if key not in TEXT_FIELDS:
            raise KeyError(key)
        self.texts[key] = text
        self._apply_texts()
        self._changed("inputs", "validation")

    def set_texts(self, texts: dict[str, str]) -> None:
        for key, text in texts.items():
            if key not in TEXT_FIELDS:
                raise KeyError(key)
            self.texts[key] = text
        self._apply_texts()
        self._changed("inputs", "validation")

    def set_choice(self, **choices) -> None:
        """Cosmology preset (or "custom"), concentration relation, halo definition."""
        for key, value in choices.items():
            if key == "cosmology":
                if value == CUSTOM_COSMOLOGY:
                    self.session.cosmology = CosmologyChoice(preset=None)
                else:
                    self.session.cosmology = CosmologyChoice(preset=value)
            elif key == "concentration":
                self.session.concentration = value
            elif key == "halo_definition":
                self.session.halo_definition = value
            else:
                raise KeyError(key)
        self._apply_texts()
        self._changed("inputs", "validation")

    @property
    def cosmology_is_custom(self) -> bool:
        return self.session.cosmology.preset is None

    @property
    def concentration_is_fixed(self) -> bool:
        return not isinstance(self.session.concentration, str) or self.session.concentration == "fixed"

    def _apply_texts(self) -> None:
        """Parse every text field into the session; collect one message per bad field."""
        v: dict[str, str] = {}
        s = self.session
        z_l = _parse_number(self.texts["z_l"], "z_l", positive=True, v=v, empty_message=(
            "Enter the lens redshift z_l (a number above 0)."))
        s.z_l = z_l
        s.z_l_err = _parse_number(self.texts["z_l_err"], "z_l_err", nonneg=True, v=v, empty=0.0) or 0.0
        system = self.active_system
        zs_text = self.texts["z_s"].strip()
        rng = _parse_range(zs_text)
        if rng is not None:
            lo, hi = rng
            if not (0 < lo < hi):
                v["z_s"] = "A z_s range needs 0 < lowest < highest, for example 1.0-3.0."
                system.z_s, system.z_s_range = None, None
            else:
                system.z_s, system.z_s_range = None, (lo, hi)
        else:
            system.z_s_range = None
            system.z_s = _parse_number(zs_text, "z_s", positive=True, v=v, empty_message=(
                "Enter the source redshift z_s of this arc system (or a range such as 1.0-3.0 if unknown)."))
            if system.z_s is not None and z_l is not None and system.z_s <= z_l:
                v["z_s"] = (f"The source must lie behind the lens: z_s = {system.z_s:g} is not above "
                            f"z_l = {z_l:g}; check that the two redshifts are not swapped.")
        system.z_s_err = _parse_number(self.texts["z_s_err"], "z_s_err", nonneg=True, v=v, empty=0.0) or 0.0
        if self.cosmology_is_custom:
            h0 = _parse_number(self.texts["h0"], "h0", positive=True, v=v,
                               empty_message="Enter H0 in km/s/Mpc for the custom cosmology.")
            om0 = _parse_number(self.texts["om0"], "om0", positive=True, v=v,
                                empty_message="Enter Omega_m for the custom cosmology.")
            ode0 = _parse_number(self.texts["ode0"], "ode0", v=v, empty=None)
            s.cosmology = CosmologyChoice(preset=None, h0=h0, om0=om0, ode0=ode0)
            if h0 is not None and om0 is not None and "ode0" not in v:
                try:
                    s.cosmology.resolve()
                except LensInputError as exc:
                    from lensmass.gui.words import window_words

                    v["h0"] = window_words(str(exc))
        if self.concentration_is_fixed:
            c = _parse_number(self.texts["concentration_value"], "concentration_value", positive=True, v=v,
                              empty_message="Enter a fixed NFW concentration (for example 5), or pick a c(M, z) relation.")
            s.concentration = c if c is not None else "fixed"
        self.validation = v

    # ------------------------------------------------------------ derivations
    def invalidate(self, system: int | None = None) -> None:
        """Mark results out of date (a new estimate is needed)."""
        for i, d in enumerate(self.derived):
            if system is None or i == system:
                d.generation += 1

    def set_fit(self, system: int, fit: SystemFit | None, problem: str | None) -> None:
        d = self.derived[system]
        d.fit, d.fit_problem = fit, problem
        self.systems[system].fit = None if fit is None else fit.to_json()
        self.notify("fit")

    def set_result(self, system: int, result: dict | None, problem: str | None) -> None:
        d = self.derived[system]
        d.result, d.result_problem = result, problem
        self.notify("result")

    @property
    def fit(self) -> SystemFit | None:
        return self.derived[self.active].fit

    @property
    def result(self) -> dict | None:
        return self.derived[self.active].result

    @property
    def result_problem(self) -> str | None:
        return self.derived[self.active].result_problem

    def measurement_keys(self, system: int) -> dict[str, Any]:
        """The keys a measurement adds to a system's estimate (as the command line's ``measure`` does):
        the fit's theta_E error, method and points, and the lens centre it used, on the sky when the
        image has a WCS, saying which centre it is (:mod:`lensmass.core.lens_centre`)."""
        from lensmass.core.lens_centre import CENTRE_HOW_WORDS, FITTED_CENTRE_WORDS, centre_keys

        fit = self.derived[system].fit
        if fit is None or self.image is None:
            return {}
        found = self.ring_measurement_for(system)
        if found is not None:  # the command line's keys of the same answer
            return found.keys()
        held = self.session.centre
        source = (CENTRE_HOW_WORDS.get(held.how, CENTRE_HOW_WORDS["hand"]) if held is not None
                  else FITTED_CENTRE_WORDS.get(fit.shape, FITTED_CENTRE_WORDS["circle"]))
        loaded = self.image.loaded
        to_sky = loaded.pixel_to_sky if getattr(loaded, "has_sky", False) else None
        keys = {"theta_e_err_arcsec": float(fit.theta_e_err_arcsec), "method": fit.method,
                "n_points": int(fit.n_points)}
        if self.image.pixel_scale_arcsec:
            keys["pixel_scale_arcsec"] = float(self.image.pixel_scale_arcsec)
        try:
            keys.update(centre_keys(fit.center_x, fit.center_y, source, to_sky))
        except Exception:  # a WCS that cannot place this pixel: the centre in pixels only
            keys.update(centre_keys(fit.center_x, fit.center_y, source, None))
        return keys

    def estimate_request(self, system: int | None = None) -> tuple[float, float, dict]:
        """(theta_E, its error, keyword arguments of estimate()) for a system, or LensInputError why not."""
        index = self.active if system is None else system
        d = self.derived[index]
        if self.image is None:
            raise LensInputError("No image is open: open one (File > Open) and mark the arc.")
        use_model = self.lens_model_for(index) is not None
        if d.fit is None and not use_model:
            raise LensInputError(d.fit_problem or "Mark at least three arc points (or two images) to measure theta_E.")
        for key in ("z_l", "z_l_err", "h0", "om0", "ode0", "concentration_value"):
            if key in self.validation:
                raise LensInputError(self.validation[key])
        if index == self.active:
            for key in ("z_s", "z_s_err"):
                if key in self.validation:
                    raise LensInputError(self.validation[key])
        kwargs = self.session.estimate_kwargs(index)
        kwargs["samples"] = int(self.mc_samples)
        if use_model:  # the lens model's theta_E posterior (lensmass.core.lens_model.masses_from_lens_model)
            kwargs["lens_model_result"] = self.lens_model
            kwargs["lens_model_system"] = self.session.arcs[index].name
            lm = self.lens_model["lens_model"]
            return float(lm["parameters"]["theta_e_arcsec"]["median"]), float("nan"), kwargs
        if self.lens_model is not None:
            kwargs["lens_model_note"] = ("A lens model was fitted to other marks than these: theta_E here is the "
                                         "circle fit again; refit the lens model (Lens model dock) to use it.")
        found = self.ring_measurement_for(index)
        if found is not None:  # the ring finder's answer, as measure --auto-ring uses it
            from lensmass.core.ring_interval import draw_options

            kwargs = draw_options(kwargs, found.theta_e_arcsec, found.theta_e_bounds_arcsec, found.asymmetric)
            kwargs["ring_measurement"] = found
            return found.theta_e_arcsec, found.theta_e_err_arcsec, kwargs
        return d.fit.theta_e_arcsec, d.fit.theta_e_err_arcsec, kwargs

    def set_ring_answer(self, system: int, measurement, points=None) -> None:
        """Keep the ring finder's answer (a :class:`lensmass.core.einstein.ThetaEMeasurement`) for the marks it
        put on ``system`` (``points``, default the system's marks now): theta_E, its interval and method stand for
        that system while it holds exactly those marks (:meth:`ring_measurement_for`); saved with the session."""
        from dataclasses import asdict

        def plain(v):  # JSON values for the session file (numpy scalars to Python ones)
            return [plain(x) for x in v] if isinstance(v, (list, tuple)) else v.item() if isinstance(v, np.generic) else v

        marks = [list(map(float, p)) for p in (self.session.arcs[system].points if points is None else points)]
        self.session.ring = {"system": self.session.arcs[system].name, "points": marks,
                             "measurement": {k: plain(v) for k, v in asdict(measurement).items()}}

    def ring_measurement_for(self, index: int):
        """The ring finder's measurement if system ``index`` holds exactly the marks the finder put there, else None."""
        ring = self.session.ring
        if not ring or index >= len(self.session.arcs) or self.image is None:
            return None
        arc = self.session.arcs[index]
        found = ring.get("points") or []
        if (arc.name != ring.get("system") or arc.images or len(arc.points) != len(found) or not found
                or not np.allclose(np.asarray(arc.points, float), np.asarray(found, float), atol=1e-6)):
            return None
        from lensmass.core.einstein import ThetaEMeasurement

        values = dict(ring["measurement"])
        if values.get("theta_e_bounds_arcsec") is not None:
            values["theta_e_bounds_arcsec"] = tuple(values["theta_e_bounds_arcsec"])
        return ThetaEMeasurement(**values)

    def lens_model_for(self, index: int) -> dict | None:
        """The lens model if it was fitted to exactly the current marks and includes system ``index``, else None."""
        lm = self.lens_model
        if lm is None or index >= len(self.session.arcs):
            return None
        marks = [p for arc in self.session.arcs for p in list(arc.images) + list(arc.points)]
        fitted = lm.get("points_xy") or []
        if len(marks) != len(fitted) or not np.allclose(np.asarray(marks, float).reshape(-1, 2),
                                                          np.asarray(fitted, float).reshape(-1, 2), atol=1e-6):
            return None
        name = self.session.arcs[index].name
        return lm if name in (lm["lens_model"].get("sources") or {}) else None

    # ---------------------------------------------------------------- session
    def to_session(self) -> Session:
        """A deep copy of the persistent state (for saving and autosave)."""
        s = copy.deepcopy(self.session)
        s.mc_samples = int(self.mc_samples)
        return s

    def load_session(self, session: Session, loaded_image=None, path: str | None = None) -> None:
        """Replace everything by a session (and the image it names, already loaded).

        Marks that lie off the image are refused with one sentence (nothing is replaced).
        """
        if loaded_image is not None:
            marks_on_image(session, loaded_image.data.shape)
        with self.batch():
            self.session = copy.deepcopy(session)
            if not self.session.arcs:
                self.session.arcs.append(ArcSystem(name="A"))
            self.derived = [SystemState() for _ in self.session.arcs]
            self.image = None if loaded_image is None else ImageState(loaded_image)
            self.session_path = path
            self.mc_samples = int(session.mc_samples or DEFAULT_SAMPLES)
            self.texts = {k: "" for k in TEXT_FIELDS}
            self.texts["z_l"] = _number_text(session.z_l)
            self.texts["z_l_err"] = _number_text(session.z_l_err)
            cos = session.cosmology
            self.texts["h0"], self.texts["om0"], self.texts["ode0"] = (_number_text(cos.h0), _number_text(cos.om0),
                                                                       _number_text(cos.ode0))
            if not isinstance(session.concentration, str):
                self.texts["concentration_value"] = _number_text(session.concentration)
            self.select_system(0, notify=False)
            self._apply_texts()
            self.notify(*TOPICS)
        self.dirty = False

    def reset(self) -> None:
        """An empty measurement (used by File > New)."""
        self.load_session(Session())
        self.texts["z_l_err"] = self.texts["z_s_err"] = "0"


def _parse_range(text: str) -> tuple[float, float] | None:
    for sep in ("..", "-", " to "):
        if sep in text and not text.startswith("-"):
            parts = text.split(sep)
            if len(parts) == 2:
                try:
                    return float(parts[0]), float(parts[1])
                except ValueError:
                    return None
    return None


def _parse_number(text: str, key: str, *, v: dict, positive=False, nonneg=False, empty: Any = "missing",
                  empty_message: str = "") -> float | None:
    """A float from ``text``, or None with a message in ``v[key]``."""
    names = {"z_l": "z_l", "z_l_err": "The error of z_l", "z_s": "z_s", "z_s_err": "The error of z_s",
             "h0": "H0", "om0": "Omega_m", "ode0": "Omega_Lambda", "concentration_value": "The concentration"}
    text = (text or "").strip()
    if not text:
        if empty == "missing":
            v[key] = empty_message or f"Enter {names[key]}."
            return None
        return empty
    try:
        value = float(text.replace(",", "."))
    except ValueError:
        v[key] = f"{names[key]} must be a number, got '{text}': type digits such as 0.35."
        return None
    if not math.isfinite(value):
        v[key] = f"{names[key]} must be a finite number, got '{text}'."
        return None
    if positive and value <= 0:
        v[key] = f"{names[key]} must be above 0, got {value:g}."
        return None
    if nonneg and value < 0:
        v[key] = f"{names[key]} cannot be negative, got {value:g}: give the 1-sigma error as a positive number."
        return None
    return value


def marks_on_image(session: Session, shape: tuple[int, int]) -> None:
    """Refuse a session whose centre or marked points lie off the image (0-based column, row)."""
    from lensmass.core.limits import on_image

    fix = "the session does not belong to this image: correct the field in the file or open the right image"
    if session.centre is not None:
        on_image(session.centre.x, session.centre.y, shape, "The session's lens centre", fix)
    for arc in session.arcs:
        for kind, pts in (("point", arc.points), ("image", arc.images)):
            if pts:
                xy = list(zip(*pts))
                on_image(xy[0], xy[1], shape, f"An arc {kind} of system {arc.name}", fix)
