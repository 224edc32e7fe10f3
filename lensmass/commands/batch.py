"""``lensmass batch``: run the estimate (or a measurement, then the estimate) on every manifest row.

Each manifest row carries one of: ``theta_e_arcsec`` (with ``theta_e_err``), a
``points`` file of marked positions (with an ``image`` or a ``pixel_scale_arcsec``),
or an ``image`` alone for the ring finder; and ``z_l``, ``z_s`` (with optional
``z_l_err``, ``z_s_err``), or ``z_s_min`` and ``z_s_max`` in place of ``z_s`` when the source
redshift is unknown (every number is then marginalised over a uniform range). RESULTS (ECSV) gets one row per manifest row, in manifest
order, with every ``estimate`` key as a column (units, 68%/95% bounds) and an
``error`` column: empty when the row was measured, else one sentence saying why not.
A bad row never stops the run.

RESULTS is rewritten whole and atomically as rows finish (at most every
``--save-every`` seconds, and at the end): an ECSV file has one header for all rows,
so a full rewrite is what keeps an interrupted run's file a valid table; the
interval bounds the cost for large runs (it grows to ten times the last rewrite's
duration, so rewriting stays under a tenth of the run). ``--resume`` keeps the measured rows of an
existing RESULTS made with the same settings and runs the others (failed rows are
tried again, since their input may have been fixed).

Exit status: 0 when every row was measured; 3 when some rows failed (their
``error`` says why); 2 when the manifest or options themselves are unusable.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from pathlib import Path
from typing import Any

import numpy as np

from lensmass.commands.common import (
    add_cosmology_options,
    add_halo_options,
    add_sampling_options,
    cosmology_from_args,
)
from lensmass.core.errors import LensInputError

#: Exit status when some rows could not be measured (documented in --help).
EXIT_SOME_ROWS_FAILED = 3

#: Extra measurement keys kept as columns when a row was measured on an image.
MEASUREMENT_KEYS = ("theta_e_err_arcsec", "method", "center_x", "center_y", "center_ra", "center_dec",
                    "ring_score", "n_points")

#: Estimate messages name command-line flags; in a batch they are manifest columns.
FLAG_TO_COLUMN = {"--theta-e-err": "column theta_e_err", "--theta-e": "column theta_e_arcsec",
                  "--zl-err": "column z_l_err", "--zl": "column z_l", "--zs-err": "column z_s_err",
                  "--zs": "column z_s"}

#: Settings that must match for --resume to reuse rows.
SETTING_KEYS = ("cosmology", "concentration", "halo_definition", "samples", "seed")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.description = (
        "Run the estimate on every row of a manifest (CSV/ECSV): rows give theta_e_arcsec (+ theta_e_err), "
        "a points file or an image, plus z_l and z_s. Exit status 0: every row measured; 3: some rows "
        "failed (see their error column); 2: unusable manifest or options."
    )
    parser.add_argument("manifest", metavar="MANIFEST", help="table of rows (CSV or ECSV); paths relative to it")
    parser.add_argument("--out", required=True, metavar="RESULTS.ecsv", help="results table to write (ECSV)")
    parser.add_argument("--workers", type=int, default=1, help="parallel worker processes (default 1)")
    parser.add_argument("--resume", action="store_true",
                        help="keep the measured rows of an existing RESULTS and run only the rest")
    parser.add_argument("--save-every", type=float, default=2.0, metavar="SECONDS",
                        help="rewrite RESULTS at most this often while rows finish (default 2)")
    parser.add_argument("--no-progress", action="store_true", help="no progress bar on the terminal")
    add_cosmology_options(parser)
    add_halo_options(parser)
    add_sampling_options(parser)


# --- one row ------------------------------------------------------------------------------


def _settings_from_args(args: argparse.Namespace) -> dict[str, Any]:
    from lensmass.core.cosmology import cosmology_label

    from lensmass.core import limits

    cosmo = cosmology_from_args(args)
    workers = max(1, min(int(args.workers), limits.usable_cores()))
    limits.monte_carlo_samples(args.samples, memory_bytes=limits.available_memory_bytes() // workers)
    limits.seed(args.seed)
    return {"cosmology": cosmology_label(cosmo), "_cosmology": cosmo, "concentration": str(args.concentration),
            "halo_definition": args.halo_definition, "samples": int(args.samples), "seed": int(args.seed)}


def _estimate_options(settings: dict, row) -> dict[str, Any]:
    return {"cosmology": settings["_cosmology"], "concentration": settings["concentration"],
            "halo_definition": settings["halo_definition"], "z_l_err": row.z_l_err or 0.0,
            "z_s_err": row.z_s_err or 0.0, "samples": settings["samples"],
            # one reproducible seed per row: rows draw independent noise, a resumed run draws the same
            "seed": settings["seed"] + row.index}


def _row_sentence(exc: Exception) -> str:
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    for flag, column in FLAG_TO_COLUMN.items():
        text = text.replace(f"check {flag}.", f"check {column}.").replace(f"give {flag}", f"fill {column}")
    return text


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

        result = estimate(row.theta_e_arcsec, row.z_l, row.z_s, theta_e_err=row.theta_e_err or 0.0, **options)
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
    rec["mc_samples"] = int(result.get("mc_samples") or 0)
    rec["mc_rejected"] = int(result.get("mc_rejected") or 0)
    rec["cosmology"] = str(result.get("cosmology", ""))
    rec["source"] = str(result.get("source", ""))
    rec["method"] = str(result.get("method", "") or "")
    rec["notes"] = " | ".join(result.get("notes") or [])
    rec["error"] = error
    from lensmass.io.spreadsheet import spreadsheet_safe

    for key in ("id", "cosmology", "source", "method", "notes", "error"):  # RESULTS may be opened in a spreadsheet
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


_WORKER_SETTINGS: dict | None = None


#: How often a worker looks whether its parent is still there (seconds).
PARENT_CHECK_S = 0.25


def _init_worker(settings: dict, stop=None, parent_pid: int | None = None) -> None:
    global _WORKER_SETTINGS
    _WORKER_SETTINGS = settings
    import signal
    import threading

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent handles Ctrl-C and saves
    if parent_pid is not None:
        threading.Thread(target=_end_with_parent, args=(stop, parent_pid), daemon=True,
                         name="lensmass-parent-watch").start()


def _end_with_parent(stop, parent_pid: int) -> None:
    """A worker's watch: end at once when the parent asks (Ctrl-C, SIGTERM) or is gone (kill -9).

    A killed parent cannot tell its workers anything; a POSIX child then sees another parent in
    ``os.getppid()`` (init or a subreaper), which is what this looks for, every :data:`PARENT_CHECK_S`.
    """
    import os

    import time

    while True:
        time.sleep(PARENT_CHECK_S)
        if (stop is not None and stop.value) or os.getppid() != parent_pid:
            os._exit(1)


def _run_chunk(rows) -> list[dict[str, Any]]:
    return run_rows(rows, _WORKER_SETTINGS)


# --- the results file ---------------------------------------------------------------------


def results_table(records: list[dict[str, Any]], settings: dict, models: dict[str, str]):
    """The RESULTS table: records in row order, units on columns, settings and models in the meta."""
    from astropy.table import Table

    from lensmass.io.export import BOUND_COLUMNS, COLUMN_INFO, INTERVALS_NOTE

    records = sorted(records, key=lambda r: r["row"])
    template = result_record(_EmptyRow(), None, "")
    table = Table({n: np.array([r[n] for r in records], dtype=type(v)) for n, v in template.items()})
    for key, (unit, meaning) in COLUMN_INFO.items():
        if key in table.colnames:
            table[key].unit = unit
            table[key].description = meaning
            for suffix in BOUND_COLUMNS:
                table[key + suffix].unit = unit
    table["theta_e_err_arcsec"].unit = "arcsec"
    table["error"].description = "empty when measured; else why this row could not be measured"
    table.meta["lensmass"] = "batch results"
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
    with atomic_path(path, "--out") as tmp:
        table.write(tmp, format="ascii.ecsv", overwrite=True)


def read_previous(path: Path, settings: dict, manifest) -> dict[int, dict[str, Any]]:
    """Measured rows of an existing RESULTS to keep on --resume (keyed by row number)."""
    from astropy.table import Table

    try:
        table = Table.read(path, format="ascii.ecsv")
    except Exception as exc:
        raise LensInputError(
            f"Cannot resume from '{path}' ({type(exc).__name__}): it is not a batch RESULTS table; "
            "move it aside or choose another --out."
        ) from None
    before = dict(table.meta.get("settings") or {})
    now = {k: settings[k] for k in SETTING_KEYS}
    if before != now:
        changed = ", ".join(k for k in SETTING_KEYS if before.get(k) != now[k]) or "unknown settings"
        raise LensInputError(
            f"'{path}' was made with other settings ({changed} differ): resume with the same options, "
            "or write to a new --out."
        )
    for name in table.colnames:  # ECSV reads empty strings back as masked
        if table[name].dtype.kind in "US" and hasattr(table[name], "filled"):
            table[name] = table[name].filled("")
    from lensmass.io.spreadsheet import spreadsheet_safe

    ids = {r.index + 1: spreadsheet_safe(r.id) for r in manifest.rows}
    kept = {}
    for rec in table:
        d = {n: (rec[n].item() if hasattr(rec[n], "item") else rec[n]) for n in table.colnames}
        if ids.get(int(d["row"])) == str(d["id"]) and not str(d["error"]).strip():
            kept[int(d["row"])] = d
    return kept


# --- the command --------------------------------------------------------------------------


def run(args: argparse.Namespace) -> int:
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.estimate import model_descriptions
    from lensmass.io.manifest import read_manifest

    out = Path(args.out)
    if out.suffix.lower() != ".ecsv":
        raise LensInputError(f"--out must name an .ecsv file (got '{out.name}'): RESULTS is an ECSV table.")
    from lensmass.io.atomic import check_writable

    check_writable(out, "--out")
    if args.workers < 1:
        raise LensInputError(f"--workers must be 1 or more, got {args.workers}.")
    if not (args.save_every > 0 and math.isfinite(args.save_every)):
        raise LensInputError(f"--save-every must be a positive number of seconds, got {args.save_every}.")
    settings = _settings_from_args(args)
    from lensmass.core.limits import usable_cores

    if args.workers > usable_cores():
        print(f"lensmass batch: using {usable_cores()} worker(s), not {args.workers}: this machine gives lensmass "
              f"{usable_cores()} core(s), and more workers than cores only add start-up time.", file=sys.stderr)
        args.workers = usable_cores()
    _, c_label = concentration_relation(settings["concentration"], settings["halo_definition"])
    models = model_descriptions(settings["cosmology"], c_label, settings["halo_definition"])
    manifest = read_manifest(args.manifest)
    if manifest.source.is_dir():
        raise LensInputError("batch needs a manifest table (CSV/ECSV) with redshifts, not a folder of images.")
    if out.exists() and not args.resume:
        raise LensInputError(f"'{out}' already exists: add --resume to continue it, or choose another --out.")
    records: dict[int, dict[str, Any]] = read_previous(out, settings, manifest) if out.exists() else {}
    todo = [r for r in manifest.rows if r.index + 1 not in records]
    if args.resume and records:
        print(f"lensmass batch: resuming; {len(records)} rows already measured, {len(todo)} to run.", file=sys.stderr)
    saver = _Saver(out, records, settings, models, args.save_every)
    saver.save()  # a valid (possibly empty) RESULTS exists from the start
    progress = _progress_bar(len(todo), args.no_progress)
    previous_sigterm = _sigterm_as_interrupt()
    try:
        if args.workers > 1 and len(todo) < 2 * args.workers:
            print(f"lensmass batch: {len(todo)} row(s) run in this process: starting {args.workers} workers would "
                  "take longer than the rows.", file=sys.stderr)
        if args.workers == 1 or len(todo) < 2 * args.workers:
            for chunk in _chunks(todo, 1):
                recs = run_rows(chunk, settings)
                saver.add(recs)
                progress.update(len(recs))
        else:
            _run_parallel(todo, settings, args.workers, saver, progress)
    finally:
        _restore_sigterm(previous_sigterm)
        progress.close()
        saver.save()
    failed = sum(1 for r in records.values() if r["error"])
    print(f"lensmass batch: {len(records)} rows written to {out}; {len(records) - failed} measured, "
          f"{failed} failed.", file=sys.stderr)
    return EXIT_SOME_ROWS_FAILED if failed else 0


def _sigterm_as_interrupt():
    """SIGTERM ends a run like Ctrl-C: RESULTS is saved and the workers stop (returns the old handler)."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        return None

    def interrupt(_signum, _frame):
        raise KeyboardInterrupt

    return signal.signal(signal.SIGTERM, interrupt)


def _restore_sigterm(previous) -> None:
    import signal

    if previous is not None:
        signal.signal(signal.SIGTERM, previous)


def _chunks(todo, workers: int) -> list[list]:
    """Blocks of rows: large enough that one estimate pass per block pays, small enough for progress."""
    size = max(1, min(100, len(todo) // (workers * 4) or 1))
    return [todo[i:i + size] for i in range(0, len(todo), size)]


def _run_parallel(todo, settings, workers, saver, progress) -> None:
    import multiprocessing
    import os

    chunks = _chunks(todo, workers)
    context = multiprocessing.get_context()
    # Set when the run ends early: the workers quit at once instead of finishing their rows. A lock-free
    # shared byte, not an Event: a worker that dies holding an Event's lock would block the parent's set().
    stop = context.RawValue("b", 0)
    with ProcessPoolExecutor(max_workers=workers, mp_context=context, initializer=_init_worker,
                             initargs=(settings, stop, os.getpid())) as pool:
        pending = {pool.submit(_run_chunk, c) for c in chunks}
        try:
            while pending:
                done, pending = wait(pending, return_when=FIRST_COMPLETED)
                for fut in done:
                    try:
                        recs = fut.result()
                    except BrokenProcessPool:
                        raise LensInputError(
                            f"A worker process died (out of memory or killed); {saver.path.name} keeps the "
                            f"{len(saver.records)} rows done: rerun with --resume, with fewer --workers or --samples."
                        ) from None
                    saver.add(recs)
                    progress.update(len(recs))
        except BaseException:
            for fut in pending:
                fut.cancel()
            stop.value = 1
            raise


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


def _progress_bar(total: int, disabled: bool):
    from tqdm import tqdm

    return tqdm(total=total, desc="lensmass batch", unit="row", file=sys.stderr,
                disable=True if disabled else None, dynamic_ncols=True)
