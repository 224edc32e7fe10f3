"""Stacked galaxy-galaxy lensing: Delta Sigma(R) around many lenses, each at its own redshift.

For every lens-source pair with z_s > z_l + margin (Sheldon et al. 2004, AJ 127, 2544; Mandelbaum
et al. 2005, MNRAS 361, 1287; common practice):

* R = D_l(z_l) theta, the physical projected separation at the lens (theta the true angle);
* e_t, e_x about the lens in the convention of :mod:`lensmass.core.shear_profile`;
* Sigma_cr^-1 = 4 pi G D_l D_ls / (c^2 D_s) with the core distances (any curvature, Hogg 1999);
* the pair weight w_ls = w_l w_s Sigma_cr^-2 (minimum variance for Delta Sigma), so that
  Delta Sigma_L(R) = sum w_ls Sigma_cr e_t / sum w_ls.

The same sums around random points (the lenses' footprint and redshifts) give Delta Sigma_R,
which carries any additive shear systematic and the geometry of the survey's edges; the boost
factor B(R) = (sum_ls w_ls / sum_l w_l) / (sum_rs w_rs / sum_r w_r) corrects for sources
physically associated with the lenses (diluting the signal); the estimate is
  Delta Sigma(R) = B(R) Delta Sigma_L(R) - Delta Sigma_R(R)
(Sheldon et al. 2004; Singh et al. 2017, MNRAS 471, 3827, for the random subtraction).

The covariance is a delete-one jackknife over sky patches (k-means on the lenses' unit vectors,
scipy.cluster.vq.kmeans2; every sum is kept per patch): C = (N-1)/N sum_k (DS_k - <DS>)(DS_k - <DS>)^T
(Efron 1982; common practice). An NFW halo (Wright & Brainerd 2000) with c from a c(M) relation,
(c fixed by the relation, or fitted under a prior) plus an optional central point mass M_* / (pi R^2)
for the galaxy's stars, is fitted to the stacked profile with that covariance (a t-likelihood whose
power, Percival et al. 2022, MNRAS 510, 3207, accounts for the covariance's noise; the chi^2 uses the
inverse debiased by the Hartlap et al. 2007, A&A 464, 399, factor (N - p - 2)/(N - 1)); the model of
each bin averages the halo over the pairs' lens redshifts and radii (lens redshift cells) with the
pairs' weights, as the data do (:mod:`lensmass.core.stack_fit`; the point mass fixed, or fitted with
M200 under a prior).

The sums are per (patch, radial bin) and per (lens-redshift cell, bin): they add over blocks of
sources, so a source catalogue streams or runs on a Dask cluster like the shear profile
(:mod:`lensmass.core.shear_sums`). Each source block is indexed with a scipy.spatial.cKDTree on
unit vectors.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from lensmass.core.constants import C2_OVER_4PIG_MSUN_PER_MPC
from lensmass.core.errors import LensInputError

#: Lens-redshift cells of the model average.
Z_CELLS = 8
#: Radial sub-bins per bin of the model average (the model is convex in R).
MODEL_SUBBINS = 8
#: Pairs handled at once (memory of one chunk: about 30 arrays of this length).
_PAIR_CHUNK = 1 << 20
_SUM_KEYS = ("n", "w", "wr", "t", "x", "s2")
_MODEL_KEYS = ("w", "wr", "wz", "wi")


def unit_vectors(ra_deg, dec_deg) -> np.ndarray:
    """(n, 3) unit vectors of sky positions."""
    ra, dec = np.radians(np.asarray(ra_deg, float)), np.radians(np.asarray(dec_deg, float))
    cd = np.cos(dec)
    return np.stack([cd * np.cos(ra), cd * np.sin(ra), np.sin(dec)], axis=-1)


@dataclass
class PointSet:
    """Lenses (or random points): positions, redshifts, weights and jackknife patch of each."""

    ra_deg: np.ndarray
    dec_deg: np.ndarray
    z: np.ndarray
    weight: np.ndarray
    patch: np.ndarray

    @property
    def size(self) -> int:
        return int(self.ra_deg.size)


@dataclass(frozen=True)
class StackLayout:
    """Bins, cosmology and cells of a stack; fixed before any source is read (picklable)."""

    edges_mpc: tuple[float, ...]
    cosmo: Any
    n_patches: int
    z_cell_edges: tuple[float, ...]
    z_margin: float = 0.1

    @property
    def n_bins(self) -> int:
        return len(self.edges_mpc) - 1


@dataclass(eq=False)
class StackSums:
    """Sums per (patch, bin) around lenses and randoms, per (z cell, bin) for the model; they add."""

    lens: dict[str, np.ndarray]
    random: dict[str, np.ndarray]
    model: dict[str, np.ndarray]
    n_sources: int = 0
    n_sources_used: int = 0

    def __add__(self, other):
        if isinstance(other, int) and other == 0:
            return self
        def add(a, b):
            return {k: v + b[k] for k, v in a.items()}

        return StackSums(add(self.lens, other.lens), add(self.random, other.random), add(self.model, other.model),
                         self.n_sources + other.n_sources, self.n_sources_used + other.n_sources_used)

    __radd__ = __add__


def empty_stack_sums(layout: StackLayout) -> StackSums:
    shape = (layout.n_patches, layout.n_bins)
    zshape = (len(layout.z_cell_edges) - 1, layout.n_bins * MODEL_SUBBINS)
    return StackSums({k: np.zeros(shape) for k in _SUM_KEYS}, {k: np.zeros(shape) for k in _SUM_KEYS},
                     {k: np.zeros(zshape) for k in _MODEL_KEYS})


def jackknife_patches(ra_deg, dec_deg, n_patches: int, seed: int = 0) -> np.ndarray:
    """Centres ((n, 3) unit vectors) of ``n_patches`` sky patches: k-means on the points' unit vectors
    (scipy.cluster.vq.kmeans2, k-means++ start, fixed seed)."""
    from scipy.cluster.vq import kmeans2

    xyz = unit_vectors(ra_deg, dec_deg)
    if n_patches < 2:
        raise LensInputError(f"A jackknife needs at least 2 patches, got {n_patches}: raise the number of patches (`n_patches`).")
    if xyz.shape[0] < n_patches:
        raise LensInputError(f"{xyz.shape[0]} lenses cannot fill {n_patches} jackknife patches: use fewer patches (`n_patches`).")
    sample = xyz if xyz.shape[0] <= 200_000 else xyz[np.random.default_rng(seed).choice(xyz.shape[0], 200_000, False)]
    centres, _ = kmeans2(sample, n_patches, minit="++", seed=seed)
    norm = np.linalg.norm(centres, axis=1, keepdims=True)
    return centres / np.where(norm > 0, norm, 1.0)


def assign_patches(ra_deg, dec_deg, centres: np.ndarray) -> np.ndarray:
    """Index of the nearest patch centre of each point."""
    from scipy.spatial import cKDTree

    return cKDTree(centres).query(unit_vectors(ra_deg, dec_deg))[1].astype(np.intp)


def stack_block_sums(layout: StackLayout, lenses: PointSet, randoms: PointSet | None, block) -> StackSums:
    """Sums of one block of sources (a :class:`lensmass.core.shear_sums.CatalogBlock` with a ``z``
    column) around every lens and every random point."""
    from scipy.spatial import cKDTree

    from lensmass.core.cosmology import distance_grid
    from lensmass.core.shear_profile import select_sources

    out = empty_stack_sums(layout)
    n = block.n_rows
    out.n_sources = n
    if block.z is None:
        raise LensInputError("Stacking needs each source's redshift: map a redshift column (`columns`, role z).")
    ra, dec = np.asarray(block.ra_deg, float), np.asarray(block.dec_deg, float)
    e1, e2 = np.asarray(block.e1, float), np.asarray(block.e2, float)
    w = np.ones(n) if block.weight is None else np.asarray(block.weight, float)
    z = np.asarray(block.z, float)
    z_min_lens = float(layout.z_cell_edges[0])
    ok, _ = select_sources(e1, e2, w, z, z_min_lens, positions_ok=np.isfinite(ra) & np.isfinite(dec) & (np.abs(dec) <= 90),
                           z_margin=layout.z_margin)
    index = np.flatnonzero(ok)
    out.n_sources_used = int(index.size)
    if index.size == 0:
        return out
    xyz = unit_vectors(ra.take(index), dec.take(index))
    index = index.take(cKDTree(xyz).indices)  # the tree's order: a lens's sources lie close in memory
    ra, dec, e1, e2, w, z = (a.take(index) for a in (ra, dec, e1, e2, w, z))
    grid = distance_grid(layout.cosmo)
    sources = {"ra": np.radians(ra), "sin_dec": np.sin(np.radians(dec)),
               "cos_dec": np.cos(np.radians(dec)), "e1": e1, "e2": e2, "w": w, "z": z, "dc": grid.comoving_mpc(z)}
    tree = cKDTree(unit_vectors(ra, dec))
    # sources per steradian in the block's RA/Dec box (RA span taken the short way round the sky)
    ra_sorted = np.sort(ra % 360.0)
    gaps = np.diff(np.concatenate([ra_sorted, ra_sorted[:1] + 360.0]))
    ra_span = max(360.0 - float(gaps.max()), 1e-3)
    box = np.radians(ra_span) * max(float(np.ptp(sources["sin_dec"])), 1e-6)
    sources["density"] = index.size / box
    for points, target, model in ((lenses, out.lens, out.model), (randoms, out.random, None)):
        if points is not None and points.size:
            _pair_sums(layout, grid, points, sources, tree, target, model)
    return out


def _lens_chunks(order: np.ndarray, theta_max: np.ndarray, density: float):
    """Chunks of lens indices (in redshift order) whose search discs hold about _PAIR_CHUNK sources in all,
    at ``density`` sources per steradian."""
    start = 0
    while start < order.size:
        disc = np.pi * theta_max.take(order[start:start + 1024]) ** 2
        expected = np.cumsum(disc * density)
        k = int(np.searchsorted(expected, _PAIR_CHUNK)) + 1
        yield order[start:start + max(1, k)]
        start += max(1, k)


def _pair_sums(layout: StackLayout, grid, points: PointSet, src: dict, tree, target: dict, model: dict | None) -> None:
    """Add the sums of every (point, source) pair within the outer radius to ``target`` (and ``model``)."""
    from scipy.spatial import cKDTree

    edges = np.asarray(layout.edges_mpc, float)
    z_l = np.asarray(points.z, float)
    dc_l = grid.comoving_mpc(z_l)
    d_l = grid.transverse_mpc(dc_l) / (1 + z_l)
    theta_max = edges[-1] / d_l
    chord = 2 * np.sin(np.minimum(theta_max, np.pi) / 2)
    xyz_l = unit_vectors(points.ra_deg, points.dec_deg)
    ra_l = np.radians(np.asarray(points.ra_deg, float))
    dec_l = np.radians(np.asarray(points.dec_deg, float))
    sin_l, cos_l = np.sin(dec_l), np.cos(dec_l)
    n_bins = layout.n_bins
    n_z = len(layout.z_cell_edges) - 1
    z_edges = np.asarray(layout.z_cell_edges, float)
    log_lo, log_span = np.log(edges[0]), np.log(edges[-1] / edges[0])  # bins are logarithmic
    # lenses in slices of redshift (each with its own largest angle), then chunks of about _PAIR_CHUNK pairs;
    # the pairs come from a dual-tree search (cKDTree.sparse_distance_matrix), as index arrays, not lists
    order = np.argsort(z_l, kind="stable")
    for chunk in _lens_chunks(order, theta_max, src["density"]):
        found = cKDTree(xyz_l[chunk]).sparse_distance_matrix(tree, float(chord[chunk].max()), output_type="ndarray")
        if found.size == 0:
            continue
        li = chunk.take(found["i"])  # lens of each pair
        j = found["j"].astype(np.intp)  # source of each pair
        del found
        zs = src["z"].take(j)
        zl = z_l.take(li)
        behind = zs > zl + layout.z_margin
        if not np.all(behind):
            keep = np.flatnonzero(behind)
            j, li, zs, zl = j.take(keep), li.take(keep), zs.take(keep), zl.take(keep)
        if j.size == 0:
            continue
        x, y, theta = pair_offsets(ra_l.take(li), sin_l.take(li), cos_l.take(li), src["ra"].take(j),
                                   src["sin_dec"].take(j), src["cos_dec"].take(j))
        r = d_l.take(li) * theta
        b = np.searchsorted(edges, r, side="right") - 1
        inside = (b >= 0) & (b < n_bins)
        if not np.all(inside):
            keep = np.flatnonzero(inside)
            j, li, zs, zl, x, y, r, b = (a.take(keep) for a in (j, li, zs, zl, x, y, r, b))
        if j.size == 0:
            continue
        xx, yy = x * x, y * y
        with np.errstate(invalid="ignore", divide="ignore"):
            inv = 1.0 / (xx + yy)
        cos2, sin2 = (xx - yy) * inv, 2 * x * y * inv
        g1, g2 = src["e1"].take(j), src["e2"].take(j)
        e_t = -(g1 * cos2 + g2 * sin2)
        e_x = g1 * sin2 - g2 * cos2
        sigma_cr = pair_sigma_cr(grid, dc_l.take(li), d_l.take(li), src["dc"].take(j), zs)
        wls = points.weight.take(li) * src["w"].take(j) / (sigma_cr * sigma_cr)
        key = points.patch.take(li) * n_bins + b
        size = layout.n_patches * n_bins
        st = wls * sigma_cr * e_t
        sx = wls * sigma_cr * e_x
        values = {"n": None, "w": wls, "wr": wls * r, "t": st, "x": sx, "s2": 0.5 * (st * st + sx * sx)}
        for k, v in values.items():
            target[k] += np.bincount(key, weights=v, minlength=size).reshape(layout.n_patches, n_bins)
        if model is not None:
            zc = np.clip(np.searchsorted(z_edges, zl, side="right") - 1, 0, n_z - 1)
            sub = np.clip(((np.log(r) - log_lo) * (n_bins * MODEL_SUBBINS / log_span)).astype(np.intp), 0,
                          n_bins * MODEL_SUBBINS - 1)
            mkey = zc * (n_bins * MODEL_SUBBINS) + sub
            n_m = n_bins * MODEL_SUBBINS
            for k, v in (("w", wls), ("wr", wls * r), ("wz", wls * zl), ("wi", wls / sigma_cr)):
                model[k] += np.bincount(mkey, weights=v, minlength=n_z * n_m).reshape(n_z, n_m)


def pair_offsets(ra_l_rad, sin_dec_l, cos_dec_l, ra_s_rad, sin_dec_s, cos_dec_s):
    """Direction (x east, y north, unnormalised) and true angle (rad) of each source seen from its lens:
    the tangent plane at the lens (Calabretta & Greisen 2002, zenithal projection)."""
    d_ra = ra_s_rad - ra_l_rad
    cos_dra = np.cos(d_ra)
    x = cos_dec_s * np.sin(d_ra)
    y = cos_dec_l * sin_dec_s - sin_dec_l * cos_dec_s * cos_dra
    cos_c = sin_dec_l * sin_dec_s + cos_dec_l * cos_dec_s * cos_dra
    return x, y, np.arctan2(np.hypot(x, y), cos_c)


def pair_sigma_cr(grid, dc_l_mpc, d_l_mpc, dc_s_mpc, z_s):
    """Sigma_cr (Msun / Mpc^2) of lens-source pairs from comoving distances (Hogg 1999, eqs. 16 and 19)."""
    d_ls = grid.transverse_mpc(dc_s_mpc - dc_l_mpc) / (1 + z_s)
    d_s = grid.transverse_mpc(dc_s_mpc) / (1 + z_s)
    return C2_OVER_4PIG_MSUN_PER_MPC * d_s / (d_l_mpc * d_ls)


@dataclass
class StackProfile:
    """The stacked profile and its pieces (Msun / Mpc^2, radii in Mpc), with the jackknife covariance."""

    edges_mpc: np.ndarray
    r_mean_mpc: np.ndarray
    n_pairs: np.ndarray
    delta_sigma: np.ndarray
    delta_sigma_err: np.ndarray
    covariance: np.ndarray
    delta_sigma_lens: np.ndarray
    delta_sigma_random: np.ndarray | None
    boost: np.ndarray
    delta_sigma_cross: np.ndarray
    shape_noise_err: np.ndarray
    jackknife: np.ndarray
    n_patches_used: int
    notes: list[str] = field(default_factory=list)


def _estimate(lens: dict, random: dict | None, lens_weight: float, random_weight: float, use_boost: bool):
    """B Delta Sigma_L - Delta Sigma_R (and its parts) from sums over (already selected) patches."""
    with np.errstate(invalid="ignore", divide="ignore"):
        ds_l = lens["t"] / lens["w"]
        dx_l = lens["x"] / lens["w"]
        if random is None:
            return ds_l, ds_l, None, np.ones_like(ds_l), dx_l
        ds_r = random["t"] / random["w"]
        dx_r = random["x"] / random["w"]
        boost = (lens["w"] / lens_weight) / (random["w"] / random_weight) if use_boost else np.ones_like(ds_l)
        return boost * ds_l - ds_r, ds_l, ds_r, boost, boost * dx_l - dx_r


def stack_profile(sums: StackSums, layout: StackLayout, lenses: PointSet, randoms: PointSet | None, *,
                  boost: bool = True) -> StackProfile:
    """Delta Sigma(R), its parts and the jackknife covariance from the summed pairs."""
    lw = np.bincount(lenses.patch, weights=lenses.weight, minlength=layout.n_patches)
    rw = None if randoms is None else np.bincount(randoms.patch, weights=randoms.weight, minlength=layout.n_patches)
    def total(d):
        return {k: v.sum(axis=0) for k, v in d.items()}

    lens_t = total(sums.lens)
    rand_t = total(sums.random) if randoms is not None else None
    if randoms is not None and rand_t is not None and np.any((lens_t["w"] > 0) & ~(rand_t["w"] > 0)):
        raise LensInputError("Some radial bins have sources around the lenses but none around the random points: "
                             "give more random points (`randoms` or `n_randoms`).")
    ds, ds_l, ds_r, b, dx = _estimate(lens_t, rand_t, lw.sum(), 0 if rw is None else rw.sum(), boost)
    # delete-one jackknife over the patches that hold lenses
    patches = np.flatnonzero(lw > 0)
    rows = []
    for k in patches:
        lens_k = {key: lens_t[key] - sums.lens[key][k] for key in lens_t}
        rand_k = None if rand_t is None else {key: rand_t[key] - sums.random[key][k] for key in rand_t}
        rows.append(_estimate(lens_k, rand_k, lw.sum() - lw[k], 0 if rw is None else rw.sum() - rw[k], boost)[0])
    jk = np.array(rows)
    n_p = jk.shape[0]
    with np.errstate(invalid="ignore"):
        dev = jk - jk.mean(axis=0)
        cov = (n_p - 1) / n_p * dev.T @ dev
    with np.errstate(invalid="ignore", divide="ignore"):
        r_mean = lens_t["wr"] / lens_t["w"]
        noise = np.sqrt(lens_t["s2"]) / lens_t["w"]
    notes = []
    if n_p < layout.n_bins + 3:
        notes.append(f"Only {n_p} jackknife patches hold lenses for {layout.n_bins} bins: the covariance is too "
                     "noisy to invert; use more patches or fewer bins.")
    return StackProfile(np.asarray(layout.edges_mpc), r_mean, np.rint(lens_t["n"]).astype(np.int64), ds,
                        np.sqrt(np.diag(cov)), cov, ds_l, ds_r, b, dx, noise, jk, n_p, notes)


# the fit to the stacked profile lives in its own module; its names stay importable from here
from lensmass.core.stack_fit import (  # noqa: E402
    POINT_MASS_MAX_MSUN,
    StackFit,
    check_point_mass_prior,
    fit_stack_nfw,
    likelihood_power,
    nfw_delta_sigma_model,
    point_mass_log_prior,
)

__all__ = ["POINT_MASS_MAX_MSUN", "StackFit", "check_point_mass_prior", "fit_stack_nfw", "likelihood_power",
           "nfw_delta_sigma_model", "point_mass_log_prior"]
