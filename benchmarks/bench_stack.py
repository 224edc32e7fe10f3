"""Stacked galaxy-galaxy lensing: coverage of the stacked fit's intervals, and speed at survey scale.

  --coverage N   N seeded realisations of an NFW lens population (200 lenses, M200 drawn in
                 10^13.5-10^14.2, z_l 0.2-0.4, 80 000 sources on 2.25 deg^2, sigma_e 0.25,
                 600 random points, 24 jackknife patches, 6 bins 0.1-1.5 Mpc): how often the 68% and 95%
                 intervals hold the true M200 (issue 17: 60-76% and >= 90%; the 95% in at least 90 of 100).
  --coverage-stars N   the same with a central point mass (the stars, M_* drawn in 10^12-10^12.7 Msun)
                 in every lens, fitted with M200 (flat prior on M_*; 8 bins from 0.05 Mpc).
  --coverage-c N   c200 free: every lens has one c200 drawn log-normally (0.15 dex) about Duffy et al.
                 (2008) at z = 0.3 and the true M200; fitted with M200 under the default prior (that relation,
                 0.15 dex); coverage of M200 and c200.
  --coverage-c-flat N   c200 drawn uniform in 2-14, fitted under a flat prior on [2, 14].
  --coverage-c-stars N   c200 free (as --coverage-c) and the point mass fitted (as --coverage-stars).
  --seeds START  first seed of the sweeps (default 0; the seeds 0-99 were used while tuning, the
                 ranges 520000-520099 and 620000-620099 only to confirm).
  --speed        10^4 lenses (+ randoms) over 10^7 sources streamed from a partitioned Parquet
                 folder in /tmp: time (wall and CPU), pairs per second, peak memory.
CPU time is printed beside wall time (the machine is shared).
Run: python benchmarks/bench_stack.py --coverage 100 --seeds 520000
"""

from __future__ import annotations

import argparse
import resource
import shutil
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's lensmass, here and in workers

#: Sweep name: (point mass fitted, concentration: None fixed, "relation" or "flat").
MODES = {"m200": (False, None), "stars": (True, None), "c": (False, "relation"), "c-flat": (False, "flat"),
         "c-stars": (True, "relation")}


def coverage(n: int, start: int, mode: str) -> dict[str, tuple[int, int]]:
    """Run one sweep; print each realisation and the coverage of every fitted parameter."""
    from lensmass.core.catalog_arrays import ArrayBlocks
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.cosmology import little_h, resolve_cosmology
    from lensmass.core.stack_analysis import analyse_stack
    from lensmass.core.stack_simulation import simulate_stack

    stars, free_c = MODES[mode]
    cosmo = resolve_cosmology("Planck18")
    c_of_m, _ = concentration_relation("duffy08")
    hits: dict[str, list[int]] = {}
    ratios: dict[str, list[float]] = {}
    w0, c0 = time.perf_counter(), time.process_time()
    for seed in range(start, start + n):
        truth = {"mean_halo_m200_msun": 10 ** np.random.default_rng(1000 + seed).uniform(13.5, 14.2)}
        sim: dict = {}
        fit: dict = {}
        if stars:
            truth["point_mass_msun"] = 10 ** np.random.default_rng(2000 + seed).uniform(12.0, 12.7)
            sim["point_mass_msun"], fit["point_mass_msun"] = truth["point_mass_msun"], "fit"
        if free_c == "relation":
            scatter = 10 ** np.random.default_rng(3000 + seed).normal(0.0, 0.15)
            truth["mean_halo_c200"] = float(c_of_m(truth["mean_halo_m200_msun"], 0.3, little_h(cosmo))) * scatter
            fit["free_concentration"] = True
        elif free_c == "flat":
            truth["mean_halo_c200"] = float(np.random.default_rng(3000 + seed).uniform(2.0, 14.0))
            fit.update(free_concentration=True, concentration_prior=(2.0, 14.0))
        if free_c:
            sim["concentration"] = truth["mean_halo_c200"]
        s = simulate_stack(n_lenses=200, n_sources=80000, m200_msun=truth["mean_halo_m200_msun"], cosmo=cosmo,
                           ra_range=(30.0, 31.5), dec_range=(-0.75, 0.75), seed=seed, **sim)
        bins = {"r_min_mpc": 0.05, "n_bins": 8} if stars else {"r_min_mpc": 0.1, "n_bins": 6}
        r = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"],
                          ArrayBlocks(s["ra"], s["dec"], s["e1"], s["e2"], s["weight"], s["z"]), cosmology=cosmo,
                          r_max_mpc=1.5, n_patches=24, n_randoms=600, seed=seed, **bins, **fit)
        line = []
        for key, true in truth.items():
            lo, hi = r["intervals95"][key]
            l68, h68 = r["intervals68"][key]
            h = hits.setdefault(key, [0, 0])
            h[0] += l68 <= true <= h68
            h[1] += lo <= true <= hi
            ratios.setdefault(key, []).append(r["medians"][key] / true)
            line.append(f"{key} true {true:.3e} median {r['medians'][key]:.3e} 95% [{lo:.3e}, {hi:.3e}]")
        print(f"  seed {seed}: " + "; ".join(line), flush=True)
    print(f"sweep {mode}, seeds {start}-{start + n - 1}:")
    for key, (h68, h95) in hits.items():
        print(f"  {key}: 68% interval {h68}/{n} ({100 * h68 / n:.0f}%), 95% interval {h95}/{n} "
              f"({100 * h95 / n:.0f}%); median / true {np.median(ratios[key]):.3f} (target 60-76% and >= 90%)")
    print(f"  time: wall {time.perf_counter() - w0:.1f} s, cpu {time.process_time() - c0:.1f} s", flush=True)
    return {k: (h[0], h[1]) for k, h in hits.items()}


def speed(n_lenses: int, n_sources: int, randoms_per_lens: int, tmp: Path) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    from lensmass.core.cosmology import resolve_cosmology
    from lensmass.core.stack_analysis import analyse_stack
    from lensmass.io.catalog_stream import CatalogFiles

    rng = np.random.default_rng(7)
    ra_range, dec_range = (100.0, 110.0), (-5.0, 5.0)  # 100 deg^2
    folder = tmp / "sources.parquet"
    folder.mkdir()
    per_file = 1_000_000
    for k in range(0, n_sources, per_file):
        m = min(per_file, n_sources - k)
        e = rng.normal(0, 0.25, (2, m)).clip(-0.9, 0.9)
        pq.write_table(pa.table({
            "ra": rng.uniform(*ra_range, m), "dec": np.degrees(np.arcsin(rng.uniform(
                np.sin(np.radians(dec_range[0])), np.sin(np.radians(dec_range[1])), m))),
            "e1": e[0].astype(np.float32), "e2": e[1].astype(np.float32),
            "w": np.ones(m, np.float32), "z": (0.7 * rng.gamma(2.0, 1.0, m) ** (1 / 1.5)).astype(np.float32)}),
            folder / f"part-{k // per_file:04d}.parquet")
    lra = rng.uniform(ra_range[0] + 0.2, ra_range[1] - 0.2, n_lenses)
    ldec = rng.uniform(dec_range[0] + 0.2, dec_range[1] - 0.2, n_lenses)
    lz = rng.uniform(0.2, 0.4, n_lenses)
    cosmo = resolve_cosmology("Planck18")
    files = CatalogFiles(folder, "weight=w")
    w0, c0 = time.perf_counter(), time.process_time()
    r = analyse_stack(lra, ldec, lz, files, cosmology=cosmo, r_min_mpc=0.05, r_max_mpc=2.0, n_bins=10,
                      n_patches=50, n_randoms=randoms_per_lens * n_lenses)
    wall, cpu = time.perf_counter() - w0, time.process_time() - c0
    pairs = sum(row["n_pairs"] for row in r["profile"])
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"stack {n_lenses} lenses + {r['n_randoms']} randoms over {n_sources} sources ({len(files.partitions)} "
          f"Parquet files): wall {wall:.1f} s, cpu {cpu:.1f} s; {pairs:.3g} lens-source pairs in the bins "
          f"({pairs / cpu:.3g} per CPU second, randoms' pairs not counted); peak memory {peak:.0f} MB")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    for mode in MODES:
        flag = "--coverage" if mode == "m200" else f"--coverage-{mode}"
        parser.add_argument(flag, type=int, default=0, metavar="N", dest=f"coverage_{mode.replace('-', '_')}")
    parser.add_argument("--seeds", type=int, default=0, metavar="START")
    parser.add_argument("--speed", action="store_true")
    parser.add_argument("--lenses", type=int, default=10_000)
    parser.add_argument("--sources", type=int, default=10_000_000)
    parser.add_argument("--randoms-per-lens", type=int, default=2)
    args = parser.parse_args(argv)
    for mode in MODES:
        n = getattr(args, f"coverage_{mode.replace('-', '_')}")
        if n:
            coverage(n, args.seeds, mode)
    if args.speed:
        tmp = Path(tempfile.mkdtemp(prefix="lensmass_stack_", dir="/tmp"))
        try:
            speed(args.lenses, args.sources, args.randoms_per_lens, tmp)
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
