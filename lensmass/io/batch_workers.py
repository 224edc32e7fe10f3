"""Running batch rows in worker processes or as tasks on a Dask cluster (for :func:`run_batch`).

Each worker runs :func:`lensmass.io.batch_engine.run_rows` on blocks of rows with the run's
settings; per-row seeds make the numbers the same however the rows are shared out. A worker ends
at once when the run stops early or its parent is gone.
"""

from __future__ import annotations

from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from typing import Any

from lensmass.core.errors import LensInputError
from lensmass.io.batch_engine import run_rows

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


def run_on_cluster(todo, settings, scheduler, saver, progress) -> None:
    """Blocks of rows as tasks on a Dask cluster (its workers must see the manifest's files); the same
    :func:`run_rows` as local workers, so per-row seeds give the same numbers."""
    from lensmass.io.distributed import connect

    client = connect(scheduler)
    n_workers = max(1, len(client.scheduler_info().get("workers", {})))
    futures = client.map(run_rows, chunks_of(todo, n_workers), settings=settings, pure=False)
    try:
        for fut in futures:  # in order: RESULTS is saved as rows arrive
            recs = fut.result()
            saver.add(recs)
            progress(len(recs))
    finally:
        client.cancel(futures)
        if client is not scheduler:
            client.close()


def chunks_of(todo, workers: int) -> list[list]:
    """Blocks of rows: large enough that one estimate pass per block pays, small enough for progress."""
    size = max(1, min(100, len(todo) // (workers * 4) or 1))
    return [todo[i:i + size] for i in range(0, len(todo), size)]


def run_parallel(todo, settings, workers, saver, progress) -> None:
    import multiprocessing
    import os

    chunks = chunks_of(todo, workers)
    context = multiprocessing.get_context()
    # Set when the run ends early: the workers quit at once instead of finishing their rows. A lock-free
    # shared byte, not an Event: a worker that dies holding an Event's lock would block the parent's set().
    stop = context.RawValue("b", 0)
    with ProcessPoolExecutor(max_workers=workers, mp_context=context, initializer=_init_worker,
                             initargs=(settings, stop, os.getpid())) as pool:
        # Blocks are handed out as workers free up (at most two per worker in flight), so when the run stops
        # early only those few are queued: a full queue of blocks kept the parent waiting on its feeder.
        queue = iter(chunks)
        pending = {pool.submit(_run_chunk, c) for _, c in zip(range(2 * workers), queue)}
        try:
            while pending:
                done, pending = wait(pending, return_when=FIRST_COMPLETED)
                for fut in done:
                    try:
                        recs = fut.result()
                    except BrokenProcessPool:
                        raise LensInputError(
                            f"A worker process died (out of memory or killed); {saver.path.name} keeps the "
                            f"{len(saver.records)} rows done: resume the run with fewer `workers` or `samples`."
                        ) from None
                    saver.add(recs)
                    progress(len(recs))
                pending |= {pool.submit(_run_chunk, c) for _, c in zip(range(len(done)), queue)}
        except BaseException:
            for fut in pending:
                fut.cancel()
            stop.value = 1
            pool.shutdown(wait=False, cancel_futures=True)
            raise
