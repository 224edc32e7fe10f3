"""``lensmass batch``: the command line of the batch engine (:mod:`lensmass.io.batch_engine`): run the estimate (or a measurement, then the estimate) on every manifest row.

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
from pathlib import Path
from typing import Any

from lensmass.commands.common import (
    add_cosmology_options,
    add_halo_options,
    add_sampling_options,
    add_scheduler_option,
    cosmology_from_args,
)
from lensmass.core.errors import LensInputError
from lensmass.io.batch_engine import (  # noqa: F401 (the engine's names, reachable from here as before)
    MEASUREMENT_KEYS,
    RESULTS_SCHEMA,
    SETTING_KEYS,
    batch_settings,
    measure_row,
    read_previous,
    result_record,
    results_table,
    run_batch,
    run_rows,
    write_results,
)

#: Exit status when some rows could not be measured (documented in --help).
EXIT_SOME_ROWS_FAILED = 3


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
    add_scheduler_option(parser)
    add_cosmology_options(parser)
    add_halo_options(parser)
    add_sampling_options(parser)


# --- one row ------------------------------------------------------------------------------


def _settings_from_args(args: argparse.Namespace) -> dict[str, Any]:
    return batch_settings(cosmology=cosmology_from_args(args), concentration=args.concentration,
                          halo_definition=args.halo_definition, samples=args.samples, seed=args.seed,
                          workers=max(1, int(args.workers)))


def run(args: argparse.Namespace) -> int:
    out = Path(args.out)
    if out.suffix.lower() != ".ecsv":
        raise LensInputError(f"--out must name an .ecsv file (got '{out.name}'): RESULTS is an ECSV table.")
    from lensmass.io.atomic import check_writable

    check_writable(out, "--out")
    if args.workers < 1:
        raise LensInputError(f"--workers must be 1 or more, got {args.workers}.")
    if not (args.save_every > 0 and math.isfinite(args.save_every)):
        raise LensInputError(f"--save-every must be a positive number of seconds, got {args.save_every}.")
    if out.exists() and not args.resume:
        raise LensInputError(f"'{out}' already exists: add --resume to continue it, or choose another --out.")
    settings = _settings_from_args(args)
    from lensmass.io.manifest import read_manifest

    manifest = read_manifest(args.manifest)
    todo = len(manifest.rows)
    progress = _progress_bar(todo, args.no_progress)
    previous_sigterm = _sigterm_as_interrupt()
    try:
        done = run_batch(manifest, out, settings=settings, workers=args.workers, resume=args.resume,
                         save_every=args.save_every, on_progress=progress.update, scheduler=args.scheduler,
                         say=lambda text: print(f"lensmass batch: {text}", file=sys.stderr))
    finally:
        _restore_sigterm(previous_sigterm)
        progress.close()
    print(f"lensmass batch: {done.n_rows} rows written to {out}; {done.n_measured} measured, "
          f"{done.n_failed} failed.", file=sys.stderr)
    return EXIT_SOME_ROWS_FAILED if done.n_failed else 0


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


def _progress_bar(total: int, disabled: bool):
    from tqdm import tqdm

    return tqdm(total=total, desc="lensmass batch", unit="row", file=sys.stderr,
                disable=True if disabled else None, dynamic_ncols=True)
