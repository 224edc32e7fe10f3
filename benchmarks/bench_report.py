"""Benchmark of sessions, exports and the one-page report (issue 4, desktop window).

Prints, each with a ratio against a stated floor:

* the one-page report at 150 dpi as PNG and as PDF, against matplotlib saving a blank A4 Figure at
  the same dpi (target: under 3 s for the PNG, so an export from the window feels immediate);
* save + load of a session with 5000 marked points and a 200 kB panel state, against plain
  ``json.dumps`` + ``json.loads`` of the same dict (target: under 0.2 s, so autosave never stalls the
  window);
* the ECSV export of 1000 arc systems, against astropy writing the same values as a bare Table.

Run: python benchmarks/bench_report.py
"""

from __future__ import annotations

import io
import json
import tempfile
import timeit
from pathlib import Path

import numpy as np


def best_of(fn, repeat: int = 3) -> float:
    """Fastest of ``repeat`` single runs (the stdlib's timeit.repeat)."""
    return min(timeit.repeat(fn, number=1, repeat=repeat))


def line(name: str, seconds: float, floor: float, target: str) -> None:
    print(f"{name:<42} {seconds * 1e3:9.1f} ms   floor {floor * 1e3:8.1f} ms   ratio {seconds / floor:6.1f}x   "
          f"target {target}")


def main() -> None:
    from astropy.table import Table
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from lensmass.core.estimate import DERIVED_KEYS, estimate
    from lensmass.io.export import results_table, write_results_ecsv
    from lensmass.io.report import PAGE_INCHES, Overlay, cutout, render_report
    from lensmass.io.session import ArcSystem, ImageRef, Session, load_session, save_session

    tmp = Path(tempfile.mkdtemp(prefix="lensmass-bench-"))
    rng = np.random.default_rng(4)

    # --- report
    image = rng.normal(0, 1, (400, 400))
    cut, origin = cutout(image, (200, 200), 60)
    overlay = Overlay(0.05, centre_px=(200, 200), points_px=[(220, 200), (200, 221), (181, 199)],
                      circle_px=(200, 200, 20), origin_px=origin)
    result = estimate(1.0, 0.3, 1.2, theta_e_err=0.05, z_l_err=0.01)  # default 10^4 draws
    inputs = {"z_l": 0.3, "z_s": 1.2}

    def blank(fmt):
        fig = Figure(figsize=PAGE_INCHES)
        FigureCanvasAgg(fig)
        fig.savefig(io.BytesIO(), format=fmt, dpi=150)

    for fmt in ("png", "pdf"):
        t = best_of(lambda: render_report(tmp / f"r.{fmt}", cut, overlay, inputs, result, dpi=150))
        line(f"report page ({fmt.upper()}, 150 dpi)", t, best_of(lambda: blank(fmt)), "< 3 s" if fmt == "png" else "-")

    # --- session
    points = [tuple(p) for p in rng.uniform(0, 2000, (5000, 2))]
    session = Session(image=ImageRef(str(tmp / "big.fits")), z_l=0.3,
                      arcs=[ArcSystem(f"S{i}", z_s=1.5, points=points[i * 500:(i + 1) * 500]) for i in range(10)],
                      panels={"shear": {"blob": "x" * 200_000}})
    target = tmp / "s.lensmass.json"
    data = session.to_dict(tmp)

    def plain():
        (tmp / "plain.json").write_text(json.dumps(data))
        json.loads((tmp / "plain.json").read_text())

    t = best_of(lambda: load_session(save_session(target, session)))
    line("session save + load (5000 points)", t, best_of(plain), "< 0.2 s")

    # --- export
    many = estimate(rng.uniform(0.5, 4, 1000), 0.3, 1.5)
    systems = [(f"L{i:04d}", {**{k: float(many[k][i]) for k in DERIVED_KEYS}, "models": many["models"],
                              "notes": many["notes"], "cosmology": many["cosmology"]}) for i in range(1000)]
    bare = Table({k: np.asarray(many[k], float) for k in DERIVED_KEYS})
    t = best_of(lambda: write_results_ecsv(tmp / "r.ecsv", systems), repeat=2)
    floor = best_of(lambda: bare.write(tmp / "bare.ecsv", format="ascii.ecsv", overwrite=True), repeat=2)
    line("ECSV export (1000 systems, 71 columns)", t, floor, "-")
    print(f"(ECSV table has {len(results_table(systems[:1]).colnames)} columns; the floor writes 13.)")


if __name__ == "__main__":
    main()
