"""Inject-and-recover sweep of the ring finder on survey-like cutouts (issue 14), fuller than the test.

Run: python benchmarks/bench_ring_realism.py [N_LENSES] [N_NONLENSES] [FIRST_SEED]

Prints, for the r band (as FITS would give it) and for the 8-bit asinh-stretched colour picture,
the found fraction, the fraction within 5%, bias and scatter of the radius, the 1- and 2-sigma
coverage of the stated errors, the confident false-positive rate on non-lenses, the
"ring with a neighbour or a star, radius >= 2.5 FWHM, within 5%" rate, and CPU time a cutout.
Targets: coverage 60-76% / >= 90%, confident false positives < 2%, the ring rate >= 80%.
"""

from __future__ import annotations

import sys
import time

import numpy as np


def _sweep(cutouts, colour: bool):
    from lensmass.core.errors import LensInputError
    from lensmass.core.realistic_fields import colour_picture
    from lensmass.core.ringfinder import find_ring

    class Failed:
        found = confident = False
        radius_pix = radius_err_pix = float("nan")

    out = []
    for c in cutouts:
        try:
            if colour:
                pic = colour_picture(c)
                out.append(find_ring(pic.astype(np.float32) @ np.array([0.299, 0.587, 0.114], np.float32),
                                     colour=pic))
            else:
                out.append(find_ring(c.image))
        except LensInputError:
            out.append(Failed())
    return out


def main(n_lenses: int = 120, n_nonlenses: int = 60, first_seed: int = 90000) -> None:
    from lensmass.core.realistic_fields import format_figures, make_sample, recovery_figures

    cutouts = make_sample(n_lenses, n_nonlenses, first_seed=first_seed)
    for colour in (False, True):
        c0, w0 = time.process_time(), time.perf_counter()
        runs = _sweep(cutouts, colour)
        cpu, wall = time.process_time() - c0, time.perf_counter() - w0
        hard = [(c, r) for c, r in zip(cutouts, runs) if c.truth["kind"] in ("ring+neighbour", "ring+star")
                and c.truth["radius_pix"] >= 2.5 * c.psf_fwhm_pix]
        within = np.mean([r.found and abs(r.radius_pix / c.truth["radius_pix"] - 1) <= 0.05 for c, r in hard])
        name = "8-bit colour picture" if colour else "r band (FITS)"
        print(f"{name}: {format_figures(recovery_figures(cutouts, runs))}; ring with a neighbour or star, "
              f">= 2.5 FWHM: {within:.0%} of {len(hard)} within 5% (target 80%); "
              f"{cpu / len(cutouts):.2f} s CPU, {wall / len(cutouts):.2f} s wall a cutout")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:4]))
