"""Record the FITS ring finder's answers on the arc lenses of both field makers, with what the finder itself sees
(the route its answer took: lone arc, unpaired arc, arc with counter-image, arc pair, cross of four
images, ring; coverage, significance, the ridge points' mean direction, the arc's radius over the lens
light's size and over the seeing), for the arcs' interval calibration (benchmarks/calibrate_arc_intervals.py).

Run: python benchmarks/record_arc_intervals.py GEN FIRST_SEED N OUT.jsonl [KINDS]
GEN "stress": benchmarks/stress_fields.py lenses of kinds "one arc" and "two arcs", written to FITS (int16 for a third,
rotated) and read back as collect-style runs do; "ours": lensmass.core.realistic_fields arc kinds ("arc",
"arc+neighbour", "arc+star") through the finder on the r band. KINDS ("|"-separated) records those lens kinds instead
(e.g. "ring|quad|fold": the other kinds an arc's route also takes). N fields, seeds FIRST_SEED... (stress: seeds whose
index in the 7-kind cycle of stress_fields.LENS_KINDS is an arc kind, as bench_ring_stress.py assigns them).
Seeds: h20a tuned on 620000-624999, h21c on 645000-649999; 700000-799999 are never used.
"""

from __future__ import annotations

import json
import sys
import tempfile
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))


def features(r) -> dict:
    """What the finder saw for its answer ``r`` (a :class:`~lensmass.core.ring_result.RingResult`)."""
    from lensmass.core.ring_confidence import RING_COVERAGE
    from lensmass.core.ring_interval import interval_bounds
    from lensmass.core.ring_shapes import _mean_direction

    if not r.found:
        return dict(found=False)
    light = r.lens_light
    ok = light is not None and light.ok
    lone = bool(np.isfinite(r.lone_arc_radius_pix))
    msg = str(r.message)
    route = ("lone" if lone else "unpaired" if r.interval_shape_pix is not None
             else "cross" if r.error_from_images else "counter" if "counter-image" in msg
             else "pair" if msg.startswith("Arcs on opposite") else "paired" if r.paired
             else "ring" if r.coverage >= RING_COVERAGE else "single")
    return dict(found=True, route=route, radius=float(r.radius_pix), err=float(r.radius_err_pix),
                arc=float(r.lone_arc_radius_pix) if lone else float(r.radius_pix),
                bounds=[float(b) for b in interval_bounds(r)], coverage=float(r.coverage), score=float(r.score),
                direction=float(_mean_direction(r)[1]) if r.points_x.size else float("nan"),
                width=float(r.ring_width_pix), confident=bool(r.confident), kind_found=str(r.kind),
                r_eff=float(light.r_eff_pix) if ok else float("nan"), light_q=float(light.axis_ratio) if ok else float("nan"),
                psf_fit=float(light.psf_fwhm_pix) if ok else float("nan"), internal=float(r.radius_internal_err_pix),
                n_points=int(r.points_x.size), axis_ratio=float(r.axis_ratio), fit_rms=float(r.fit_rms_pix))


def run_stress(first: int, n: int, out: str, kinds: tuple[str, ...] = ("two arcs", "one arc")) -> None:
    from bench_ring_stress import run_fits  # the same FITS round trip as the stress bench (int16 for a third, rotated)
    from stress_fields import LENS_KINDS, make_stress_field

    arc_idx = [LENS_KINDS.index(k) for k in kinds]
    jobs = [(first + i, LENS_KINDS[i % 7]) for i in range(7 * n) if i % 7 in arc_idx][:n]
    with open(out, "w") as fh, tempfile.TemporaryDirectory() as tmp:
        for seed, kind in jobs:
            f = make_stress_field(seed, kind)
            rec = dict(gen="stress", seed=seed, kind=kind, truth=float(f.truth["radius_pix"]), fwhm=float(f.psf_fwhm_pix))
            rec.update(features(run_fits([f], Path(tmp))[0]))
            fh.write(json.dumps(rec) + "\n")
            fh.flush()


def run_ours(first: int, n: int, out: str, kinds: tuple[str, ...] = ("arc", "arc+neighbour", "arc+star")) -> None:
    from lensmass.core.errors import LensInputError
    from lensmass.core.realistic_fields import make_cutout
    from lensmass.core.ringfinder import find_ring

    with open(out, "w") as fh:
        for i in range(n):
            seed, kind = first + i, kinds[i % len(kinds)]
            c = make_cutout(seed, kind)
            rec = dict(gen="ours", seed=seed, kind=kind, truth=float(c.truth["radius_pix"]),
                       fwhm=float(c.truth.get("psf_fwhm_pix", float("nan"))))
            try:
                rec.update(features(find_ring(c.image)))
            except LensInputError:
                rec.update(found=False)
            fh.write(json.dumps(rec) + "\n")
            fh.flush()


if __name__ == "__main__":
    gen, first, n, out = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), sys.argv[4]
    extra = (tuple(sys.argv[5].split("|")),) if len(sys.argv) > 5 else ()
    (run_stress if gen == "stress" else run_ours)(first, n, out, *extra)
