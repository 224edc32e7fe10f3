"""How precisely can marked image positions fix theta_E at all? The Cramer-Rao (Fisher) bound of the SIE + shear
model for the seeded inject-and-recover cases of benchmarks/bench_lens_model.py, beside what the fit achieves.

    python benchmarks/lens_model_bound.py --kind quad --cases 200
    python benchmarks/lens_model_bound.py --kind double --cases 200 --fit     # also run the fits (slow)

For each case the image positions theta_i(p) solve the lens equation beta = theta - alpha(theta; p) for the
parameters p = (theta_E, e1, e2, x0, y0, gamma1, gamma2, beta_x, beta_y). Differentiating it at fixed beta gives
d theta_i / d p = A_i^-1 d alpha / d p (lens parameters) and A_i^-1 (source position), A = d beta / d theta the
lens Jacobian (implicit-function theorem; Narayan & Bartelmann 1996 for A). With Gaussian click errors sigma
the Fisher matrix is F = J^T J / sigma^2 (Kay 1993, Fundamentals of Statistical Signal Processing, eq. 3.31),
to which the priors of the fit add their information: the lens-light centre (Gaussian, 1 / sigma_c^2 on x0,
y0) and the external shear (Gaussian, 1 / SHEAR_PRIOR_SIGMA^2 on each component), the Bayesian Cramer-Rao
bound of Van Trees (1968). sqrt((F^-1)_00) is the smallest 1-sigma error any unbiased estimate of theta_E can
have from these marks. The median of |error| of an estimator at that bound is 0.674 of it (half-normal median);
the script draws it over the case mix so that cases of different theta_E and geometry weigh as they do in the
sweep.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from lensmass.core.lens_model_fit import SHEAR_PRIOR_SIGMA  # noqa: E402
from lensmass.core.sie import SIEShear, axis_ratio_from_ellipticity, deflection, ellipticity_from_axis_ratio, \
    lens_mapping  # noqa: E402
from tests.core.lens_injection import PIXEL_ARCSEC, point_case  # noqa: E402


def _lens(p) -> SIEShear:
    q, ang = axis_ratio_from_ellipticity(p[1], p[2])
    return SIEShear(p[0], float(q), float(ang), p[3], p[4], p[5], p[6])


def theta_e_bound(case, click_arcsec: float, center_sigma: float | None, shear_sigma: float = SHEAR_PRIOR_SIGMA,
                  e_sigma: float | None = None):
    """(sigma_CR of theta_E in arcsec, the full inverse Fisher matrix) at the truth of a point case.
    ``e_sigma``: a Gaussian prior of that width on each ellipticity component (None: no information on it)."""
    sie, sh = case.lenses
    e1, e2 = ellipticity_from_axis_ratio(sie.axis_ratio, np.radians(sie.angle_deg))
    p = np.array([sie.theta_e_arcsec, float(e1), float(e2), 0.0, 0.0, sh.gamma1, sh.gamma2])
    x, y = case.true_x, case.true_y
    _, _, a11, a22, a12 = lens_mapping(_lens(p), x, y)
    n = x.size
    jac = np.zeros((2 * n, 9))
    for k in range(7):
        h = 1e-6
        dp = np.zeros(7)
        dp[k] = h
        ax1, ay1 = deflection(_lens(p + dp), x, y)
        ax0, ay0 = deflection(_lens(p - dp), x, y)
        dax, day = (ax1 - ax0) / (2 * h), (ay1 - ay0) / (2 * h)
        det = a11 * a22 - a12 * a12  # A^-1 (dax, day)
        jac[0::2, k] = (a22 * dax - a12 * day) / det
        jac[1::2, k] = (-a12 * dax + a11 * day) / det
    det = a11 * a22 - a12 * a12
    jac[0::2, 7], jac[1::2, 7] = a22 / det, -a12 / det
    jac[0::2, 8], jac[1::2, 8] = -a12 / det, a11 / det
    fisher = jac.T @ jac / click_arcsec**2
    if center_sigma is not None:
        fisher[3, 3] += 1 / center_sigma**2
        fisher[4, 4] += 1 / center_sigma**2
    fisher[5, 5] += 1 / shear_sigma**2
    if e_sigma is not None:
        fisher[1, 1] += 1 / e_sigma**2
        fisher[2, 2] += 1 / e_sigma**2
    fisher[6, 6] += 1 / shear_sigma**2
    cov = np.linalg.pinv(fisher)
    return float(np.sqrt(cov[0, 0])), cov


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--kind", default="quad", choices=("quad", "double"))
    parser.add_argument("--cases", type=int, default=200)
    parser.add_argument("--start", type=int, default=0)
    parser.add_argument("--click-pix", type=float, default=1.0)
    parser.add_argument("--e-sigma", type=float, default=None,
                        help="a Gaussian prior on each ellipticity component (a double needs one: 2 images, the "
                             "centre and the shear prior give 8 numbers for 9 parameters)")
    parser.add_argument("--fit", action="store_true", help="also fit each case and compare")
    args = parser.parse_args()
    n_img, offset = (4, 0) if args.kind == "quad" else (2, 1000)
    rel_sig, te, rel_err, widths = [], [], [], []
    for k in range(args.start, args.start + args.cases):
        case = point_case(offset + k, n_img, click_pix=args.click_pix)
        s, _ = theta_e_bound(case, args.click_pix * PIXEL_ARCSEC, case.center[2], e_sigma=args.e_sigma)
        rel_sig.append(s / case.theta_e)
        te.append(case.theta_e)
        if args.fit:
            from tests.core.lens_injection import fit_case

            fit = fit_case(case, click_pix=args.click_pix, seed=k + 1)
            pc = np.percentile(fit.draws[:, 0], [16, 50, 84])
            rel_err.append(pc[1] / case.theta_e - 1)
            widths.append(0.5 * (pc[2] - pc[0]) / case.theta_e)
    rel_sig = np.array(rel_sig)
    rng = np.random.default_rng(0)
    sim = np.abs(rng.normal(size=(2000, rel_sig.size)) * rel_sig)
    med_at_bound = np.median(sim, axis=1)
    print(f"{args.kind}s, {args.cases} cases (seeds from {offset + args.start}), clicks {args.click_pix:g} px of "
          f"{PIXEL_ARCSEC:g}\", ellipticity prior {args.e_sigma} (sigma/theta_E per point: median {np.median(args.click_pix * PIXEL_ARCSEC / np.array(te)):.4f})")
    print(f"  Cramer-Rao 1-sigma of theta_E / theta_E: median {np.median(rel_sig):.4f}, mean {np.mean(rel_sig):.4f}, "
          f"10-90% {np.percentile(rel_sig, 10):.4f}-{np.percentile(rel_sig, 90):.4f}")
    print(f"  median |theta_E/truth - 1| of an estimator AT the bound: {np.median(med_at_bound):.4f} "
          f"(2.5-97.5% over repeat click draws {np.percentile(med_at_bound, 2.5):.4f}-"
          f"{np.percentile(med_at_bound, 97.5):.4f}); fraction of cases whose bound alone is over 1%: "
          f"{np.mean(rel_sig > 0.01):.3f}")
    if args.fit:
        rel_err = np.array(rel_err)
        widths = np.array(widths)
        print(f"  fit: median |theta_E/truth - 1| {np.median(np.abs(rel_err)):.4f}, median signed {np.median(rel_err):+.4f}; "
              f"posterior 68% half-width / bound: median {np.median(widths / rel_sig):.3f}")


if __name__ == "__main__":
    main()
