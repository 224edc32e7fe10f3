"""Write a cluster-components result: JSON (everything), ECSV (one row per mass peak), a report page.

The ECSV table joins, per mass peak, its position and regions, S/N, the offsets of the
matched gas and light peaks, the fitted NFW M200 and the aperture budget, each with its
68% and 95% bounds in ``<key>_lo68``/``_hi68``/``_lo95``/``_hi95`` columns; the models and
notes are in the table's meta. The report (PNG or PDF, matplotlib's object API on Agg)
shows the mass contours over the optical image (or the mass map), the gas contours in a
second colour, the peaks with their 95% regions, and the offsets and budget tables.
"""

from __future__ import annotations

import os
from typing import Any, Mapping

import numpy as np

from lensmass.core.errors import LensInputError

#: Colours of our own: mass (contours, peaks), gas, light.
MASS_INK = "#139c9c"
GAS_INK = "#e0621b"
LIGHT_INK = "#8a3ffc"

#: (key, label, unit) of the budget columns, in table order.
BUDGET_KEYS = [
    ("lens_mass_nfw_msun", "lens mass (NFW)", "Msun"),
    ("lens_mass_map_msun", "lens mass (map)", "Msun"),
    ("stellar_mass_msun", "stellar mass", "Msun"),
    ("gas_mass_msun", "gas mass", "Msun"),
    ("stellar_fraction", "stellar fraction", ""),
    ("gas_fraction", "gas fraction", ""),
    ("baryon_fraction", "baryon fraction", ""),
    ("dark_fraction", "dark fraction", ""),
    ("lens_to_stellar_mass", "M_lens / M_star", ""),
    ("baryon_fraction_over_cosmic", "f_b / (Omega_b/Omega_m)", ""),
]


def write_components_json(path: str | os.PathLike, result: Mapping[str, Any]) -> None:
    from lensmass.io.atomic import write_text_atomic
    from lensmass.io.jsonout import dumps

    write_text_atomic(path, dumps(dict(result)) + "\n")


def components_table(result: Mapping[str, Any]):
    """One astropy Table row per mass peak (see the module docstring)."""
    from astropy.table import Table

    from lensmass.io.jsonout import to_jsonable

    rows = []
    halos = {h["peak"]: h for h in result.get("halo_fit", {}).get("halos", [])}
    budgets = {b["peak"]: b for b in result.get("budgets", [])}
    for p in result["mass_peaks"]:
        row: dict[str, Any] = {"peak": p["peak"], "ra_deg": p["ra_deg"], "dec_deg": p["dec_deg"],
                               "x_arcsec": p["x_arcsec"], "y_arcsec": p["y_arcsec"], "snr": p["snr"],
                               "false_peak_probability": p["false_peak_probability"]}
        for r in p["regions"]:
            tag = int(round(100 * r["level"])) if r["level"] else 0
            if tag:
                row[f"region{tag}_semi_major_arcsec"] = r["semi_major_arcsec"]
                row[f"region{tag}_semi_minor_arcsec"] = r["semi_minor_arcsec"]
                row[f"region{tag}_angle_deg"] = r["angle_deg_east_of_x"]
        for kind in ("gas", "light"):
            o = next((o for o in result.get("offsets", []) if o["mass_peak"] == p["peak"] and o["map"] == kind), None)
            row[f"{kind}_offset_arcsec"] = np.nan if o is None else o["offset_arcsec"]
            row[f"{kind}_offset_kpc"] = np.nan if o is None else o["offset_kpc"]
            for level in ("68", "95"):
                lo, hi = (np.nan, np.nan) if o is None else o[f"offset_interval{level}_arcsec"]
                row[f"{kind}_offset_lo{level}_arcsec"] = np.nan if lo is None else lo
                row[f"{kind}_offset_hi{level}_arcsec"] = np.nan if hi is None else hi
            row[f"{kind}_offset_significance_sigma"] = np.nan if o is None else o["significance_sigma"]
        h = halos.get(p["peak"])
        if h is not None:
            _with_bounds(row, "nfw_m200_msun", h["m200_msun"], h, "m200_msun")
        b = budgets.get(p["peak"], {})
        row["aperture_kpc"] = b.get("aperture_kpc", np.nan)
        for key, _, _ in BUDGET_KEYS:
            _with_bounds(row, key, b.get(key, np.nan), b, key)
        rows.append(row)
    names = list(rows[0])
    table = Table(rows=[[np.nan if r.get(n) is None else r.get(n, np.nan) for n in names] for r in rows], names=names)
    for name in names:
        if name.endswith("_arcsec"):
            table[name].unit = "arcsec"
        elif name.endswith("_kpc"):
            table[name].unit = "kpc"
        elif name.endswith("_msun"):
            table[name].unit = "solMass"
        elif name.endswith("_deg"):
            table[name].unit = "deg"
    keep = ("cosmology", "z_l", "center_ra", "center_dec", "map", "cosmic_baryon_fraction", "notes", "models")
    table.meta.update(to_jsonable({k: result[k] for k in keep if k in result}))
    return table


def _with_bounds(row: dict, column: str, value, holder: Mapping, key: str) -> None:
    row[column] = np.nan if value is None else value
    for level in ("68", "95"):
        lo, hi = holder.get(f"intervals{level}", {}).get(key, (np.nan, np.nan))
        row[f"{column}_lo{level}"] = np.nan if lo is None else lo
        row[f"{column}_hi{level}"] = np.nan if hi is None else hi


def write_components_ecsv(path: str | os.PathLike, result: Mapping[str, Any]) -> None:
    from lensmass.io.atomic import atomic_path

    table = components_table(result)
    with atomic_path(path) as tmp:
        table.write(tmp, format="ascii.ecsv", overwrite=True)


def write_components(path: str | os.PathLike, result: Mapping[str, Any], optical=None) -> None:
    """Write by the file's ending: .json, .ecsv, or .png / .pdf (the report page)."""
    ending = os.fspath(path).lower().rsplit(".", 1)[-1]
    if ending == "json":
        write_components_json(path, result)
    elif ending == "ecsv":
        write_components_ecsv(path, result)
    elif ending in ("png", "pdf"):
        from lensmass.io.cluster_report import render_components_report

        render_components_report(path, result, optical=optical)
    else:
        raise LensInputError(f"Cannot tell what to write from '{os.fspath(path)}': end the name in .json, .ecsv, "
                             ".png or .pdf.")
