"""Speed of the ring finder on a 2048 x 2048 field with its automatic masks (issue 14: under 0.5 s).

Run: python benchmarks/bench_ring_speed.py [--repeat 5] [--profile]

The field: an SIE ring (theta_E 1.4", 0.2" pixels) behind an n = 4 lens galaxy, a compact neighbour
beside the ring and a Moffat star 4" from the lens (the finder masks both). Printed: the finder's best
wall time and the CPU time of that call (time.process_time, all threads), the baseline of one
full-image bincount azimuthal profile timed interleaved with it, their ratio, the ratio to the 0.5 s
target, and the share of the CPU time spent in the lens-light fits. This machine is shared: judge by
CPU time, and compare a change with its parent by alternating runs (DEVELOPERS.md).
--profile prints the 20 functions with the most time of their own (cProfile).

Measured (2026-12-03, 2 shared cores, load average 1.5-2.4, alternating runs with main, best of 5):
this branch 0.45-0.49 s CPU (wall the same; medians 0.47-0.51 s), lens-light fits 0.28-0.30 s (~60%);
main 0.90-1.03 s CPU (fits 0.64-0.75 s, 71%); baseline one full-image bincount 0.062-0.079 s CPU, so
the finder costs 6.2-7.5 bincounts (main 12.4-14.7); target 0.5 s: x0.90-0.99 (thin margin on a busy machine).
What changed: the lens-light fit's solver (a Levenberg-Marquardt loop on the soft-L1 cost instead of
scipy's trust-region solver, whose bookkeeping cost as much as the model), the Jacobian reusing the
model's powers and exponentials, the refit with the ring masked starting from the first fit, ridge
fits by MINPACK first, and no light-peak search when the masks choose the lens.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's lensmass, not an installed one

TARGET_S = 0.5


def make_field() -> np.ndarray:
    from lensmass.core import raytrace as rt

    sim = rt.simulate_field(shape=(2048, 2048), pixel_scale_arcsec=0.2, center_x=1023.8, center_y=1024.3,
                            lenses=[rt.SIELens(1.4, 0.85, 30.0)],
                            sources=[rt.SersicSource(rt.flux_from_mag(24.0), 0.15, 1.0, 0.8, 10.0, 0.04, -0.03)],
                            foreground=[rt.SersicSource(rt.flux_from_mag(20.5), 1.2, 4.0, 0.8, 30.0),
                                        rt.SersicSource(rt.flux_from_mag(21.0), 0.3, 1.5, 0.8, 0.0, 2.3, 1.1)],
                            point_sources=[], oversample=1, seed=1)
    img = sim.image.astype(np.float32)
    yy, xx = np.mgrid[1000:1080, 960:1040]
    img[1000:1080, 960:1040] += (800 * rt.psf_profile(np.hypot(xx - 1000.0, yy - 1040.0) * 0.2, 0.8, "moffat")
                                 * 0.04).astype(np.float32)  # a Moffat star 4" from the lens
    return img


def _timed(fn):
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    return time.perf_counter() - w0, time.process_time() - c0, out


def main(repeat: int = 5, profile: bool = False) -> None:
    import lensmass.core.lenslight as lenslight
    import lensmass.core.ringfinder as ringfinder

    img = make_field()
    yy, xx = np.indices(img.shape)

    def baseline():
        rr = np.hypot(xx - 1024, yy - 1024).astype(np.int64)
        return np.bincount(rr.ravel(), img.ravel())

    fit_cpu = [0.0]
    fit = lenslight.fit_lens_light

    def timed_fit(*a, **k):
        c0 = time.process_time()
        try:
            return fit(*a, **k)
        finally:
            fit_cpu[0] += time.process_time() - c0

    ringfinder.find_ring(img)  # warm the imports and caches
    runs, bases = [], []
    ringfinder.fit_lens_light = timed_fit
    try:
        for _ in range(repeat):
            fit_cpu[0] = 0.0
            w, c, r = _timed(lambda: ringfinder.find_ring(img))
            runs.append((w, c, fit_cpu[0]))
            bases.append(_timed(baseline)[:2])
    finally:
        ringfinder.fit_lens_light = fit
    w, c, f = min(runs)
    wb, cb = min(bases)
    n_masked = r.masks.n_masked if r.masks is not None else 0
    print(f"ring finder with masks, 2048 x 2048: {w:.3f} s wall, {c:.3f} s CPU (target {TARGET_S} s: "
          f"x{c / TARGET_S:.2f} by CPU); lens-light fits {f:.3f} s CPU ({f / c:.0%}); baseline one full-image "
          f"bincount profile {wb:.3f} s wall, {cb:.3f} s CPU (finder x{c / cb:.1f} by CPU); radius "
          f"{r.radius_pix * 0.2:.3f} +- {r.radius_err_pix * 0.2:.3f}\" (truth 1.4\"), {n_masked} object(s) masked; "
          f"median of {repeat}: {np.median([x[1] for x in runs]):.3f} s CPU")
    if profile:
        import cProfile
        import pstats

        prof = cProfile.Profile()
        prof.runcall(ringfinder.find_ring, img)
        pstats.Stats(prof).sort_stats("tottime").print_stats(20)


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--profile", action="store_true")
    args = parser.parse_args()
    main(args.repeat, args.profile)
