"""Calibrate the ring finder's radius-error floors on both generators together (issue 14).

Run: python benchmarks/calibrate_ring_floors.py record OUT.json [N_LENSES] [FIRST_SEED] [N_NONLENSES] [GENS] [KINDS]
     python benchmarks/calibrate_ring_floors.py sweep OUT.json [MORE.json ...]

``record`` runs lensmass.core.ringfinder.find_ring on N_LENSES lenses of the project's generator
(lensmass.core.realistic_fields) and N_LENSES of the stress generator (benchmarks/stress_fields.py),
seeds FIRST_SEED..., and keeps for each found lens the radius, the error before the calibrated floor
(``radius_internal_err_pix``), whether it is a single arc, and the truth. ``sweep`` prints the truth
inside 1 and 2 stated sigma for each generator and the pooled sample for a grid of the two floors
(:data:`lensmass.core.ring_confidence.RING_FLOOR`, :data:`~lensmass.core.ring_confidence.SINGLE_ARC_SYSTEMATIC`),
as lensmass.core.ring_confidence._calibrate adds them (in quadrature, times the radius). Tuning seeds
550000-559999; 700000-899999 never.

Measured 2026-12-03, seeds 552000-552299 (150 lenses each; 138 and 127 found): floors 0.02 / 0.28 (the
finder's): ours 64% / 93%, stress 50% / 81%, pooled 57% / 88%; 0.03 / 0.35: 86% / 99%, 57% / 85%, 72% / 92%;
0.04 / 0.45: 89% / 99%, 70% / 88%, 80% / 94%. Rings and arc pairs of the stress fields: median error 4.1%
of the radius against 2.0% on ours, 13 of 63 more than 20% off (3 of 68 on ours): a tail of wrong
candidates that no floor covers without making ours far too wide, so the floors were kept.

h14o, 2026-12-03, tuning seeds 630000-630419 (ours) and 632000-632349 + 634000-634119 (stress), with the lone-arc
rule of lensmass.core.lone_arc (lone arcs carry its spread, no floor): floors 0.02 / 0.28 give ours 74% / 92%, stress
54% / 85%; 0.02 / 0.33: 76% / 93%, 57% / 90%; 0.03 / 0.33: 77% / 94%, 59% / 90%. The single arcs the rule does not
take (stress: median 30% too large, 84th percentile +106%) are mostly wrong features (ridge points spread over all
directions, mean direction 0-0.5); kept 0.02 / 0.33. ``record`` now also keeps non-lenses (N_NONLENSES), the lone
arc's own radius, the ring width and fitted seeing, and can run one generator (GENS "ours" or "stress") or some
lens kinds only (KINDS, "|"-separated).

h14v, 2026-12-03: ``record`` also keeps the ridge scatter, axis ratios, Sersic index, the ridge points' mean direction
and the stated interval; ``sweep`` takes several record files and sweeps the ring floor with the two terms of what
the finder sees (lensmass.core.ring_confidence.seen_error: ridge scatter share, thickness share), lone arcs counted by
their interval. Tuning seeds 520000-520219 (ours, 205 found) and 520220-520439 + 521160-521319 (stress, 150 found):
floor 0.02 and no terms (main): rings and pairs ours 70%/93%, stress 49%/76%, all found ours 75%/96%, stress
51%/81%; floor 0.005, scatter 0.5, thickness 0.1 (kept): rings and pairs 71%/96% and 66%/87%, all 76%/98% and
63%/88%. Which terms: the ridge scatter about the ellipse (Spearman rho with |pull| +0.21 ours, +0.35 stress) and the
ring's width over radius (+0.36, +0.26); the ring's width over the fitted seeing separates the stress misses (+0.39;
fitted seeing collapsed to 0.1-0.2 of the true one) but not ours (+0.08). The misses' sign differs by generator
(rings and pairs beyond 1 sigma, truth above / below: ours 8 / 22, stress 21 / 12), so no common asymmetric shape
for rings is stated.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))


def record(out: str, n_lenses: int = 150, first_seed: int = 552000, n_nonlenses: int = 0,
           gens: str = "ours,stress", only_kinds: str = "") -> None:
    """Run the finder on ``n_lenses`` lenses (and ``n_nonlenses`` non-lenses) of each generator named in ``gens``
    and keep, for every field, what the calibrations need (found lenses as before, plus the lone-arc radius, the
    ring width and fitted seeing, confident, and the non-lenses). ``only_kinds`` ("|"-separated) restricts the
    lenses to those kinds (e.g. "one arc|arc" for the lone-arc table)."""
    from stress_fields import LENS_KINDS, NONLENS_KINDS, make_stress_field

    from lensmass.core.errors import LensInputError
    from lensmass.core.realistic_fields import LENS_KINDS as OUR_KINDS
    from lensmass.core.realistic_fields import NONLENS_KINDS as OUR_NON
    from lensmass.core.realistic_fields import make_cutout
    from lensmass.core.ring_shapes import _mean_direction
    from lensmass.core.ringfinder import find_ring

    rows = []
    for gen in gens.split(","):
        lens_kinds, non_kinds = (OUR_KINDS, OUR_NON) if gen == "ours" else (LENS_KINDS, NONLENS_KINDS)
        if only_kinds:
            lens_kinds = tuple(k for k in lens_kinds if k in only_kinds.split("|"))
        n_all = n_lenses + n_nonlenses
        for i in range(n_all):
            seed = first_seed + i + (0 if gen == "ours" else n_all)
            is_lens = i < n_lenses
            kind = lens_kinds[i % len(lens_kinds)] if is_lens else non_kinds[(i - n_lenses) % len(non_kinds)]
            if gen == "ours":
                c = make_cutout(seed, kind)
                img, truth, fwhm = c.image, c.truth["radius_pix"], c.truth.get("psf_fwhm_pix", float("nan"))
            else:
                f = make_stress_field(seed, kind)
                img, truth, fwhm = f.image, f.truth["radius_pix"], f.psf_fwhm_pix
            try:
                r = find_ring(img)
            except LensInputError:
                continue
            if not r.found:
                continue
            light = r.lens_light
            psf = float(light.psf_fwhm_pix) if light is not None and light.ok else float("nan")
            rows.append(dict(gen=gen, seed=seed, kind=kind, is_lens=is_lens, truth=float(truth),
                             radius=float(r.radius_pix), err=float(r.radius_err_pix),
                             internal=float(r.radius_internal_err_pix), single=bool(r.coverage < 0.6 and not r.paired),
                             coverage=float(r.coverage), paired=bool(r.paired), confident=bool(r.confident),
                             lone_arc=float(r.lone_arc_radius_pix), width=float(r.ring_width_pix), psf_fit=psf,
                             psf_true=float(fwhm), score=float(r.score), kind_found=r.kind,
                             unresolved=any("barely resolved" in w for w in r.warnings),
                             too_thin=any("thinner than the seeing" in w for w in r.warnings),
                             axis_ratio=float(r.axis_ratio), fit_rms=float(r.fit_rms_pix), n_points=int(r.points_x.size),
                             direction=float(_mean_direction(r)[1]) if r.points_x.size else float("nan"),
                             light_q=float(light.axis_ratio) if light is not None and light.ok else float("nan"),
                             light_n=float(light.sersic_n) if light is not None and light.ok else float("nan"),
                             first_kept=any("first fit's ring" in w for w in r.warnings),
                             elongated=any("elongated: it was measured" in w for w in r.warnings),
                             lo1=float(getattr(r, "radius_lo_pix", float("nan"))),
                             hi1=float(getattr(r, "radius_hi_pix", float("nan"))),
                             lo2=float(getattr(r, "radius_lo2_pix", float("nan"))),
                             hi2=float(getattr(r, "radius_hi2_pix", float("nan")))))
            if len(rows) % 25 == 0:
                Path(out).write_text(json.dumps(rows))
    Path(out).write_text(json.dumps(rows))
    print(f"{len(rows)} found fields written")


def coverage(rows, ring_floor: float, arc_floor: float, scatter_share: float = 0.0,
             thick_share: float = 0.0) -> tuple[float, float]:
    """Truth inside 1 / 2 sigma of the recorded lenses with these constants, as
    lensmass.core.ring_confidence._calibrate adds them (floors times the radius; for rings and arc pairs the terms
    of :func:`lensmass.core.ring_confidence.seen_error`); lone arcs by the lone-arc rule's interval."""
    from lensmass.core.lone_arc import lone_arc_ratio_quantiles
    from lensmass.core.ring_confidence import SAMPLING_FWHM_PIX, seen_error
    from lensmass.core.ring_interval import SIGMA_PROBABILITIES

    in1, in2 = [], []
    for r in rows:
        if not r.get("is_lens", True):
            continue
        if np.isfinite(r.get("lone_arc", float("nan"))):  # the lone-arc rule's interval, no floor
            lo2, lo1, hi1, hi2 = r["lone_arc"] * lone_arc_ratio_quantiles(SIGMA_PROBABILITIES, "ridge")
        else:
            err = float(np.hypot(r["internal"], (arc_floor if r["single"] else ring_floor) * r["radius"]))
            if not r["single"] and "fit_rms" in r:
                psf = max(r["psf_fit"], SAMPLING_FWHM_PIX) if np.isfinite(r["psf_fit"]) else float("nan")
                err = float(np.hypot(err, seen_error(r["fit_rms"], r["width"], psf, scatter_share=scatter_share,
                                                     thick_share=thick_share)))
            lo2, lo1, hi1, hi2 = (r["radius"] + k * err for k in (-2, -1, 1, 2))
        in1.append(lo1 <= r["truth"] <= hi1)
        in2.append(lo2 <= r["truth"] <= hi2)
    return float(np.mean(in1)), float(np.mean(in2))


def sweep(paths: list[str]) -> None:
    rows = [r for p in paths for r in json.loads(Path(p).read_text())]
    rows = [r for r in rows if r.get("is_lens", True)]
    gens = {g: [r for r in rows if r["gen"] == g] for g in ("ours", "stress")}
    print(f"{len(gens['ours'])} found lenses of our generator, {len(gens['stress'])} of the stress generator")
    rings = {g: [r for r in v if not r["single"]] for g, v in gens.items()}
    for ring_floor in (0.0, 0.005, 0.01, 0.02):
        for scatter in (0.0, 0.3, 0.5, 0.7):
            for thick in (0.0, 0.1, 0.2):
                cells = [coverage(rings[g], ring_floor, 0.33, scatter, thick) for g in ("ours", "stress")]
                cells += [coverage(gens[g], ring_floor, 0.33, scatter, thick) for g in ("ours", "stress")]
                print(f"ring floor {ring_floor:.2f}, scatter {scatter:.1f}, thickness {thick:.1f}: rings and pairs "
                      + "; ".join(f"{n} {a:.0%}/{b:.0%}" for n, (a, b) in zip(("ours", "stress", "all ours",
                                                                                "all stress"), cells)))


if __name__ == "__main__":
    if sys.argv[1] == "record":
        record(sys.argv[2], *(int(v) for v in sys.argv[3:6]), *sys.argv[6:8])
    else:
        sweep(sys.argv[2:])
