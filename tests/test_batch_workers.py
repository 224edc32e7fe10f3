"""Batch workers end with their parent: kill -9, SIGTERM and Ctrl-C leave no worker running.

Process facts used (POSIX, common practice): a child whose parent dies is re-parented (``getppid()``
changes); Ctrl-C in a terminal sends SIGINT to the whole foreground process group; ``/proc/PID/stat``
field 3 is the process state (``Z``: exited, waiting to be reaped). Linux only (reads /proc).
"""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from astropy.table import Table

pytestmark = pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads /proc (Linux)")

REPO = Path(__file__).resolve().parents[1]
RING = REPO / "demo_fields" / "tris_ring_a.fits"


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (FileNotFoundError, ProcessLookupError, IndexError):
        return False
    return state not in ("Z", "X")


def _descendants(pid: int) -> set[int]:
    found, todo = set(), [pid]
    while todo:
        p = todo.pop()
        for task in Path(f"/proc/{p}/task").glob("*") if Path(f"/proc/{p}/task").exists() else []:
            try:
                kids = [int(k) for k in (task / "children").read_text().split()]
            except OSError:
                continue
            for k in kids:
                if k not in found:
                    found.add(k)
                    todo.append(k)
    return found


def _start(tmp_path):
    manifest = tmp_path / "m.csv"
    rows = ["id,image,z_l,z_s"] + [f"R{i:02d},{RING},0.3,1.2" for i in range(480)]  # far more rows than finish in the seconds before the signal
    manifest.write_text("\n".join(rows) + "\n")
    out = tmp_path / "r.ecsv"
    proc = subprocess.Popen([sys.executable, "-m", "lensmass.cli", "batch", str(manifest), "--out", str(out),
                             "--workers", "2", "--samples", "300", "--no-progress"], cwd=REPO,
                            stderr=subprocess.PIPE, text=True, start_new_session=True,
                            # as a terminal starts it: Ctrl-C not ignored even when the tests run under nohup
                            # (a background job inherits SIGINT ignored, and Python then installs no handler)
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    deadline = time.monotonic() + 60
    workers: set[int] = set()
    while time.monotonic() < deadline and len(workers) < 2:
        time.sleep(0.2)
        workers = {p for p in _descendants(proc.pid) if _alive(p)}
        assert proc.poll() is None, proc.stderr.read()
    assert len(workers) >= 2, "the batch run did not start its workers"
    time.sleep(1.0)  # the workers are busy measuring rings now
    return proc, workers, out


def _gone_within(pids, seconds: float) -> set[int]:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        left = {p for p in pids if _alive(p)}
        if not left:
            return set()
        time.sleep(0.1)
    return {p for p in pids if _alive(p)}


@pytest.mark.parametrize("how", ["kill -9", "SIGTERM", "Ctrl-C"])
def test_workers_end_with_the_parent(tmp_path, how):
    proc, workers, out = _start(tmp_path)
    try:
        if how == "kill -9":
            os.kill(proc.pid, signal.SIGKILL)
        elif how == "SIGTERM":
            os.kill(proc.pid, signal.SIGTERM)
        else:
            os.killpg(proc.pid, signal.SIGINT)  # a terminal's Ctrl-C: the whole foreground group
        proc.wait(30)
        left = _gone_within(workers, 5.0)  # a worker mid-row would take 15 s and more to finish its rows
        assert left == set(), f"workers still running {how}: {sorted(left)}"
        if how != "kill -9":
            assert proc.returncode == 130 and "interrupted" in proc.stderr.read()
            Table.read(out)  # RESULTS is saved and readable: --resume continues it
    finally:
        for p in workers | {proc.pid}:
            if _alive(p):
                os.kill(p, signal.SIGKILL)
