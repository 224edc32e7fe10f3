"""Benchmark of the core estimate (issue: core engine).

Prints, for 10^5 random lenses, the time of ``lensmass.estimate`` (distances, Sigma_cr, Einstein mass,
SIS and the vectorised NFW inversion) against the floor of astropy computing just the three
angular-diameter distances for the same arrays, and the ratio. Targets: <= 5x for flat LCDM
(H0=70, Om0=0.3, no radiation: astropy's distances are analytic there), <= 0.5x for Planck18 (astropy
integrates numerically per element). Also 10^4 Monte Carlo samples for one lens (target < 0.2 s) and
the wall time of the ``lensmass estimate`` command including start-up (target < 1.5 s).

Run: python benchmarks/bench_estimate.py
"""

from __future__ import annotations

import subprocess
import sys
import time
import timeit

import numpy as np


def best_of(fn, repeat: int = 3) -> float:
    """Best wall time of ``repeat`` single calls (timeit from the standard library)."""
    return min(timeit.repeat(fn, number=1, repeat=repeat))


def main() -> None:
    from astropy.cosmology import FlatLambdaCDM, Planck18

    import lensmass
    from lensmass.core.cosmology import distance_grid

    n = 100_000
    rng = np.random.default_rng(42)
    z_l = rng.uniform(0.05, 1.0, n)
    z_s = z_l + rng.uniform(0.1, 2.5, n)
    theta = 10 ** rng.uniform(-0.3, 1.6, n)

    for label, cosmo, target in (("flat LCDM (H0=70, Om0=0.3)", FlatLambdaCDM(H0=70, Om0=0.3), 5.0),
                                 ("Planck18", Planck18, 0.5)):
        def floor():
            cosmo.angular_diameter_distance(z_l)
            cosmo.angular_diameter_distance(z_s)
            cosmo.angular_diameter_distance(z_l, z_s)

        t_build = time.perf_counter()
        distance_grid(cosmo)
        t_build = time.perf_counter() - t_build
        t_floor = best_of(floor, repeat=1 if cosmo is Planck18 else 3)
        t_est = best_of(lambda: lensmass.estimate(theta, z_l, z_s, cosmology=cosmo))
        ratio = t_est / t_floor
        verdict = "OK" if ratio <= target else "OVER TARGET"
        print(f"{label}: estimate of {n} lenses {t_est:.3f} s (distance table built once in {t_build:.3f} s); "
              f"astropy distances alone {t_floor:.3f} s; ratio {ratio:.2f} (target <= {target}) {verdict}")

    t_mc = best_of(lambda: lensmass.estimate(1.2, 0.3, 1.0, theta_e_err=0.05, z_l_err=0.01, z_s_err=0.05,
                                             samples=10_000))
    print(f"Monte Carlo, 10^4 samples, one lens: {t_mc:.3f} s (target < 0.2 s) ratio {t_mc / 0.2:.2f} of target")

    memory_per_draw()

    cmd = [sys.executable, "-m", "lensmass.cli", "estimate", "--theta-e", "1.2", "--zl", "0.3", "--zs", "1.0"]
    subprocess.run(cmd, capture_output=True)  # warm the bytecode cache
    t_cli = best_of(lambda: subprocess.run(cmd, capture_output=True, check=True))
    print(f"'lensmass estimate' wall time incl. start-up: {t_cli:.2f} s (target < 1.5 s) "
          f"ratio {t_cli / 1.5:.2f} of target")


def memory_per_draw() -> None:
    """Peak traced bytes per Monte Carlo draw, unchunked (2e5 draws) and chunked (2e6 draws).

    Baseline: 350 bytes a draw before the Monte Carlo ran in chunks (issue 15). Target: the
    chunked figure at or below lensmass.core.limits.MC_BYTES_PER_DRAW, which bounds --samples.
    """
    import tracemalloc

    import lensmass
    from lensmass.core.limits import MC_BYTES_PER_DRAW

    for n in (200_000, 2_000_000):
        tracemalloc.start()
        wall, cpu = time.perf_counter(), time.process_time()
        lensmass.estimate(1.4, 0.25, 0.9, theta_e_err=0.05, z_l_err=0.01, z_s_err=0.02, samples=n)
        wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
        peak = tracemalloc.get_traced_memory()[1] / n
        tracemalloc.stop()
        print(f"Monte Carlo memory, {n:.0e} draws: {peak:.0f} bytes/draw peak (baseline 350, ratio {peak / 350:.2f}; "
              f"limit used for --samples {MC_BYTES_PER_DRAW}); wall {wall:.2f} s, CPU {cpu:.2f} s")


if __name__ == "__main__":
    main()
