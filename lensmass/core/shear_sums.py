"""The one engine of the weak-lensing profile: blocks of catalogue rows to per-bin sums that add.

Every route to a shear profile (arrays in memory, files streamed block by block, partitions
on a Dask cluster) goes through :func:`catalog_block_sums` for each block of rows and adds
the resulting :class:`ShearSums`; :func:`profile_from_sums` then turns the totals into the
weighted means, shape-noise errors, bootstrap errors, Delta Sigma and the model cells the
fits use. Nothing in a block's sums depends on any other block, so the order and grouping
of the blocks changes the numbers only by floating-point rounding (about 1e-15).

What makes the sums additive:

* the layout (:class:`SumLayout`: bin edges, centre, lens redshift, cosmology, cell grid)
  is fixed before any row is read;
* the model cells split each radial sub-bin by D_ls / D_s on a fixed grid over [0, 1]
  (:data:`BETA_CELLS` cells) instead of the range of the data;
* the bootstrap groups are a hash of each row's place in the whole catalogue (the MurmurHash3
  finaliser, Appleby 2011), not a permutation of the selected rows.

The estimators are those of :mod:`lensmass.core.shear_profile` (weighted means of e_t and
e_x; Delta Sigma = Sigma_cr e_t with weights w / Sigma_cr^2, common practice).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from lensmass.core.cosmology import _cosmology_key
from lensmass.core.lensing import sigma_crit_msun_per_mpc2

#: Sub-bins per radial bin (for the zeta integral and the model cells).
RADIAL_SUBBINS = 8
#: Cells of D_ls / D_s per sub-bin, equal in width over [0, 1].
BETA_CELLS = 8
#: Bootstrap groups the rows are hashed into.
BOOTSTRAP_GROUPS = 2000
#: Rows per block of the element-wise passes (temporaries stay in the CPU cache).
BLOCK_ROWS = 1 << 15
#: Blocks of this many rows or more go through the compiled kernel (:mod:`lensmass.core.shear_kernel`), shorter
#: ones through the numpy passes (the reference; ``USE_KERNEL = False`` everywhere). Both give the same sums.
KERNEL_MIN_ROWS = 1 << 16
USE_KERNEL = True

_GALAXY_KEYS = ("n", "w", "wtheta", "st", "sx", "s2", "s2t", "s2x", "s2ee", "wbeta", "wbeta2")
_DELTA_SIGMA_KEYS = ("d", "dt", "dx", "d2", "d2t", "d2x", "d2ee")
_ANNULUS_KEYS = ("n", "w", "st", "sx", "s2", "s2t", "s2x", "s2ee") + _DELTA_SIGMA_KEYS


@dataclass(frozen=True)
class SumLayout:
    """Everything a block of rows needs to become sums; fixed before any row is read (picklable).

    ``edges_arcsec`` are the profile's bin edges; ``annulus_edges_arcsec`` optional extra bins
    (the zeta annulus when it does not fall on sub-bin edges); ``z_s`` one source redshift for
    every galaxy (None: each row's own ``z``); ``first_row`` offsets make bootstrap groups.
    """

    center_ra: float
    center_dec: float
    z_l: float
    cosmo: Any
    edges_arcsec: tuple[float, ...]
    z_s: float | None = None
    z_margin: float = 0.1
    annulus_edges_arcsec: tuple[float, ...] | None = None
    bootstrap: bool = False
    seed: int = 0

    @property
    def n_bins(self) -> int:
        return len(self.edges_arcsec) - 1

    @property
    def n_cells(self) -> int:
        return self.n_bins * RADIAL_SUBBINS * BETA_CELLS


@dataclass(eq=False)
class ShearSums:
    """Per-cell sums of a set of rows, and how many rows were read, used and dropped.

    ``cells`` maps a sum's name to an array over (radial sub-bin x beta cell); ``annulus`` the
    same over the extra annulus bins; ``boot`` the weight and weighted e_t, e_x per
    (bootstrap group, bin). Sums add with ``+`` (and ``sum()``).
    """

    cells: dict[str, np.ndarray]
    annulus: dict[str, np.ndarray] = field(default_factory=dict)
    boot: np.ndarray | None = None
    n_rows: int = 0
    n_usable: int = 0
    n_in_bins: int = 0
    n_near: int = 0
    dropped: dict[str, int] = field(default_factory=dict)

    def __add__(self, other: ShearSums) -> ShearSums:
        if isinstance(other, int) and other == 0:  # the start of ``sum()``
            return self
        return ShearSums(
            {k: v + other.cells[k] for k, v in self.cells.items()},
            {k: v + other.annulus[k] for k, v in self.annulus.items()},
            None if self.boot is None else self.boot + other.boot,
            self.n_rows + other.n_rows, self.n_usable + other.n_usable, self.n_in_bins + other.n_in_bins,
            self.n_near + other.n_near,
            {k: v + other.dropped.get(k, 0) for k, v in self.dropped.items()},
        )

    __radd__ = __add__

    @property
    def nbytes(self) -> int:
        arrays = list(self.cells.values()) + list(self.annulus.values()) + ([self.boot] if self.boot is not None else [])
        return int(sum(a.nbytes for a in arrays))


def empty_sums(layout: SumLayout) -> ShearSums:
    """Sums of no rows."""
    from lensmass.core.shear_profile import DROP_REASONS

    n_ann = 0 if layout.annulus_edges_arcsec is None else len(layout.annulus_edges_arcsec) - 1
    return ShearSums(
        {k: np.zeros(layout.n_cells) for k in _GALAXY_KEYS + _DELTA_SIGMA_KEYS},
        {k: np.zeros(n_ann) for k in _ANNULUS_KEYS} if n_ann else {},
        np.zeros((BOOTSTRAP_GROUPS, layout.n_bins, 3)) if layout.bootstrap else None,
        dropped={k: 0 for k in DROP_REASONS},
    )


@dataclass
class CatalogBlock:
    """One block of catalogue rows: columns (any numeric dtype) and the index of its first row."""

    ra_deg: np.ndarray
    dec_deg: np.ndarray
    e1: np.ndarray
    e2: np.ndarray
    weight: np.ndarray | None
    z: np.ndarray | None
    first_row: int = 0

    @property
    def n_rows(self) -> int:
        return int(np.shape(self.ra_deg)[0])


def block_sums(layout: SumLayout, block: CatalogBlock) -> ShearSums:
    """:func:`catalog_block_sums` of a :class:`CatalogBlock` (the function sent to every block)."""
    return catalog_block_sums(layout, block.ra_deg, block.dec_deg, block.e1, block.e2, block.weight, block.z,
                              block.first_row)


@dataclass(eq=False)
class Farthest:
    """The largest radius of a usable galaxy, and the selection tallies, of some rows (adds by max)."""

    theta_max_arcsec: float
    n_usable: int
    dropped: dict[str, int]

    def __add__(self, other: Farthest) -> Farthest:
        if isinstance(other, int) and other == 0:
            return self
        return Farthest(max(self.theta_max_arcsec, other.theta_max_arcsec), self.n_usable + other.n_usable,
                        {k: v + other.dropped.get(k, 0) for k, v in self.dropped.items()})

    __radd__ = __add__


def farthest_usable(selection: tuple, block: CatalogBlock) -> Farthest:
    """The farthest usable galaxy of a block from the centre; ``selection`` = (ra0, dec0, z_l, z_s, z_margin)."""
    from lensmass.core import shear_geometry as sg, shear_sources as ss

    if USE_KERNEL and block.n_rows >= KERNEL_MIN_ROWS:  # the compiled pass, same selection and projection
        from lensmass.core.shear_kernel import kernel_farthest
        return kernel_farthest(selection, block)
    ra0, dec0, z_l, z_s, margin = selection
    far = Farthest(-np.inf, 0, {k: 0 for k in ss.DROP_REASONS})
    for start in range(0, block.n_rows, BLOCK_ROWS):
        sl = slice(start, start + BLOCK_ROWS)
        x, y = sg._gnomonic(np.asarray(block.ra_deg[sl], float), np.asarray(block.dec_deg[sl], float), ra0, dec0)
        theta = sg._radius(x, y)
        e1, e2 = np.asarray(block.e1[sl], float), np.asarray(block.e2[sl], float)
        w = np.ones_like(e1) if block.weight is None else np.asarray(block.weight[sl], float)
        z = None if (z_s is not None or block.z is None) else np.asarray(block.z[sl], float)
        ok, tally = ss.select_sources(e1, e2, w, z, z_l, positions_ok=np.isfinite(theta), z_margin=margin)
        n_ok = int(np.count_nonzero(ok))
        part = Farthest(float(np.max(theta, where=ok, initial=-np.inf)) if n_ok else -np.inf, n_ok, tally)
        far = far + part
    return far


def bootstrap_group(row, seed: int) -> np.ndarray:
    """Bootstrap group of each row from its index in the whole catalogue.

    The index (its high 32 bits folded in by a Weyl step) is mixed with the seed and scrambled by
    the 32-bit MurmurHash3 finaliser (Appleby 2011, ``fmix32``, a bijection on 32 bits), then mapped
    onto :data:`BOOTSTRAP_GROUPS` by a multiply-shift (Lemire 2019, ACM TOMACS 29, 3). 32-bit
    integer arithmetic is vectorised by numpy, unlike 64-bit multiplication and modulo.
    """
    row = np.asarray(row)
    x = row.astype(np.uint32)  # the low 32 bits
    if row.size and int(row.max()) >> 32:
        x += (row >> 32).astype(np.uint32) * np.uint32(0x9E3779B9)
    x ^= np.uint32((int(seed) * 0x9E3779B9 + 0x7F4A7C15) & 0xFFFFFFFF)
    x ^= x >> np.uint32(16)
    x *= np.uint32(0x85EBCA6B)
    x ^= x >> np.uint32(13)
    x *= np.uint32(0xC2B2AE35)
    x ^= x >> np.uint32(16)
    return ((x.astype(np.uint64) * np.uint64(BOOTSTRAP_GROUPS)) >> np.uint64(32)).astype(np.intp)


class _Context:
    """Per-layout constants a block needs (distances, indexers), built once per process."""

    def __init__(self, layout: SumLayout):
        from lensmass.core import shear_profile as sp, shear_sources as ss

        self.d_l = ss.lens_distance_mpc(layout.z_l, layout.cosmo)
        self.inv_sigma_cr_beta = 1.0 / float(sigma_crit_msun_per_mpc2(self.d_l, 1.0, 1.0))
        edges = np.asarray(layout.edges_arcsec, float)
        self.lo, self.hi = float(edges[0]), float(edges[-1])
        self.fine_index = sp._fine_indexer(edges, RADIAL_SUBBINS)
        if layout.annulus_edges_arcsec is not None:
            ann = np.asarray(layout.annulus_edges_arcsec, float)
            self.ann_lo, self.ann_hi, self.n_ann = float(ann[0]), float(ann[-1]), ann.size - 1
            self.ann_index = sp._fine_indexer(ann, 1)
        if layout.z_s is None:
            table = ss._beta_table(layout.z_l, layout.cosmo)
            self.beta_of = lambda z: ss._beta_from_table(z, layout.z_l, table, layout.cosmo)
            self.beta_one = None
        else:
            self.beta_one = float(ss.lensing_efficiency(layout.z_l, np.array([float(layout.z_s)]), layout.cosmo)[0][0])
        self.kernel = None  # the compiled kernel's constants, made on its first use

_CONTEXTS: dict[tuple, _Context] = {}


def _context(layout: SumLayout) -> _Context:
    """The layout's constants, cached by value of every field the kernel uses (found on a worker too)."""
    key = (layout.center_ra, layout.center_dec, layout.z_l, _cosmology_key(layout.cosmo), layout.edges_arcsec,
           layout.z_s, layout.annulus_edges_arcsec, layout.z_margin, layout.bootstrap, layout.seed)  # all: the kernel
    ctx = _CONTEXTS.get(key)
    if ctx is None:
        if len(_CONTEXTS) > 8:
            _CONTEXTS.clear()
        ctx = _CONTEXTS[key] = _Context(layout)
    return ctx


def catalog_block_sums(layout: SumLayout, ra_deg, dec_deg, e1, e2, weight=None, z=None, first_row: int = 0) -> ShearSums:
    """Sums of one block of catalogue rows (any length; worked through in cache-sized pieces).

    Parameters
    ----------
    layout : SumLayout
        Bins, centre, lens redshift and cosmology.
    ra_deg, dec_deg, e1, e2, weight, z : array_like
        The rows' columns (east/north ellipticities; weight None means 1; ``z`` is ignored when
        the layout has one source redshift ``z_s``). Any numeric dtype; float32 stays float32
        until the arithmetic.
    first_row : int
        Index of the block's first row in the whole catalogue (sets its bootstrap groups).

    Returns
    -------
    ShearSums
        Rows are projected, selected (bad rows dropped and counted under the first of
        :data:`lensmass.core.shear_profile.DROP_REASONS` that applies), and those inside the
        bins summed per (radial sub-bin, beta cell).
    """
    ctx = _context(layout)
    total = empty_sums(layout)
    n = int(np.shape(ra_deg)[0])
    z_col = z if layout.z_s is None else None
    total.n_rows = n
    if USE_KERNEL and n >= KERNEL_MIN_ROWS:  # the kernel says False where it does not apply
        from lensmass.core.shear_kernel import kernel_block_sums
        if kernel_block_sums(total, layout, ctx, ra_deg, dec_deg, e1, e2, weight, z_col, first_row):
            return total
    for start in range(0, n, BLOCK_ROWS):
        sl = slice(start, min(n, start + BLOCK_ROWS))
        _add_piece(total, layout, ctx, ra_deg[sl], dec_deg[sl], e1[sl], e2[sl],
                   None if weight is None else weight[sl], None if z_col is None else z_col[sl], first_row + start)
    return total


def _add_piece(total: ShearSums, layout: SumLayout, ctx: _Context, ra, dec, e1, e2, w, z, first_row: int) -> None:
    """Add one cache-sized piece of rows to ``total`` (in place)."""
    from lensmass.core import shear_geometry as sg, shear_sources as ss

    ra, dec = np.asarray(ra, float), np.asarray(dec, float)
    e1, e2 = np.asarray(e1, float), np.asarray(e2, float)
    w = np.ones_like(e1) if w is None else np.asarray(w, float)
    z = None if z is None else np.asarray(z, float)
    x, y = sg._gnomonic(ra, dec, float(layout.center_ra), float(layout.center_dec))
    theta = sg._radius(x, y)
    ok, tally = ss.select_sources(e1, e2, w, z, layout.z_l, positions_ok=np.isfinite(theta), z_margin=layout.z_margin)
    for k, v in tally.items():
        total.dropped[k] += v
    with np.errstate(invalid="ignore"):
        in_bins = ok & (theta >= ctx.lo) & (theta < ctx.hi)
        near = in_bins
        if layout.annulus_edges_arcsec is not None:
            near = in_bins | (ok & (theta >= ctx.ann_lo) & (theta < ctx.ann_hi))
    total.n_usable += int(np.count_nonzero(ok))
    n_in = int(np.count_nonzero(in_bins))
    total.n_in_bins += n_in
    index = np.flatnonzero(near)
    total.n_near += index.size
    if index.size == 0:
        return
    t, xs, ys, g1, g2, ws = (a.take(index) for a in (theta, x, y, e1, e2, w))
    e_t, e_x = sg._tangential_cross(g1, g2, xs, ys)
    beta = np.full(t.size, ctx.beta_one) if z is None else ctx.beta_of(z.take(index))
    inv_sc = beta * ctx.inv_sigma_cr_beta  # 1 / Sigma_cr = (D_l / (c^2 / 4 pi G)) D_ls / D_s; 0 in front
    fine = ctx.fine_index(t)
    bq = (beta * BETA_CELLS).astype(np.intp)
    np.minimum(bq, BETA_CELLS - 1, out=bq)
    cell = fine * BETA_CELLS
    cell += bq
    if n_in < index.size:  # rows only in the annulus go to the trash cell
        cell[fine < 0] = layout.n_cells
    targets = [(total.cells, cell, layout.n_cells, _GALAXY_KEYS + _DELTA_SIGMA_KEYS)]
    if layout.annulus_edges_arcsec is not None:
        ann = ctx.ann_index(t)
        targets.append((total.annulus, np.where(ann >= 0, ann, ctx.n_ann), ctx.n_ann, _ANNULUS_KEYS))
    st, sx = _accumulate(targets, t, e_t, e_x, ws, beta, inv_sc)
    if total.boot is not None:
        columns = [ws, st, sx]
        if n_in < index.size:
            inside = np.flatnonzero(fine >= 0)
            index, fine, columns = index.take(inside), fine.take(inside), [c.take(inside) for c in columns]
        _add_bootstrap(total.boot, layout, index, first_row, fine, columns)


def _add_bootstrap(boot: np.ndarray, layout: SumLayout, rows, first_row: int, fine, columns) -> None:
    """Add the weight and weighted e_t, e_x of rows to their (bootstrap group, bin) sums (in place)."""
    if rows.size == 0:
        return
    key = bootstrap_group(first_row + rows, layout.seed)
    key *= layout.n_bins
    key += fine // RADIAL_SUBBINS
    size = BOOTSTRAP_GROUPS * layout.n_bins
    for j, values in enumerate(columns):
        boot[..., j] += np.bincount(key, weights=values, minlength=size).reshape(BOOTSTRAP_GROUPS, -1)


def galaxy_layout(edges_arcsec, *, bootstrap: bool = False, seed: int | None = 0) -> SumLayout:
    """A layout for galaxies already selected and rotated (no centre, lens or cosmology needed)."""
    return SumLayout(0.0, 0.0, float("nan"), None, tuple(float(e) for e in np.asarray(edges_arcsec, float)),
                     bootstrap=bootstrap, seed=int(0 if seed is None else seed))


def galaxy_sums(layout: SumLayout, theta_arcsec, e_t, e_x, weight, beta=None, sigma_cr=None,
                first_row: int = 0) -> ShearSums:
    """Sums of galaxies already selected and rotated (radius, e_t, e_x, weight, D_ls / D_s and Sigma_cr
    per galaxy or one value); the route of :func:`lensmass.core.shear_profile.shear_profile`."""
    from lensmass.core import shear_profile as sp

    total = empty_sums(layout)
    fine_index = sp._fine_indexer(np.asarray(layout.edges_arcsec, float), RADIAL_SUBBINS)
    theta = np.asarray(theta_arcsec, float)
    n = theta.size
    cols = [np.broadcast_to(np.asarray(a, float), theta.shape) for a in (e_t, e_x, weight)]
    beta_a = None if beta is None else np.broadcast_to(np.asarray(beta, float), theta.shape)
    sc_a = None if sigma_cr is None else np.broadcast_to(np.asarray(sigma_cr, float), theta.shape)
    keys = _GALAXY_KEYS + (_DELTA_SIGMA_KEYS if sc_a is not None else ())
    for start in range(0, n, BLOCK_ROWS):
        sl = slice(start, start + BLOCK_ROWS)
        t = theta[sl]
        et, ex, w = (c[sl] for c in cols)
        b = np.ones_like(t) if beta_a is None else beta_a[sl]
        fine = fine_index(t)
        bq = np.clip((b * BETA_CELLS).astype(np.intp), 0, BETA_CELLS - 1)
        cell = np.where(fine >= 0, fine * BETA_CELLS + bq, layout.n_cells)
        inv_sc = None
        if sc_a is not None:
            sc = sc_a[sl]
            with np.errstate(divide="ignore"):  # sources not behind the lens carry no Delta Sigma weight
                inv_sc = np.where(np.isfinite(sc), 1.0 / sc, 0.0)
        st, sx = _accumulate([(total.cells, cell, layout.n_cells, keys)], t, et, ex, w, b, inv_sc)
        total.n_in_bins += int(np.count_nonzero(fine >= 0))
        if total.boot is not None:
            inside = np.flatnonzero(fine >= 0)
            _add_bootstrap(total.boot, layout, start + inside, first_row, fine.take(inside),
                           [c.take(inside) for c in (w, st, sx)])
    if sc_a is None:
        for k in _DELTA_SIGMA_KEYS:
            total.cells.pop(k, None)
    total.n_rows = total.n_usable = total.n_near = n
    return total


def _accumulate(targets, theta, e_t, e_x, w, beta, inv_sc) -> tuple[np.ndarray, np.ndarray]:
    """Add the rows' per-cell sums to each target ``(out, cell, size, keys)`` in place.

    ``cell == size`` is the trash cell of rows outside. Each row's term is one product made in a
    scratch buffer and binned at once, so the working set stays in the CPU cache. With
    a = w / Sigma_cr the Delta Sigma weight is w / Sigma_cr^2 = a / Sigma_cr and the weighted
    Sigma_cr e_t terms are a e_t, ... (common practice: weights 1 / Sigma_cr^2), so there is no
    division and rows with 1 / Sigma_cr = 0 (in front of the lens) add nothing.
    Returns w e_t and w e_x (the bootstrap sums use them).
    """
    def add(key, values):
        for out, cell, size, keys in targets:
            if key in keys:
                out[key] += np.bincount(cell, weights=values, minlength=size + 1)[:size]

    add("n", None)
    m = np.multiply
    b1, b2 = np.empty_like(w), np.empty_like(w)
    add("w", w)
    add("wtheta", m(w, theta, out=b1))
    st, sx = m(w, e_t), m(w, e_x)
    add("st", st)
    add("sx", sx)
    add("s2t", m(w, st, out=b1))
    add("s2x", m(w, sx, out=b1))
    ee = m(e_t, e_t)
    ee += m(e_x, e_x, out=b1)
    w2 = m(w, w, out=b2)
    add("s2", w2)
    add("s2ee", m(w2, ee, out=b1))
    wb = m(w, beta, out=b2)
    add("wbeta", wb)
    add("wbeta2", m(wb, beta, out=b2))
    if inv_sc is not None:
        a = m(w, inv_sc)
        d = m(a, inv_sc)
        add("d", d)
        add("d2", m(d, d, out=b2))
        for key, e in (("t", e_t), ("x", e_x)):
            de = m(a, e, out=b1)
            add("d" + key, de)
            add("d2" + key, m(d, de, out=b2))
        a *= a
        a *= ee
        add("d2ee", a)
    return st, sx


def profile_from_sums(sums: ShearSums, layout: SumLayout, *, n_bootstrap: int = 0, with_sigma_cr: bool = True,
                      with_model_cells: bool = True, d_l_mpc: float | None = None):
    """The :class:`lensmass.core.shear_profile.ShearProfile` of summed rows.

    Means, shape-noise errors (both components pooled), Delta Sigma and its error come from
    the sums exactly as from the galaxies (sum w^2 (e - m)^2 expanded in sums); bootstrap
    errors resample the :data:`BOOTSTRAP_GROUPS` groups ``n_bootstrap`` times (``layout.seed``).
    """
    from lensmass.core import shear_profile as sp

    edges = np.asarray(layout.edges_arcsec, float)
    n_bins = layout.n_bins
    n_fine = n_bins * RADIAL_SUBBINS
    cell = sums.cells
    fine_sums = {k: v.reshape(n_fine, BETA_CELLS).sum(axis=1) for k, v in cell.items()}
    bin_sums = {k: v.reshape(n_bins, RADIAL_SUBBINS).sum(axis=1) for k, v in fine_sums.items()}
    count = np.rint(bin_sums["n"]).astype(np.int64)
    wsum = bin_sums["w"]
    with np.errstate(invalid="ignore", divide="ignore"):
        r_mean = bin_sums["wtheta"] / wsum
    g_t, g_x, err = sp._means_errors(bin_sums, "s", "w")
    ft, _, ferr = sp._means_errors(fine_sums, "s", "w")
    ds = ds_err = fds = fds_err = None
    if with_sigma_cr and "d" in cell:
        ds, _, ds_err = sp._means_errors(bin_sums, "d", "d")
        fds, _, fds_err = sp._means_errors(fine_sums, "d", "d")
    nan = np.full(n_bins, np.nan)
    boot_t, boot_x = nan, nan.copy()
    if n_bootstrap and sums.boot is not None and count.sum() > 1:
        rng = np.random.default_rng(layout.seed)
        b = sums.boot
        boot_t, boot_x = sp._bootstrap_errors(b[..., 0], b[..., 1], b[..., 2], int(n_bootstrap), rng)
    cells = None
    if with_model_cells:
        keep = cell["w"] > 0
        with np.errstate(invalid="ignore", divide="ignore"):
            t = cell["wtheta"] / cell["w"]
            bm = cell["wbeta"] / cell["w"]
            var = np.maximum(cell["wbeta2"] / cell["w"] - bm * bm, 0.0)
        bins = np.arange(cell["w"].size) // (RADIAL_SUBBINS * BETA_CELLS)
        cells = sp.ModelCells(bins[keep], t[keep], bm[keep], var[keep], cell["w"][keep], n_bins)
    fine_profile = sp.FineProfile(sp._fine_edges(edges, RADIAL_SUBBINS), ft, ferr, fds, fds_err)
    with np.errstate(invalid="ignore", divide="ignore"):
        beta_mean = float(cell["wbeta"].sum() / cell["w"].sum()) if count.sum() else float("nan")
    d_l = d_l_mpc if layout.cosmo is None else _context(layout).d_l
    return sp.ShearProfile(edges, r_mean, count, wsum, g_t, err, g_x, err.copy(), boot_t, boot_x,
                           ds, ds_err, cells, beta_mean, d_l, fine_profile)


def annulus_profile(sums: ShearSums, layout: SumLayout):
    """Means and errors of e_t and Delta Sigma in the extra annulus bins: (g_t, g_t_err, ds, ds_err)."""
    from lensmass.core import shear_profile as sp

    g_t, _, err = sp._means_errors(sums.annulus, "s", "w")
    ds, _, ds_err = sp._means_errors(sums.annulus, "d", "d")
    return g_t, err, ds, ds_err
