"""Survey-scale weak lensing: a partitioned Parquet catalogue streamed through the block engine.

Targets (issue 17):
  * 5e7 galaxies in a partitioned Parquet folder, one process: peak memory < 1 GB and >= 8 million
    rows a second; ratio to reading the same columns with pyarrow alone (the read floor);
  * the same on a Dask LocalCluster of 2 workers: the same numbers, time and per-worker memory.
The catalogue (uniform positions on 4 deg^2, Gaussian ellipticities, Smail redshifts, plus unused
columns, as survey files have) is written to a folder in /tmp and removed afterwards (or kept and
reused with --folder). Each measured run is a fresh child process, so its peak memory (ru_maxrss) is
its own; runs are repeated (--repeat) and the best and the median printed.
Wall and CPU time: pyarrow decodes with its own threads and the engine sums the parts of a block on
threads (lensmass.core.shear_kernel.KERNEL_THREADS, default the CPUs this process may use), all in one
process; so CPU time can exceed wall time. The target is rows per second of the run (wall); the CPU
figure (the rows per second one core would give if the work were serial) is printed beside it, and
``--threads 1`` runs the engine on one thread. Check the load average printed: other work on the
machine lengthens wall time, not CPU time.
Run: python benchmarks/bench_survey.py [N_ROWS] [--files 50] [--no-dask] [--repeat 3]
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's lensmass, here and in workers

RA0, DEC0, ZL = 141.372, 18.2705, 0.35
OPTIONS = {"z_l": ZL, "center_ra": RA0, "center_dec": DEC0, "r_min": 1.0, "r_max": 60.0, "n_bins": 10, "n_bootstrap": 100}


def write_catalogue(folder: Path, n: int, n_files: int) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(5)
    per = -(-n // n_files)
    for k in range(n_files):
        m = min(per, n - k * per)
        if m <= 0:
            break
        e = rng.normal(0, 0.25, (2, m)).clip(-0.95, 0.95)
        part = folder / f"tract={k // 10}" / f"part-{k:04d}.parquet"
        part.parent.mkdir(parents=True, exist_ok=True)
        pq.write_table(pa.table({
            "ra": rng.uniform(RA0 - 1, RA0 + 1, m), "dec": rng.uniform(DEC0 - 1, DEC0 + 1, m),
            "e1": e[0].astype(np.float32), "e2": e[1].astype(np.float32),
            "weight": rng.uniform(0.5, 1.5, m).astype(np.float32),
            "z_phot": (0.7 * rng.gamma(2.0, 1.0, m) ** (1 / 1.5)).astype(np.float32),
            "mag_i": rng.uniform(20, 25, m).astype(np.float32), "flags": rng.integers(0, 4, m).astype(np.int16),
        }), part, row_group_size=250_000)


def child(mode: str, folder: str, scheduler: str | None, threads: int | None = None) -> dict:
    """One measured run (in a fresh process): 'floor' reads the columns with pyarrow alone; 'stream' runs
    the shear analysis on the folder; 'dask' the same on the cluster at ``scheduler``."""
    import resource

    import pyarrow.parquet as pq

    from lensmass.core.shear_analysis import analyse_shear_blocks
    from lensmass.io.catalog_stream import CatalogFiles, expand_catalog_paths
    from lensmass.io.distributed import ClusterBlocks

    from lensmass.core import shear_kernel

    shear_kernel.KERNEL_THREADS = threads
    out: dict = {"threads": shear_kernel._threads()}
    if mode != "floor":  # the one-off start-up (astropy.cosmology and scipy imports), printed apart
        from lensmass.core.cosmology import resolve_cosmology

        s0 = time.process_time()
        resolve_cosmology(None)
        out["startup_cpu"] = time.process_time() - s0
    w0, c0 = time.perf_counter(), time.process_time()  # imports excluded
    if mode == "floor":
        total = 0.0
        for path in expand_catalog_paths(folder):
            with pq.ParquetFile(path) as pf:
                for batch in pf.iter_batches(batch_size=1 << 20, columns=["ra", "dec", "e1", "e2", "weight", "z_phot"]):
                    total += sum(float(batch.column(i).to_numpy().sum()) for i in range(batch.num_columns))
        out["checksum"] = total
    else:
        blocks = CatalogFiles(folder, "z=z_phot")
        if mode == "dask":
            blocks = ClusterBlocks(blocks, scheduler)
        r = analyse_shear_blocks(blocks, **OPTIONS)
        p = r["_profile"]
        out.update(n_rows=r["n_rows"], n_used=r["n_used"], g_t=p.g_t.tolist(), g_t_err=p.g_t_err.tolist(),
                   delta_sigma=p.delta_sigma_msun_per_mpc2.tolist(), boot=p.g_t_err_boot.tolist(),
                   nfw=r["nfw_m200_msun"])
        if mode == "dask":
            out["worker_threads"] = sorted(blocks.client.run(
                lambda: __import__("lensmass.core.shear_kernel", fromlist=["_threads"])._threads()).values())
            out["worker_peak_mb"] = sorted(v / 1024 for v in blocks.client.run(
                lambda: __import__("resource").getrusage(__import__("resource").RUSAGE_SELF).ru_maxrss).values())
    out.update(wall=time.perf_counter() - w0, cpu=time.process_time() - c0,
               peak_mb=resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)
    return out


def run_child(mode: str, folder: Path, scheduler: str | None = None, threads: int | None = None) -> dict:
    env = dict(os.environ, PYTHONPATH=str(Path(__file__).resolve().parents[1]))
    cmd = [sys.executable, __file__, "--child", mode, str(folder)] + (["--scheduler", scheduler] if scheduler else [])
    cmd += ["--threads", str(threads)] if threads else []
    done = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False)
    if done.returncode:
        raise SystemExit(f"{mode} run failed:\n{done.stderr[-2000:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("n", nargs="?", type=int, default=50_000_000)
    parser.add_argument("--files", type=int, default=50)
    parser.add_argument("--no-dask", action="store_true")
    parser.add_argument("--child", nargs=2, metavar=("MODE", "FOLDER"), help=argparse.SUPPRESS)
    parser.add_argument("--scheduler", help=argparse.SUPPRESS)
    parser.add_argument("--repeat", type=int, default=3, help="measured runs of each kind (best and median printed)")
    parser.add_argument("--threads", type=int, default=None, help="threads of the engine (default: the CPUs)")
    parser.add_argument("--folder", help="write the catalogue here once and reuse it (default: a temporary folder)")
    args = parser.parse_args(argv)
    if args.child:
        print(json.dumps(child(args.child[0], args.child[1], args.scheduler, args.threads)))
        return 0
    tmp = Path(tempfile.mkdtemp(prefix="lensmass_survey_", dir="/tmp"))
    try:
        folder = Path(args.folder) if args.folder else tmp / "survey.parquet"
        t0 = time.perf_counter()
        if not folder.exists():
            write_catalogue(folder, args.n, args.files)
        size = sum(f.stat().st_size for f in folder.rglob("*.parquet")) / 1e9
        print(f"catalogue: {args.n} rows in {args.files} Parquet files ({size:.2f} GB on disk, 8 columns, 6 read), "
              f"ready in {time.perf_counter() - t0:.0f} s")
        run_child("floor", folder)  # warm the file cache
        run_child("stream", folder, threads=args.threads)  # and the compiled kernel's disk cache
        load = os.getloadavg()[0]
        floors, streams = [], []
        for _ in range(args.repeat):  # interleaved, so that a change in the machine's load touches both alike
            floors.append(run_child("floor", folder))
            streams.append(run_child("stream", folder, threads=args.threads))
        stream = streams[0]
        n = args.n

        def figures(runs, key):
            values = sorted(r[key] for r in runs)
            return values[0], float(np.median(values))

        (fw, fw_med), (fc, fc_med) = figures(floors, "wall"), figures(floors, "cpu")
        (sw, sw_med), (sc, sc_med) = figures(streams, "wall"), figures(streams, "cpu")
        peak = max(r["peak_mb"] for r in streams)
        print(f"load average before the runs {load:.1f} on {os.cpu_count()} CPUs; {args.repeat} runs of each; "
              f"engine threads {stream['threads']}")
        print(f"read floor (pyarrow iter_batches of the 6 columns, its own threads): best wall {fw:.2f} s, cpu {fc:.2f} s "
              f"(median wall {fw_med:.2f}, cpu {fc_med:.2f}), peak {max(r['peak_mb'] for r in floors):.0f} MB")
        print(f"lensmass shear, one process streaming: best wall {sw:.2f} s, cpu {sc:.2f} s (median wall {sw_med:.2f}, "
              f"cpu {sc_med:.2f}), peak {peak:.0f} MB (target < 1024)")
        print(f"  start-up before the timer (astropy.cosmology import): cpu {stream['startup_cpu']:.2f} s")
        print(f"  rows per second of the run (wall): best {n / sw / 1e6:.2f} M, median {n / sw_med / 1e6:.2f} M "
              f"(target >= 8 M); by CPU: best {n / sc / 1e6:.2f} M, median {n / sc_med / 1e6:.2f} M")
        print(f"  ratio to the read floor: wall {sw / fw:.2f} (median {sw_med / fw_med:.2f}), cpu {sc / fc:.2f} "
              f"(median {sc_med / fc_med:.2f})")
        if not args.no_dask:
            from distributed import LocalCluster

            env = {"PYTHONPATH": str(Path(__file__).resolve().parents[1])}
            os.environ.update(env)
            with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                              dashboard_address=None) as cluster:
                dask = run_child("dask", folder, cluster.scheduler_address)
            rel = max(np.max(np.abs(np.array(dask[k]) / np.array(stream[k]) - 1))
                      for k in ("g_t", "g_t_err", "delta_sigma", "boot"))
            print(f"Dask LocalCluster, 2 worker processes x 1 task thread (engine threads per worker "
                  f"{dask['worker_threads']}): wall {dask['wall']:.2f} s (client cpu "
                  f"{dask['cpu']:.2f} s), worker peak memory {', '.join(f'{m:.0f}' for m in dask['worker_peak_mb'])} MB; "
                  f"largest relative difference from one process {rel:.1e}; NFW M200 {dask['nfw']:.6e} vs "
                  f"{stream['nfw']:.6e}")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)  # a --folder catalogue is kept
    return 0


if __name__ == "__main__":
    sys.exit(main())
