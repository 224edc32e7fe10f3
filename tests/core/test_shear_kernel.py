"""The compiled one-pass kernel of the weak-lensing engine gives the sums of the numpy passes.

The numpy route (lensmass.core.shear_sums._add_piece) is the reference; both implement the same
published formulas (gnomonic projection, Calabretta & Greisen 2002; e_t / e_x, Bartelmann &
Schneider 2001; weights 1 / Sigma_cr^2, common practice), so any difference is rounding.
"""

from __future__ import annotations

import numpy as np
import pytest

from lensmass.core import shear_kernel as sk, shear_sums as S
from lensmass.core.cosmology import resolve_cosmology
from lensmass.core.shear_profile import radial_bin_edges

RA0, DEC0, ZL = 141.372, 18.2705, 0.35


def _catalogue(n=S.KERNEL_MIN_ROWS + 1000, seed=5, field_deg=1.0):
    rng = np.random.default_rng(seed)
    e = rng.normal(0, 0.25, (2, n)).clip(-0.95, 0.95)
    ra = rng.uniform(RA0 - field_deg, RA0 + field_deg, n)
    dec = rng.uniform(DEC0 - field_deg, DEC0 + field_deg, n)
    e1, e2 = e.astype(np.float32)
    w = rng.uniform(0.5, 1.5, n).astype(np.float32)
    z = (0.7 * rng.gamma(2.0, 1.0, n) ** (1 / 1.5)).astype(np.float32)
    # rows every drop reason applies to, and rows behind the tangent plane
    for arr, value in ((e1, np.nan), (w, -1.0), (z, np.nan), (ra, np.nan), (z, 0.1)):
        arr[rng.integers(0, n, 40)] = value
    e1[rng.integers(0, n, 40)] = 0.99
    ra[rng.integers(0, n, 40)] = RA0 + 180.0
    return ra, dec, e1, e2, w, z


def _both(layout, *columns, first_row=12345):
    S.USE_KERNEL = True
    try:
        kernel = S.catalog_block_sums(layout, *columns, first_row=first_row)
        S.USE_KERNEL = False
        numpy = S.catalog_block_sums(layout, *columns, first_row=first_row)
    finally:
        S.USE_KERNEL = True
    return kernel, numpy


def _close(a, b, scale_from):
    # sums of signed terms: compared with the sum of their magnitudes (rounding of ~1e5 additions)
    return np.max(np.abs(a - b)) <= 1e-12 * np.abs(scale_from).sum() + 1e-300


@pytest.mark.parametrize("z_s, annulus, log_bins, r_max", [
    (None, False, True, 3600.0), (1.2, True, True, 3600.0), (None, True, False, 3600.0),
    (None, True, True, 1500.0), (None, False, False, 900.0)])  # most rows in the bins / few (rows moved first)
def test_kernel_sums_equal_the_numpy_sums(z_s, annulus, log_bins, r_max):
    edges = radial_bin_edges(60.0, r_max, 10, log=log_bins)
    ann = tuple(radial_bin_edges(500.0, 3000.0, 16, log=True)) if annulus else None
    layout = S.SumLayout(RA0, DEC0, ZL, resolve_cosmology("Planck18"), tuple(edges), z_s=z_s,
                         annulus_edges_arcsec=ann, bootstrap=True, seed=7)
    columns = _catalogue()
    assert sk.kernel_applies(layout, S._context(layout), None if z_s else columns[5])
    kernel, numpy = _both(layout, *columns)
    for key, values in numpy.cells.items():
        assert _close(kernel.cells[key], values, values), key
    for key, values in numpy.annulus.items():
        assert _close(kernel.annulus[key], values, values), key
    assert _close(kernel.boot, numpy.boot, numpy.boot)
    assert kernel.dropped == numpy.dropped
    assert all(v > 0 for k, v in numpy.dropped.items() if z_s is None or k != "source_not_behind_lens")
    assert (kernel.n_usable, kernel.n_in_bins, kernel.n_near) == (numpy.n_usable, numpy.n_in_bins, numpy.n_near)


def test_wide_fields_and_far_sources_use_the_exact_routes():
    # angles past the series range take the library tan/arctan; redshifts past the D_ls/D_s table's end
    # send the block to the numpy route, which computes them with the core distances
    edges = radial_bin_edges(600.0, 30000.0, 8)
    layout = S.SumLayout(RA0, DEC0, ZL, resolve_cosmology("Planck18"), tuple(edges), bootstrap=False)
    ra, dec, e1, e2, w, z = _catalogue(field_deg=8.0, seed=9)
    kernel, numpy = _both(layout, ra, dec, e1, e2, w, z)
    for key, values in numpy.cells.items():
        assert _close(kernel.cells[key], values, values), key
    z = z.copy()
    z[:5] = 25.0
    assert not sk.kernel_applies(layout, S._context(layout), z)


def test_big_endian_and_strided_columns_give_the_same_sums():
    # FITS tables store big-endian values row by row (FITS Standard 4.0, section 7.3): the kernel reads such
    # columns in place (memory-mapped, strided) and swaps the bytes itself; the sums equal those of native arrays
    edges = radial_bin_edges(60.0, 3600.0, 10)
    layout = S.SumLayout(RA0, DEC0, ZL, resolve_cosmology("Planck18"), tuple(edges), bootstrap=True, seed=3)
    columns = _catalogue(seed=11)
    table = np.zeros(columns[0].size, dtype=[("tag", "i1"), ("ra", ">f8"), ("dec", ">f8"), ("e1", ">f4"),
                                             ("e2", ">f4"), ("w", ">f4"), ("flag", ">i2"), ("z", ">f4")])
    assert not table["ra"].flags.aligned  # FITS packs fields without padding
    for name, values in zip(("ra", "dec", "e1", "e2", "w", "z"), columns):
        table[name] = values
    native = S.catalog_block_sums(layout, *columns, first_row=99)
    swapped = S.catalog_block_sums(layout, *(table[n] for n in ("ra", "dec", "e1", "e2", "w", "z")), first_row=99)
    for key, values in native.cells.items():
        assert np.array_equal(swapped.cells[key], values), key
    assert np.array_equal(swapped.boot, native.boot)
    assert swapped.dropped == native.dropped and swapped.n_in_bins == native.n_in_bins


def test_parts_on_threads_add_up_the_same_whatever_the_number_of_threads(monkeypatch):
    # a block is cut into parts of PART_ROWS rows (summed on threads, added in row order): the numbers depend
    # on the part size only, and agree with the numpy route (the reference) to rounding
    edges = radial_bin_edges(60.0, 3600.0, 10)
    layout = S.SumLayout(RA0, DEC0, ZL, resolve_cosmology("Planck18"), tuple(edges), bootstrap=True, seed=5)
    columns = _catalogue(seed=13)
    monkeypatch.setattr(sk, "PART_ROWS", 1 << 14)
    runs = []
    for threads in (1, 2, 3):
        monkeypatch.setattr(sk, "KERNEL_THREADS", threads)
        runs.append(S.catalog_block_sums(layout, *columns, first_row=7))
    for other in runs[1:]:
        assert all(np.array_equal(other.cells[k], runs[0].cells[k]) for k in runs[0].cells)
        assert np.array_equal(other.boot, runs[0].boot) and other.dropped == runs[0].dropped
    kernel, numpy = _both(layout, *columns, first_row=7)
    for key, values in numpy.cells.items():
        assert _close(kernel.cells[key], values, values), key
    assert _close(kernel.boot, numpy.boot, numpy.boot) and kernel.n_in_bins == numpy.n_in_bins


def test_a_redshift_past_the_table_sends_the_block_to_the_numpy_route():
    # the kernel finds it while reading and gives the block back untouched; the numpy route computes D_ls / D_s
    # of such rows with the core distances
    edges = radial_bin_edges(60.0, 3600.0, 10)
    layout = S.SumLayout(RA0, DEC0, ZL, resolve_cosmology("Planck18"), tuple(edges), bootstrap=True, seed=5)
    ra, dec, e1, e2, w, z = _catalogue(seed=17)
    z = z.copy()
    z[-3] = 25.0
    kernel, numpy = _both(layout, ra, dec, e1, e2, w, z)
    assert all(np.array_equal(kernel.cells[k], numpy.cells[k]) for k in numpy.cells)
    assert np.array_equal(kernel.boot, numpy.boot)


def test_layouts_differing_only_in_margin_bootstrap_or_seed_do_not_share_constants():
    # the kernel's constants (redshift margin, bootstrap switch, hash seed) were once cached by the bins and
    # centre alone, so a second run in the same process reused the first run's margin and seed
    edges = tuple(radial_bin_edges(60.0, 3600.0, 10))
    cosmo = resolve_cosmology("Planck18")
    columns = _catalogue(seed=19)
    S.catalog_block_sums(S.SumLayout(RA0, DEC0, ZL, cosmo, edges, bootstrap=False, seed=1), *columns)
    for margin, seed in ((0.1, 2), (0.3, 3)):
        layout = S.SumLayout(RA0, DEC0, ZL, cosmo, edges, z_margin=margin, bootstrap=True, seed=seed)
        kernel, numpy = _both(layout, *columns)
        assert kernel.dropped == numpy.dropped
        assert np.abs(numpy.boot).sum() > 0 and _close(kernel.boot, numpy.boot, numpy.boot)


def test_the_kernels_log_is_within_one_ulp_of_the_c_library():
    # the kernel's vectorised log (method and coefficients of fdlibm's e_log.c, written from memory) checked
    # against Python's math.log (the C library) over 40 decades and near 1, where cancellation is worst
    import math

    rng = np.random.default_rng(2)
    x = np.concatenate([np.exp(rng.uniform(-46, 46, 100_000)), 1 + rng.normal(0, 1e-6, 20_000),
                        rng.uniform(0.5, 2.0, 50_000), [1.0, 2.0, 0.5, np.sqrt(2.0), 1e-300, 1e300]])
    ref = np.array([math.log(v) for v in x])
    out = x.copy()
    sk.log_chunk(out.size, out, np.empty_like(out))
    ulps = np.abs(out - ref) / np.spacing(np.abs(ref) + 1e-300)
    assert ulps.max() <= 1.0
    assert out[-6] == 0.0 and abs(out[-5] - math.log(2.0)) == 0.0


def test_thread_count_from_the_environment(monkeypatch):
    monkeypatch.setattr(sk, "KERNEL_THREADS", None)
    monkeypatch.setenv("LENSMASS_THREADS", "3")
    assert sk._threads() == 3
    monkeypatch.setenv("LENSMASS_THREADS", "many")  # not a count: the CPUs this process may use
    assert sk._threads() >= 1


def _sums_in_child(queue):
    sk.KERNEL_THREADS = 2
    edges = radial_bin_edges(60.0, 3600.0, 10)
    layout = S.SumLayout(RA0, DEC0, ZL, resolve_cosmology("Planck18"), tuple(edges), seed=5)
    queue.put(S.catalog_block_sums(layout, *_catalogue(seed=23)).n_in_bins)


def test_a_forked_process_sums_on_its_own_threads(monkeypatch):
    # a process forked after the pool exists (the batch runner forks) must not wait on its parent's threads
    import multiprocessing

    monkeypatch.setattr(sk, "KERNEL_THREADS", 2)
    monkeypatch.setattr(sk, "PART_ROWS", 1 << 14)
    edges = radial_bin_edges(60.0, 3600.0, 10)
    layout = S.SumLayout(RA0, DEC0, ZL, resolve_cosmology("Planck18"), tuple(edges), seed=5)
    expected = S.catalog_block_sums(layout, *_catalogue(seed=23)).n_in_bins
    context = multiprocessing.get_context("fork")
    queue = context.Queue()
    child = context.Process(target=_sums_in_child, args=(queue,))
    child.start()
    child.join(120)
    alive = child.is_alive()
    if alive:
        child.kill()
    assert not alive and child.exitcode == 0
    assert queue.get(timeout=5) == expected


@pytest.mark.parametrize("field_deg, z_s", [(1.0, None), (8.0, None), (1.0, 1.2)])
def test_farthest_usable_galaxy_by_kernel_equals_the_numpy_route(field_deg, z_s):
    # the pass that finds the default outer radius: same selection tallies, same largest radius (to rounding:
    # the kernel takes the series per row, the numpy route per piece)
    ra, dec, e1, e2, w, z = _catalogue(seed=29, field_deg=field_deg)
    block = S.CatalogBlock(ra, dec, e1, e2, w, z, 0)
    selection = (RA0, DEC0, ZL, z_s, 0.1)
    S.USE_KERNEL = True
    try:
        kernel = S.farthest_usable(selection, block)
        S.USE_KERNEL = False
        numpy = S.farthest_usable(selection, block)
    finally:
        S.USE_KERNEL = True
    assert kernel.dropped == numpy.dropped and kernel.n_usable == numpy.n_usable
    assert abs(kernel.theta_max_arcsec / numpy.theta_max_arcsec - 1) < 1e-14
