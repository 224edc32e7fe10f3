"""Catalogue columns held in memory as a source of blocks for the weak-lensing engine.

Every source of rows offers ``total(fn)`` (``fn`` applied to each
:class:`lensmass.core.shear_sums.CatalogBlock`, the results added); this one is the in-memory
catalogue used by :func:`lensmass.core.shear_analysis.analyse_shear_catalog` and by stacking.
"""

from __future__ import annotations

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.shear_sums import CatalogBlock


class ArrayBlocks:
    """Catalogue columns in memory as one block of rows (the engine works through it in pieces).

    Any source of rows offers ``total(fn)``: ``fn(block)`` for each of its blocks, the results
    added; ``lensmass.io.catalog_stream`` and ``lensmass.io.distributed`` offer the same for
    files and for Dask clusters.
    """

    def __init__(self, ra_deg, dec_deg, e1, e2, weight=None, z=None):
        self.ra = np.asarray(ra_deg, float)
        self.dec = np.asarray(dec_deg, float)
        self.e1 = np.asarray(e1, float)
        self.e2 = np.asarray(e2, float)
        self.weight = np.ones(self.ra.size) if weight is None else np.asarray(weight, float)
        self.z = None if z is None else np.asarray(z, float)
        if not (self.dec.shape == self.e1.shape == self.e2.shape == self.weight.shape == self.ra.shape) or (
                self.z is not None and self.z.shape != self.ra.shape):
            raise LensInputError("The catalogue columns differ in length: give one value per galaxy in each column.")
        self.n_rows = int(self.ra.size)

    def total(self, fn):
        return fn(CatalogBlock(self.ra, self.dec, self.e1, self.e2, self.weight, self.z, 0))
