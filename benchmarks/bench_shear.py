"""Speed of the weak-lensing path: `lensmass shear` on 2e6 galaxies in one FITS file, and the mass map at 512 x 512.

The read floor: reading the same six columns of the same FITS table into memory with astropy
(``Table.read``, the file already in the page cache, as it is for the run) and summing each column once,
in the same process. Nothing can compute the profile without at least that work.
Targets: the full run (`lensmass shear FILE --json`: open, read, select, profile, SIS and NFW fits,
zeta, output) <= 4x the read floor (issue 5) and <= 2x (issue 17); the Kaiser-Squires map at 512 x 512
under 1 s. Wall and CPU time are both printed (best and median of interleaved repeats): the engine sums
parts of a block on threads (lensmass.core.shear_kernel.KERNEL_THREADS, default the CPUs this process may
use), so on an idle machine wall < CPU, and on a loaded one (check the load average printed) CPU time is
the steadier figure. ``--threads 1`` gives the one-thread figures. The timed runs follow a warm-up run, so
numba's compilation of the engine is not in them; the first run in a fresh process (imports, the compiled
engine loaded from numba's disk cache) and with an empty cache (compiling it, once per installation) are
printed apart.
Run: python benchmarks/bench_shear.py [N_GALAXIES] [--repeat 7] [--threads N] [--no-first]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's lensmass, not the installed one


def _best_of(fn, repeat=3):
    """Best wall-clock and best CPU time (process_time: robust when others load the machine)."""
    wall, cpu = [], []
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        out = fn()
        wall.append(time.perf_counter() - t0)
        cpu.append(time.process_time() - c0)
    return min(wall), min(cpu), out


def _stage_times(path, ra0, dec0, cosmo, repeat):
    """Best CPU time of opening the file and of each stage the streamed analysis (the route of the command)
    reports through its progress callback ("source distances and binned profile" includes the reading)."""
    from lensmass.core.shear_analysis import analyse_shear_blocks
    from lensmass.io.catalog_stream import CatalogFiles

    best: dict[str, float] = {}
    for _ in range(repeat):
        c0 = time.process_time()
        files = CatalogFiles(path, None, need_z=True)
        marks = [(time.process_time(), "open")]
        analyse_shear_blocks(files, z_l=0.35, center_ra=ra0, center_dec=dec0, r_min=1, r_max=25, n_bootstrap=0,
                             cosmology=cosmo, progress=lambda f, m: marks.append((time.process_time(), m)))
        spans = {"open": marks[0][0] - c0}
        spans.update({m0: t1 - t0 for (t0, m0), (t1, _) in zip(marks[1:], marks[2:])})
        for name, t in spans.items():
            best[name] = min(best.get(name, np.inf), t)
    return best


def _first_runs(path, args: list[str]) -> list[tuple[str, float, float]]:
    """Wall and CPU seconds of ``lensmass shear`` in a fresh process, with numba's disk cache and with an empty
    one (NUMBA_CACHE_DIR pointing at a new folder)."""
    import os
    import resource
    import subprocess

    root = str(Path(__file__).resolve().parents[1])
    code = f"import sys; sys.path.insert(0, {root!r}); from lensmass.cli import main; sys.exit(main({args!r}))"
    out = []
    with tempfile.TemporaryDirectory() as cache:
        for label, env in (("numba's disk cache", {}), ("an empty cache (compiling)", {"NUMBA_CACHE_DIR": cache})):
            before = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-c", code], check=True, stdout=subprocess.DEVNULL,
                           env={**os.environ, **env})
            after = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpu = after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime
            out.append((label, time.perf_counter() - t0, cpu))
    return out


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("n", nargs="?", type=int, default=2_000_000, help="galaxies (default 2e6)")
    parser.add_argument("--repeat", type=int, default=7)
    parser.add_argument("--threads", type=int, default=None, help="threads of the engine (default: the CPUs)")
    parser.add_argument("--no-first", action="store_true", help="skip the first runs in fresh processes")
    args = parser.parse_args(argv)
    import os

    from lensmass.core import shear_kernel

    shear_kernel.KERNEL_THREADS = args.threads

    from astropy.table import Table

    from lensmass.cli import main as cli_main
    from lensmass.core.cosmology import resolve_cosmology
    from lensmass.core.mass_map import mass_map
    from lensmass.core.shear_simulation import simulate_shear_catalog
    from lensmass.io.catalogs import write_shear_catalog_fits

    cosmo = resolve_cosmology("Planck18")
    ra0, dec0 = 141.3720, 18.2705
    sim = simulate_shear_catalog(center_ra=ra0, center_dec=dec0, z_l=0.35, cosmo=cosmo, field_arcsec=3600.0,
                                 n_galaxies=args.n, photo_z_scatter=0.05, seed=1)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "big.fits"
        write_shear_catalog_fits(path, {"RA": sim["ra"], "DEC": sim["dec"], "E1": sim["e1"].astype(np.float32),
                                        "E2": sim["e2"].astype(np.float32), "WEIGHT": sim["weight"].astype(np.float32),
                                        "Z_PHOT": sim["z"].astype(np.float32)})

        def baseline():
            t = Table.read(path)
            return sum(float(np.asarray(t[c]).sum()) for c in t.colnames)

        command = ["shear", str(path), "--zl", "0.35", "--center-sky", f"{ra0},{dec0}", "--rmin", "1", "--rmax", "25",
                   "--bootstrap", "0", "--json"]

        def full_run():
            import contextlib
            import io

            with contextlib.redirect_stdout(io.StringIO()):
                code = cli_main(command)
            assert code == 0

        baseline()  # warm file cache and imports
        full_run()
        # interleaved, so that a change in the machine's speed during the run touches both alike
        load = os.getloadavg()[0]
        base, full = [], []
        for _ in range(args.repeat):
            base.append(_best_of(baseline, 1)[:2])
            full.append(_best_of(full_run, 1)[:2])
        stages = _stage_times(path, ra0, dec0, cosmo, args.repeat)
        first = [] if args.no_first else _first_runs(path, command)
    (w_base, c_base), (w_full, c_full) = np.min(base, axis=0), np.min(full, axis=0)
    (mw_base, mc_base), (mw_full, mc_full) = np.median(base, axis=0), np.median(full, axis=0)

    print(f"galaxies: {args.n}; engine threads {shear_kernel._threads()}; load average before the runs {load:.1f} "
          f"on {os.cpu_count()} CPUs")
    print(f"read floor (astropy Table.read of the 6 columns + a sum of each): best wall {w_base:.3f} s, "
          f"cpu {c_base:.3f} s (median wall {mw_base:.3f}, cpu {mc_base:.3f})")
    print(f"lensmass shear FILE --json (open, read, select, profile, SIS + NFW fits, zeta, output): best wall "
          f"{w_full:.3f} s, cpu {c_full:.3f} s (median wall {mw_full:.3f}, cpu {mc_full:.3f})")
    print(f"ratio to the read floor, best: wall {w_full / w_base:.2f}, cpu {c_full / c_base:.2f}; median: wall "
          f"{mw_full / mw_base:.2f}, cpu {mc_full / mc_base:.2f} (targets <= 4, issue 5; <= 2, issue 17)")
    print("  stages (best CPU ms; in units of the floor's CPU): "
          + ", ".join(f"{name} {t * 1e3:.0f} ({t / c_base:.2f})" for name, t in stages.items()))
    for label, wall, cpu in first:
        print(f"  first run in a fresh process (imports included), with {label}: wall {wall:.2f} s, cpu {cpu:.2f} s")

    x, y = sim["x_arcsec"], sim["y_arcsec"]
    e1, e2 = sim["e1"], sim["e2"]
    mass_map(x, y, e1, e2, n_pixels=512, smoothing_arcsec=60.0)  # warm up FFT plans
    w_map, c_map, _ = _best_of(lambda: mass_map(x, y, e1, e2, n_pixels=512, smoothing_arcsec=60.0), args.repeat)
    print(f"mass map 512 x 512 (E + B) from {args.n} galaxies: wall {w_map:.3f} s (cpu {c_map:.3f} s); "
          f"ratio to the 1 s target: {w_map:.2f}")
    w_noise, _, _ = _best_of(lambda: mass_map(x, y, e1, e2, n_pixels=512, smoothing_arcsec=60.0, n_noise=8), 1)
    print(f"  with an 8-realisation noise map: {w_noise:.3f} s (no target; about {(w_noise - w_map) / 8:.3f} s "
          "per realisation)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
