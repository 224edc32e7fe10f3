"""Coverage of the weak-lensing fit intervals over many seeded catalogues (a calibration sweep, not a test).

For each case (halo mass, lens redshift, galaxy density) it simulates N catalogues with
lensmass.core.shear_simulation, runs analyse_shear_catalog, and prints how often the truth lies
inside the 68% and 95% intervals of NFW M200 and below the one-sided 95% upper limit, with the
detection rate and the median significance, and how often the zeta mass lies within 1 and 2 of its
stated errors of the exact aperture value M_2D(<r1) - pi r1^2 <Sigma>_annulus of the true halo
(Fahlman et al. 1994; NFW masses from lensmass.core.nfw). Targets (common practice): 68%, 95%, >= 95%.

    python benchmarks/calibrate_shear_intervals.py [N]     # default N = 200 per case
"""

import sys
import time

import numpy as np
from astropy.cosmology import Planck18

from lensmass.core.nfw import nfw_halo, nfw_mass_2d_msun
from lensmass.core.shear_analysis import analyse_shear_catalog
from lensmass.core.shear_simulation import simulate_shear_catalog

CASES = [  # (M200 Msun, z_l, galaxies per arcmin^2, extra simulation options)
    (1e14, 0.3, 20.0, {}),
    (1e14, 0.7, 20.0, {}),
    (8e14, 0.3, 20.0, {}),
    (3e14, 0.5, 30.0, {"measurement_noise": (0.05, 0.3)}),  # per-galaxy noise and weights
    (8e14, 0.3, 20.0, {"photo_z_scatter": 0.05}),  # photometric redshifts (their errors are not propagated)
]


def exact_zeta_mass(truth, r1_mpc, r2_mpc):
    """M_2D(<r1) - pi r1^2 mean Sigma(r1 < R < r2) of the true halo (Fahlman et al. 1994, eq. 4)."""
    halo = nfw_halo(truth["m200_msun"], truth["c200"], truth["z_l"], Planck18, truth["halo_definition"])
    m1, m2 = (float(nfw_mass_2d_msun(r, halo)) for r in (r1_mpc, r2_mpc))
    return m1 - r1_mpc**2 / (r2_mpc**2 - r1_mpc**2) * (m2 - m1)


def sweep(m200, z_l, density, extra, n):
    in68 = in95 = below = detected = z1 = z2 = 0
    sig = []
    start, cpu = time.perf_counter(), time.process_time()
    for seed in range(n):
        cat = simulate_shear_catalog(center_ra=150.0, center_dec=2.0, z_l=z_l, cosmo=Planck18, field_arcsec=1200.0,
                                     density_per_arcmin2=density, m200_msun=m200, shape_noise=0.25,
                                     seed=50_000 + seed, **extra)
        r = analyse_shear_catalog(cat["ra"], cat["dec"], cat["e1"], cat["e2"], cat["weight"], cat["z"], z_l=z_l,
                                  center_ra=150.0, center_dec=2.0, cosmology=Planck18, n_bootstrap=0,
                                  r_min=0.5, r_max=9.5)
        lo, hi = r["intervals68"]["nfw_m200_msun"]
        lo2, hi2 = r["intervals95"]["nfw_m200_msun"]
        in68 += lo <= m200 <= hi
        in95 += lo2 <= m200 <= hi2
        below += m200 <= r["nfw_m200_upper95_msun"]
        detected += r["detected"]
        sig.append(r["detection_significance"])
        exact = exact_zeta_mass(cat["truth"], r["zeta_radius_kpc"] / 1e3, r["zeta_outer_radius_kpc"] / 1e3)
        pull = abs(r["zeta_mass_msun"] - exact) / r["zeta_mass_err_msun"]
        z1 += pull <= 1
        z2 += pull <= 2
    print(f"M200 {m200:.0e} z_l {z_l} {density:g}/arcmin^2 {extra or ''}: in 68% {in68 / n:.2f}, in 95% "
          f"{in95 / n:.2f}, below 95% upper limit {below / n:.2f}, detected {detected / n:.2f}, "
          f"median significance {np.median(sig):.1f}; zeta within 1/2 errors {z1 / n:.2f}/{z2 / n:.2f} "
          f"({n} seeds, {time.perf_counter() - start:.0f} s wall, "
          f"{time.process_time() - cpu:.0f} s CPU)")


if __name__ == "__main__":
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    for case in CASES:
        sweep(*case, n)
