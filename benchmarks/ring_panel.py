"""The finder's answers on a fixed panel of generated cutouts, recorded and compared (issue 14).

Run: python benchmarks/ring_panel.py record OUT.json [FIRST_SEED] [N_LENSES] [N_NONLENSES]
     python benchmarks/ring_panel.py compare BEFORE.json AFTER.json

``record`` runs :func:`lensmass.core.ringfinder.find_ring` on the r-band image of seeds
FIRST_SEED... (default 71000, 102 lenses + 54 non-lenses, as ``tests/core/test_realistic_finder.py``)
and writes found, radius, error and confident for each. ``compare`` prints the figures of both runs
(found fraction, within 5%, 1/2-sigma coverage, confident non-lenses) and the largest change of any
answer, so a speed-only change can be shown to leave every answer as it was.

h14v (2026-12-03), the stated interval: records keep the bounds (``bounds_pix``) and coverage counts with them.
Main (fe00206) -> h14v: inside 1/2 sigma 77.7%/93.6% -> 83.0%/93.6% (rings 73%/94% -> 80%/90%: four rings biased
by a star or a neighbour, 2.6-5.9% off, now inside 1 sigma by their ridge scatter, one clean ring 1.9% off now
outside 2; arcs 82%/93% -> 87%/98%: two lone arcs inside the interval's longer upper side); radii, found and
confident identical on all 156.
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # this checkout's lensmass, not an installed one


def record(out: str, first_seed: int = 71000, n_lenses: int = 102, n_nonlenses: int = 54) -> None:
    from lensmass.core.errors import LensInputError
    from lensmass.core.realistic_fields import make_sample
    from lensmass.core.ring_interval import interval_bounds
    from lensmass.core.ringfinder import find_ring

    rows = []
    cpu0 = time.process_time()
    for i, c in enumerate(make_sample(n_lenses, n_nonlenses, first_seed=first_seed)):
        t0 = time.process_time()
        try:
            r = find_ring(c.image)
            row = dict(found=bool(r.found), confident=bool(r.confident), radius_pix=float(r.radius_pix),
                       radius_err_pix=float(r.radius_err_pix), bounds_pix=[float(b) for b in interval_bounds(r)])
        except LensInputError:
            row = dict(found=False, confident=False, radius_pix=float("nan"), radius_err_pix=float("nan"))
        row.update(seed=first_seed + i, kind=c.truth["kind"], is_lens=bool(c.truth["is_lens"]),
                   truth_pix=float(c.truth.get("radius_pix", float("nan")) or float("nan")),
                   hard=bool(c.truth["kind"] in ("ring+neighbour", "ring+star")
                             and c.truth["is_lens"] and c.truth["radius_pix"] >= 2.5 * c.psf_fwhm_pix),
                   cpu_s=time.process_time() - t0)
        rows.append(row)
    with open(out, "w") as fh:
        json.dump(rows, fh, indent=0)
    print(f"{len(rows)} cutouts, {time.process_time() - cpu0:.1f} s CPU")


def figures(rows) -> str:
    lens = [r for r in rows if r["is_lens"]]
    non = [r for r in rows if not r["is_lens"]]
    found = [r for r in lens if r["found"]]
    frac = np.array([r["radius_pix"] / r["truth_pix"] - 1 for r in found])
    # coverage by the stated interval (recorded bounds; a record made before them: radius -+ 1 and 2 errors)
    b = [r.get("bounds_pix") or [r["radius_pix"] + k * r["radius_err_pix"] for k in (-2, -1, 1, 2)] for r in found]
    in1 = np.array([lo1 <= r["truth_pix"] <= hi1 for r, (_, lo1, hi1, _) in zip(found, b)], bool)
    in2 = np.array([lo2 <= r["truth_pix"] <= hi2 for r, (lo2, _, _, hi2) in zip(found, b)], bool)
    hard = [r for r in rows if r["hard"]]
    hard_ok = sum(r["found"] and abs(r["radius_pix"] / r["truth_pix"] - 1) <= 0.05 for r in hard)
    return (f"{len(lens)} lenses: found {len(found) / len(lens):.1%}, within 5% {np.sum(np.abs(frac) <= 0.05)}"
            f" ({np.sum(np.abs(frac) <= 0.05) / len(lens):.1%}), inside 1/2 sigma {np.mean(in1):.1%}"
            f" / {np.mean(in2):.1%}; hard rings within 5% {hard_ok}/{len(hard)}; "
            f"confident non-lenses {sum(r['found'] and r['confident'] for r in non)}/{len(non)}; "
            f"CPU {np.mean([r['cpu_s'] for r in rows]):.2f} s a cutout")


def compare(before: str, after: str) -> None:
    a, b = (json.load(open(p)) for p in (before, after))
    print("before:", figures(a))
    print("after: ", figures(b))
    changed = 0
    for x, y in zip(a, b):
        same = x["found"] == y["found"] and x["confident"] == y["confident"]
        for k in ("radius_pix", "radius_err_pix"):
            u, v = x[k], y[k]
            same &= (np.isnan(u) and np.isnan(v)) or abs(u - v) <= 1e-9 * max(abs(u), 1e-300)
        if not same:
            changed += 1
            print(f"  seed {x['seed']} {x['kind']}: truth {x['truth_pix']:.2f}; found {x['found']}->{y['found']}, "
                  f"r {x['radius_pix']:.3f}->{y['radius_pix']:.3f} +- {x['radius_err_pix']:.3f}->"
                  f"{y['radius_err_pix']:.3f}, confident {x['confident']}->{y['confident']}")
    print(f"{changed} of {len(a)} answers changed (beyond 1e-9 relative)")


if __name__ == "__main__":
    if sys.argv[1] == "record":
        record(sys.argv[2], *(int(v) for v in sys.argv[3:6]))
    else:
        compare(sys.argv[2], sys.argv[3])
