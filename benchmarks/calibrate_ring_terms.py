"""Calibrate a ring's error terms (lensmass.core.ring_terms) by coverage on both generators (issue 14).

    python benchmarks/calibrate_ring_terms.py record stress|ours FIRST_SEED N_LENSES OUT.jsonl
    python benchmarks/calibrate_ring_terms.py fit REC.jsonl [REC.jsonl ...]

``record`` runs the finder on lenses of the stress generator (benchmarks/stress_fields.py, through FITS as the
command line reads a file) or ours (lensmass.core.realistic_fields), all lens kinds in turn, and keeps for each ring
answer (:func:`lensmass.core.interval_scale.answer_type` "full ring" or "partial ring") the truth, the radius, the
error measured before the ring terms (``radius_internal_err_pix``) and the ridge scatter (``fit_rms_pix``). ``fit``
grids (floor, measured share, scatter share) of :func:`lensmass.core.ring_terms.ring_error` and prints the five
choices whose coverage is nearest a normal's 68.27% / 95.45% (scipy.stats.norm; common practice) in every third of
scatter / radius and of measured error / radius and on every generator, 2-sigma sides joining the tail of
:func:`lensmass.core.ring_terms.ring_tail_share`. Tuning seeds only (h28d: 924000-931999); never 700000-799999.

Measured 2026-12-05 (h28d, main 134dd82's records; the figures in lensmass.core.ring_terms' docstring).
"""

from __future__ import annotations

import itertools
import json
import sys
import tempfile
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from lensmass.core.ring_interval import RING_TAIL_SHARE  # noqa: E402
from lensmass.core.ring_terms import ring_tail_share  # noqa: E402

RING_TYPES = ("full ring", "partial ring")


def _answers(gen: str, first: int, n: int):
    from lensmass.core.ringfinder import find_ring

    if gen == "ours":
        from lensmass.core.realistic_fields import make_sample

        for c in make_sample(n, 0, first_seed=first):
            yield c.truth, find_ring(c.image)
        return
    from stress_fields import LENS_KINDS, make_stress_field, write_fits

    from lensmass.core.einstein import find_ring_on_image
    from lensmass.io.images import load_image

    with tempfile.TemporaryDirectory() as tmp:
        for i in range(n):
            f = make_stress_field(first + i, LENS_KINDS[i % 7])
            rng = np.random.default_rng([f.truth["seed"], 99])
            path = Path(tmp) / "f.fits"
            write_fits(f, path, int16=bool(rng.uniform() < 1 / 3), rotate_deg=float(rng.uniform(0, 360)))
            yield f.truth, find_ring_on_image(load_image(path))


def record(gen: str, first: int, n: int, out: str) -> None:
    from lensmass.core.interval_scale import answer_type

    with open(out, "w") as fh:
        for truth, r in _answers(gen, first, n):
            if r.found and answer_type(r) in RING_TYPES:
                fh.write(json.dumps(dict(gen=gen, truth=float(truth["radius_pix"]), r=float(r.radius_pix),
                                         measured=float(r.radius_internal_err_pix), rms=float(r.fit_rms_pix),
                                         coverage=float(r.coverage))) + "\n")


def _thirds(v: np.ndarray) -> list[np.ndarray]:
    e = np.quantile(v, [1 / 3, 2 / 3])
    return [v <= e[0], (v > e[0]) & (v <= e[1]), v > e[1]]


def fit(paths: list[str]) -> None:
    rows = [json.loads(line) for p in paths for line in Path(p).read_text().splitlines() if line.strip()]
    groups = []
    for gen in sorted({d["gen"] for d in rows}):
        g = [d for d in rows if d["gen"] == gen]
        r, t = np.array([d["r"] for d in g]), np.array([d["truth"] for d in g])
        m = np.array([d["measured"] for d in g])
        rms = np.nan_to_num(np.array([d["rms"] for d in g]))
        tail = np.array([ring_tail_share(d["coverage"], RING_TAIL_SHARE) for d in g])
        bins = [np.ones(len(g), bool)] + _thirds(rms / r) + _thirds(m / r)
        groups.append((gen, r, np.abs(t - r), m, rms, tail, bins))

    def coverage(par, grp):
        f, a, s = par
        _, r, off, m, rms, tail, _ = grp
        s1 = np.sqrt((f * r) ** 2 + (a * m) ** 2 + (s * rms) ** 2)
        return off <= s1, off <= np.hypot(2 * s1, tail * r)

    def loss(par):
        total = 0.0
        for grp in groups:
            in1, in2 = coverage(par, grp)
            for b in grp[-1]:
                total += b.sum() * ((in1[b].mean() - 0.6827) ** 2 + 3 * max(0.0, 0.94 - in2[b].mean()) ** 2)
        return total

    grid = itertools.product((0.0, 0.005, 0.01, 0.015, 0.02), (0.3, 0.5, 0.6, 0.7, 0.8, 1.0), (0.1, 0.2, 0.3, 0.4, 0.5))
    for par in sorted(grid, key=loss)[:5]:
        cov = [f"{grp[0]} {np.mean(coverage(par, grp)[0]):.0%}/{np.mean(coverage(par, grp)[1]):.0%}" for grp in groups]
        print(f"floor {par[0]}, measured {par[1]}, scatter {par[2]}: " + ", ".join(cov))


if __name__ == "__main__":
    if sys.argv[1] == "record":
        record(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]), sys.argv[5])
    else:
        fit(sys.argv[2:])
