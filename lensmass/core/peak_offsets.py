"""Offsets between mass peaks and gas or light peaks, with bootstrap regions and significance.

Each mass peak is matched to the nearest peak of the other map within a matching radius.
The offset vector d = (other - mass) has bootstrap samples d_b = other_b - mass_b, pairing
the independent resamplings of the two data sets (shear catalogue; X-ray counts or
members) by index. Its 68% / 95% regions are the ellipses holding those fractions of
the d_b around the measured d (:func:`lensmass.core.peak_finding.bootstrap_regions`).
The significance of a non-zero offset tests d = 0 against the bootstrap spread: with C
the covariance of the d_b about their mean (times the regions' calibrated widening),
r^2 = d^T C^-1 d is chi^2-distributed with 2 degrees of freedom if the offsets are Gaussian:
p = scipy.stats.chi2.sf(r^2, 2), quoted also as a two-sided Gaussian-equivalent number of
sigma (scipy.stats.norm.isf(p / 2)). Beside it, the distribution-free p-value: the fraction
of centred bootstrap offsets with a Mahalanobis r^2 at least as large (floored at 1 / (n + 1)).
The interval of the offset's length is the 16-84% (2.5-97.5%) range of |d + sqrt(w) (d_b - mean)|,
with w the regions' widening. Distances in kpc are physical at the lens,
R = theta D_l (angular-diameter distance; Hogg 1999).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.peak_finding import PEAK_REGION_WIDENING, ConfidenceRegion, bootstrap_regions


@dataclass
class PeakOffset:
    """Offset of one gas or light peak from one mass peak (arcsec, x east, y north)."""

    mass_index: int
    kind: str
    other_index: int
    dx_arcsec: float
    dy_arcsec: float
    distance_arcsec: float
    distance_kpc: float
    distance68_arcsec: tuple[float, float]
    distance95_arcsec: tuple[float, float]
    regions: list[ConfidenceRegion]
    pvalue_nonzero: float
    significance_sigma: float
    n_pairs: int
    pvalue_bootstrap: float
    covariance_arcsec2: np.ndarray
    region_quantiles: list[float]

    def as_dict(self, kpc_per_arcsec: float) -> dict:
        return {
            "mass_peak": self.mass_index + 1, "map": self.kind, "other_peak": self.other_index + 1,
            "dx_arcsec": self.dx_arcsec, "dy_arcsec": self.dy_arcsec,
            "offset_arcsec": self.distance_arcsec, "offset_kpc": self.distance_kpc,
            "offset_interval68_arcsec": list(self.distance68_arcsec),
            "offset_interval95_arcsec": list(self.distance95_arcsec),
            "offset_interval68_kpc": [v * kpc_per_arcsec for v in self.distance68_arcsec],
            "offset_interval95_kpc": [v * kpc_per_arcsec for v in self.distance95_arcsec],
            "regions": [r.as_dict() for r in self.regions],
            "pvalue_zero_offset": self.pvalue_nonzero, "significance_sigma": self.significance_sigma,
            "pvalue_zero_offset_bootstrap": self.pvalue_bootstrap,
            "bootstrap_pairs": self.n_pairs,
        }


def kpc_per_arcsec(d_l_mpc: float) -> float:
    """Physical kpc per arcsec at an angular-diameter distance D_l (small angles)."""
    return float(ARCSEC_RAD * d_l_mpc * 1000.0)


def match_offsets(mass_peaks, other_peaks, *, kind: str, d_l_mpc: float, max_match_arcsec: float
                  ) -> list[PeakOffset]:
    """Offsets of the nearest ``other_peaks`` (gas or light) from each of ``mass_peaks``.

    Both lists hold objects with ``x_arcsec``, ``y_arcsec`` and ``samples_xy_arcsec`` (n, 2).
    Mass peaks with no other peak within ``max_match_arcsec`` get no entry.
    """
    scale = kpc_per_arcsec(d_l_mpc)
    out = []
    for i, m in enumerate(mass_peaks):
        if not other_peaks:
            break
        dist = [np.hypot(o.x_arcsec - m.x_arcsec, o.y_arcsec - m.y_arcsec) for o in other_peaks]
        j = int(np.argmin(dist))
        if dist[j] > max_match_arcsec:
            continue
        o = other_peaks[j]
        d = np.array([o.x_arcsec - m.x_arcsec, o.y_arcsec - m.y_arcsec])
        n = min(len(m.samples_xy_arcsec), len(o.samples_xy_arcsec))
        db = np.asarray(o.samples_xy_arcsec[:n], float) - np.asarray(m.samples_xy_arcsec[:n], float)
        db = db[np.all(np.isfinite(db), axis=1)]
        cov_d, regions, qs = bootstrap_regions(d, db)
        if db.shape[0] >= 5:
            centred = db - db.mean(axis=0)
            cov = centred.T @ centred / centred.shape[0]
            inv = np.linalg.inv(cov + np.eye(2) * 1e-12 * max(np.trace(cov), 1e-30))
            r0 = float(d @ inv @ d) / PEAK_REGION_WIDENING  # the same widening as the regions
            r_b = np.einsum("ni,ij,nj->n", centred, inv, centred)
            p_emp = max(float(np.count_nonzero(r_b >= r0)) / db.shape[0], 1.0 / (db.shape[0] + 1))
            p = float(stats.chi2.sf(r0, 2))
            dist_b = np.hypot(*(np.sqrt(PEAK_REGION_WIDENING) * centred + d).T)  # widened like the regions
            q = np.quantile(dist_b, [0.16, 0.84, 0.025, 0.975])
        else:
            p = p_emp = np.nan
            q = np.full(4, np.nan)
        out.append(PeakOffset(i, kind, j, float(d[0]), float(d[1]), float(np.hypot(*d)),
                              float(np.hypot(*d) * scale), (float(q[0]), float(q[1])), (float(q[2]), float(q[3])),
                              regions, p, float(stats.norm.isf(p / 2)) if np.isfinite(p) else np.nan,
                              int(db.shape[0]), p_emp, cov_d, qs))
    return out
