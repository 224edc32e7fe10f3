"""Enclosed projected mass against radius for the models behind an estimate.

Given the result of :func:`lensmass.core.estimate.estimate`, these curves show
M_2D(<R) of the singular isothermal sphere with the estimate's sigma_SIS and of
the NFW halo with its M200 and c200. Both pass through the Einstein point
(R_E, M(<theta_E)) by construction, and differ everywhere else: that spread is
the model dependence of any mass quoted away from the Einstein radius.

References
----------
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001, section 3.3: SIS M_2D(<R) = pi sigma_v^2 R / G.
Wright & Brainerd (2000), ApJ 534, 34, eq. (13): NFW projected mass inside R.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

from lensmass.core.errors import LensInputError
from lensmass.core.nfw import nfw_halo, nfw_mass_2d_msun
from lensmass.core.sis import sis_mass_2d_msun

#: Default radius range of the curves, in units of the Einstein radius.
DEFAULT_RANGE_IN_R_E = (0.05, 10.0)


@dataclass(frozen=True)
class MassCurves:
    """M_2D(<R) of each model on a common radius grid (arrays of equal length).

    ``nfw_msun`` is all-NaN when the estimate has no NFW halo; the band arrays
    (``*_p16``/``*_p84``, 68% across the Monte Carlo draws) are None without draws.
    """

    radius_kpc: np.ndarray
    radius_arcsec: np.ndarray
    sis_msun: np.ndarray
    nfw_msun: np.ndarray
    einstein_radius_kpc: float
    einstein_radius_arcsec: float
    einstein_mass_msun: float
    labels: dict[str, str] = field(default_factory=dict)
    sis_p16: np.ndarray | None = None
    sis_p84: np.ndarray | None = None
    nfw_p16: np.ndarray | None = None
    nfw_p84: np.ndarray | None = None


@dataclass(frozen=True)
class SampleHistogram:
    """Histogram of the Monte Carlo draws of one result key."""

    key: str
    counts: np.ndarray
    edges: np.ndarray
    log_bins: bool
    median: float
    interval68: tuple[float, float]
    interval95: tuple[float, float]
    n_finite: int


def _scalar(result: Mapping[str, Any], key: str) -> float:
    try:
        value = float(np.asarray(result[key], float))
    except KeyError:
        raise LensInputError(f"The estimate has no '{key}': run the estimate again before plotting.") from None
    except (TypeError, ValueError):
        raise LensInputError(f"'{key}' must be a single number to draw mass curves: plot one lens at a time.") from None
    return value


def radius_grid_kpc(einstein_radius_kpc: float, n: int = 200,
                    range_in_r_e: tuple[float, float] = DEFAULT_RANGE_IN_R_E) -> np.ndarray:
    """Logarithmic radii from ``range_in_r_e[0] R_E`` to ``range_in_r_e[1] R_E`` (R_E included).

    Examples
    --------
    >>> r = radius_grid_kpc(4.0, n=5, range_in_r_e=(0.5, 2.0))
    >>> [round(float(v), 3) for v in r]
    [2.0, 2.828, 4.0, 5.657, 8.0]
    """
    lo, hi = range_in_r_e
    if not (np.isfinite(einstein_radius_kpc) and einstein_radius_kpc > 0 and 0 < lo < 1 < hi and n >= 3):
        raise LensInputError("The mass-curve radii need R_E > 0, a range around 1 R_E and at least 3 points.")
    grid = einstein_radius_kpc * np.geomspace(lo, hi, n)
    return np.unique(np.append(grid, einstein_radius_kpc))


def _estimate_halo(result, cosmo, halo_definition, m200=None, c200=None):
    m = _scalar(result, "nfw_m200_msun") if m200 is None else m200
    c = _scalar(result, "nfw_c200") if c200 is None else c200
    return nfw_halo(m, c, _scalar(result, "z_l"), cosmo, halo_definition)


def _check_halo_matches(result, halo) -> None:
    """The rebuilt halo must have the estimate's r200, else cosmology/definition differ."""
    r200 = result.get("nfw_r200_kpc")
    if r200 is None or not np.isfinite(float(np.asarray(r200, float))):
        return
    mine = float(halo.r_delta_mpc) * 1e3
    if abs(mine / float(r200) - 1) > 1e-6:
        raise LensInputError(
            "The cosmology or halo definition given for the mass curves differs from the estimate's "
            f"(r200 {mine:.4g} vs {float(r200):.4g} kpc): pass the same ones."
        )


def enclosed_mass_curves(result: Mapping[str, Any], cosmo: Any = None, halo_definition: str = "200c",
                         radius_kpc=None, n: int = 200,
                         range_in_r_e: tuple[float, float] = DEFAULT_RANGE_IN_R_E,
                         band_draws: int = 2000) -> MassCurves:
    """SIS and NFW enclosed projected mass M_2D(<R) for an estimate.

    Parameters
    ----------
    result : dict
        Output of :func:`lensmass.core.estimate.estimate` for one lens.
    cosmo : astropy Cosmology or str, optional
        The cosmology the estimate used (default: resolved from ``result["cosmology"]``,
        which works for astropy's presets); it fixes the NFW halo's r200 and D_l.
    halo_definition : {"200c", "200m", "vir"}
        The estimate's halo boundary. A mismatch with the estimate is detected
        from r200 and reported.
    radius_kpc : array_like, optional
        Radii of the curves; default :func:`radius_grid_kpc` around R_E.
    band_draws : int
        Monte Carlo draws (at most) used for the 68% bands when the estimate has
        samples; 0 for no bands.

    Returns
    -------
    MassCurves

    Examples
    --------
    >>> from lensmass.core.estimate import estimate
    >>> r = estimate(1.2, 0.3, 1.0, cosmology="Planck18")
    >>> c = enclosed_mass_curves(r)
    >>> i = int(np.argmin(abs(c.radius_kpc - c.einstein_radius_kpc)))
    >>> bool(np.isclose(c.sis_msun[i], r["mass_einstein_msun"], rtol=1e-9))
    True
    """
    from lensmass.core.cosmology import resolve_cosmology

    if cosmo is None:
        try:
            cosmo = resolve_cosmology(result.get("cosmology"))
        except LensInputError:
            raise LensInputError(
                f"The estimate used the cosmology '{result.get('cosmology')}', which is not a preset: "
                "pass that cosmology object to draw its mass curves."
            ) from None
    else:
        cosmo = resolve_cosmology(cosmo)
    r_e_kpc = _scalar(result, "r_e_kpc")
    theta_e = _scalar(result, "theta_e_arcsec")
    sigma_v = _scalar(result, "sis_sigma_v_kms")
    radii = radius_grid_kpc(r_e_kpc, n, range_in_r_e) if radius_kpc is None else np.asarray(radius_kpc, float)
    if radii.ndim != 1 or radii.size == 0 or np.any(~np.isfinite(radii)) or np.any(radii <= 0):
        raise LensInputError("Mass-curve radii must be positive finite numbers in kpc.")
    r_mpc = radii * 1e-3
    kpc_per_arcsec = r_e_kpc / theta_e
    sis = sis_mass_2d_msun(r_mpc, sigma_v)
    nfw = np.full_like(radii, np.nan)
    if np.isfinite(_scalar(result, "nfw_m200_msun")):
        halo = _estimate_halo(result, cosmo, halo_definition)
        _check_halo_matches(result, halo)
        nfw = nfw_mass_2d_msun(r_mpc, halo)
    bands = _bands(result, r_mpc, cosmo, halo_definition, band_draws)
    labels = {
        "sis": f"SIS, sigma_v = {sigma_v:.0f} km/s (M_2D = pi sigma^2 R / G)",
        "nfw": "NFW halo alone" + (
            f", M200 = {_scalar(result, 'nfw_m200_msun'):.3g} Msun, c200 = {_scalar(result, 'nfw_c200'):.2f}"
            if np.isfinite(_scalar(result, "nfw_m200_msun")) else ": no halo gives this radius"),
        "einstein": "Einstein point: M(<theta_E) = pi Sigma_cr R_E^2",
    }
    return MassCurves(radius_kpc=radii, radius_arcsec=radii / kpc_per_arcsec, sis_msun=sis, nfw_msun=nfw,
                      einstein_radius_kpc=r_e_kpc, einstein_radius_arcsec=theta_e,
                      einstein_mass_msun=_scalar(result, "mass_einstein_msun"), labels=labels, **bands)


def _bands(result, r_mpc, cosmo, halo_definition, band_draws) -> dict[str, np.ndarray | None]:
    """68% bands of both curves across (a subset of) the Monte Carlo draws, at fixed R."""
    samples = result.get("_samples")
    if not samples or band_draws <= 0:
        return {}
    sigma = np.asarray(samples["sis_sigma_v_kms"], float)
    step = max(1, sigma.size // band_draws)
    sigma = sigma[::step]
    sis = sis_mass_2d_msun(r_mpc[None, :], sigma[:, None])
    out = dict(zip(("sis_p16", "sis_p84"), np.nanpercentile(sis, [16, 84], axis=0)))
    m = np.asarray(samples["nfw_m200_msun"], float)[::step]
    c = np.asarray(samples["nfw_c200"], float)[::step]
    zl = np.asarray(samples["z_l"], float)[::step]
    ok = np.isfinite(m) & np.isfinite(c)
    if ok.sum() >= 10:
        halo = nfw_halo(m[ok, None], c[ok, None], zl[ok, None], cosmo, halo_definition)
        nfw = nfw_mass_2d_msun(r_mpc[None, :], halo)
        out.update(zip(("nfw_p16", "nfw_p84"), np.percentile(nfw, [16, 84], axis=0)))
    return out


def einstein_point(result: Mapping[str, Any]) -> tuple[float, float]:
    """(R_E in kpc, M(<theta_E) in Msun): where every axisymmetric model must pass.

    Examples
    --------
    >>> einstein_point({"r_e_kpc": 4.0, "mass_einstein_msun": 2e11})
    (4.0, 200000000000.0)
    """
    return _scalar(result, "r_e_kpc"), _scalar(result, "mass_einstein_msun")


def sample_histogram(result: Mapping[str, Any], key: str = "mass_einstein_msun", bins: int = 40,
                     log_bins: bool | None = None) -> SampleHistogram | None:
    """Histogram of the Monte Carlo draws of ``key`` (None when the estimate has no draws).

    Bins are logarithmic by default for positive quantities spanning more than a
    factor of three (masses), linear otherwise. Summary numbers come from
    :func:`lensmass.core.uncertainty.summarize`, the same as the estimate's intervals.

    Examples
    --------
    >>> from lensmass.core.estimate import estimate
    >>> r = estimate(1.2, 0.3, 1.0, theta_e_err=0.05, samples=2000)
    >>> h = sample_histogram(r)
    >>> int(h.counts.sum()) == h.n_finite
    True
    """
    from lensmass.core.uncertainty import summarize

    samples = result.get("_samples")
    if not samples or key not in samples:
        return None
    values = np.asarray(samples[key], float)
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return None
    lo, hi = float(finite.min()), float(finite.max())
    if log_bins is None:
        log_bins = lo > 0 and hi / lo > 3.0
    if log_bins and lo <= 0:
        raise LensInputError(f"Logarithmic bins need positive draws of '{key}': use linear bins.")
    if hi == lo:
        lo, hi = (lo * 0.99, hi * 1.01) if lo else (-0.5, 0.5)
    edges = np.geomspace(lo, hi, bins + 1) if log_bins else np.linspace(lo, hi, bins + 1)
    counts, edges = np.histogram(finite, bins=edges)
    s = summarize(finite)
    return SampleHistogram(key, counts, edges, bool(log_bins), s["median"], tuple(s["interval68"]),
                           tuple(s["interval95"]), int(finite.size))


__all__ = ["MassCurves", "SampleHistogram", "enclosed_mass_curves", "einstein_point", "radius_grid_kpc",
           "sample_histogram"]
