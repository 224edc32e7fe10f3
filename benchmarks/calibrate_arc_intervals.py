"""The unpaired-arc interval's 1-sigma floor (lensmass.core.lone_arc.UNPAIRED_1SIGMA_LOW_RATIO) and coverage by route.

    python benchmarks/calibrate_arc_intervals.py floor REC.jsonl ...   # the floor from records
    python benchmarks/calibrate_arc_intervals.py check REC.jsonl ...   # truth inside 1/2 sigma by maker, kind, route

REC.jsonl: ``benchmarks/record_arc_intervals.py`` runs (both field makers; the route each answer took).

``floor``: ln(theta_E / radius) of the unpaired answers (``route`` "unpaired") on arc lenses only (stress "one arc",
"two arcs"; ours "arc", "arc+neighbour", "arc+star"), each field maker weighted alike; its 15.87% quantile, never below
the isothermal 1/2 (a lone arc lies at theta_E + beta with beta < theta_E: common practice). The "unpaired" table pools
ring parts (theta_E at the radius, inside its upper side) with these arcs; the floor lets its lower side reach them.

Measured 2026-12-04 (h21c, main da46144). Tuning records, seeds 645000-645489 (stress arcs, 140 lenses), 645000-645089
(ours arcs, 90), 646000-646139 (stress ring kinds, quads, folds, 100), 646000-646044 (ours rings, 45): 78 unpaired
arc-lens answers (56 stress, 22 ours), 15.87% quantile 0.577 -> 0.58 (was the table's 0.67). Coverage: the
``check`` command on the same records.
"""

from __future__ import annotations

import collections
import json
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from lensmass.core.ring_interval import SIGMA_PROBABILITIES  # noqa: E402

ARC_KINDS = ("one arc", "two arcs", "arc", "arc+neighbour", "arc+star")
#: Probability of the floor: the 1-sigma lower side the finder states (a normal's 15.87%, common practice).
FLOOR_PROBABILITY = float(SIGMA_PROBABILITIES[1])


def _rows(paths: list[str]) -> list[dict]:
    return [json.loads(line) for p in paths for line in Path(p).read_text().splitlines() if line.strip()]


def weighted_quantile(x: np.ndarray, w: np.ndarray, p: float) -> float:
    """Quantile ``p`` of ``x`` with weights ``w`` (midpoint rule on the weighted CDF)."""
    order = np.argsort(x)
    x, w = x[order], w[order]
    cdf = (np.cumsum(w) - 0.5 * w) / w.sum()
    return float(np.interp(p, cdf, x))


def floor(paths: list[str]) -> float:
    rows = [r for r in _rows(paths) if r.get("found") and r.get("route") == "unpaired" and r["kind"] in ARC_KINDS]
    gens = collections.Counter(r["gen"] for r in rows)
    x = np.array([np.log(r["truth"] / r["arc"]) for r in rows])
    w = np.array([1.0 / gens[r["gen"]] for r in rows])
    for g, n in sorted(gens.items()):
        sel = np.array([r["gen"] == g for r in rows])
        print(f"{g}: {n} unpaired arc-lens answers, theta_E / radius median {np.exp(np.median(x[sel])):.3f}, "
              f"15.87% {np.exp(np.quantile(x[sel], FLOOR_PROBABILITY)):.3f}")
    q = max(0.5, float(np.exp(weighted_quantile(x, w, FLOOR_PROBABILITY))))
    print(f"floor (makers weighted alike, not below 1/2): {q:.3f}")
    return q


def check(paths: list[str]) -> None:
    out: dict[tuple, list[int]] = collections.defaultdict(lambda: [0, 0, 0])
    for r in _rows(paths):
        if not r.get("found"):
            continue
        lo2, lo1, hi1, hi2 = r["bounds"]
        for key in ((r["gen"], "all"), (r["gen"], r["kind"]), (r["gen"], "route " + r["route"])):
            o = out[key]
            o[0] += 1
            o[1] += lo1 <= r["truth"] <= hi1
            o[2] += lo2 <= r["truth"] <= hi2
    for key in sorted(out):
        n, i1, i2 = out[key]
        print(f"{' / '.join(key):34s} n={n:4d}  inside 1/2 sigma {100 * i1 / n:3.0f}% / {100 * i2 / n:3.0f}%")


if __name__ == "__main__":
    {"floor": floor, "check": check}[sys.argv[1]](sys.argv[2:])
