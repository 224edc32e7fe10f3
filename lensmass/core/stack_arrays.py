"""Stacking a shape catalogue held in memory: the notebook's way into :func:`analyse_stack`.

:func:`lensmass.core.stack_analysis.analyse_stack` takes its sources as blocks (a file read in
pieces, a Dask cluster, or columns in memory); :func:`analyse_stack_catalog` takes the source
columns as arrays, as :func:`lensmass.core.shear_analysis.analyse_shear_catalog` does for one
cluster, and runs the same engine, so the numbers equal those of ``lensmass stack``.
"""

from __future__ import annotations

from typing import Any

from lensmass.core.shear_analysis import ArrayBlocks
from lensmass.core.stack_analysis import analyse_stack


def analyse_stack_catalog(lens_ra, lens_dec, lens_z, ra_deg, dec_deg, e1, e2, z, weight=None,
                          **options: Any) -> dict[str, Any]:
    """Mean halo mass of a lens sample from the stacked excess surface density around it.

    Parameters
    ----------
    lens_ra, lens_dec, lens_z : array_like
        Lens positions (degrees) and redshifts.
    ra_deg, dec_deg, e1, e2, z : array_like
        Source positions (degrees), ellipticities (east/north frame) and redshifts.
    weight : array_like, optional
        Source weights (default 1).
    **options
        As for :func:`lensmass.core.stack_analysis.analyse_stack` (``r_min_mpc``, ``r_max_mpc``,
        ``n_bins``, ``n_patches``, ``randoms`` or ``n_randoms``, ``cosmology``, ``concentration``,
        ``halo_definition``, ``point_mass_msun``, ``boost``, ``z_margin``, ``seed``).

    Returns
    -------
    dict
        As :func:`~lensmass.core.stack_analysis.analyse_stack`: ``mean_halo_m200_msun`` with
        ``intervals68``/``intervals95`` (delete-one jackknife), the binned ``profile``, ``notes``
        and ``models``.

    Examples
    --------
    200 lenses with NFW haloes of M200 = 3e13 Msun (Duffy et al. 2008 concentration) behind which
    20,000 sources are sheared (the simulator of :mod:`lensmass.core.stack_simulation`):

    >>> from astropy.cosmology import Planck18
    >>> from lensmass.core.stack_simulation import simulate_stack
    >>> s = simulate_stack(n_lenses=200, n_sources=20000, m200_msun=3e13, cosmo=Planck18, seed=2)
    >>> r = analyse_stack_catalog(s["lens_ra"], s["lens_dec"], s["lens_z"], s["ra"], s["dec"], s["e1"],
    ...                           s["e2"], s["z"], r_min_mpc=0.1, r_max_mpc=2.0, n_bins=6, n_patches=10,
    ...                           cosmology=Planck18, seed=1)
    >>> lo, hi = r["intervals95"]["mean_halo_m200_msun"]
    >>> bool(lo < 3e13 < hi)
    True
    """
    sources = ArrayBlocks(ra_deg, dec_deg, e1, e2, weight, z)
    return analyse_stack(lens_ra, lens_dec, lens_z, sources, **options)
