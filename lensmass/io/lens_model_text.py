"""How a lens-model result is shown as text: the rows, labels, units and formats shared by the command
line (``lensmass model``), the window's Lens model dock and the report."""

from __future__ import annotations

import numpy as np

#: The model parameters as every output shows them: (key of ``lens_model["parameters"]``, label, short label
#: for narrow places such as the window's dock, unit, format).
PARAMETER_ROWS = (
    ("theta_e_arcsec", "theta_E", 'theta_E ["]', "arcsec", ".4g"),
    ("mean_kappa_radius_arcsec", "R(mean kappa=1)", 'R(kbar=1) ["]', "arcsec", ".4g"),
    ("axis_ratio", "axis ratio q", "q", "", ".3g"),
    ("position_angle_deg", "PA (E of N)", "PA [deg]", "deg", ".0f"),
    ("shear", "shear", "shear", "", ".3g"),
    ("shear_angle_deg", "shear PA", "shear PA", "deg", ".0f"),
)


def interval_columns(block: dict | None, digits: str = ".4g", width: int = 8) -> str:
    """``median  lo68 hi68  lo95 hi95`` in fixed-width columns ("-" without a block).

    Written by the program's one rounding rule (:func:`lensmass.core.result_text.round_measured`:
    two figures of the 68% half-width, the median and every bound to the same decimals); ``digits``
    is used only for a block without an interval.
    """
    if not block:
        return "-"
    from lensmass.core.result_text import round_measured

    lo, hi = block["interval68"]
    lo95, hi95 = block["interval95"]
    r = round_measured(block["median"], None, (lo, hi))
    if r.decimals is None:
        cells = [format(v, digits) for v in (block["median"], lo, hi, lo95, hi95)]
    else:
        cells = [r.value, r.low, r.high, r.same(lo95), r.same(hi95)]
    power = "" if r.power is None else f" e{r.power:+03d}"
    w = width
    return f"{cells[0]:>{w}} {cells[1]:>{w}} {cells[2]:<{w}} {cells[3]:>{w}} {cells[4]}{power}"


def image_lines(lm: dict) -> list[str]:
    """One line per image: marked -> model position (pixels), residual, magnification median [68%]."""
    lines = []
    for e in lm["images"]:
        if e.get("kind") == "arc":
            continue
        mu = e.get("magnification")
        mu_txt = (f"mu {mu['median']:+.3g} [{mu['interval68'][0]:+.3g}, {mu['interval68'][1]:+.3g}]" if mu
                  else f"mu {e.get('model_magnification', float('nan')):+.3g}")
        if e.get("marked_x") is None:
            lines.append(f"{e['system']}: not marked -> ({e['model_x']:.1f}, {e['model_y']:.1f})  {mu_txt}")
        elif e.get("model_x") is None:
            lines.append(f"{e['system']}: ({e['marked_x']:.1f}, {e['marked_y']:.1f}) -> no model image")
        else:
            lines.append(f"{e['system']}: ({e['marked_x']:.1f}, {e['marked_y']:.1f}) -> ({e['model_x']:.1f}, "
                         f"{e['model_y']:.1f})  {e['residual_arcsec']:.3f}\"  {mu_txt}")
    arcs = [e["residual_arcsec"] for e in lm["images"] if e.get("kind") == "arc"]
    if arcs:
        lines.append(f"arc points: rms residual {float(np.sqrt(np.mean(np.square(arcs)))):.3f}\" ({len(arcs)} points)")
    return lines


def delay_rows(lm: dict) -> list[tuple[str, dict]]:
    """(label, summary) of each predicted delay, days, relative to the first image of its system."""
    return [(f"delay {d['system']}{d['image']}-{d['system']}1 (d)", d["delay_days"]) for d in lm.get("time_delays", [])]
