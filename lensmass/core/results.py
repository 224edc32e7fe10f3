"""Results that a notebook can use: a mapping that converts to an astropy QTable and shows itself.

:class:`LensResult` is the mapping the program has always passed around (every key in
:mod:`lensmass.core.result_keys`), so the window, the command line and the files read it as
before. For a notebook it adds:

- ``to_table()`` (and ``QTable(result)`` / ``Table(result)``): one row per lens, each number a
  column with its unit and description, the 68% and 95% bounds as ``<key>_p16`` ...
  ``<key>_p97p5`` columns, the notes and models in the table's ``meta``;
- ``quantity(key)``: the value as an astropy Quantity;
- ``_repr_html_`` and ``__repr__``: the numbers with their labels, units, intervals and notes.

Working data (keys starting with ``_``, such as the Monte Carlo draws ``_samples``) stays
available to the program's own plots but appears in none of these, nor in JSON files.

Examples
--------
>>> from lensmass.core.estimate import estimate
>>> r = estimate(1.2, 0.3, 1.0)
>>> t = r.to_table()
>>> str(t["mass_einstein_msun"].unit), len(t)
('solMass', 1)
>>> r.quantity("r_e_kpc").unit
Unit("kpc")
"""

from __future__ import annotations

import html
from typing import Any

import numpy as np

from lensmass.core.result_keys import RESULT_KEYS, fact
from lensmass.core.result_text import interval_text, value_text

#: Suffix of each bound column -> (interval block, index in [low, high], percentile); as in the ECSV export.
BOUND_COLUMNS = {"_p16": ("intervals68", 0, "16th"), "_p84": ("intervals68", 1, "84th"),
                 "_p2p5": ("intervals95", 0, "2.5th"), "_p97p5": ("intervals95", 1, "97.5th")}


def _is_number_column(key: str, value) -> bool:
    info = RESULT_KEYS.get(key)
    if info is None or info.fmt not in ("number", "count"):
        return False
    arr = np.asarray(value)
    return arr.dtype.kind in "fiub" and arr.ndim <= 1


class LensResult(dict):
    """A result mapping (keys of the registry) that converts to an astropy QTable and displays well.

    It is a ``dict``: ``result["mass_einstein_msun"]``, ``result.get(...)`` and JSON writing work
    as for any mapping. Keys starting with ``_`` are working data and never leave the program.

    Examples
    --------
    >>> from lensmass import estimate
    >>> r = estimate([1.0, 1.5], 0.3, 1.0)
    >>> isinstance(r, LensResult), len(r.to_table())
    (True, 2)
    >>> str(r.to_table()["r_e_kpc"].unit)
    'kpc'
    """

    def public(self) -> dict[str, Any]:
        """The mapping without working data (what JSON files and tables hold)."""
        return {k: v for k, v in self.items() if not str(k).startswith("_")}

    @property
    def n_lenses(self) -> int:
        """Number of lenses (table rows) the result describes."""
        theta = self.get("theta_e_arcsec", self.get("z_l", 0.0))
        return int(np.size(theta)) if np.ndim(theta) else 1

    def quantity(self, key: str):
        """The value of ``key`` as an astropy Quantity in its registered unit."""
        import astropy.units as u

        unit = fact(key).quantity_unit
        if unit is None:
            raise KeyError(f"'{key}' is {fact(key).fmt}, not a number with a unit.")
        return u.Quantity(np.asarray(self[key], float), unit)

    def to_table(self):
        """An astropy QTable: one row per lens, numbers with units, bounds, notes and models in ``meta``."""
        from astropy.table import QTable

        n = self.n_lenses
        table = QTable()
        for key in [k for k in RESULT_KEYS if k in self]:  # the registry's order
            value = self[key]
            if not _is_number_column(key, value):
                continue
            info = fact(key)
            column = np.broadcast_to(np.asarray(value, float if info.fmt == "number" else None), (n,)).copy()
            table[key] = column * info.quantity_unit if info.unit else column
            table[key].info.description = info.description
        for key in [k for k in table.colnames]:
            info = fact(key)
            for suffix, (block, index, which) in BOUND_COLUMNS.items():
                bounds = (self.get(block) or {}).get(key)
                if bounds is None:
                    continue
                column = np.broadcast_to(np.asarray(bounds[index], float), (n,)).copy()
                table[key + suffix] = column * info.quantity_unit if info.unit else column
                table[key + suffix].info.description = f"{info.description}, {which} percentile"
        for key in ("cosmology", "method", "source"):
            if isinstance(self.get(key), str):
                table[key] = [self[key]] * n
        if "problems" in self:
            table["problem"] = [p or "" for p in self["problems"]]
        table.meta["models"] = dict(self.get("models") or {})
        table.meta["notes"] = list(self.get("notes") or [])
        return table

    def __astropy_table__(self, cls, copy, **kwargs):
        """``Table(result)`` and ``QTable(result)`` give :meth:`to_table` (astropy's table protocol)."""
        return cls(self.to_table(), copy=copy, **kwargs)

    def _rows(self) -> list[str]:
        return [k for k in RESULT_KEYS if k in self and _is_number_column(k, self[k]) and RESULT_KEYS[k].table]

    def __repr__(self) -> str:
        if self.n_lenses > 1 or any(np.ndim(self[k]) for k in self._rows()):
            return f"<LensResult of {self.n_lenses} lenses: {', '.join(self._rows())}; .to_table() shows them>"
        parts = [f"{fact(k).label} = {value_text(self, k)} {fact(k).plain_unit}".rstrip() for k in self._rows()]
        notes = self.get("notes") or []
        return "LensResult(" + "; ".join(parts) + (f"; {len(notes)} notes" if notes else "") + ")"

    def _repr_html_(self) -> str:
        models = self.get("models") or {}
        notes = "".join(f"<li>{html.escape(str(n))}</li>" for n in self.get("notes") or [])
        head = f"<p><b>lensmass result</b> &middot; {html.escape(str(self.get('cosmology', '')))}</p>"
        if self.n_lenses > 1:
            body = self.to_table()._repr_html_()
        else:
            rows = "".join(
                f"<tr title='{html.escape(str(models.get(k, '')), quote=True)}'><td>{fact(k).rich_label}</td>"
                f"<td style='text-align:right'>{value_text(self, k)}</td><td>{interval_text(self, k)}</td>"
                f"<td>{fact(k).rich_unit}</td></tr>" for k in self._rows())
            body = ("<table><tr><th></th><th>value</th><th>68% interval</th><th>unit</th></tr>" + rows + "</table>")
        model_list = "".join(f"<li><code>{html.escape(k)}</code>: {html.escape(str(v))}</li>"
                             for k, v in models.items())
        return (head + body + (f"<p>Notes</p><ul>{notes}</ul>" if notes else "")
                + (f"<details><summary>Models behind each number</summary><ul>{model_list}</ul></details>"
                   if model_list else ""))
