"""The per-row work of :mod:`lensmass.core.shear_sums` compiled into one pass (numba), for long blocks.

Rows go in chunks of :data:`CHUNK_ROWS`: the element-wise steps (loading and byte-swapping, projection,
rotation, logs, D_ls / D_s, selection and cells) run as loops without branches or calls over a chunk held in
the CPU cache, which LLVM turns into SIMD code (the steps after the selection on the rows in the bins only),
then one loop adds the rows in the bins; the numpy route
makes about a hundred passes over a piece of rows instead. A block's parts of :data:`PART_ROWS` rows are
summed on threads (:data:`KERNEL_THREADS`). The formulas, their order and the cell layout are those of the numpy route
(:func:`lensmass.core.shear_sums._add_piece`), which stays the reference: the two give the same
sums to rounding (``tests/core/test_shear_kernel.py``). The sums of a cell are added in row order,
as ``np.bincount`` adds them. numba (LLVM) compiles the loop on first use and caches it on disk.

Longer than 500 lines because the compiled steps must stay in the file of the compiled kernel that calls
them: numba's disk cache is invalidated by changes to that file only, not to functions it calls from other
files (numba documentation, "Notes on Caching", cache limitations), so steps in a second module would
leave a stale kernel in use after an edit.
"""

from __future__ import annotations

import math
import os

from typing import Any

import numba
import numpy as np
from numba import types
from numba.extending import overload

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
_S8, _S13, _S16, _S24, _S32, _S40, _S48, _S56 = (np.uint64(k) for k in (8, 13, 16, 24, 32, 40, 48, 56))
_B = np.uint64(0xFF)
_B32 = np.uint32(0xFF)
_T8, _T16, _T24 = np.uint32(8), np.uint32(16), np.uint32(24)
#: Rows per chunk of the element-wise loops (14 float64 buffers of this length stay in the L1/L2 cache).
CHUNK_ROWS = 1024


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


def _load(col, start, m, out):
    """Rows ``start .. start + m`` of a column into the float64 buffer ``out`` (compiled by :func:`_load_impl`)."""
    raise NotImplementedError


@overload(_load, jit_options={"error_model": "numpy"})
def _load_impl(col, start, m, out):
    """float32 / float64 columns are converted; uint64 / uint32 columns are the bytes of big-endian float64 /
    float32 values (FITS stores big-endian), swapped here, a chunk at a time, instead of copying the column."""
    if col.dtype == types.uint64:
        def swap64(col, start, m, out):
            u = out.view(np.uint64)
            for j in range(m):
                v = col[start + j]
                u[j] = ((v & _B) << _S56) | (((v >> _S8) & _B) << _S48) | (((v >> _S16) & _B) << _S40) | (
                    ((v >> _S24) & _B) << _S32) | (((v >> _S32) & _B) << _S24) | (((v >> _S40) & _B) << _S16) | (
                    ((v >> _S48) & _B) << _S8) | (v >> _S56)
        return swap64
    if col.dtype == types.uint32:
        def swap32(col, start, m, out):
            tmp = np.empty(m, np.uint32)
            for j in range(m):
                v = col[start + j]
                tmp[j] = ((v & _B32) << _T24) | (((v >> _T8) & _B32) << _T16) | (((v >> _T16) & _B32) << _T8) | (v >> _T24)
            f = tmp.view(np.float32)
            for j in range(m):
                out[j] = f[j]
        return swap32

    def convert(col, start, m, out):
        for j in range(m):
            out[j] = col[start + j]
    return convert


# log by the method and coefficients of fdlibm's e_log.c (Sun Microsystems 1993; written from memory, checked
# against the C library's log to 1 ulp in tests/core/test_shear_kernel.py): x = 2^k (1 + f), 1 + f in
# [sqrt(2)/2, sqrt(2)), s = f / (2 + f), log(1 + f) = f - (f^2/2 - s (f^2/2 + R(s^2))).
_LN2_HI, _LN2_LO = 6.93147180369123816490e-01, 1.90821492927058770002e-10
_LG = (6.666666666666735130e-01, 3.999999999940941908e-01, 2.857142874366239149e-01, 2.222219843214978396e-01,
       1.818357216161805012e-01, 1.531383769920937332e-01, 1.479819860511658591e-01)
_MANTISSA = np.int64(0x000FFFFFFFFFFFFF)
_ONE_BITS, _HALF_BITS = np.int64(0x3FF0000000000000), np.int64(0x3FE0000000000000)
_SQRT2_MANTISSA = np.int64(0x6A09E667F3BCD)
_TWO52_BITS, _TWO52_BIAS = np.int64(0x4330000000000000), 4503599627370496.0 + 1023.0  # 2^52 + e as a double


@numba.njit(**_JIT)
def log_chunk(m, x, work):
    """x[:m] = log(x[:m]) in place for positive normal numbers (others give meaningless values, no error);
    ``work`` a float64 buffer as long. Within 1 ulp of the C library's log, and in loops LLVM vectorises,
    so about four times faster than calling it per value."""
    xb = x.view(np.int64)
    wb = work.view(np.int64)
    for j in range(m):  # exponent and mantissa from the bits
        bits = xb[j]
        frac = bits & _MANTISSA
        hi = frac > _SQRT2_MANTISSA
        wb[j] = ((bits >> 52) + hi) | _TWO52_BITS
        xb[j] = frac | (_HALF_BITS if hi else _ONE_BITS)
    lg1, lg2, lg3, lg4, lg5, lg6, lg7 = _LG[0], _LG[1], _LG[2], _LG[3], _LG[4], _LG[5], _LG[6]
    for j in range(m):
        k = work[j] - _TWO52_BIAS
        f = x[j] - 1.0
        s = f / (2.0 + f)
        z = s * s
        w = z * z
        r = z * (lg1 + w * (lg3 + w * (lg5 + w * lg7))) + w * (lg2 + w * (lg4 + w * lg6))
        hfsq = 0.5 * f * f
        x[j] = k * _LN2_HI - ((hfsq - (s * (hfsq + r) + k * _LN2_LO)) - f)


@numba.njit(**_JIT)
def _series(x, c0, c1, c2, c3, c4, c5):
    """x (c0 + c1 x^2 + ... + c5 x^10) by Horner's rule, as :func:`_odd_series` (no loop: vectorises)."""
    x2 = x * x
    return (((((c5 * x2 + c4) * x2 + c3) * x2 + c2) * x2 + c1) * x2 + c0) * x


@numba.njit(**_JIT)
def _plane(t, tb, ta, s0, c0):
    """Tangent-plane x, y (arcsec) from t = tan(dRA / 2), tan(dDec / 2) and the centre's ``geo`` terms, as
    :func:`lensmass.core.shear_geometry._gnomonic` (NaN behind the plane; no branch, so loops vectorise)."""
    to_arcsec = 1.0 / ARCSEC_RAD
    u = (ta + tb) / (1.0 - ta * tb)
    t2 = t * t
    ua = u * (t2 + 1.0)
    one_u2 = 1.0 - u * u
    p = (1.0 - t2) * one_u2
    d = ua * s0 + p * (0.5 * c0)
    d = d if d > 0 else np.nan
    inv = to_arcsec / d
    return t * one_u2 * inv, (ua * c0 - p * (0.5 * s0)) * inv


@numba.njit(**_JIT)
def _project_row(ra, dec, ra0, dec0, ta, s0, c0):
    """x, y (arcsec) and theta of one row with the library tan / arctan beyond the series' range."""
    half = math.pi / 360.0
    x, y = _plane(_tan_s((ra - ra0) * half), _tan_s((dec - dec0) * half), ta, s0, c0)
    return x, y, _arctan_s(math.sqrt(x * x + y * y) * ARCSEC_RAD) * (1.0 / ARCSEC_RAD)


@numba.njit(**_JIT)
def _project_chunk(ra, dec, m, geo, xs, ys, ts):
    """x, y (arcsec) and theta of ``m`` rows by the series alone: a loop without branches or calls, which
    LLVM turns into SIMD code. Returns True if some row lies beyond the series' range (to be redone)."""
    half = math.pi / 360.0
    to_arcsec = 1.0 / ARCSEC_RAD
    ra0, dec0, ta, s0, c0 = geo[0], geo[1], geo[2], geo[3], geo[4]
    t0, t1, t2_, t3, t4, t5 = _TAN[0], _TAN[1], _TAN[2], _TAN[3], _TAN[4], _TAN[5]
    a0, a1, a2, a3, a4, a5 = _ARCTAN[0], _ARCTAN[1], _ARCTAN[2], _ARCTAN[3], _ARCTAN[4], _ARCTAN[5]
    big = False
    for j in range(m):
        ha = (ra[j] - ra0) * half
        hb = (dec[j] - dec0) * half
        x, y = _plane(_series(ha, t0, t1, t2_, t3, t4, t5), _series(hb, t0, t1, t2_, t3, t4, t5), ta, s0, c0)
        rr = math.sqrt(x * x + y * y) * ARCSEC_RAD
        ts[j] = _series(rr, a0, a1, a2, a3, a4, a5) * to_arcsec
        xs[j] = x
        ys[j] = y
        big |= (abs(ha) >= SERIES_MAX) | (abs(hb) >= SERIES_MAX) | (rr >= SERIES_MAX)
    if big:
        for j in range(m):
            xs[j], ys[j], ts[j] = _project_row(ra[j], dec[j], ra0, dec0, ta, s0, c0)
    return big


@numba.njit(**_JIT)
def _rotate_chunk(m, xs, ys, e1, e2, ets, exs):
    """Tangential and cross ellipticity of ``m`` rows (:func:`lensmass.core.shear_geometry._tangential_cross`)."""
    for j in range(m):
        x = xs[j]
        y = ys[j]
        g1 = e1[j]
        g2 = e2[j]
        xx = x * x
        yy = y * y
        inv_r2 = 1.0 / (xx + yy)
        cos2 = (xx - yy) * inv_r2
        sin2 = (x + x) * y * inv_r2
        ets[j] = -(g1 * cos2 + g2 * sin2)
        exs[j] = g1 * sin2 - g2 * cos2


@numba.njit(**_JIT)
def _beta_chunk(m, z, z_l, sel, table, bs, work):
    """D_ls / D_s of ``m`` rows from the log-spaced table (:func:`lensmass.core.shear_sources._beta_from_table`),
    for redshifts up to the table's end (see :func:`_usable_chunk`)."""
    u0, step, soft, n_table = sel[4], sel[5], sel[6], table.size
    for j in range(m):
        bs[j] = max(z[j] - z_l, 0.0) + soft
    log_chunk(m, bs, work)
    idx = work.view(np.int64)
    for j in range(m):  # the node and the fraction (SIMD), then the table look-ups (not), then the selection (SIMD)
        tt = (bs[j] - u0) * (1.0 / step)
        i = np.int32(tt) if tt == tt else np.int32(0)
        i = max(np.int32(0), min(i, np.int32(n_table - 2)))
        bs[j] = tt - i
        idx[j] = i
    for j in range(m):
        i = idx[j]
        v0 = table[i]
        bs[j] = v0 + bs[j] * (table[i + 1] - v0)
    for j in range(m):
        bs[j] = bs[j] if z[j] > z_l else 0.0


@numba.njit(**_JIT)
def _bin_coordinate(m, ts, bins, us, work):
    """u = ln(theta / lo) * scale (log-spaced bins) or (theta - lo) * scale: the sub-bin is floor(u)
    (u matters only for theta in [lo, hi))."""
    lo, log_spaced, scale = bins[0], bins[2] > 0, bins[3]
    if log_spaced:
        inv_lo = 1.0 / lo
        for j in range(m):
            us[j] = ts[j] * inv_lo
        log_chunk(m, us, work)
        for j in range(m):
            us[j] *= scale
    else:
        for j in range(m):
            us[j] = (ts[j] - lo) * scale


@numba.njit(**_JIT)
def _boot_key(row, seed_mix, n_groups, n_bins, fine):
    """(bootstrap group, bin) of a row, as :func:`lensmass.core.shear_sums.bootstrap_group`."""
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
    return int(group) * n_bins + fine // 8


@numba.njit(**_JIT)
def _load_rows(ra, dec, e1, e2, w, z, has_w, has_z, start, m, buf):
    """Rows ``start .. start + m`` of the six columns (ra, dec, e1, e2, w, z) into rows 0-5 of ``buf``."""
    _load(ra, start, m, buf[0])
    _load(dec, start, m, buf[1])
    _load(e1, start, m, buf[2])
    _load(e2, start, m, buf[3])
    if has_w:
        _load(w, start, m, buf[4])
    if has_z:
        _load(z, start, m, buf[5])


@numba.njit(**_JIT)
def _usable_chunk(m, g1s, g2s, ws, zs, ts, has_w, has_z, z_min, z_max, ok, counts):
    """``ok[j]`` = 1 for the usable rows of ``m``, else 0, and ``counts`` += [non_finite, e_ge_1, w_not_positive,
    z_not_behind, usable] (each dropped row under the first reason of
    :data:`lensmass.core.shear_sources.DROP_REASONS` that applies, as
    :func:`lensmass.core.shear_sources.select_sources` with the position's theta among the finite checks).
    Returns True if a redshift lies past ``z_max``, the D_ls / D_s table's end (the block then takes the numpy
    route, which computes those exactly). Without branches: LLVM makes the loop SIMD (x - x == 0 is ``isfinite``)."""
    c0 = c1 = c2 = c3 = c4 = 0
    far = False
    for j in range(m):
        g1 = g1s[j]
        g2 = g2s[j]
        wr = ws[j] if has_w else 1.0
        zr = zs[j] if has_z else 0.0
        theta = ts[j]
        finite = ((g1 - g1) == 0.0) & ((g2 - g2) == 0.0) & ((wr - wr) == 0.0) & ((theta - theta) == 0.0) & (
            ((zr - zr) == 0.0) | (not has_z))
        r1 = finite & (g1 * g1 + g2 * g2 >= 1.0)
        good = finite & (not r1)
        r2 = good & (not wr > 0)
        good &= not r2
        r3 = good & has_z & (not zr > z_min)
        good &= not r3
        c0 += not finite
        c1 += r1
        c2 += r2
        c3 += r3
        c4 += good
        ok[j] = np.int32(good)
        far |= zr > z_max
    counts[0] += c0
    counts[1] += c1
    counts[2] += c2
    counts[3] += c3
    counts[4] += c4
    return far


@numba.njit(**_JIT)
def _near_chunk(m, ts, ok, bins, ann_bins, near, picked):
    """List in ``picked`` the usable rows (``ok``) of ``m`` inside the bins or the annulus; returns how many.
    ``near`` is scratch: the test runs as SIMD, the packing (a loop LLVM does not vectorise) apart."""
    lo, hi, a_lo, a_hi = bins[0], bins[1], ann_bins[0], ann_bins[1]
    has_ann = ann_bins[4] > 0
    for j in range(m):
        theta = ts[j]
        near[j] = np.int32((ok[j] > 0) & (((theta >= lo) & (theta < hi)) | (has_ann & (theta >= a_lo) & (theta < a_hi))))
    n = 0
    for j in range(m):
        picked[n] = j
        n += near[j]
    return n


@numba.njit(**_JIT)
def _cell_chunk(m, ts, us, aus, bs, ok, has_z, beta_one, bins, ann_bins, cell, ann_cell):
    """Each of ``m`` rows to its cell, ``cell[j]`` = sub-bin x 8 + beta cell (-1: not in the bins or not usable,
    ``ok``), and annulus bin, ``ann_cell[j]`` (-1: none); returns how many are in the bins. The sub-bin is
    floor(u) clamped to the sub-bins, as :func:`lensmass.core.shear_profile._fine_indexer`; the beta cell
    min(int(8 beta), 7), as :func:`lensmass.core.shear_sums._add_piece`. Float to int32 conversions (AVX2 has no
    vector instruction to int64) keep the loops SIMD."""
    lo, hi, top = bins[0], bins[1], bins[4] - 1.0
    a_lo, a_hi, a_top = ann_bins[0], ann_bins[1], ann_bins[4] - 1.0
    n_in = 0
    for j in range(m):
        theta = ts[j]
        inside = (ok[j] > 0) & (theta >= lo) & (theta < hi)
        k = min(max(math.floor(us[j]), 0.0), top)
        b = beta_one
        if has_z:
            b = bs[j]
        q = min(np.int32(b * 8.0), np.int32(7))
        cell[j] = np.int32(k) * np.int32(8) + q if inside else np.int32(-1)
        n_in += inside
    if ann_bins[4] > 0:
        for j in range(m):
            theta = ts[j]
            in_ann = (ok[j] > 0) & (theta >= a_lo) & (theta < a_hi)
            ka = min(max(math.floor(aus[j]), 0.0), a_top)
            ann_cell[j] = np.int32(ka) if in_ann else np.int32(-1)
    else:
        ann_cell[:m] = -1
    return n_in


@numba.njit(**_JIT)
def _compact(n, picked, buf, rows, ok):
    """Rows ``picked[:n]`` (increasing) of the buffers ``buf[rows]`` and of ``ok`` moved to their first ``n``
    places, in place (row picked[i] >= i is read before anything overwrites it)."""
    for r in rows:
        col = buf[r]
        for i in range(n):
            col[i] = col[picked[i]]
    for i in range(n):
        ok[i] = ok[picked[i]]


@numba.njit(**_JIT)
def rows_to_cells(ra, dec, e1, e2, w, z, has_w, has_z, geo, sel, bins, ann_bins, table, first_row, boot_seed,
                   cells, ann, boot, tally):
    """Add rows to ``cells`` (n_cells x 18), ``ann`` (n_ann x 18), ``boot`` ((groups x bins) x 3) in place
    (a row's 18 sums side by side: one or two cache lines).

    Columns are float32 / float64, or uint64 / uint32 holding big-endian float64 / float32 bytes (see
    :func:`_load`). ``geo`` = (ra0, dec0, tan(Dec0 / 2), sin Dec0, cos Dec0); ``sel`` = (z_l, z_min,
    beta_one, 1/Sigma_cr per unit beta, u0, step, soft, use_boot, n_bins) with ``table`` the D_ls / D_s
    table; ``bins`` = (lo, hi, log_spaced, scale, n_fine, n_cells); ``ann_bins`` the same for the annulus
    (n_fine = 0: none); ``tally`` = [non_finite, e_ge_1, w_not_positive, z_not_behind, usable, in_bins, near,
    beyond] (beyond: a redshift past the D_ls / D_s table's end, ``sel[9]``; the work stops, nothing is valid).

    Rows go in chunks of :data:`CHUNK_ROWS`: loading, projection and selection run over the chunk in loops
    without branches; the rows in the bins (or the annulus) are listed, and moved to the front of the buffers
    when they are fewer than 3/4 of the chunk; the rest of the element-wise work (rotation, logs, D_ls / D_s,
    cells) runs on those rows only, and one loop adds them in row order.
    """
    z_l, z_min, beta_one, inv_k = sel[0], sel[1], sel[2], sel[3]
    use_boot, n_bins = sel[7] > 0, int(sel[8])
    n_groups = np.uint64(boot.shape[0] // max(n_bins, 1))
    n_ann = int(ann_bins[4])
    seed_mix = np.uint64(boot_seed)
    buf = np.empty((14, CHUNK_ROWS))
    cra, cdec, g1s, g2s, ws, zs, xs, ys, ts, us, ets, exs, work, aus = (buf[0], buf[1], buf[2], buf[3], buf[4],
                                                                        buf[5], buf[6], buf[7], buf[8], buf[9],
                                                                        buf[10], buf[11], buf[12], buf[13])
    bs = cdec  # D_ls / D_s, once Dec is no longer needed
    counts = np.zeros(7, np.int64)  # as tally[:7]
    index = np.empty((4, CHUNK_ROWS), np.int32)
    cell, ann_cell, picked, ok = index[0], index[1], index[2], index[3]
    moved = np.array([2, 3, 4, 5, 6, 7, 8])  # e1, e2, w, z, x, y, theta
    for start in range(0, ra.size, CHUNK_ROWS):
        m = min(CHUNK_ROWS, ra.size - start)
        _load_rows(ra, dec, e1, e2, w, z, has_w, has_z, start, m, buf)
        _project_chunk(cra, cdec, m, geo, xs, ys, ts)
        if _usable_chunk(m, g1s, g2s, ws, zs, ts, has_w, has_z, z_min, sel[9], ok, counts):
            tally[7] += 1
            return 0
        n_near = _near_chunk(m, ts, ok, bins, ann_bins, cell, picked)
        counts[6] += n_near
        if n_near == 0:
            continue
        # the rest of the work only for the rows in the bins or the annulus, moved together when they are few
        # (the move costs less than the work it saves below about 3/4 of the rows)
        compact = 4 * n_near < 3 * m
        if compact:
            _compact(n_near, picked, buf, moved, ok)
        rows = n_near if compact else m
        _bin_coordinate(rows, ts, bins, us, work)
        if n_ann > 0:
            _bin_coordinate(rows, ts, ann_bins, aus, work)
        _rotate_chunk(rows, xs, ys, g1s, g2s, ets, exs)
        if has_z:
            _beta_chunk(rows, zs, z_l, sel, table, bs, work)
        counts[5] += _cell_chunk(rows, ts, us, aus, bs, ok, has_z, beta_one, bins, ann_bins, cell, ann_cell)
        for i in range(n_near):
            j = i if compact else picked[i]
            theta = ts[j]
            wr = ws[j] if has_w else 1.0
            e_t = ets[j]
            e_x = exs[j]
            beta = bs[j] if has_z else beta_one
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
            c = cell[j]
            if c >= 0:
                _add_row(cells, c, wr, theta, st, sx, w2, ee, wb, beta, dd, dt, dx, a)
                if use_boot:  # c // 8 is the sub-bin (beta >= 0)
                    key = _boot_key(np.uint64(first_row + start + picked[i]), seed_mix, n_groups, n_bins, c // 8)
                    boot[key, 0] += wr
                    boot[key, 1] += st
                    boot[key, 2] += sx
            a_idx = ann_cell[j]
            if a_idx >= 0:
                _add_row(ann, a_idx, wr, theta, st, sx, w2, ee, wb, beta, dd, dt, dx, a)
    tally[:7] += counts
    return ra.size


@numba.njit(**_JIT)
def rows_farthest(ra, dec, e1, e2, w, z, has_w, has_z, geo, z_min, tally):
    """The largest theta (arcsec) of the usable rows (-inf if none), selected as in :func:`rows_to_cells`;
    ``tally`` += [non_finite, e_ge_1, w_not_positive, z_not_behind, usable]."""
    buf = np.empty((9, CHUNK_ROWS))
    far = -np.inf
    counts = np.zeros(5, np.int64)
    ok = np.empty(CHUNK_ROWS, np.int32)
    for start in range(0, ra.size, CHUNK_ROWS):
        m = min(CHUNK_ROWS, ra.size - start)
        _load_rows(ra, dec, e1, e2, w, z, has_w, has_z, start, m, buf)
        _project_chunk(buf[0], buf[1], m, geo, buf[6], buf[7], buf[8])
        _usable_chunk(m, buf[2], buf[3], buf[4], buf[5], buf[8], has_w, has_z, z_min, np.inf, ok, counts)
        for j in range(m):
            theta = buf[8, j]
            if ok[j] and theta > far:
                far = theta
    tally += counts
    return far


def kernel_farthest(selection: tuple, block):
    """:func:`lensmass.core.shear_sums.farthest_usable` of a block by :func:`rows_farthest`, on threads as
    :func:`kernel_block_sums`; ``selection`` = (ra0, dec0, z_l, z_s, z_margin)."""
    from lensmass.core.shear_sources import DROP_REASONS
    from lensmass.core.shear_sums import Farthest

    ra0, dec0, z_l, z_s, margin = selection
    z = None if (z_s is not None or block.z is None) else block.z
    cols = [_column(c) for c in (block.ra_deg, block.dec_deg, block.e1, block.e2)]
    dummy = np.zeros(1, np.float32)
    wc = dummy if block.weight is None else _column(block.weight)
    zc = dummy if z is None else _column(z)
    n = int(cols[0].shape[0])
    geo = _geo(ra0, dec0)

    def part(start: int):
        stop = min(n, start + PART_ROWS)
        tally = np.zeros(5, np.int64)
        far = rows_farthest(*(c[start:stop] for c in cols), wc if block.weight is None else wc[start:stop],
                            zc if z is None else zc[start:stop], block.weight is not None, z is not None, geo,
                            float(z_l + margin), tally)
        return far, tally

    parts = _map(part, list(range(0, n, PART_ROWS)))
    counts = sum(p[1] for p in parts)
    return Farthest(float(max(p[0] for p in parts)), int(counts[4]), {k: int(v) for k, v in zip(DROP_REASONS, counts)})


def _geo(ra0: float, dec0: float) -> np.ndarray:
    """(ra0, dec0, tan(Dec0 / 2), sin Dec0, cos Dec0) of a centre, for the kernels."""
    half = np.pi / 360.0
    return np.array([float(ra0), float(dec0), float(np.tan(dec0 * half)), np.sin(np.radians(dec0)),
                     np.cos(np.radians(dec0))])


class KernelParams:
    """The constants :func:`rows_to_cells` takes for one layout, as arrays (made once per layout)."""

    def __init__(self, layout, ctx):
        from lensmass.core import shear_profile as sp, shear_sources as ss
        from lensmass.core.shear_sums import BETA_CELLS, RADIAL_SUBBINS

        self.geo = _geo(float(layout.center_ra), float(layout.center_dec))

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
                             ss._BETA_SOFT, float(layout.bootstrap), layout.n_bins,
                             ss._BETA_ZMAX if layout.z_s is None else np.inf])
        self.seed = (int(layout.seed) * 0x9E3779B9 + 0x7F4A7C15) & 0xFFFFFFFF  # as shear_sums.bootstrap_group


def _params(layout, ctx) -> KernelParams:
    if ctx.kernel is None:
        ctx.kernel = KernelParams(layout, ctx)
    return ctx.kernel


def kernel_applies(layout, ctx, z=None) -> bool:
    """The kernel covers evenly spaced (log or linear) bins and tabulated D_ls / D_s (z up to the table's end;
    :func:`kernel_block_sums` checks that as it reads the rows, this function only when given ``z``)."""
    params = _params(layout, ctx)
    if params.bins is None or (params.has_annulus and params.ann is None):
        return False
    if z is not None and np.size(z):
        from lensmass.core.shear_sources import _BETA_ZMAX

        return not float(np.fmax.reduce(np.asarray(z), initial=-np.inf)) > _BETA_ZMAX
    return True


_SWAPPED: dict[np.dtype, np.dtype] = {np.dtype(">f8"): np.dtype(np.uint64), np.dtype(">f4"): np.dtype(np.uint32)}
_TAKEN = {np.dtype(t) for t in (np.float64, np.float32, np.int64, np.int32, np.int16, np.int8, np.uint16, np.uint8)}


def _column(values) -> np.ndarray:
    """A 1-D column as the kernel takes it, without a copy where possible: native floats and small ints as
    they are (strided views of a memory-mapped table too), big-endian floats as unsigned ints of their bytes
    (swapped in the kernel), anything else converted to float64."""
    arr = np.asarray(values)
    dt = arr.dtype
    if dt.isnative and dt in _TAKEN:
        return arr
    if dt in _SWAPPED:
        return arr.view(_SWAPPED[dt])
    return arr.astype(np.float64)


#: Rows per part of a block: parts are summed on their own (on :data:`KERNEL_THREADS` threads) and the
#: parts' sums added in row order, so the numbers depend on this size, never on the number of threads.
PART_ROWS = 1 << 18
#: Threads of the compiled kernel (None: the environment variable ``LENSMASS_THREADS``, else the CPUs this
#: process may use). The kernel releases the GIL, so the threads run in parallel within one process.
KERNEL_THREADS: int | None = None
_POOL: dict[tuple[int, int], Any] = {}


def _threads() -> int:
    if KERNEL_THREADS is not None:
        return max(1, int(KERNEL_THREADS))
    text = os.environ.get("LENSMASS_THREADS", "").strip()
    if text.isdigit() and int(text) > 0:
        return int(text)
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def _map(fn, items: list) -> list:
    """``fn`` of each item, on the kernel's thread pool when there are several (results in item order)."""
    n = min(_threads(), len(items))
    if n < 2:
        return [fn(item) for item in items]
    key = (os.getpid(), n)  # a forked child has none of its parent's threads: it makes its own pool
    pool = _POOL.get(key)
    if pool is None:
        from concurrent.futures import ThreadPoolExecutor

        pool = _POOL[key] = ThreadPoolExecutor(n, thread_name_prefix="lensmass-sums")
    return list(pool.map(fn, items))


def kernel_block_sums(total, layout, ctx, ra, dec, e1, e2, w, z, first_row: int) -> bool:
    """Add a block of rows to the :class:`lensmass.core.shear_sums.ShearSums` ``total`` (the sums of the
    numpy route, :func:`lensmass.core.shear_sums._add_piece`). False (and ``total`` untouched) if a
    redshift lies past the D_ls / D_s table or the bins are not evenly spaced (:func:`kernel_applies`): the
    caller takes the numpy route for the block."""
    if not kernel_applies(layout, ctx):
        return False
    params = _params(layout, ctx)
    n_ann = params.n_ann
    n_keys = len(KERNEL_KEYS)
    cols = [_column(c) for c in (ra, dec, e1, e2)]
    dummy = np.zeros(1, np.float32)
    wc = dummy if w is None else _column(w)
    zc = dummy if z is None else _column(z)
    n = int(cols[0].shape[0])
    boot_shape = total.boot.reshape(-1, 3).shape if total.boot is not None else (1, 3)

    def part(start: int):
        stop = min(n, start + PART_ROWS)
        cells, ann = np.zeros((layout.n_cells, n_keys)), np.zeros((max(n_ann, 1), n_keys))
        boot, tally = np.zeros(boot_shape), np.zeros(8, np.int64)
        rows_to_cells(*(c[start:stop] for c in cols), wc if w is None else wc[start:stop],
                      zc if z is None else zc[start:stop], w is not None, z is not None, params.geo, params.sel,
                      params.bins, params.ann if n_ann else np.zeros(6), params.table, int(first_row) + start,
                      params.seed, cells, ann, boot, tally)
        return cells, ann, boot, tally

    parts = _map(part, list(range(0, n, PART_ROWS)))
    if any(p[3][7] for p in parts):
        return False
    cells, ann, boot, tally = parts[0]
    for p in parts[1:]:
        cells += p[0]
        ann += p[1]
        boot += p[2]
        tally += p[3]
    for i, key in enumerate(KERNEL_KEYS):
        total.cells[key] += cells[:, i]
        if n_ann and key in total.annulus:
            total.annulus[key] += ann[:, i]
    if total.boot is not None:
        total.boot += boot.reshape(total.boot.shape)
    for i, reason in enumerate(("non_finite", "ellipticity_ge_1", "weight_not_positive", "source_not_behind_lens")):
        total.dropped[reason] += int(tally[i])
    total.n_usable += int(tally[4])
    total.n_in_bins += int(tally[5])
    total.n_near += int(tally[6])
    return True
