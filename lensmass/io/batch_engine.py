"""The batch engine: the estimate (or a measurement, then the estimate) on every manifest row.

Used by ``lensmass batch`` and from Python (:func:`run_batch`). Each manifest row carries one of:
``theta_e_arcsec`` (with ``theta_e_err``), a ``points`` file of marked positions (with an
``image`` or a ``pixel_scale_arcsec``), or an ``image`` alone for the ring finder; and ``z_l``,
``z_s`` (with optional ``z_l_err``, ``z_s_err``), or ``z_s_min`` and ``z_s_max`` in place of
``z_s`` when the source redshift is unknown. RESULTS (ECSV) gets one row per manifest row, in
manifest order, with every ``estimate`` key as a column (units, 68%/95% bounds) and an
``error`` column: empty when the row was measured, else one sentence saying why not. A bad row
never stops the run. The table's meta carries ``format`` and ``schema`` (:data:`RESULTS_SCHEMA`);
resuming from an older file fills the columns it lacks with empty values.

RESULTS is rewritten whole and atomically as rows finish (at most every ``save_every`` seconds,
and at the end): an ECSV file has one header for all rows, so a full rewrite keeps an
interrupted run's file a valid table; the interval grows to ten times the last rewrite's
duration. Resuming keeps the measured rows of an existing RESULTS made with the same settings
and runs the others (failed rows are tried again).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.uncertainty import DEFAULT_SAMPLES, DEFAULT_SEED

#: Extra measurement keys kept as columns when a row was measured on an image.
MEASUREMENT_KEYS = ("theta_e_err_arcsec", "method", "center_x", "center_y", "center_ra", "center_dec",
                    "center_source", "ring_score", "n_points")

#: Core messages name the estimate's parameters; in a batch they are manifest columns.
PARAMETER_TO_COLUMN = {"theta_e_err": "column theta_e_err", "theta_e_arcsec": "column theta_e_arcsec",
                       "z_l_err": "column z_l_err", "z_l": "column z_l", "z_s_err": "column z_s_err",
                       "z_s": "column z_s"}

#: Settings that must match for --resume to reuse rows.
SETTING_KEYS = ("cosmology", "concentration", "halo_definition", "samples", "seed")


#: Version of the RESULTS table this engine writes; older files are completed on --resume.
RESULTS_SCHEMA = 2
RESULTS_FORMAT = "lensmass-batch-results"


def _estimate_options(settings: dict, row) -> dict[str, Any]:
    return {"cosmology": settings["_cosmology"], "concentration": settings["concentration"],
            "halo_definition": settings["halo_definition"], "z_l_err": row.z_l_err or 0.0,
            "z_s_err": row.z_s_err or 0.0, "samples": settings["samples"],
            # one reproducible seed per row: rows draw independent noise, a resumed run draws the same
            "seed": settings["seed"] + row.index}


def _row_sentence(exc: Exception) -> str:
    from lensmass.core.errors import in_words

    text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    return in_words(text, PARAMETER_TO_COLUMN)


def measure_row(row, settings: dict) -> dict[str, Any]:
    """Measure one manifest row; returns the result mapping (raises LensInputError when it cannot)."""
    if row.problem:
        raise LensInputError(f"Row {row.index + 1}: {row.problem}; fix that cell.")
    if row.z_l is None:
        raise LensInputError("No lens redshift: fill the z_l column of this row.")
    options = _estimate_options(settings, row)
    if row.z_s is None:
        z_min, z_max = _extra_number(row, "z_s_min"), _extra_number(row, "z_s_max")
        if z_min is None or z_max is None:
            raise LensInputError("No source redshift: fill the z_s column of this row, or z_s_min and z_s_max "
                                 "when it is unknown.")
        options["z_s_range"] = (z_min, z_max)  # unknown z_s: marginalised over a uniform range
    if row.theta_e_arcsec is not None:
        from lensmass.core.estimate import estimate

        result: dict[str, Any] = estimate(row.theta_e_arcsec, row.z_l, row.z_s, theta_e_err=row.theta_e_err or 0.0,
                                          **options)
        result["source"] = "theta_e_arcsec column"
        return result
    if row.points is None and row.image is None:
        raise LensInputError("Nothing to measure: give theta_e_arcsec, a points file or an image in this row.")
    from lensmass.core.einstein import measure_auto_ring, measure_from_points
    from lensmass.io.images import load_image

    scale = _extra_number(row, "pixel_scale_arcsec")
    image = load_image(row.image, pixel_scale_arcsec=scale) if row.image is not None else None
    if row.points is not None:
        from lensmass.io.points import read_points

        pts = read_points(row.points)
        if pts.frame == "sky" and image is None:
            raise LensInputError("The points file gives RA/Dec: add the image (with its WCS) to this row.")
        x, y = pts.to_pixels(image)
        result = measure_from_points(x, y, image=image, pixel_scale_arcsec=scale, z_l=row.z_l, z_s=row.z_s,
                                     estimate_options=options)
        result["source"] = f"points file {row.points.name}"
    else:
        result = measure_auto_ring(image, z_l=row.z_l, z_s=row.z_s, estimate_options=options)
        result["source"] = f"ring finder on {row.image.name}"
    return result


def _extra_number(row, column: str) -> float | None:
    from lensmass.io.manifest import parse_number

    try:
        return parse_number(row.extra.get(column, ""), column)
    except ValueError as exc:
        raise LensInputError(f"{exc}; fix that cell.") from None


def result_record(row, result: dict | None, error: str) -> dict[str, Any]:
    """One RESULTS row (plain Python values) from a row and its result (or error)."""
    from lensmass.core.estimate import DERIVED_KEYS
    from lensmass.io.export import BOUND_COLUMNS

    rec: dict[str, Any] = {"row": row.index + 1, "id": row.id}
    result = result or {}
    for key in DERIVED_KEYS:
        rec[key] = _num(result.get(key))
        for suffix, (block, i, _) in BOUND_COLUMNS.items():
            bounds = (result.get(block) or {}).get(key)
            rec[key + suffix] = _num(bounds[i]) if bounds else math.nan
    rec["theta_e_err_arcsec"] = _num(result.get("theta_e_err_arcsec"))
    for key in ("center_x", "center_y", "center_ra", "center_dec"):  # the lens centre of an image row
        rec[key] = _num(result.get(key))
    rec["center_source"] = str(result.get("center_source", "") or "")
    rec["mc_samples"] = int(result.get("mc_samples") or 0)
    rec["mc_rejected"] = int(result.get("mc_rejected") or 0)
    rec["cosmology"] = str(result.get("cosmology", ""))
    rec["source"] = str(result.get("source", ""))
    rec["method"] = str(result.get("method", "") or "")
    rec["notes"] = " | ".join(result.get("notes") or [])
    rec["error"] = error
    from lensmass.io.spreadsheet import spreadsheet_safe

    for key in ("id", "cosmology", "source", "method", "center_source", "notes", "error"):  # RESULTS may be opened in a spreadsheet
        rec[key] = spreadsheet_safe(rec[key])
    return rec


def _num(value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return math.nan
    return v if math.isfinite(v) else math.nan


def _quick_rows(rows, settings: dict) -> dict[int, dict[str, Any]]:
    """Results of the theta_E rows, all in one pass of :func:`lensmass.core.estimate_many.estimate_many`.

    Rows it cannot take (or that estimate would refuse) are left out; they go through
    :func:`measure_row`, which gives the one-sentence reason.
    """
    from lensmass.core.estimate_many import estimate_many

    quick = [r for r in rows if r.problem is None and r.theta_e_arcsec is not None and r.z_l is not None
             and r.z_s is not None]
    if not quick:
        return {}
    z = lambda v: 0.0 if v is None else v  # noqa: E731
    results = estimate_many([r.theta_e_arcsec for r in quick], [z(r.theta_e_err) for r in quick],
                            [r.z_l for r in quick], [z(r.z_l_err) for r in quick], [r.z_s for r in quick],
                            [z(r.z_s_err) for r in quick], [settings["seed"] + r.index for r in quick],
                            cosmology=settings["_cosmology"], concentration=settings["concentration"],
                            halo_definition=settings["halo_definition"], samples=settings["samples"])
    out = {}
    for r, res in zip(quick, results):
        if res is not None:
            res["source"] = "theta_e_arcsec column"
            out[r.index] = res
    return out


def run_rows(rows, settings: dict) -> list[dict[str, Any]]:
    """Measure rows (in a worker); every row gives a record, failed ones an error."""
    quick = _quick_rows(rows, settings)
    out = []
    for row in rows:
        if row.index in quick:
            result = quick[row.index]
            if row.theta_e_err is not None:
                result["theta_e_err_arcsec"] = row.theta_e_err
            out.append(result_record(row, result, ""))
            continue
        try:
            result = measure_row(row, settings)
            if row.theta_e_err is not None and "theta_e_err_arcsec" not in result:
                result["theta_e_err_arcsec"] = row.theta_e_err
            out.append(result_record(row, result, ""))
        except LensInputError as exc:
            out.append(result_record(row, None, _row_sentence(exc)))
        except Exception as exc:  # a bad row must never stop the run
            out.append(result_record(row, None, f"Unexpected failure ({type(exc).__name__}: {_row_sentence(exc)}); "
                                                "check this row's files and values."))
    return out


# --- the results file ---------------------------------------------------------------------


def results_table(records: list[dict[str, Any]], settings: dict, models: dict[str, str]):
    """The RESULTS table: records in row order, units on columns, settings and models in the meta."""
    from astropy.table import Table

    from lensmass.core.result_keys import RESULT_KEYS
    from lensmass.io.export import BOUND_COLUMNS, INTERVALS_NOTE

    records = sorted(records, key=lambda r: r["row"])
    template = result_record(_EmptyRow(), None, "")
    table = Table({n: np.array([r[n] for r in records], dtype=type(v)) for n, v in template.items()})
    for key, info in RESULT_KEYS.items():
        if key in table.colnames and info.fmt == "number":
            table[key].unit = info.unit
            table[key].description = info.description
            for suffix in BOUND_COLUMNS:
                if key + suffix in table.colnames:
                    table[key + suffix].unit = info.unit
    table["theta_e_err_arcsec"].unit = "arcsec"
    table["error"].description = "empty when measured; else why this row could not be measured"
    table.meta["lensmass"] = "batch results"
    table.meta["format"] = RESULTS_FORMAT
    table.meta["schema"] = RESULTS_SCHEMA
    table.meta["settings"] = {k: settings[k] for k in SETTING_KEYS}
    table.meta["models"] = models
    table.meta["intervals"] = INTERVALS_NOTE
    table.meta["seeds"] = "Monte Carlo seed of row N is settings.seed + N - 1"
    return table


class _EmptyRow:
    index, id = -1, ""


def write_results(path: Path, records, settings, models) -> None:
    from lensmass.io.atomic import atomic_path

    table = results_table(list(records), settings, models)
    with atomic_path(path, "`out`") as tmp:
        table.write(tmp, format="ascii.ecsv", overwrite=True)


def read_previous(path: Path, settings: dict, manifest) -> dict[int, dict[str, Any]]:
    """Measured rows of an existing RESULTS to keep on --resume (keyed by row number)."""
    from astropy.table import Table

    try:
        table = Table.read(path, format="ascii.ecsv")
    except Exception as exc:
        raise LensInputError(
            f"Cannot resume from '{path}' ({type(exc).__name__}): it is not a batch RESULTS table; "
            "move it aside or choose another results file (`out`)."
        ) from None
    schema = table.meta.get("schema", 1)
    if not isinstance(schema, int) or schema > RESULTS_SCHEMA:
        raise LensInputError(f"'{path}' was written by a newer lensmass (results schema {schema}, this one writes "
                             f"{RESULTS_SCHEMA}): update lensmass, or write to a new results file (`out`).")
    before = dict(table.meta.get("settings") or {})
    now = {k: settings[k] for k in SETTING_KEYS}
    if before != now:
        changed = ", ".join(k for k in SETTING_KEYS if before.get(k) != now[k]) or "unknown settings"
        raise LensInputError(
            f"'{path}' was made with other settings ({changed} differ): resume with the same options, "
            "or write to a new results file (`out`)."
        )
    for name in table.colnames:  # ECSV reads empty strings back as masked
        if table[name].dtype.kind in "US" and hasattr(table[name], "filled"):
            table[name] = table[name].filled("")
    for needed in ("row", "id", "error"):
        if needed not in table.colnames:
            raise LensInputError(f"'{path}' has no '{needed}' column, so its rows cannot be matched to the manifest: "
                                 "move it aside or write to a new results file (`out`).")
    template = result_record(_EmptyRow(), None, "")  # a column an older file lacks gets its empty value
    from lensmass.io.spreadsheet import spreadsheet_safe

    ids = {r.index + 1: spreadsheet_safe(r.id) for r in manifest.rows}
    kept = {}
    for rec in table:
        d = {**template, **{n: (rec[n].item() if hasattr(rec[n], "item") else rec[n]) for n in table.colnames}}
        if ids.get(int(d["row"])) == str(d["id"]) and not str(d["error"]).strip():
            kept[int(d["row"])] = d
    return kept


# --- running -------------------------------------------------------------------------------


@dataclass(frozen=True)
class BatchOutcome:
    """What a run wrote: the RESULTS path and how many rows were kept, measured and failed."""

    path: Path
    n_rows: int
    n_measured: int
    n_failed: int
    n_resumed: int


def batch_settings(*, cosmology: Any = None, concentration: str | float = "duffy08", halo_definition: str = "200c",
                   samples: int = DEFAULT_SAMPLES, seed: int = DEFAULT_SEED, workers: int = 1) -> dict[str, Any]:
    """The settings of a run (checked); they must match for a resumed run to keep rows.

    Examples
    --------
    >>> s = batch_settings(samples=2000, seed=7)
    >>> s["samples"], s["seed"], s["concentration"]
    (2000, 7, 'duffy08')
    """
    from lensmass.core.cosmology import cosmology_label, resolve_cosmology

    from lensmass.core import limits

    cosmo = resolve_cosmology(cosmology)
    limits.monte_carlo_samples(samples, memory_bytes=limits.available_memory_bytes() // max(1, workers))
    limits.seed(seed)
    return {"cosmology": cosmology_label(cosmo), "_cosmology": cosmo, "concentration": str(concentration),
            "halo_definition": halo_definition, "samples": int(samples), "seed": int(seed)}


def run_batch(manifest, out, *, settings: dict[str, Any] | None = None, workers: int = 1, resume: bool = False,
              save_every: float = 2.0, on_progress: Callable[[int], None] | None = None,
              say: Callable[[str], None] | None = None, scheduler: Any = None) -> BatchOutcome:
    """Run every row of ``manifest`` (a path or a read manifest) and write RESULTS to ``out`` (.ecsv).

    ``settings`` come from :func:`batch_settings` (defaults when None). ``on_progress(n)`` is
    called with the number of rows just finished; ``say(text)`` with one-line news (resuming).
    ``scheduler`` (a Dask scheduler address or ``distributed.Client``) runs blocks of rows as tasks
    on that cluster instead of local processes.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "m.csv").write_text("id,theta_e_arcsec,z_l,z_s\\nA,1.2,0.3,1.0\\nB,-1,0.3,1.0\\n")
    >>> done = run_batch(folder / "m.csv", folder / "r.ecsv")
    >>> done.n_measured, done.n_failed
    (1, 1)
    """
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.estimate import model_descriptions
    from lensmass.io.manifest import read_manifest

    out = Path(out)
    if out.suffix.lower() != ".ecsv":
        raise LensInputError(f"RESULTS must be an .ecsv file (got '{out.name}').")
    if int(workers) < 1:
        raise LensInputError(f"The number of worker processes (`workers`) must be 1 or more, got {workers}.")
    if not (save_every > 0 and math.isfinite(save_every)):
        raise LensInputError(f"The save interval (`save_every`) must be a positive number of seconds, got {save_every}.")
    settings = settings or batch_settings()
    _, c_label = concentration_relation(settings["concentration"], settings["halo_definition"])
    models = model_descriptions(settings["cosmology"], c_label, settings["halo_definition"])
    if isinstance(manifest, (str, Path)):
        manifest = read_manifest(manifest)
    if manifest.source.is_dir():
        raise LensInputError("A batch needs a manifest table (CSV/ECSV) with redshifts, not a folder of images.")
    if out.exists() and not resume:
        raise LensInputError(f"'{out}' already exists: resume it, or choose another RESULTS file.")
    records: dict[int, dict[str, Any]] = read_previous(out, settings, manifest) if out.exists() else {}
    n_resumed = len(records)
    todo = [r for r in manifest.rows if r.index + 1 not in records]
    if resume and records and say is not None:
        say(f"resuming; {len(records)} rows already measured, {len(todo)} to run.")
    progress = on_progress or (lambda n: None)
    saver = _Saver(out, records, settings, models, save_every)
    saver.save()  # a valid (possibly empty) RESULTS exists from the start
    from lensmass.core.limits import usable_cores

    if workers > usable_cores():
        if say is not None:
            say(f"using {usable_cores()} worker(s), not {workers}: this machine gives lensmass {usable_cores()} "
                "core(s), and more workers than cores only add start-up time.")
        workers = usable_cores()
    if workers > 1 and len(todo) < 2 * workers and say is not None:
        say(f"{len(todo)} row(s) run in this process: starting {workers} workers would take longer than the rows.")
    from lensmass.io.batch_workers import chunks_of, run_on_cluster, run_parallel

    try:
        if scheduler is not None:
            run_on_cluster(todo, settings, scheduler, saver, progress)
        elif workers == 1 or len(todo) < 2 * workers:
            for chunk in chunks_of(todo, 1):
                recs = run_rows(chunk, settings)
                saver.add(recs)
                progress(len(recs))
        else:
            run_parallel(todo, settings, int(workers), saver, progress)
    finally:
        saver.save()
    failed = sum(1 for r in records.values() if r["error"])
    return BatchOutcome(out, len(records), len(records) - failed, failed, n_resumed)


class _Saver:
    """Collects records and rewrites RESULTS atomically, at most every ``interval`` seconds."""

    def __init__(self, path, records, settings, models, interval):
        self.path, self.records, self.settings, self.models = path, records, settings, models
        self.interval = interval
        self.last = 0.0
        self.dirty = False

    def add(self, recs) -> None:
        for r in recs:
            self.records[r["row"]] = r
        self.dirty = True
        if time.monotonic() - self.last >= self.interval:
            self.save()

    def save(self) -> None:
        start = time.monotonic()
        write_results(self.path, self.records.values(), self.settings, self.models)
        self.last = time.monotonic()
        # a large RESULTS takes a while to rewrite: keep rewriting to under a tenth of the run time
        self.interval = max(self.interval, 10 * (self.last - start))
        self.dirty = False
