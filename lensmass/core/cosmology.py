"""Cosmology presets and fast, vectorised angular-diameter distances.

Distances follow Hogg (1999, arXiv:astro-ph/9905116): the line-of-sight comoving
distance D_C (eq. 15) is tabulated once per cosmology on a redshift grid, using
astropy as the reference, and interpolated with a cubic spline; the transverse
comoving distance between two redshifts uses the curvature function sinn of
(D_C(z2) - D_C(z1)), which is exact for flat, open and closed models alike
(Hogg eq. 16 applied to the pair). Then D_A(z1, z2) = D_M(z1, z2) / (1 + z2).
The spline reproduces astropy to better than 1e-6 relative for 0 < z <= 20.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from lensmass.core.errors import LensInputError

DEFAULT_COSMOLOGY = "Planck18"
_GRID_ZMAX = 20.0
_GRID_NODES = 1200


def preset_names() -> tuple[str, ...]:
    """Names of astropy's built-in realisations (Planck18, WMAP9, ...)."""
    from astropy.cosmology import realizations

    return tuple(realizations.available)


def resolve_cosmology(
    spec: Any = None,
    *,
    h0: float | None = None,
    om0: float | None = None,
    ode0: float | None = None,
):
    """Return an astropy cosmology from a preset name, an object, or H0/Om0[/Ode0].

    Parameters
    ----------
    spec : str, astropy Cosmology or None
        A preset name of astropy's (``"Planck18"``, ``"WMAP9"`` ...), a cosmology
        object (returned unchanged), or None for the default (Planck18) unless
        ``h0``/``om0`` are given.
    h0, om0, ode0 : float, optional
        A custom Lambda-CDM: flat when ``ode0`` is None, curved otherwise.

    Examples
    --------
    >>> resolve_cosmology("WMAP9").name
    'WMAP9'
    >>> float(resolve_cosmology(h0=70, om0=0.3).Ode0)
    0.7
    """
    from astropy.cosmology import Cosmology, FlatLambdaCDM, LambdaCDM, realizations

    if h0 is not None or om0 is not None or ode0 is not None:
        if spec is not None:
            raise LensInputError(
                "Give either a cosmology preset or H0/Om0 values, not both."
            )
        if h0 is None or om0 is None:
            raise LensInputError("A custom cosmology needs both H0 and Om0 (`h0`, `om0`), for example 70 and 0.3.")
        if not (np.isfinite(h0) and 10 <= h0 <= 1000):
            raise LensInputError(f"H0 must be a positive number in km/s/Mpc (about 70), got {h0}; check H0 (`h0`).")
        if not (np.isfinite(om0) and 0 < om0 <= 2):
            raise LensInputError(f"Om0 must lie between 0 and 2, got {om0}.")
        if ode0 is None:
            return FlatLambdaCDM(H0=h0, Om0=om0, name=f"flat LCDM (H0={h0:g}, Om0={om0:g})")
        if not np.isfinite(ode0):
            raise LensInputError(f"Ode0 must be a finite number, got {ode0}.")
        from lensmass.core.limits import has_big_bang

        cosmo = LambdaCDM(H0=h0, Om0=om0, Ode0=ode0, name=f"LCDM (H0={h0:g}, Om0={om0:g}, Ode0={ode0:g})")
        has_big_bang(cosmo)
        return cosmo
    if spec is None:
        spec = DEFAULT_COSMOLOGY
    if isinstance(spec, Cosmology):
        if spec.name not in realizations.available:
            from lensmass.core.limits import has_big_bang

            has_big_bang(spec)
        return spec
    if isinstance(spec, str):
        if spec in realizations.available:
            return getattr(realizations, spec)
        lowered = {n.lower(): n for n in realizations.available}
        if spec.lower() in lowered:
            return getattr(realizations, lowered[spec.lower()])
        raise LensInputError(
            f"Unknown cosmology '{spec}': use one of {', '.join(realizations.available)}, "
            "or give H0 (`h0`) and Om0 (`om0`) for a custom one."
        )
    raise LensInputError(f"Cannot use {spec!r} as a cosmology: give a preset name or an astropy cosmology.")


def cosmology_label(cosmo) -> str:
    """A short human label: the preset name, or the parameters of a custom model."""
    if getattr(cosmo, "name", None):
        return str(cosmo.name)
    parts = [f"H0={cosmo.H0.value:g}", f"Om0={cosmo.Om0:g}", f"Ode0={cosmo.Ode0:g}"]
    return f"{type(cosmo).__name__}(" + ", ".join(parts) + ")"


_KEYS: dict[int, tuple[Any, str]] = {}


def _cosmology_key(cosmo) -> str:
    """``repr(cosmo)``, the key of the per-cosmology caches, remembered per object (astropy cosmologies are
    immutable, and repr takes about 0.2 ms, several times a run)."""
    hit = _KEYS.get(id(cosmo))
    if hit is not None and hit[0] is cosmo:
        return hit[1]
    key = repr(cosmo)
    if len(_KEYS) > 32:
        _KEYS.clear()
    _KEYS[id(cosmo)] = (cosmo, key)  # the object is kept, so its id is not reused while the entry lives
    return key


@dataclass(frozen=True)
class DistanceGrid:
    """Cubic-spline table of D_C(z) / (D_H z) on a grid in ln(1 + z).

    Dividing by z keeps the relative accuracy at low redshift; the ratio is
    smooth and equals 1 at z = 0. Build it with :func:`distance_grid`.
    """

    hubble_distance_mpc: float
    omega_k: float
    zmax: float
    spline: Any
    cosmo: Any

    def _ratio(self, x: np.ndarray) -> np.ndarray:
        """The spline at x = ln(1 + z) in [0, ln(1 + zmax)]: its cubic on the interval holding x.

        The nodes are evenly spaced from 0, so the interval is found by one multiplication
        instead of a search (the same polynomials as ``self.spline(x)``, about five times faster).
        """
        nodes, coeffs = self.spline.x, self.spline.c
        i = np.minimum((x * ((nodes.size - 1) / nodes[-1])).astype(np.intp), nodes.size - 2)
        t = x - nodes[i]
        return ((coeffs[0][i] * t + coeffs[1][i]) * t + coeffs[2][i]) * t + coeffs[3][i]

    def comoving_mpc(self, z: np.ndarray) -> np.ndarray:
        """Line-of-sight comoving distance D_C(z) in Mpc (Hogg 1999, eq. 15)."""
        z = np.asarray(z, dtype=float)
        inside = (z <= self.zmax) & (z >= 0)
        if inside.all():
            return self.hubble_distance_mpc * z * self._ratio(np.log1p(z))
        out = np.empty_like(z)
        zi = z[inside]
        out[inside] = self.hubble_distance_mpc * zi * self._ratio(np.log1p(zi))
        outside = ~inside & np.isfinite(z) & (z >= 0)
        if np.any(outside):
            out[outside] = self.cosmo.comoving_distance(z[outside]).to_value("Mpc")
        out[~inside & ~outside] = np.nan
        return out

    def transverse_mpc(self, dc_mpc: np.ndarray) -> np.ndarray:
        """Transverse comoving distance from a comoving separation (Hogg eq. 16)."""
        dh, ok = self.hubble_distance_mpc, self.omega_k
        if abs(ok) < 1e-12:
            return dc_mpc
        s = np.sqrt(abs(ok))
        if ok > 0:
            return dh / s * np.sinh(s * dc_mpc / dh)
        return dh / s * np.sin(s * dc_mpc / dh)


_GRIDS: dict[str, DistanceGrid] = {}


def distance_grid(cosmo) -> DistanceGrid:
    """The cached distance table of a cosmology (built once, about 1200 nodes)."""
    key = _cosmology_key(cosmo)
    grid = _GRIDS.get(key)
    if grid is None:
        from scipy.interpolate import CubicSpline

        x = np.linspace(0.0, np.log1p(_GRID_ZMAX), _GRID_NODES)
        z = np.expm1(x)
        import warnings

        dh = cosmo.hubble_distance.to_value("Mpc")
        with warnings.catch_warnings(), np.errstate(all="ignore"):
            warnings.simplefilter("ignore")  # undefined distances are reported in one sentence below
            dc = cosmo.comoving_distance(z[1:]).to_value("Mpc")
        if not (np.all(np.isfinite(dc)) and np.isfinite(dh) and np.all(dc > 0)):
            raise LensInputError(
                f"Distances are undefined in the cosmology {cosmology_label(cosmo)} (astropy returns no finite "
                "comoving distance); choose a standard model, e.g. a dark-energy density (`ode0`) of 0 or more, or a "
                "preset (`cosmology`)."
            )
        ratio = np.concatenate([[1.0], dc / (dh * z[1:])])
        grid = DistanceGrid(dh, float(cosmo.Ok0), _GRID_ZMAX, CubicSpline(x, ratio), cosmo)
        if len(_GRIDS) > 32:
            _GRIDS.clear()
        _GRIDS[key] = grid
    return grid


def angular_diameter_distances_mpc(z_l, z_s, cosmo) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """D_l, D_s and D_ls in Mpc for lens and source redshifts (broadcast arrays).

    D_ls = D_M(z_l, z_s) / (1 + z_s), with D_M the transverse comoving distance of
    the comoving separation (Hogg 1999, eqs. 16 and 19); correct for any curvature.
    For z_s <= z_l, D_ls is returned as computed (zero or negative): callers check.

    Examples
    --------
    >>> from astropy.cosmology import FlatLambdaCDM
    >>> d_l, d_s, d_ls = angular_diameter_distances_mpc(0.5, 2.0, FlatLambdaCDM(70, 0.3))
    >>> round(float(d_ls), 1)  # doctest: +SKIP
    1250.5
    """
    z_l, z_s = np.broadcast_arrays(np.asarray(z_l, float), np.asarray(z_s, float))
    grid = distance_grid(cosmo)
    dc_l = grid.comoving_mpc(z_l)
    dc_s = grid.comoving_mpc(z_s)
    d_l = grid.transverse_mpc(dc_l) / (1 + z_l)
    d_s = grid.transverse_mpc(dc_s) / (1 + z_s)
    d_ls = grid.transverse_mpc(dc_s - dc_l) / (1 + z_s)
    return d_l, d_s, d_ls


def luminosity_distance_mpc(z, cosmo) -> np.ndarray:
    """Luminosity distance D_L = (1 + z) D_M(z) in Mpc (Hogg 1999, eq. 21)."""
    z = np.asarray(z, dtype=float)
    grid = distance_grid(cosmo)
    return (1 + z) * grid.transverse_mpc(grid.comoving_mpc(z))


def critical_density_msun_per_mpc3(z, cosmo) -> np.ndarray:
    """rho_crit(z) = 3 H(z)^2 / (8 pi G) = rho_crit,0 E(z)^2 in Msun / Mpc^3 (Hogg 1999, eq. 14).

    The same product astropy's ``critical_density`` forms, with the unit conversion done once
    on the scalar rho_crit,0 instead of on the array.

    Examples
    --------
    >>> import astropy.units as u
    >>> from astropy.cosmology import Planck18
    >>> ours = critical_density_msun_per_mpc3([0.0, 1.5], Planck18)
    >>> theirs = Planck18.critical_density([0.0, 1.5]).to_value(u.Msun / u.Mpc**3)
    >>> bool(np.allclose(ours, theirs, rtol=1e-12))
    True
    """
    import astropy.units as u

    rho0 = cosmo.critical_density0.to_value(u.Msun / u.Mpc**3)
    return rho0 * np.asarray(cosmo.efunc(np.asarray(z, dtype=float)), float) ** 2


def little_h(cosmo) -> float:
    """h = H0 / (100 km/s/Mpc)."""
    return float(cosmo.H0.to_value("km/(s Mpc)")) / 100.0
