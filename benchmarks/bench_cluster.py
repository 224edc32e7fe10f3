"""Cluster components: speed of the bootstrapped mass peaks, and the coverage sweeps of issue 19.

Speed target: mass peaks with 200 bootstrap resamplings on 10^6 galaxies and a 512 x 512 map
under 30 s (wall) on this machine. Printed: total wall and CPU time, the time per resampling,
and its ratio to one map of the same galaxies (the baseline: `mass_map` without noise maps).

Coverage (``--coverage N``, default 100 seeded realisations of two NFW halos):
  * the true halo centres inside the reported 95% (and 68%) peak regions: target >= 90 of 100;
  * the joint two-halo NFW fit, centred on the measured peaks, holding both true M200 inside
    its 95% intervals: target >= 90 of 100 realisations (both halos at once) and per halo;
  * the budget's NFW lens mass in 250 kpc around each measured peak against the true halos' mass
    in the same aperture.

Run: python benchmarks/bench_cluster.py [--speed-only | --coverage-only] [--coverage N]
"""

from __future__ import annotations

import argparse
import time

import numpy as np


def speed(n_galaxies: int, n_pixels: int, n_resamples: int) -> None:
    from lensmass.core.mass_map import mass_map
    from lensmass.core.mass_peaks import mass_peaks

    rng = np.random.default_rng(1)
    half = 1800.0
    x, y = rng.uniform(-half, half, n_galaxies), rng.uniform(-half, half, n_galaxies)
    # two SIS-like tangential shear patterns on top of shape noise (the shear's size does not change the cost)
    e = rng.normal(0, 0.25, n_galaxies) + 1j * rng.normal(0, 0.25, n_galaxies)
    for cx, cy in ((-500.0, 100.0), (600.0, -150.0)):
        dz = (x - cx) + 1j * (y - cy)
        e -= 20.0 / np.maximum(np.abs(dz), 30.0) * (dz / np.abs(dz)) ** 2
    e1, e2 = e.real, e.imag
    t0, c0 = time.perf_counter(), time.process_time()
    mass_map(x, y, e1, e2, n_pixels=n_pixels, extent_arcsec=2 * half, smoothing_arcsec=40.0)
    one_wall, one_cpu = time.perf_counter() - t0, time.process_time() - c0
    t0, c0 = time.perf_counter(), time.process_time()
    r = mass_peaks(x, y, e1, e2, n_pixels=n_pixels, extent_arcsec=2 * half, smoothing_arcsec=40.0,
                   n_resamples=n_resamples, n_noise=8, min_snr=3.0)
    wall, cpu = time.perf_counter() - t0, time.process_time() - c0
    per = wall / (n_resamples + 8)
    print(f"mass peaks: {n_galaxies:.0e} galaxies, {n_pixels}^2 map, {n_resamples} resamplings + 8 noise maps: "
          f"{wall:.1f} s wall, {cpu:.1f} s CPU (target < 30 s wall) -> {'PASS' if wall < 30 else 'FAIL'}")
    print(f"  per resampling {per * 1000:.0f} ms wall; one map of the same galaxies (baseline) "
          f"{one_wall * 1000:.0f} ms wall, {one_cpu * 1000:.0f} ms CPU; ratio {per / one_wall:.2f}")
    print(f"  peaks found: {len(r.peaks)}")


def coverage(n: int) -> None:
    from astropy.cosmology import Planck18

    from lensmass.core.cluster_simulation import simulate_multi_halo_shear
    from lensmass.core.halo_fit import fit_nfw_halos
    from lensmass.core.mass_peaks import mass_peaks
    from lensmass.core.peak_finding import inside_region

    halos = [dict(x_arcsec=-150.0, y_arcsec=20.0, m200_msun=1.2e15), dict(x_arcsec=160.0, y_arcsec=-30.0,
                                                                             m200_msun=8e14)]
    z_l = 0.3
    from lensmass.core.cluster_budget import nfw_aperture_masses
    from lensmass.core.cluster_simulation import halo_concentration
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.cosmology import little_h
    from lensmass.core.peak_offsets import kpc_per_arcsec

    c_of_m, _ = concentration_relation("duffy08", "200c")
    true_logm = np.log10([[h["m200_msun"] for h in halos]])
    true_c = np.array([[halo_concentration(h, z_l, Planck18) for h in halos]])
    in68 = in95 = 0
    fit_both = 0
    fit_each = [0, 0]
    ap_in = [0, 0]
    t0 = time.perf_counter()
    for seed in range(n):
        cat = simulate_multi_halo_shear(halos, z_l=z_l, cosmo=Planck18, field_arcsec=1000.0,
                                        density_per_arcmin2=30.0, seed=10_000 + seed)
        r = mass_peaks(cat["x_arcsec"], cat["y_arcsec"], cat["e1"], cat["e2"], n_pixels=64, extent_arcsec=1000.0,
                       smoothing_arcsec=40.0, n_resamples=100, n_noise=16, seed=seed)
        centres = []
        for h in halos:
            d = [np.hypot(p.x_arcsec - h["x_arcsec"], p.y_arcsec - h["y_arcsec"]) for p in r.peaks]
            p = r.peaks[int(np.argmin(d))]
            off = (h["x_arcsec"] - p.x_arcsec, h["y_arcsec"] - p.y_arcsec)
            in68 += inside_region(off, p.covariance_arcsec2, p.region_quantiles[0])
            in95 += inside_region(off, p.covariance_arcsec2, p.region_quantiles[1])
            centres.append((p.x_arcsec, p.y_arcsec))
        fit = fit_nfw_halos(cat["x_arcsec"], cat["y_arcsec"], cat["e1"], cat["e2"], cat["weight"], cat["beta"],
                            np.array(centres), z_l=z_l, cosmo=Planck18, d_l_mpc=cat["d_l_mpc"],
                            extent_arcsec=1000.0, n_draws=2000, seed=seed)
        q = fit.m200_quantiles()
        ok = [bool(q[i, 0] <= h["m200_msun"] <= q[i, 4]) for i, h in enumerate(halos)]
        fit_both += all(ok)
        fit_each = [a + b for a, b in zip(fit_each, ok)]
        # projected mass in 250 kpc around each measured peak: the fit's draws against the true halos
        ap = 250.0 / kpc_per_arcsec(cat["d_l_mpc"])
        truth = nfw_aperture_masses(true_logm, [[h["x_arcsec"], h["y_arcsec"]] for h in halos], centres, ap, true_c,
                                    z_l=z_l, cosmo=Planck18, d_l_mpc=cat["d_l_mpc"])[0]
        draws = nfw_aperture_masses(fit.draws_log10_m200[:1000], centres, centres, ap,
                                    lambda lm: c_of_m(10.0 ** lm, z_l, little_h(Planck18)), z_l=z_l, cosmo=Planck18,
                                    d_l_mpc=cat["d_l_mpc"])
        lo, hi = np.quantile(draws, [0.025, 0.975], axis=0)
        ap_in = [a + bool(lo[i] <= truth[i] <= hi[i]) for i, a in enumerate(ap_in)]
    took = time.perf_counter() - t0
    print(f"coverage over {n} seeded two-halo realisations ({took:.0f} s):")
    print(f"  peak regions: true centre inside 68%: {in68}/{2 * n} ({100 * in68 / (2 * n):.0f}%), "
          f"inside 95%: {in95}/{2 * n} ({100 * in95 / (2 * n):.0f}%) (target >= 90% at 95%)")
    print(f"  two-halo NFW fit at the measured peaks: both M200 inside 95%: {fit_both}/{n}; "
          f"per halo {fit_each[0]}/{n}, {fit_each[1]}/{n} (target >= 90 of 100)")
    print(f"  NFW projected mass in 250 kpc around the measured peaks inside its 95% interval: "
          f"{ap_in[0]}/{n}, {ap_in[1]}/{n}")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--galaxies", type=int, default=1_000_000)
    parser.add_argument("--pixels", type=int, default=512)
    parser.add_argument("--resamples", type=int, default=200)
    parser.add_argument("--coverage", type=int, default=100)
    parser.add_argument("--speed-only", action="store_true")
    parser.add_argument("--coverage-only", action="store_true")
    args = parser.parse_args(argv)
    if not args.coverage_only:
        speed(args.galaxies, args.pixels, args.resamples)
    if not args.speed_only:
        coverage(args.coverage)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
