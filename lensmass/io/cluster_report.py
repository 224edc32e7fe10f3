"""Drawing of a cluster-components result: maps with contours, peaks, regions; the report page.

:func:`draw_components_map` is used by the report page here and by the window's dock, so
both show the same picture: the optical image (resampled onto the mass map's sky grid by
WCS) or, without one, the E-mode S/N map in grey; mass contours at S/N 2, 3, 4, ...; gas
contours at logarithmic steps of the X-ray rate; mass peaks with their 95% regions, gas and
light peaks as markers. Offsets are in arcsec from the map centre, east to the left.
"""

from __future__ import annotations

import os
from typing import Any, Mapping

import numpy as np

from lensmass.io.cluster_export import BUDGET_KEYS, GAS_INK, LIGHT_INK, MASS_INK


def _extent(result: Mapping[str, Any]) -> list[float]:
    half = 0.5 * result["map"]["extent_arcsec"]
    return [-half, half, -half, half]


def optical_on_grid(result: Mapping[str, Any], optical, n: int = 512) -> np.ndarray | None:
    """The optical image resampled onto the mass map's sky grid (n x n) by WCS, or None."""
    if optical is None:
        return None
    from lensmass.core.map_alignment import reproject_onto_map

    pix = result["map"]["extent_arcsec"] / n
    return reproject_onto_map(optical.data, optical.wcs, result["center_ra"], result["center_dec"], pix, n,
                              exact=False)


def draw_components_map(ax, result: Mapping[str, Any], *, background: np.ndarray | None = None) -> None:
    """Draw the maps, contours, peaks and regions of ``result`` on a matplotlib Axes."""
    from matplotlib.patches import Ellipse

    ext = _extent(result)
    mp = result.get("_mass")
    if background is not None:
        finite = background[np.isfinite(background)]
        lo, hi = (np.percentile(finite, [5, 99.7]) if finite.size else (0, 1))
        ax.imshow(np.arcsinh((background - lo) / max(hi - lo, 1e-30) * 10), origin="lower", extent=ext, cmap="gray_r",
                  interpolation="nearest")
    elif mp is not None:
        ax.imshow(mp.kappa_e / np.where(mp.noise > 0, mp.noise, np.inf), origin="lower", extent=ext, cmap="Greys",
                  vmin=-2, vmax=8, interpolation="nearest")
    if mp is not None:
        snr = mp.kappa_e / np.where(mp.noise > 0, mp.noise, np.inf)
        top = max(3.0, float(np.nanmax(snr)))
        ax.contour(snr, levels=np.arange(2.0, top + 1e-9, 1.0), origin="lower", extent=ext, colors=MASS_INK,
                   linewidths=0.9)
    gas = (result.get("_second_maps") or {}).get("gas")
    if gas is not None and np.any(np.isfinite(gas.image)):
        img = gas.image
        peak = float(np.nanmax(img))
        levels = peak * np.array([0.05, 0.1, 0.2, 0.4, 0.7])
        ax.contour(np.nan_to_num(img), levels=levels, origin="lower", extent=ext, colors=GAS_INK, linewidths=0.9)
    for p in result.get("mass_peaks", []):
        r95 = next((r for r in p["regions"] if r["level"] and abs(r["level"] - 0.95) < 1e-6), None)
        if r95 and r95["semi_major_arcsec"]:
            ax.add_patch(Ellipse((p["x_arcsec"], p["y_arcsec"]), 2 * r95["semi_major_arcsec"],
                                 2 * r95["semi_minor_arcsec"], angle=r95["angle_deg_east_of_x"], fill=False,
                                 edgecolor=MASS_INK, linestyle="--", linewidth=1.0))
        ax.plot(p["x_arcsec"], p["y_arcsec"], marker="P", color=MASS_INK, markersize=8, markeredgecolor="white")
        ax.annotate(f"M{p['peak']}", (p["x_arcsec"], p["y_arcsec"]), textcoords="offset points", xytext=(6, 6),
                    color=MASS_INK, fontsize=8, fontweight="bold")
    for kind, ink, marker in (("gas", GAS_INK, "X"), ("light", LIGHT_INK, "D")):
        for p in result.get(f"{kind}_peaks", []):
            ax.plot(p["x_arcsec"], p["y_arcsec"], marker=marker, color=ink, markersize=6, markeredgecolor="white")
            ax.annotate(f"{kind[0].upper()}{p['peak']}", (p["x_arcsec"], p["y_arcsec"]), textcoords="offset points",
                        xytext=(5, -11), color=ink, fontsize=7)
    xs = [p["x_arcsec"] for k in ("mass_peaks", "gas_peaks", "light_peaks") for p in result.get(k, [])]
    ys = [p["y_arcsec"] for k in ("mass_peaks", "gas_peaks", "light_peaks") for p in result.get(k, [])]
    if xs:  # the region of the peaks, with a margin of a few smoothing widths
        cx, cy = 0.5 * (min(xs) + max(xs)), 0.5 * (min(ys) + max(ys))
        half = 0.5 * max(max(xs) - min(xs), max(ys) - min(ys)) + 4 * result["map"]["smoothing_arcsec"]
        half = min(half, 0.5 * (ext[1] - ext[0]))
        ax.set_xlim(cx + half, cx - half)  # east to the left
        ax.set_ylim(cy - half, cy + half)
    else:
        ax.set_xlim(ext[1], ext[0])
        ax.set_ylim(ext[2], ext[3])
    ax.set_xlabel("east offset [arcsec]")
    ax.set_ylabel("north offset [arcsec]")
    ax.set_aspect("equal")


def _fmt(v) -> str:
    if v is None or (isinstance(v, float) and not np.isfinite(v)):
        return "-"
    av = abs(v)
    if av >= 1e5:
        return f"{v:.3g}"
    return f"{v:.3g}" if av < 100 else f"{v:.0f}"


def offset_rows(result: Mapping[str, Any]) -> list[list[str]]:
    """Rows of the offsets table (shared by the report and the window)."""
    rows = []
    for o in result.get("offsets", []):
        lo, hi = o["offset_interval95_arcsec"]
        rows.append([f"M{o['mass_peak']} - {o['map'][0].upper()}{o['other_peak']}", _fmt(o["offset_arcsec"]),
                     _fmt(o["offset_kpc"]), f"{_fmt(lo)} - {_fmt(hi)}", _fmt(o["significance_sigma"])])
    return rows


OFFSET_HEADER = ["pair", "offset [\"]", "[kpc]", "95% [\"]", "sigma"]


def budget_rows(result: Mapping[str, Any]) -> tuple[list[str], list[list[str]]]:
    """Header and rows of the budget table: one row per quantity, one column per mass peak."""
    budgets = result.get("budgets", [])
    header = ["quantity"] + [f"M{b['peak']} ({b['aperture_kpc']:.0f} kpc)" for b in budgets]
    rows = []
    for key, label, unit in BUDGET_KEYS:
        if not any(key in b for b in budgets):
            continue
        cells = []
        for b in budgets:
            lo, hi = b.get("intervals68", {}).get(key, (None, None))
            cells.append(f"{_fmt(b.get(key))} [{_fmt(lo)}, {_fmt(hi)}]" if key in b else "-")
        rows.append([label + (f" [{unit}]" if unit else "")] + cells)
    return header, rows


def render_components_report(path: str | os.PathLike, result: Mapping[str, Any], *, optical=None) -> None:
    """A one-page report (PNG or PDF) of the result, written atomically."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from lensmass.io.atomic import atomic_path

    fig = Figure(figsize=(11.0, 8.5))
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.05, 0.30, 0.42, 0.62))
    draw_components_map(ax, result, background=optical_on_grid(result, optical))
    ax.set_title("Mass (contours: S/N 2, 3, ...), gas (orange), light peaks (violet)", fontsize=8)
    fig.text(0.05, 0.965, f"Where the mass, gas and galaxies are - z_l = {result['z_l']:g}, {result['cosmology']}, "
                          f"centre RA {result['center_ra']:.4f}, Dec {result['center_dec']:.4f}",
             fontsize=11, fontweight="bold")
    tx = fig.add_axes((0.52, 0.30, 0.46, 0.62))
    tx.axis("off")
    y = 0.98
    tx.text(0, y, "Mass peaks", fontsize=9, fontweight="bold", transform=tx.transAxes)
    for p in result.get("mass_peaks", []):
        y -= 0.045
        r95: dict = next((r for r in p["regions"] if r["level"] and abs(r["level"] - 0.95) < 1e-6), {})
        tx.text(0, y, f"M{p['peak']}: RA {p['ra_deg']:.4f} Dec {p['dec_deg']:.4f}  S/N {p['snr']:.1f}  "
                      f"false-peak p {p['false_peak_probability']:.2g}  95% region "
                      f"{_fmt(r95.get('semi_major_arcsec'))}\" x {_fmt(r95.get('semi_minor_arcsec'))}\"",
                fontsize=7, transform=tx.transAxes)
    for h in result.get("halo_fit", {}).get("halos", []):
        y -= 0.045
        lo, hi = h["intervals68"]["m200_msun"]
        tx.text(0, y, f"NFW at M{h['peak']}: M200 {_fmt(h['m200_msun'])} Msun (68%: {_fmt(lo)} - {_fmt(hi)}), "
                      f"c200 {h['c200']:.2f}", fontsize=7, transform=tx.transAxes)
    y -= 0.07
    tx.text(0, y, "Offsets from the mass peaks", fontsize=9, fontweight="bold", transform=tx.transAxes)
    cols = [0, 0.22, 0.38, 0.52, 0.78]
    for row in [OFFSET_HEADER] + offset_rows(result):
        y -= 0.04
        for x, cell in zip(cols, row):
            tx.text(x, y, cell, fontsize=7, transform=tx.transAxes)
    y -= 0.07
    tx.text(0, y, "Budgets in apertures (median [68%])", fontsize=9, fontweight="bold", transform=tx.transAxes)
    header, rows = budget_rows(result)
    bcols = [0] + [0.36 + 0.32 * i for i in range(len(header) - 1)]
    for row in [header] + rows:
        y -= 0.04
        for x, cell in zip(bcols, row):
            tx.text(x, y, cell, fontsize=6.5, transform=tx.transAxes)
    notes = list(result.get("notes", [])) + [f"{k}: {v}" for k, v in result.get("models", {}).items()]
    from textwrap import wrap

    lines = [ln for n in notes for ln in wrap("- " + n, 190)]
    fig.text(0.05, 0.26, "\n".join(lines[:22]), fontsize=6.2, va="top", family="monospace")
    with atomic_path(path) as tmp:
        fig.savefig(tmp, format=os.fspath(path).lower().rsplit(".", 1)[-1], dpi=110)


def overlay_in_image_pixels(result: Mapping[str, Any], wcs) -> dict[str, list]:
    """The picture's lines and marks in the pixels of another image (by its WCS), for a window layer.

    Returns ``mass`` and ``gas`` (lists of (n, 2) polylines: mass S/N 2, 3, ... and gas levels as in
    :func:`draw_components_map`), ``regions`` (95% ellipses of the mass peaks as closed polylines)
    and ``peaks`` ((kind, label, x, y) for mass, gas and light peaks).
    """
    import contourpy

    from lensmass.core.shear_profile import tangent_plane_to_sky

    ra0, dec0 = result["center_ra"], result["center_dec"]

    def to_pixels(x, y):
        ra, dec = tangent_plane_to_sky(np.asarray(x, float), np.asarray(y, float), ra0, dec0)
        px, py = wcs.world_to_pixel_values(ra, dec)
        return np.column_stack([px, py])

    n = result["map"]["pixels"]
    pix = result["map"]["pixel_arcsec"]
    centres = (np.arange(n) - n / 2 + 0.5) * pix
    out: dict[str, list] = {"mass": [], "gas": [], "regions": [], "peaks": []}
    mp = result.get("_mass")
    if mp is not None:
        snr = np.nan_to_num(mp.kappa_e / np.where(mp.noise > 0, mp.noise, np.inf))
        gen = contourpy.contour_generator(centres, centres, snr)
        for level in np.arange(2.0, max(3.0, float(snr.max())) + 1e-9, 1.0):
            out["mass"] += [to_pixels(line[:, 0], line[:, 1]) for line in map(np.asarray, gen.lines(level))]
    gas = (result.get("_second_maps") or {}).get("gas")
    if gas is not None and np.any(np.isfinite(gas.image)):
        img = np.nan_to_num(gas.image)
        gen = contourpy.contour_generator(centres, centres, img)
        for level in float(np.max(img)) * np.array([0.05, 0.1, 0.2, 0.4, 0.7]):
            out["gas"] += [to_pixels(line[:, 0], line[:, 1]) for line in map(np.asarray, gen.lines(level))]
    t = np.linspace(0, 2 * np.pi, 73)
    for p in result.get("mass_peaks", []):
        r95 = next((r for r in p["regions"] if r["level"] and abs(r["level"] - 0.95) < 1e-6), None)
        if r95 and r95["semi_major_arcsec"]:
            a, b = r95["semi_major_arcsec"], r95["semi_minor_arcsec"]
            phi = np.radians(r95["angle_deg_east_of_x"])
            ex = p["x_arcsec"] + a * np.cos(t) * np.cos(phi) - b * np.sin(t) * np.sin(phi)
            ey = p["y_arcsec"] + a * np.cos(t) * np.sin(phi) + b * np.sin(t) * np.cos(phi)
            out["regions"].append(to_pixels(ex, ey))
    for kind, prefix in (("mass", "M"), ("gas", "G"), ("light", "L")):
        for p in result.get(f"{kind}_peaks", []):
            xy = to_pixels([p["x_arcsec"]], [p["y_arcsec"]])[0]
            out["peaks"].append((kind, f"{prefix}{p['peak']}", float(xy[0]), float(xy[1])))
    return out
