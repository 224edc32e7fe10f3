"""Benchmark: the light step (photometry inside theta_E, then add_light with 10^4 draws).

Targets (issue 6): photometry of the lens on a 2048 x 2048 image with arc masking and a
complete-ring fill in well under 1 s; add_light on 10^4 Monte Carlo draws (with the
stars-plus-NFW halo solved per draw) within 2x the time of the estimate that made the draws.
Baselines: photutils' plain aperture sum of the same aperture on the whole image, and
the core estimate() call itself. Prints both figures and their ratios.

    python benchmarks/bench_light.py [--size 2048] [--samples 10000]
"""

from __future__ import annotations

import argparse
import time
import timeit

import numpy as np


def best_of(fn, repeats: int = 3) -> float:
    """Best wall time of ``repeats`` single calls (timeit from the standard library)."""
    return min(timeit.repeat(fn, number=1, repeat=repeats))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--size", type=int, default=2048)
    parser.add_argument("--samples", type=int, default=10_000)
    args = parser.parse_args()

    from photutils.aperture import CircularAperture, aperture_photometry

    from lensmass.core.estimate import estimate
    from lensmass.core.light import add_light
    from lensmass.core.photometry import lens_aperture_photometry

    n, c, r = args.size, args.size / 2, 12.0
    yy, xx = np.indices((n, n))
    rr = np.hypot(xx - c, yy - c)
    image = 5.0 + 30.0 * np.exp(-1.678 * (rr / 6.0 - 1)) + 100.0 * np.exp(-0.5 * ((rr - r) / 1.0) ** 2)
    image += np.random.default_rng(1).normal(0, 0.3, image.shape)
    points = [(c + r * np.cos(a), c + r * np.sin(a)) for a in np.linspace(0, 2 * np.pi, 24, endpoint=False)]
    lens_aperture_photometry(image, c, c, r, arc_points_xy=points, arc_width_pix=9)  # imports, warm-up

    t_phot = best_of(lambda: lens_aperture_photometry(image, c, c, r, arc_points_xy=points, arc_width_pix=9))
    t_base = best_of(lambda: aperture_photometry(image, CircularAperture((c, c), r)))
    print(f"photometry {n}x{n}, full ring masked and filled: {t_phot * 1e3:.1f} ms "
          f"(photutils plain aperture sum: {t_base * 1e3:.1f} ms, ratio {t_phot / t_base:.1f})")

    t0 = time.perf_counter()
    result = estimate(1.2, 0.2, 0.7, theta_e_err=0.05, z_l_err=0.01, samples=args.samples)
    t_est = time.perf_counter() - t0
    t1 = time.perf_counter()
    add_light(result, band="V", lens_mag=17.6, lens_mag_err=0.05, r_eff_arcsec=2.4, stellar_ml=4.0,
              stellar_ml_err=0.4)
    t_light = time.perf_counter() - t1
    print(f"add_light on {args.samples} draws: {t_light * 1e3:.1f} ms "
          f"(estimate that made them: {t_est * 1e3:.1f} ms, ratio {t_light / t_est:.2f}; target <= 2)")


if __name__ == "__main__":
    main()
