"""Stress-generator fields (benchmarks/stress_fields.py, an independent field maker) run through the finder as the
command line runs a file: written to FITS (int16 in a third, a random rotation of the WCS) and read back, the route
of the notes' collect.py. Shared by the coverage tests."""

from __future__ import annotations

import importlib.util
import sys
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from lensmass.core.einstein import find_ring_on_image
from lensmass.core.errors import LensInputError
from lensmass.io.images import load_image

ROOT = Path(__file__).resolve().parents[2]
_spec = importlib.util.spec_from_file_location("stress_fields", ROOT / "benchmarks" / "stress_fields.py")
stress = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("stress_fields", stress)
_spec.loader.exec_module(stress)


def found_answers(tmp_path: Path, first: int, n: int, base: int) -> Iterator[tuple[object, float]]:
    """The finder's found answers and true radii (pixels) on seeds ``first`` .. ``first + n - 1``; the lens kind
    cycles through stress.LENS_KINDS from ``base``."""
    for seed in range(first, first + n):
        f = stress.make_stress_field(seed, stress.LENS_KINDS[(seed - base) % 7])
        rng = np.random.default_rng([f.truth["seed"], 99])
        path = tmp_path / "f.fits"
        int16 = bool(rng.uniform() < 1 / 3)
        stress.write_fits(f, path, int16=int16, rotate_deg=float(rng.uniform(0, 360)))
        try:
            out = find_ring_on_image(load_image(path))
        except LensInputError:
            continue
        if out.found:
            yield out, float(f.truth["radius_pix"])
