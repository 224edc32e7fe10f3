"""Stacked galaxy-galaxy lensing: coverage of the mean-M200 interval, and speed at survey scale.

  --coverage N   N seeded realisations of an NFW lens population (200 lenses, M200 drawn in
                 10^13.5-10^14.2, z_l 0.2-0.4, 80 000 sources on 2.25 deg^2, sigma_e 0.25,
                 600 random points): how often the 68% and 95% intervals hold the true M200
                 (issue 17: the 95% interval in at least 90 of 100). CPU time beside wall time.
  --coverage-stars N   the same with a central point mass (the stars, M_* drawn in 10^12-10^12.7 Msun)
                 in every lens, fitted with M200 (flat prior on M_*; 8 bins from 0.05 Mpc): coverage of
                 both parameters' 68% and 95% intervals.
  --speed        10^4 lenses (+ randoms) over 10^7 sources streamed from a partitioned Parquet
                 folder in /tmp: time (wall and CPU), pairs per second, peak memory.
Run: /work/venv/bin/python benchmarks/bench_stack.py --coverage 100 --coverage-stars 100 --speed
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


def coverage(n: int) -> None:
    from lensmass.core.cosmology import resolve_cosmology
    from lensmass.core.shear_analysis import ArrayBlocks
    from lensmass.core.stack_analysis import analyse_stack
    from lensmass.core.stack_simulation import simulate_stack

    cosmo = resolve_cosmology("Planck18")
    in95 = in68 = 0
    ratios = []
    w0, c0 = time.perf_counter(), time.process_time()
    for seed in range(n):
        m = 10 ** np.random.default_rng(1000 + seed).uniform(13.5, 14.2)
        s = simulate_stack(n_lenses=200, n_sources=80000, m200_msun=m, cosmo=cosmo, ra_range=(30.0, 31.5),
                           dec_range=(-0.75, 0.75), seed=seed)
        r = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"],
                          ArrayBlocks(s["ra"], s["dec"], s["e1"], s["e2"], s["weight"], s["z"]), cosmology=cosmo,
                          r_min_mpc=0.1, r_max_mpc=1.5, n_bins=6, n_patches=24, n_randoms=600, seed=seed)
        lo, hi = r["intervals95"]["mean_halo_m200_msun"]
        l68, h68 = r["intervals68"]["mean_halo_m200_msun"]
        in95 += lo <= m <= hi
        in68 += l68 <= m <= h68
        ratios.append(r["mean_halo_m200_msun"] / m)
        print(f"  seed {seed:3d}: true {m:.3e}, median {r['mean_halo_m200_msun']:.3e}, 95% [{lo:.3e}, {hi:.3e}]",
              flush=True)
    print(f"coverage over {n} realisations: 68% interval {in68}/{n} ({100 * in68 / n:.0f}%), "
          f"95% interval {in95}/{n} ({100 * in95 / n:.0f}%); target 95% in >= {int(0.9 * n)}")
    print(f"median / true: mean {np.mean(ratios):.3f}, median {np.median(ratios):.3f}, scatter {np.std(ratios):.3f}")
    print(f"time: wall {time.perf_counter() - w0:.1f} s, cpu {time.process_time() - c0:.1f} s")


def coverage_stars(n: int) -> None:
    from lensmass.core.catalog_arrays import ArrayBlocks
    from lensmass.core.cosmology import resolve_cosmology
    from lensmass.core.stack_analysis import analyse_stack
    from lensmass.core.stack_simulation import simulate_stack

    cosmo = resolve_cosmology("Planck18")
    hits = {"mean_halo_m200_msun": [0, 0], "point_mass_msun": [0, 0]}
    ratios = {k: [] for k in hits}
    w0, c0 = time.perf_counter(), time.process_time()
    for seed in range(n):
        truth = {"mean_halo_m200_msun": 10 ** np.random.default_rng(1000 + seed).uniform(13.5, 14.2),
                 "point_mass_msun": 10 ** np.random.default_rng(2000 + seed).uniform(12.0, 12.7)}
        s = simulate_stack(n_lenses=200, n_sources=80000, m200_msun=truth["mean_halo_m200_msun"], cosmo=cosmo,
                           ra_range=(30.0, 31.5), dec_range=(-0.75, 0.75), point_mass_msun=truth["point_mass_msun"],
                           seed=seed)
        r = analyse_stack(s["lens_ra"], s["lens_dec"], s["lens_z"],
                          ArrayBlocks(s["ra"], s["dec"], s["e1"], s["e2"], s["weight"], s["z"]), cosmology=cosmo,
                          r_min_mpc=0.05, r_max_mpc=1.5, n_bins=8, n_patches=24, n_randoms=600, seed=seed,
                          point_mass_msun="fit")
        line = []
        for key, true in truth.items():
            lo, hi = r["intervals95"][key]
            l68, h68 = r["intervals68"][key]
            hits[key][0] += l68 <= true <= h68
            hits[key][1] += lo <= true <= hi
            ratios[key].append(r["medians"][key] / true)
            line.append(f"{key} true {true:.3e} median {r['medians'][key]:.3e} 95% [{lo:.3e}, {hi:.3e}]")
        print(f"  seed {seed:3d}: " + "; ".join(line), flush=True)
    for key, (h68, h95) in hits.items():
        print(f"{key}: 68% interval {h68}/{n} ({100 * h68 / n:.0f}%), 95% interval {h95}/{n} ({100 * h95 / n:.0f}%); "
              f"median / true {np.median(ratios[key]):.3f}")
    print(f"time: wall {time.perf_counter() - w0:.1f} s, cpu {time.process_time() - c0:.1f} s")


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
    parser.add_argument("--coverage", type=int, default=0, metavar="N")
    parser.add_argument("--coverage-stars", type=int, default=0, metavar="N")
    parser.add_argument("--speed", action="store_true")
    parser.add_argument("--lenses", type=int, default=10_000)
    parser.add_argument("--sources", type=int, default=10_000_000)
    parser.add_argument("--randoms-per-lens", type=int, default=2)
    args = parser.parse_args(argv)
    if args.coverage:
        coverage(args.coverage)
    if args.coverage_stars:
        coverage_stars(args.coverage_stars)
    if args.speed:
        tmp = Path(tempfile.mkdtemp(prefix="lensmass_stack_", dir="/tmp"))
        try:
            speed(args.lenses, args.sources, args.randoms_per_lens, tmp)
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
