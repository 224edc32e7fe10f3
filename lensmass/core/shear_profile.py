"""Tangential and cross shear about a centre, binned in radius; excess surface density.

Conventions (Bartelmann & Schneider 2001, Phys. Rep. 340, 291, sec. 5): positions are
projected on the tangent plane at the centre (gnomonic projection; x toward east,
y toward north); the position angle phi of a galaxy is measured from east toward north;
  e_t = -(e1 cos 2 phi + e2 sin 2 phi),   e_x = e1 sin 2 phi - e2 cos 2 phi,
with e1 > 0 elongated east-west. A weighted mean of e_t estimates the reduced
tangential shear g_t = gamma_t / (1 - kappa) (Seitz & Schneider 1997, A&A 318, 687).
The excess surface density Delta Sigma = Sigma_cr g_t uses each galaxy's own Sigma_cr,
weighted by w Sigma_cr^-2 (common practice, the minimum-variance weight for Delta Sigma).

Everything is vectorised over galaxies (``numpy.bincount``), so 10^7 galaxies fit in memory.

The geometry lives in :mod:`lensmass.core.shear_geometry` and the source selection and
lensing efficiency in :mod:`lensmass.core.shear_sources`; their public names are re-exported here.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.shear_geometry import (
    _BLOCK,
    radius_arcsec,
    sky_offsets_and_radius,
    take_where,
    tangent_plane_offsets_arcsec,
    tangent_plane_to_sky,
    tangential_cross,
    within_radii,
)
from lensmass.core.shear_sources import (
    _BETA_GRID_NODES,
    _BETA_ZMAX,
    DEFAULT_Z_MARGIN,
    DROP_REASONS,
    _beta_from_table,
    _beta_table,
    _lensed_blocks,
    lens_distance_mpc,
    lensed_sources,
    lensing_efficiency,
    select_sources,
)

__all__ = ["DROP_REASONS", "DEFAULT_Z_MARGIN", "tangent_plane_offsets_arcsec", "tangent_plane_to_sky", "radius_arcsec",
           "sky_offsets_and_radius", "within_radii", "tangential_cross", "take_where", "select_sources",
           "lens_distance_mpc", "lensing_efficiency", "lensed_sources", "catalog_shear_profile", "radial_bin_edges",
           "ModelCells", "ShearProfile", "FineProfile", "profile_subbin_edges", "shear_profile"]

_RADIAL_SUBBINS = 8
_BETA_CELLS = 4
_BOOTSTRAP_GROUPS = 2000



def catalog_shear_profile(mask, in_bins, theta_arcsec, x_arcsec, y_arcsec, e1, e2, weight, z_s, z_l: float, cosmo,
                          edges_arcsec, *, n_bootstrap: int = 0, seed: int | None = 0) -> "ShearProfile":
    """:func:`shear_profile` of the galaxies where ``mask`` holds, straight from the catalogue columns.

    The same profile as :func:`lensed_sources` followed by :func:`shear_profile` (with beta,
    Sigma_cr and the model cells), made in one pass over blocks of rows without arrays of the
    selected galaxies: for 10^6 galaxies, writing those arrays costs as much as the arithmetic.
    ``in_bins`` marks the rows of ``mask`` inside the edges (as :func:`within_radii` gives them);
    ``z_s`` is a per-galaxy column or one redshift for all. Sums are added block by block, so
    the numbers agree with the two-step route to rounding (about 1e-15).
    """
    edges = np.asarray(edges_arcsec, float)
    mask, in_bins = np.asarray(mask, bool), np.asarray(in_bins, bool)
    d_l = lens_distance_mpc(z_l, cosmo)
    fine_index = _fine_indexer(edges, _RADIAL_SUBBINS)
    n_inside = int(np.count_nonzero(in_bins))
    # D_ls / D_s as lensed_sources takes it: exact distances up to _BETA_GRID_NODES galaxies, else the table
    table = None if int(np.count_nonzero(mask)) <= _BETA_GRID_NODES else _beta_table(z_l, cosmo)

    def beta_of(z):
        return lensing_efficiency(z_l, z, cosmo)[0] if table is None else _beta_from_table(z, z_l, table, cosmo)

    if np.ndim(z_s) == 0:
        b_min = b_max = float(lensing_efficiency(z_l, np.array([float(z_s)]), cosmo)[0][0])
        z_col = None
    else:
        z_col = np.asarray(z_s, float)
        b_min, b_max = _beta_range(in_bins, z_col, beta_of, table)
    galaxies = _lensed_blocks(mask, (theta_arcsec, x_arcsec, y_arcsec, e1, e2, weight), z_col, beta_of, d_l,
                              beta_one=b_min)
    blocks = ((fine_index(block[0]), *block) for block in galaxies)
    if not b_min <= b_max:
        b_min = b_max = 0.0
    return _profile_from_blocks(blocks, edges, b_min, b_max, n_inside, True, d_l, n_bootstrap, seed, True)


def _beta_range(in_bins: np.ndarray, z: np.ndarray, beta_of, table) -> tuple[float, float]:
    """Smallest and largest D_ls / D_s over the rows in ``in_bins``: from their extreme redshifts when
    the tabulated D_ls / D_s rises with z_s (always in flat models; checked, as a closed one may turn), else per
    galaxy."""
    def in_bin_blocks():
        for start in range(0, z.size, _BLOCK):
            zb = z[start:start + _BLOCK].take(np.flatnonzero(in_bins[start:start + _BLOCK]))
            if zb.size:
                yield zb

    if table is not None:
        extremes = [(float(zb.min()), float(zb.max())) for zb in in_bin_blocks()]
        if not extremes:
            return np.inf, -np.inf
        z_lo, z_hi = min(e[0] for e in extremes), max(e[1] for e in extremes)
        if z_hi <= _BETA_ZMAX and np.all(np.diff(table[2]) >= 0):
            beta = beta_of(np.array([z_lo, z_hi]))
            return float(beta[0]), float(beta[1])
    ranges = [(float(b.min()), float(b.max())) for b in map(beta_of, in_bin_blocks())]
    if not ranges:
        return np.inf, -np.inf
    return min(r[0] for r in ranges), max(r[1] for r in ranges)


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
            raise LensInputError("Logarithmic bins need rmin > 0: give a positive --rmin or use linear bins.")
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


def _fine_indexer(edges: np.ndarray, n_sub: int):
    """:func:`_fine_index` as a function of theta, the spacing of the edges detected once."""
    n_bins = edges.size - 1
    lo, hi = edges[0], edges[-1]
    with np.errstate(invalid="ignore", divide="ignore"):
        log_spaced = lo > 0 and np.allclose(np.diff(np.log(edges)), np.log(hi / lo) / n_bins, rtol=1e-9, atol=0)
        linear = not log_spaced and np.allclose(np.diff(edges), (hi - lo) / n_bins, rtol=1e-9, atol=0)

    def index(theta):
        with np.errstate(invalid="ignore", divide="ignore"):
            if log_spaced:
                u = np.log(theta * (1.0 / lo)) * (n_bins * n_sub / np.log(hi / lo))
            elif linear:
                u = (theta - lo) * (n_bins * n_sub / (hi - lo))
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


def _cells_from_sums(sums: dict, n_bins: int, n_beta: int) -> ModelCells:
    wsum = sums["w"]
    keep = wsum > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        t = sums["wtheta"] / wsum
        b = sums["wbeta"] / wsum
        var = np.maximum(sums["wbeta2"] / wsum - b * b, 0.0)
    bins = np.arange(wsum.size) // (_RADIAL_SUBBINS * n_beta)
    return ModelCells(bins[keep], t[keep], b[keep], var[keep], wsum[keep], n_bins)


def _bootstrap_errors(sw, st, sx, n_boot, rng):
    """Bootstrap errors of the bin means from sums per (group, bin), shape (groups, n_bins)."""
    groups = sw.shape[0]
    counts = rng.multinomial(groups, np.full(groups, 1.0 / groups), size=n_boot).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        bt = (counts @ st) / (counts @ sw)
        bx = (counts @ sx) / (counts @ sw)
    return np.nanstd(bt, axis=0, ddof=1), np.nanstd(bx, axis=0, ddof=1)


def _block_sums(fine, theta, e_t, e_x, w, beta, sc, n_beta, b_min, b_max, size, with_model_cells):
    """Sums over one block of galaxies per (sub-bin, beta cell); galaxies outside the bins go to a
    trash cell that is cut off."""
    cell = np.where(fine >= 0, fine, size // n_beta).astype(np.intp, copy=False)
    beta = np.ones_like(theta) if beta is None else beta
    if n_beta > 1:
        bq = np.minimum(((beta - b_min) * (n_beta / (b_max - b_min))).astype(np.int64), n_beta - 1)
        cell = cell * n_beta + np.where(fine >= 0, bq, 0)
    w2 = w * w
    wb = w * beta
    weights = {"n": None, "w": w, "wtheta": w * theta, "st": w * e_t, "sx": w * e_x, "s2": w2,
               "s2t": w2 * e_t, "s2x": w2 * e_x, "s2ee": w2 * (e_t * e_t + e_x * e_x), "wbeta": wb}
    if with_model_cells:
        weights["wbeta2"] = wb * beta
    if sc is not None:
        finite = np.isfinite(sc)
        if not np.all(finite):  # sources not behind the lens carry no Delta Sigma weight
            wd = np.where(finite, w / (sc * sc), 0.0)
            sc = np.where(finite, sc, 0.0)
        else:
            wd = w / (sc * sc)
        wd2 = wd * wd
        dt, dx = sc * e_t, sc * e_x
        weights.update(d=wd, dt=wd * dt, dx=wd * dx, d2=wd2, d2t=wd2 * dt, d2x=wd2 * dx, d2ee=wd2 * (dt * dt + dx * dx))
    return {k: np.bincount(cell, weights=v, minlength=size + n_beta)[:size] for k, v in weights.items()}


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
        Bootstrap resamplings over galaxies (0 to skip). Galaxies are dealt at random
        into at most 2000 equal groups that are resampled; with fewer galaxies each
        galaxy is its own group, i.e. the ordinary bootstrap.

    Notes
    -----
    Shape-noise error of a bin: sqrt(sum w^2 [(e_t - <e_t>)^2 + (e_x - <e_x>)^2] / 2) / sum w,
    pooling both components (common practice; Bartelmann & Schneider 2001, sec. 4.2).
    """
    edges = np.asarray(edges_arcsec, float)
    n_bins = edges.size - 1
    n_fine = n_bins * _RADIAL_SUBBINS
    theta = np.asarray(theta_arcsec, float)
    e_t = np.asarray(e_t, float)
    e_x = np.asarray(e_x, float)
    w = np.asarray(weight, float)
    beta_arr = None if beta is None else np.broadcast_to(np.asarray(beta, float), theta.shape)
    sc_arr = (None if sigma_cr_msun_per_mpc2 is None
              else np.broadcast_to(np.asarray(sigma_cr_msun_per_mpc2, float), theta.shape))
    blocks = [slice(i, i + _BLOCK) for i in range(0, theta.size, _BLOCK)]
    fine = np.empty(theta.size, np.int32 if n_fine < 2**31 - 1 else np.int64)
    b_min, b_max = np.inf, -np.inf  # range of beta over the galaxies inside the bins
    fine_index = _fine_indexer(edges, _RADIAL_SUBBINS)
    for b in blocks:
        fine[b] = f = fine_index(theta[b])
        if beta_arr is not None and f.size:
            # (np.min with where= is ~20x slower than a plain reduction, so take the inside values)
            inside = beta_arr[b] if f.min() >= 0 else beta_arr[b].take(np.flatnonzero(f >= 0))
            if inside.size:
                b_min, b_max = min(b_min, float(inside.min())), max(b_max, float(inside.max()))
    if not b_min <= b_max:
        b_min = b_max = 0.0

    blocks = ((fine[b], theta[b], e_t[b], e_x[b], w[b], None if beta_arr is None else beta_arr[b],
               None if sc_arr is None else sc_arr[b]) for b in blocks)
    return _profile_from_blocks(blocks, edges, b_min, b_max, int(np.count_nonzero(fine >= 0)), sc_arr is not None,
                                d_l_mpc, n_bootstrap, seed, with_model_cells)


def _profile_from_blocks(blocks, edges, b_min, b_max, n_inside, with_sigma_cr, d_l_mpc, n_bootstrap, seed,
                         with_model_cells) -> ShearProfile:
    """The profile from blocks (sub-bin index, theta, e_t, e_x, w, beta or None, Sigma_cr or None),
    given the range of beta over the ``n_inside`` galaxies inside the bins."""
    n_bins = edges.size - 1
    n_fine = n_bins * _RADIAL_SUBBINS
    # one index (sub-bin x beta cell) and one set of sums; bins, sub-bins and cells aggregate them
    n_beta = 1
    if with_model_cells and b_max - b_min > 1e-12 * max(b_max, 1e-300):
        n_beta = _BETA_CELLS
    size = n_fine * n_beta
    boot = None
    if n_bootstrap and n_inside > 1:
        # galaxies dealt at random into equal groups (in the order they come), sums per (group, bin)
        rng = np.random.default_rng(seed)
        groups = min(n_inside, _BOOTSTRAP_GROUPS)
        gid = rng.permutation(n_inside) % groups
        boot, boot_size, pos = [np.zeros(groups * n_bins) for _ in range(3)], groups * n_bins, 0
    cell_sums: dict[str, np.ndarray] = {}
    for fine, theta, e_t, e_x, w, beta, sc in blocks:
        sums_b = _block_sums(fine, theta, e_t, e_x, w, beta, sc, n_beta, b_min, b_max, size, with_model_cells)
        for k, v in sums_b.items():
            cell_sums[k] = cell_sums[k] + v if k in cell_sums else v
        if boot is not None:
            index = np.flatnonzero(fine >= 0)
            key = gid[pos:pos + index.size] * n_bins + fine.take(index) // _RADIAL_SUBBINS
            w_in = w.take(index)
            for total, values in zip(boot, (w_in, w_in * e_t.take(index), w_in * e_x.take(index))):
                total += np.bincount(key, weights=values, minlength=boot_size)
            pos += index.size
    if not cell_sums:  # no galaxies
        empty = np.zeros(0)
        cell_sums = _block_sums(np.zeros(0, np.int64), empty, empty, empty, empty, None,
                                empty if with_sigma_cr else None, n_beta, b_min, b_max, size, with_model_cells)
    fine_sums = {k: v.reshape(n_fine, n_beta).sum(axis=1) for k, v in cell_sums.items()}
    sums = {k: v.reshape(n_bins, _RADIAL_SUBBINS).sum(axis=1) for k, v in fine_sums.items()}

    count = sums["n"].astype(np.int64)
    wsum = sums["w"]
    with np.errstate(invalid="ignore", divide="ignore"):
        r_mean = sums["wtheta"] / wsum
    g_t, g_x, err = _means_errors(sums, "s", "w")
    ft, _, ferr = _means_errors(fine_sums, "s", "w")
    ds = ds_err = fds = fds_err = None
    if with_sigma_cr:
        ds, _, ds_err = _means_errors(sums, "d", "d")
        fds, _, fds_err = _means_errors(fine_sums, "d", "d")
    nan = np.full(n_bins, np.nan)
    boot_t, boot_x = nan, nan.copy()
    if boot is not None:
        boot_t, boot_x = _bootstrap_errors(*(b.reshape(groups, n_bins) for b in boot), int(n_bootstrap), rng)
    cells = _cells_from_sums(cell_sums, n_bins, n_beta) if with_model_cells else None
    fine_profile = FineProfile(_fine_edges(edges, _RADIAL_SUBBINS), ft, ferr, fds, fds_err)
    with np.errstate(invalid="ignore", divide="ignore"):
        beta_mean = float(cell_sums["wbeta"].sum() / cell_sums["w"].sum()) if count.sum() else float("nan")
    return ShearProfile(edges, r_mean, count, wsum, g_t, err, g_x, err.copy(), boot_t, boot_x,
                        ds, ds_err, cells, beta_mean, d_l_mpc, fine_profile)
