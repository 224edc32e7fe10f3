"""Speed of the image tools: ring finder on 2048 x 2048, ridge refinement per point, opening 4096 x 4096.

Run: python benchmarks/bench_images.py
Targets (issue 3, 14): ring finder with masks < 0.5 s; ridge refinement < 5 ms a point; opening a 4096 x 4096 float32
FITS to a display-ready array < 0.5 s. Each figure is printed with its ratio to the target and to a
stated baseline.
"""

from __future__ import annotations

import tempfile
import timeit
from pathlib import Path

import numpy as np


def _best(fn, repeat=3):
    """Best wall time of ``repeat`` single calls (timeit from the standard library)."""
    return min(timeit.repeat(fn, number=1, repeat=repeat))


def bench_ring_finder() -> None:
    """Target (issue 14): the finder on a 2048 x 2048 field with its automatic masks under 0.5 s
    (the field, the interleaved bincount baseline and the ratios live in bench_ring_speed.py)."""
    from bench_ring_speed import main as bench_ring_speed

    bench_ring_speed(repeat=3)


def bench_ridge() -> None:
    from lensmass.core.ridge import refine_to_ridge

    yy, xx = np.mgrid[0:2048, 0:2048]
    img = np.exp(-0.5 * ((np.hypot(xx - 1024.0, yy - 1024.0) - 40.0) / 1.5) ** 2).astype(np.float32)
    ang = np.linspace(0, 2 * np.pi, 200, endpoint=False)
    px, py = 1024 + 42 * np.cos(ang), 1024 + 42 * np.sin(ang)
    t = _best(lambda: [refine_to_ridge(img, a, b, 1024.0, 1024.0) for a, b in zip(px, py)]) / len(px)
    # Baseline: scipy.ndimage.map_coordinates of the same 33 x 3 samples per point (the sampling alone).
    from scipy.ndimage import map_coordinates

    coords = np.random.default_rng(1).uniform(1000, 1050, (2, 99))
    tb = _best(lambda: [map_coordinates(img, coords, order=1, prefilter=False) for _ in px]) / len(px)
    print(f"ridge refinement: {t * 1e3:.2f} ms a point (target 5 ms: x{t / 5e-3:.2f}); "
          f"baseline bare bilinear sampling {tb * 1e3:.3f} ms (x{t / tb:.0f})")


def bench_open() -> None:
    from astropy.io import fits

    from lensmass.io.images import display_limits, load_image

    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "big.fits"
        data = np.random.default_rng(0).normal(0, 1, (4096, 4096)).astype(np.float32)
        fits.PrimaryHDU(data).writeto(p)
        del data

        def open_for_display():
            im = load_image(p, pixel_scale_arcsec=0.2)
            display_limits(im.data)

        t = _best(open_for_display)
        # Baseline: astropy.io.fits.getdata of the same file (read without masking or limits).
        tb = _best(lambda: np.asarray(fits.getdata(p), np.float32))
    print(f"open 4096 x 4096 float32 FITS for display: {t:.3f} s (target 0.5 s: x{t / 0.5:.2f}); "
          f"baseline astropy getdata {tb:.3f} s (x{t / tb:.2f})")


if __name__ == "__main__":
    bench_open()
    bench_ridge()
    bench_ring_finder()
