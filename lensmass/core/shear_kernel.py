"""The per-row work of :mod:`lensmass.core.shear_sums` compiled into one pass (numba), for long blocks.

Each row is projected, selected, rotated, given its D_ls / D_s and binned in a single loop that
keeps everything in registers, where the numpy route makes about a hundred passes over a piece of
rows. The formulas, their order and the cell layout are those of the numpy route
(:func:`lensmass.core.shear_sums._add_piece`), which stays the reference: the two give the same
sums to rounding (``tests/core/test_shear_kernel.py``). The sums of a cell are added in row order,
as ``np.bincount`` adds them. numba (LLVM) compiles the loop on first use and caches it on disk.
"""

from __future__ import annotations

import math

from typing import Any

import numba
import numpy as np

from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.shear_geometry import _ARCTAN_SERIES, _TAN_SERIES, SERIES_MAX

#: Order of the sums in the kernel's output rows (the keys of :data:`lensmass.core.shear_sums._GALAXY_KEYS`
#: followed by those of ``_DELTA_SIGMA_KEYS``).
KERNEL_KEYS = ("n", "w", "wtheta", "st", "sx", "s2", "s2t", "s2x", "s2ee", "wbeta", "wbeta2",
               "d", "dt", "dx", "d2", "d2t", "d2x", "d2ee")

_JIT: dict[str, Any] = {"cache": True, "nogil": True, "error_model": "numpy"}
_M32 = np.uint64(0xFFFFFFFF)
_WEYL = np.uint64(0x9E3779B9)
_FMIX1 = np.uint64(0x85EBCA6B)
_FMIX2 = np.uint64(0xC2B2AE35)
_S13, _S16, _S32 = np.uint64(13), np.uint64(16), np.uint64(32)


@numba.njit(**_JIT)
def _odd_series(x, c):
    """x (c0 + c1 x^2 + ... + c5 x^10) by Horner's rule, as :func:`lensmass.core.shear_geometry._odd_series`."""
    x2 = x * x
    p = x2 * c[5]
    for k in range(4, 0, -1):
        p += c[k]
        p *= x2
    p += c[0]
    return p * x


_TAN = np.array(_TAN_SERIES)
_ARCTAN = np.array(_ARCTAN_SERIES)


@numba.njit(**_JIT)
def _tan_s(x):
    return _odd_series(x, _TAN) if abs(x) < SERIES_MAX else math.tan(x)


@numba.njit(**_JIT)
def _arctan_s(x):
    return _odd_series(x, _ARCTAN) if abs(x) < SERIES_MAX else math.atan(x)


@numba.njit(**_JIT)
def _index(theta, lo, hi, log_spaced, scale, n_fine):
    """The sub-bin of theta (-1 outside [lo, hi)), as :func:`lensmass.core.shear_profile._fine_indexer`."""
    if not (theta >= lo and theta < hi):
        return -1
    if log_spaced:
        u = math.log(theta * (1.0 / lo)) * scale
    else:
        u = (theta - lo) * scale
    k = math.floor(u)
    if k < 0:
        k = 0
    if k > n_fine - 1:
        k = n_fine - 1
    return int(k)


@numba.njit(**_JIT)
def _add_row(out, c, wr, theta, st, sx, w2, ee, wb, beta, dd, dt, dx, a):
    """One row's terms added to row ``c`` of ``out``, in the order of :data:`KERNEL_KEYS`."""
    row = out[c]
    row[0] += 1.0
    row[1] += wr
    row[2] += wr * theta
    row[3] += st
    row[4] += sx
    row[5] += w2
    row[6] += wr * st
    row[7] += wr * sx
    row[8] += w2 * ee
    row[9] += wb
    row[10] += wb * beta
    row[11] += dd
    row[12] += dt
    row[13] += dx
    row[14] += dd * dd
    row[15] += dd * dt
    row[16] += dd * dx
    row[17] += a * a * ee


@numba.njit(**_JIT)
def rows_to_cells(ra, dec, e1, e2, w, z, has_w, has_z, geo, sel, bins, ann_bins, table, first_row, boot_seed,
                   cells, ann, boot, tally):
    """Add rows to ``cells`` (n_cells x 18), ``ann`` (n_ann x 18), ``boot`` ((groups x bins) x 3) in place
    (a row's 18 sums side by side: one or two cache lines).

    ``geo`` = (ra0, dec0, tan(Dec0 / 2), sin Dec0, cos Dec0); ``sel`` = (z_l, z_min, beta_one,
    1/Sigma_cr per unit beta, u0, step, soft, use_boot, n_bins) with ``table`` the D_ls / D_s table; ``bins`` = (lo, hi, log_spaced, scale,
    n_fine, n_cells); ``ann_bins`` the same for the annulus (n_fine = 0: none); ``tally`` =
    [non_finite, e_ge_1, w_not_positive, z_not_behind, usable, in_bins, near].
    """
    half = math.pi / 360.0
    to_arcsec = 1.0 / ARCSEC_RAD
    ra0, dec0, ta, s0, c0 = geo[0], geo[1], geo[2], geo[3], geo[4]
    z_l, z_min, beta_one, inv_k = sel[0], sel[1], sel[2], sel[3]
    u0, step, soft, n_table = sel[4], sel[5], sel[6], table.size
    use_boot, n_bins = sel[7] > 0, int(sel[8])
    n_groups = np.uint64(boot.shape[0] // max(n_bins, 1))
    lo, hi, log_b, scale, n_fine, n_cells = bins[0], bins[1], bins[2] > 0, bins[3], int(bins[4]), int(bins[5])
    a_lo, a_hi, a_log, a_scale, n_ann = ann_bins[0], ann_bins[1], ann_bins[2] > 0, ann_bins[3], int(ann_bins[4])
    seed_mix = np.uint64(boot_seed)
    for r in range(ra.size):
        t = _tan_s((ra[r] - ra0) * half)
        tb = _tan_s((dec[r] - dec0) * half)
        u = (ta + tb) / (1.0 - ta * tb)
        t2 = t * t
        ua = u * (t2 + 1.0)
        one_u2 = 1.0 - u * u
        p = (1.0 - t2) * one_u2
        d = ua * s0 + p * (0.5 * c0)
        if not d > 0:
            d = np.nan
        inv = to_arcsec / d
        x = t * one_u2 * inv
        y = (ua * c0 - p * (0.5 * s0)) * inv
        theta = _arctan_s(math.sqrt(x * x + y * y) * ARCSEC_RAD) * to_arcsec
        g1 = float(e1[r])
        g2 = float(e2[r])
        wr = float(w[r]) if has_w else 1.0
        zr = float(z[r]) if has_z else 0.0
        finite = math.isfinite(g1) and math.isfinite(g2) and math.isfinite(wr) and math.isfinite(theta)
        if has_z:
            finite = finite and math.isfinite(zr)
        if not finite:
            tally[0] += 1
            continue
        if g1 * g1 + g2 * g2 >= 1.0:
            tally[1] += 1
            continue
        if not wr > 0:
            tally[2] += 1
            continue
        if has_z and not zr > z_min:
            tally[3] += 1
            continue
        tally[4] += 1
        fine = _index(theta, lo, hi, log_b, scale, n_fine)
        a_idx = _index(theta, a_lo, a_hi, a_log, a_scale, n_ann) if n_ann > 0 else -1
        if fine < 0 and a_idx < 0:
            continue
        tally[6] += 1
        xx = x * x
        yy = y * y
        inv_r2 = 1.0 / (xx + yy)
        cos2 = (xx - yy) * inv_r2
        sin2 = (x + x) * y * inv_r2
        e_t = -(g1 * cos2 + g2 * sin2)
        e_x = g1 * sin2 - g2 * cos2
        if has_z:
            tt = (math.log(max(zr - z_l, 0.0) + soft) - u0) * (1.0 / step)
            i = int(tt) if tt == tt else 0
            if i < 0:
                i = 0
            if i > n_table - 2:
                i = n_table - 2
            v0 = table[i]
            beta = v0 + (tt - i) * (table[i + 1] - v0)
            if not zr > z_l:
                beta = 0.0
        else:
            beta = beta_one
        inv_sc = beta * inv_k
        st = wr * e_t
        sx = wr * e_x
        w2 = wr * wr
        ee = e_t * e_t + e_x * e_x
        wb = wr * beta
        a = wr * inv_sc
        dd = a * inv_sc
        dt = a * e_t
        dx = a * e_x
        if fine >= 0:
            tally[5] += 1
            bq = int(beta * 8.0)
            if bq > 7:
                bq = 7
            _add_row(cells, fine * 8 + bq, wr, theta, st, sx, w2, ee, wb, beta, dd, dt, dx, a)
            if use_boot:
                row = np.uint64(first_row + r)
                h = row & _M32
                hi32 = row >> _S32
                if hi32:
                    h = (h + hi32 * _WEYL) & _M32
                h ^= seed_mix
                h ^= h >> _S16
                h = (h * _FMIX1) & _M32
                h ^= h >> _S13
                h = (h * _FMIX2) & _M32
                h ^= h >> _S16
                group = (h * n_groups) >> _S32
                key = int(group) * n_bins + fine // 8
                boot[key, 0] += wr
                boot[key, 1] += st
                boot[key, 2] += sx
        if a_idx >= 0:
            _add_row(ann, a_idx, wr, theta, st, sx, w2, ee, wb, beta, dd, dt, dx, a)
    return n_cells


class KernelParams:
    """The constants :func:`rows_to_cells` takes for one layout, as arrays (made once per layout)."""

    def __init__(self, layout, ctx):
        from lensmass.core import shear_profile as sp, shear_sources as ss
        from lensmass.core.shear_sums import BETA_CELLS, RADIAL_SUBBINS

        half = np.pi / 360.0
        dec0 = float(layout.center_dec)
        self.geo = np.array([float(layout.center_ra), dec0, float(np.tan(dec0 * half)),
                             np.sin(np.radians(dec0)), np.cos(np.radians(dec0))])

        def bins(e, n_sub, n_cells):
            log_spaced, linear, scale = sp.fine_spacing(e, n_sub)
            if not (log_spaced or linear) or RADIAL_SUBBINS != 8 or BETA_CELLS != 8:
                return None  # the kernel's cells are 8 x 8 per bin; other layouts take the numpy route
            return np.array([e[0], e[-1], float(log_spaced), scale, (e.size - 1) * n_sub, n_cells])

        self.bins = bins(np.asarray(layout.edges_arcsec, float), RADIAL_SUBBINS, layout.n_cells)
        self.has_annulus = layout.annulus_edges_arcsec is not None
        ann = np.asarray(layout.annulus_edges_arcsec, float) if self.has_annulus else None
        self.ann = bins(ann, 1, ann.size - 1) if ann is not None else None
        self.n_ann = ann.size - 1 if ann is not None else 0
        if layout.z_s is None:
            u0, step, values = ss._beta_table(layout.z_l, layout.cosmo)
            beta_one = 0.0
        else:
            u0, step, values = 0.0, 1.0, np.zeros(2)
            beta_one = float(ctx.beta_one)
        self.table = np.ascontiguousarray(values, float)
        self.sel = np.array([layout.z_l, layout.z_l + layout.z_margin, beta_one, ctx.inv_sigma_cr_beta, u0, step,
                             ss._BETA_SOFT, float(layout.bootstrap), layout.n_bins])
        self.seed = (int(layout.seed) * 0x9E3779B9 + 0x7F4A7C15) & 0xFFFFFFFF  # as shear_sums.bootstrap_group


def _params(layout, ctx) -> KernelParams:
    if ctx.kernel is None:
        ctx.kernel = KernelParams(layout, ctx)
    return ctx.kernel


def kernel_applies(layout, ctx, z) -> bool:
    """The kernel covers evenly spaced (log or linear) bins and tabulated D_ls / D_s (z up to the table's end)."""
    params = _params(layout, ctx)
    if params.bins is None or (params.has_annulus and params.ann is None):
        return False
    if z is not None and np.size(z):
        from lensmass.core.shear_sources import _BETA_ZMAX

        return not float(np.fmax.reduce(np.asarray(z), initial=-np.inf)) > _BETA_ZMAX
    return True


def _column(values, dtype=None) -> np.ndarray:
    """A 1-D contiguous native column the kernel takes (float32 stays float32; others to float64)."""
    arr = np.asarray(values)
    if dtype is None:
        dtype = arr.dtype if arr.dtype in (np.dtype(np.float32), np.dtype(np.float64)) else np.float64
    return np.ascontiguousarray(arr, dtype=dtype)


def kernel_block_sums(total, layout, ctx, ra, dec, e1, e2, w, z, first_row: int) -> None:
    """Add a block of rows to the :class:`lensmass.core.shear_sums.ShearSums` ``total`` (the sums of the
    numpy route, :func:`lensmass.core.shear_sums._add_piece`)."""
    params = _params(layout, ctx)
    n_ann = params.n_ann
    cells = np.zeros((layout.n_cells, len(KERNEL_KEYS)))
    ann = np.zeros((max(n_ann, 1), len(KERNEL_KEYS)))
    boot = total.boot.reshape(-1, 3) if total.boot is not None else np.zeros((1, 3))
    tally = np.zeros(7, np.int64)
    dummy = np.zeros(1, np.float32)
    rows_to_cells(_column(ra, np.float64), _column(dec, np.float64), _column(e1), _column(e2),
                  dummy if w is None else _column(w), dummy if z is None else _column(z), w is not None,
                  z is not None, params.geo, params.sel, params.bins, params.ann if n_ann else np.zeros(6),
                  params.table, int(first_row), params.seed, cells, ann, boot, tally)
    for i, key in enumerate(KERNEL_KEYS):
        total.cells[key] += cells[:, i]
        if n_ann and key in total.annulus:
            total.annulus[key] += ann[:, i]
    for i, reason in enumerate(("non_finite", "ellipticity_ge_1", "weight_not_positive", "source_not_behind_lens")):
        total.dropped[reason] += int(tally[i])
    total.n_usable += int(tally[4])
    total.n_in_bins += int(tally[5])
    total.n_near += int(tally[6])
