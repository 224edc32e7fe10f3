"""Results to files: JSON (every key, notes, models) and ECSV (one row per arc system).

The ECSV table has a ``system`` column, one column per derived number of
:data:`lensmass.core.estimate.DERIVED_KEYS` with its unit, and four bound columns
per number, ``<key>_p16``/``<key>_p84`` (68%) and ``<key>_p2p5``/``<key>_p97p5``
(95%), NaN where no uncertainty was propagated. The table meta holds how the
intervals were made and the distinct ``models`` (which model produced each
number) and ``notes`` (caveats) as lists; the columns ``models_set`` and
``notes_set`` give each row's index into them, so a thousand rows from one
estimate store the model text once. Both writers are atomic
(:mod:`lensmass.io.atomic`).
"""

from __future__ import annotations

import os
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.estimate import DERIVED_KEYS
from lensmass.core.result_keys import fact

#: Columns of the lens centre, written when a result was measured on an image (NaN RA/Dec without a WCS).
CENTRE_COLUMNS = ("center_x", "center_y", "center_ra", "center_dec", "center_source")

RESULTS_FORMAT_TAG = "lensmass-results"
RESULTS_SCHEMA = 1


#: Suffix of each bound column -> (interval block, index in [low, high], percentile).
BOUND_COLUMNS = {"_p16": ("intervals68", 0, "16th"), "_p84": ("intervals68", 1, "84th"),
                 "_p2p5": ("intervals95", 0, "2.5th"), "_p97p5": ("intervals95", 1, "97.5th")}

INTERVALS_NOTE = ("Bounds are percentiles of the Monte Carlo draws: p16/p84 give the 68% interval, "
                  "p2p5/p97p5 the 95% interval; NaN where no uncertainty was propagated.")

Systems = Mapping[str, Mapping[str, Any]] | Sequence[tuple[str, Mapping[str, Any]]]


def _systems(systems: Systems) -> list[tuple[str, Mapping[str, Any]]]:
    items = list(systems.items()) if isinstance(systems, Mapping) else list(systems)
    if not items:
        raise LensInputError("There are no results to export: estimate a mass for at least one arc system first.")
    names = [str(name) for name, _ in items]
    if len(set(names)) != len(names):
        raise LensInputError("Two arc systems share a name: rename one so every exported row is distinct.")
    keys = list(DERIVED_KEYS)
    for name, result in items:
        for key in keys:
            if np.ndim(result.get(key)) != 0:
                raise LensInputError(
                    f"The result of '{name}' holds several lenses: export one result per arc system."
                )
    return [(str(n), r) for n, r in items]


def _header(kind: str) -> dict[str, Any]:
    from lensmass import __version__

    return {"format": RESULTS_FORMAT_TAG, "schema": RESULTS_SCHEMA, "content": kind,
            "generated_by": f"lensmass {__version__}",
            "generated_at": datetime.now(timezone.utc).isoformat(timespec="seconds")}


def _float(value) -> float:
    try:
        return float(value)
    except (TypeError, ValueError):
        return float("nan")


def _distinct(values: list) -> tuple[list, list[int]]:
    """The distinct values (first-seen order) and each input's index among them."""
    seen: list = []
    index = []
    for v in values:
        if v not in seen:
            seen.append(v)
        index.append(seen.index(v))
    return seen, index


def results_table(systems: Systems, inputs: Mapping[str, Mapping[str, Any]] | None = None):
    """An astropy Table: one row per arc system, every estimate key and its bounds.

    Parameters
    ----------
    systems : mapping name -> result, or sequence of (name, result)
        Results of :func:`lensmass.core.estimate.estimate` (one lens each).
    inputs : mapping name -> dict, optional
        What the user entered for each system (kept in the table meta).

    Examples
    --------
    >>> from lensmass.core.estimate import estimate
    >>> t = results_table({"A": estimate(1.2, 0.3, 1.0)})
    >>> str(t["mass_einstein_msun"].unit), len(t.colnames)
    ('solMass', 71)
    >>> t.meta["models"][t["models_set"][0]]["r_e_kpc"]
    'R_E = D_l theta_E'
    """
    from astropy.table import Column, Table

    items = _systems(systems)
    table = Table()
    table["system"] = Column([n for n, _ in items], dtype=str, description="arc system name")
    table["cosmology"] = Column([str(r.get("cosmology", "")) for _, r in items], dtype=str,
                                description="cosmology of the distances")
    keys = list(DERIVED_KEYS)
    for key in keys:
        unit, meaning = fact(key).unit, fact(key).description
        table[key] = Column([_float(r.get(key)) for _, r in items], unit=unit, description=meaning)
    for key in keys:
        unit, meaning = fact(key).unit, fact(key).description
        for suffix, (block, index, which) in BOUND_COLUMNS.items():
            values = [_float((r.get(block) or {}).get(key, [np.nan, np.nan])[index]) for _, r in items]
            table[key + suffix] = Column(values, unit=unit, description=f"{meaning}, {which} percentile")
    if any(r.get("center_x") is not None for _, r in items):  # measured on an image: the lens centre used
        for key in CENTRE_COLUMNS:
            f = fact(key)
            if f.fmt == "text":
                table[key] = Column([str(r.get(key) or "") for _, r in items], dtype=str, description=f.description)
            else:
                table[key] = Column([_float(r.get(key)) for _, r in items], unit=f.unit, description=f.description)
    table["mc_samples"] = Column([int(r.get("mc_samples", 0) or 0) for _, r in items],
                                 description="Monte Carlo draws (0: no uncertainty propagated)")
    table["mc_rejected"] = Column([int(r.get("mc_rejected", 0) or 0) for _, r in items],
                                  description="Monte Carlo draws rejected (source not behind the lens)")
    models, model_index = _distinct([dict(r.get("models") or {}) for _, r in items])
    notes, note_index = _distinct([list(r.get("notes") or []) for _, r in items])
    table["models_set"] = Column(model_index, description="index into meta 'models': which model made each number")
    table["notes_set"] = Column(note_index, description="index into meta 'notes': the caveats of this row")
    from lensmass.io.jsonout import to_jsonable

    table.meta.update(_header("results table"))
    table.meta["intervals"] = INTERVALS_NOTE
    table.meta["models"] = models
    table.meta["notes"] = notes
    if inputs:
        table.meta["inputs"] = to_jsonable({str(k): dict(v) for k, v in inputs.items()})
    return table


def write_results_ecsv(path: str | os.PathLike, systems: Systems,
                       inputs: Mapping[str, Mapping[str, Any]] | None = None) -> Path:
    """Write :func:`results_table` as ECSV, atomically; returns the path written."""
    from lensmass.io.atomic import atomic_path

    table = results_table(systems, inputs)
    target = Path(path).absolute()
    try:
        with atomic_path(target) as tmp:
            table.write(tmp, format="ascii.ecsv", overwrite=True)
    except OSError as exc:
        raise LensInputError(f"Could not write '{target}' ({exc.strerror or exc}): choose another folder.") from None
    return target


def results_document(systems: Systems, inputs: Mapping[str, Mapping[str, Any]] | None = None) -> dict[str, Any]:
    """The JSON export as a dict: a header and one entry per system (inputs + full result)."""
    items = _systems(systems)
    doc = _header("results")
    doc["intervals"] = INTERVALS_NOTE
    doc["systems"] = []
    for name, result in items:
        entry: dict[str, Any] = {"name": name}
        if inputs and name in inputs:
            entry["inputs"] = dict(inputs[name])
        entry["result"] = dict(result)
        doc["systems"].append(entry)
    return doc


def write_results_json(path: str | os.PathLike, systems: Systems,
                       inputs: Mapping[str, Mapping[str, Any]] | None = None) -> Path:
    """Write :func:`results_document` as strict JSON (NaN -> null), atomically."""
    from lensmass.io.atomic import write_text_atomic
    from lensmass.io.jsonout import dumps

    target = Path(path).absolute()
    text = dumps(results_document(systems, inputs)) + "\n"
    try:
        write_text_atomic(target, text)
    except OSError as exc:
        raise LensInputError(f"Could not write '{target}' ({exc.strerror or exc}): choose another folder.") from None
    return target


def write_results(path: str | os.PathLike, systems: Systems,
                  inputs: Mapping[str, Mapping[str, Any]] | None = None) -> Path:
    """Write JSON or ECSV according to the file name (``.json`` or ``.ecsv``)."""
    suffix = Path(path).suffix.lower()
    if suffix == ".json":
        return write_results_json(path, systems, inputs)
    if suffix == ".ecsv":
        return write_results_ecsv(path, systems, inputs)
    raise LensInputError(f"Cannot export results as '{suffix or path}': name the file .json or .ecsv.")
