"""lensmass: from what a lensing image shows to a defensible, model-labelled mass.

The flat public API lives here; heavy modules load on first use so that the
command line starts quickly.

>>> import lensmass
>>> r = lensmass.estimate(1.2, 0.2, 0.6, cosmology="Planck18")
>>> round(float(r["r_e_kpc"]), 2)  # doctest: +SKIP
3.97
"""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["estimate", "LensInputError", "__version__"]


def __getattr__(name: str):
    if name == "estimate":
        from lensmass.core.estimate import estimate

        return estimate
    if name == "LensInputError":
        from lensmass.core.errors import LensInputError

        return LensInputError
    raise AttributeError(f"module 'lensmass' has no attribute {name!r}")
