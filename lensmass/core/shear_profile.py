"""Tangential and cross shear about a centre, binned in radius; excess surface density.

Conventions (Bartelmann & Schneider 2001, Phys. Rep. 340, 291, sec. 5): positions are
projected on the tangent plane at the centre (gnomonic projection; x toward east,
y toward north); the position angle phi of a galaxy is measured from east toward north;
  e_t = -(e1 cos 2 phi + e2 sin 2 phi),   e_x = e1 sin 2 phi - e2 cos 2 phi,
with e1 > 0 elongated east-west. A weighted mean of e_t estimates the reduced
tangential shear g_t = gamma_t / (1 - kappa) (Seitz & Schneider 1997, A&A 318, 687).
The excess surface density Delta Sigma = Sigma_cr g_t uses each galaxy's own Sigma_cr,
weighted by w Sigma_cr^-2 (common practice, the minimum-variance weight for Delta Sigma).

Everything is vectorised over galaxies (``numpy.bincount``); the sums behind every profile come
from the block engine of :mod:`lensmass.core.shear_sums`, shared with streamed and distributed
catalogues.

The geometry lives in :mod:`lensmass.core.shear_geometry` and the source selection and
lensing efficiency in :mod:`lensmass.core.shear_sources`; their public names are re-exported here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.shear_geometry import (
    radius_arcsec,
    sky_offsets_and_radius,
    take_where,
    tangent_plane_offsets_arcsec,
    tangent_plane_to_sky,
    tangential_cross,
    within_radii,
)
from lensmass.core.shear_sources import (
    DEFAULT_Z_MARGIN,
    DROP_REASONS,
    lens_distance_mpc,
    lensing_efficiency,
    select_sources,
)

__all__ = ["DROP_REASONS", "DEFAULT_Z_MARGIN", "tangent_plane_offsets_arcsec", "tangent_plane_to_sky", "radius_arcsec",
           "sky_offsets_and_radius", "within_radii", "tangential_cross", "take_where", "select_sources",
           "lens_distance_mpc", "lensing_efficiency", "radial_bin_edges",
           "ModelCells", "ShearProfile", "FineProfile", "profile_subbin_edges", "shear_profile"]

_RADIAL_SUBBINS = 8  # as lensmass.core.shear_sums.RADIAL_SUBBINS




# ---------------------------------------------------------------- binning
def radial_bin_edges(r_min: float, r_max: float, n_bins: int, *, log: bool = True) -> np.ndarray:
    """Bin edges from r_min to r_max: logarithmic (default) or linear spacing.

    Examples
    --------
    >>> radial_bin_edges(1.0, 100.0, 2).tolist()
    [1.0, 10.0, 100.0]
    """
    if not (np.isfinite(r_min) and np.isfinite(r_max) and 0 <= r_min < r_max):
        raise LensInputError(f"The radial range needs 0 <= rmin < rmax, got {r_min:g} to {r_max:g}.")
    if int(n_bins) < 1:
        raise LensInputError(f"The number of radial bins must be at least 1, got {n_bins}.")
    if log:
        if r_min <= 0:
            raise LensInputError("Logarithmic bins need rmin > 0: give a positive inner radius (`r_min`) or use linear bins.")
        return np.geomspace(r_min, r_max, int(n_bins) + 1)
    return np.linspace(r_min, r_max, int(n_bins) + 1)


@dataclass
class ModelCells:
    """Galaxies of each bin grouped in small cells of radius and lensing efficiency.

    A model averaged over the cells with their weights reproduces the weighted
    mean over the bin's galaxies to second order in the cell width (the spread of
    D_ls / D_s inside a cell enters through ``beta_var``), which makes the fits exact
    for a noiseless catalogue without evaluating the model per galaxy.
    """

    bin_index: np.ndarray
    theta_arcsec: np.ndarray
    beta: np.ndarray
    beta_var: np.ndarray
    weight: np.ndarray
    n_bins: int

    def bin_average(self, values: np.ndarray) -> np.ndarray:
        """Weighted bin means of a model evaluated on the cells (last axis = cells)."""
        values = np.asarray(values, float)
        onehot = np.zeros((self.weight.size, self.n_bins))
        onehot[np.arange(self.weight.size), self.bin_index] = self.weight
        totals = onehot.sum(axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            return (values @ onehot) / totals


@dataclass
class ShearProfile:
    """A binned tangential/cross shear profile (arrays of length n_bins).

    ``g_t_err``/``g_x_err`` come from the shape noise in each bin; the ``_boot``
    errors from a bootstrap over galaxies (NaN when not run). ``delta_sigma`` is in
    Msun / Mpc^2 (None without redshifts). Empty bins hold NaN. ``fine`` holds the
    same profile in the sub-bins (each bin split in equal parts of its spacing).
    """

    edges_arcsec: np.ndarray
    r_mean_arcsec: np.ndarray
    n_galaxies: np.ndarray
    weight_sum: np.ndarray
    g_t: np.ndarray
    g_t_err: np.ndarray
    g_x: np.ndarray
    g_x_err: np.ndarray
    g_t_err_boot: np.ndarray
    g_x_err_boot: np.ndarray
    delta_sigma_msun_per_mpc2: np.ndarray | None
    delta_sigma_err_msun_per_mpc2: np.ndarray | None
    cells: ModelCells | None
    beta_mean: float
    d_l_mpc: float | None
    fine: "FineProfile | None" = None

    @property
    def usable(self) -> np.ndarray:
        """Bins with at least two galaxies and a finite, positive error."""
        return (self.n_galaxies >= 2) & np.isfinite(self.g_t_err) & (self.g_t_err > 0)


@dataclass
class FineProfile:
    """Tangential shear and Delta Sigma in the sub-bins of a profile (for the zeta integral)."""

    edges_arcsec: np.ndarray
    g_t: np.ndarray
    g_t_err: np.ndarray
    delta_sigma_msun_per_mpc2: np.ndarray | None
    delta_sigma_err_msun_per_mpc2: np.ndarray | None


def _fine_edges(edges: np.ndarray, n_sub: int) -> np.ndarray:
    """Sub-bin edges matching :func:`_fine_index` (log, linear, or linear inside each bin)."""
    n_bins = edges.size - 1
    lo, hi = edges[0], edges[-1]
    if lo > 0 and np.allclose(np.diff(np.log(edges)), np.log(hi / lo) / n_bins, rtol=1e-9, atol=0):
        return np.geomspace(lo, hi, n_bins * n_sub + 1)
    parts = [np.linspace(edges[i], edges[i + 1], n_sub + 1)[:-1] for i in range(n_bins)]
    return np.concatenate(parts + [edges[-1:]])


def profile_subbin_edges(edges_arcsec) -> np.ndarray:
    """Edges of the sub-bins a profile with these bin edges reports in ``fine``."""
    return _fine_edges(np.asarray(edges_arcsec, float), _RADIAL_SUBBINS)


def _means_errors(sums: dict, p: str, w: str):
    """Weighted means of the two components and the pooled shape-noise error, from sums.

    sum w^2 (e - m)^2 = S(w^2 e^2) - 2 m S(w^2 e) + m^2 S(w^2), for both components.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        wsum = sums[w]
        mt = sums[p + "t"] / wsum
        mx = sums[p + "x"] / wsum
        var = (sums[p + "2ee"] - 2 * mt * sums[p + "2t"] - 2 * mx * sums[p + "2x"]
               + (mt * mt + mx * mx) * sums[p + "2"])
        err = np.sqrt(np.maximum(var, 0.0) / 2.0) / wsum
    return mt, mx, err


def _fine_index(theta: np.ndarray, edges: np.ndarray, n_sub: int) -> np.ndarray:
    """bin * n_sub + sub-bin of each radius (sub-bins equal in the bins' spacing); -1 outside.

    Logarithmic and linear edges are indexed directly (no search); other edges by bisection.
    """
    return _fine_indexer(edges, n_sub)(theta)


def fine_spacing(edges: np.ndarray, n_sub: int) -> tuple[bool, bool, float]:
    """(log_spaced, linear, scale) of bin edges: sub-bin u = ln(theta / lo) * scale or (theta - lo) * scale."""
    n_bins = edges.size - 1
    lo, hi = edges[0], edges[-1]
    with np.errstate(invalid="ignore", divide="ignore"):
        log_spaced = bool(lo > 0 and np.allclose(np.diff(np.log(edges)), np.log(hi / lo) / n_bins, rtol=1e-9, atol=0))
        linear = bool(not log_spaced and np.allclose(np.diff(edges), (hi - lo) / n_bins, rtol=1e-9, atol=0))
        scale = float(n_bins * n_sub / np.log(hi / lo)) if log_spaced else float(n_bins * n_sub / (hi - lo))
    return log_spaced, linear, scale


def _fine_indexer(edges: np.ndarray, n_sub: int):
    """:func:`_fine_index` as a function of theta, the spacing of the edges detected once."""
    n_bins = edges.size - 1
    lo, hi = edges[0], edges[-1]
    log_spaced, linear, scale = fine_spacing(edges, n_sub)

    def index(theta):
        with np.errstate(invalid="ignore", divide="ignore"):
            if log_spaced:
                u = np.log(theta * (1.0 / lo)) * scale
            elif linear:
                u = (theta - lo) * scale
            else:
                idx = np.searchsorted(edges, theta, side="right") - 1
                ok = (idx >= 0) & (idx < n_bins)
                idx = np.where(ok, idx, 0)
                frac = (theta - edges[idx]) / (edges[idx + 1] - edges[idx])
                u = np.where(ok, idx * n_sub + np.clip(frac * n_sub, 0, n_sub - 1e-9), -1.0)
        fine = np.floor(u)
        fine = np.where((theta >= lo) & (theta < hi), np.clip(fine, 0, n_bins * n_sub - 1), -1)
        return fine.astype(np.int64)

    return index


def _bootstrap_errors(sw, st, sx, n_boot, rng):
    """Bootstrap errors of the bin means from sums per (group, bin), shape (groups, n_bins)."""
    groups = sw.shape[0]
    counts = rng.multinomial(groups, np.full(groups, 1.0 / groups), size=n_boot).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        bt = (counts @ st) / (counts @ sw)
        bx = (counts @ sx) / (counts @ sw)
    return np.nanstd(bt, axis=0, ddof=1), np.nanstd(bx, axis=0, ddof=1)


def shear_profile(
    theta_arcsec,
    e_t,
    e_x,
    weight,
    edges_arcsec,
    *,
    beta=None,
    sigma_cr_msun_per_mpc2=None,
    d_l_mpc: float | None = None,
    n_bootstrap: int = 0,
    seed: int | None = 0,
    with_model_cells: bool = True,
) -> ShearProfile:
    """Weighted mean tangential and cross shear in radial bins, with errors.

    Parameters
    ----------
    theta_arcsec, e_t, e_x, weight : array_like
        Per-galaxy radius, tangential and cross ellipticity, and weight (already selected).
    edges_arcsec : array_like
        Increasing bin edges; galaxies outside are ignored.
    beta : array_like, optional
        D_ls / D_s per galaxy (or one value), used to group galaxies for the model fits.
    sigma_cr_msun_per_mpc2 : array_like, optional
        Per-galaxy Sigma_cr: adds the excess surface density Delta Sigma = Sigma_cr g_t.
    with_model_cells : bool
        Group the galaxies in cells for the model fits (skip when no fit follows).
    n_bootstrap : int
        Bootstrap resamplings over galaxies (0 to skip): galaxies are hashed by their
        index into 2000 groups (:func:`lensmass.core.shear_sums.bootstrap_group`) that are
        resampled.

    Notes
    -----
    Shape-noise error of a bin: sqrt(sum w^2 [(e_t - <e_t>)^2 + (e_x - <e_x>)^2] / 2) / sum w,
    pooling both components (common practice; Bartelmann & Schneider 2001, sec. 4.2).

    Examples
    --------
    An SIS of theta_E = 15": e_t = theta_E / (2 theta); the mean over a bin [a, b] of galaxies spread
    evenly in radius is (theta_E / 2) ln(b / a) / (b - a):

    >>> theta = np.linspace(20.0, 300.0, 5000)
    >>> p = shear_profile(theta, 15.0 / (2 * theta), np.zeros(5000), np.ones(5000), np.array([20.0, 60.0, 150.0, 300.0]))
    >>> bool(np.allclose(p.g_t, [7.5 * np.log(b / a) / (b - a) for a, b in [(20, 60), (60, 150), (150, 300)]], rtol=1e-3))
    True
    >>> p.n_galaxies.tolist()
    [715, 1606, 2678]
    """
    from lensmass.core.shear_sums import galaxy_sums, galaxy_layout, profile_from_sums

    layout = galaxy_layout(edges_arcsec, bootstrap=bool(n_bootstrap), seed=seed)
    sums = galaxy_sums(layout, theta_arcsec, e_t, e_x, weight, beta, sigma_cr_msun_per_mpc2)
    return profile_from_sums(sums, layout, n_bootstrap=n_bootstrap, with_sigma_cr=sigma_cr_msun_per_mpc2 is not None,
                             with_model_cells=with_model_cells, d_l_mpc=d_l_mpc)
