"""Dark and ordinary matter inside apertures around mass peaks, with intervals.

For each aperture (radius R, physical at the lens, around a mass peak):

- weak-lensing projected mass, two ways:
  * from the convergence map: M = Sigma_cr,eff x sum of kappa_E over the aperture x pixel
    area (photutils exact-overlap aperture sums). The map has zero mean over its padded
    field (the mass-sheet degeneracy of Kaiser & Squires 1993) and is smoothed, so this
    is a low estimate; the interval comes from the bootstrap maps.
  * from the joint NFW fit (:mod:`lensmass.core.halo_fit`): the projected mass of all the
    fitted halos inside the aperture, integrated on a polar Gauss-Legendre grid; the
    interval comes from the fit's posterior draws. The ratios use this mass.
- stellar mass: the members' stellar masses (or luminosity x a stated M/L) inside the
  aperture, with the Poisson bootstrap of the members times a stated lognormal systematic
  (stellar-population modelling; default 0.15 dex, common practice for the scatter of
  photometric stellar masses);
- gas mass, when given: a number with its error, or a map in Msun per pixel summed in
  the aperture with a stated fractional error;
- ratios: stellar, gas and baryon fractions f = M / M_lens, the dark fraction 1 - f_b,
  M_lens / M_star, and f_b against the cosmic baryon fraction Omega_b / Omega_m of the
  chosen cosmology (astropy's ``Ob0 / Om0``). Every interval is the 16-84% and 2.5-97.5%
  range of Monte Carlo draws combining the independent pieces by index.
"""

from __future__ import annotations

import numpy as np

from lensmass.core.constants import ARCSEC_RAD
from lensmass.core.errors import LensInputError
from lensmass.core.nfw import nfw_halo, nfw_mass_2d_msun, nfw_surface_density_msun_per_mpc2
from lensmass.core.peak_finding import poisson_multiplicities

QUANTILES = (0.025, 0.16, 0.5, 0.84, 0.975)


def cosmic_baryon_fraction(cosmo) -> float:
    """Omega_b / Omega_m of an astropy cosmology (``Ob0 / Om0``).

    Examples
    --------
    >>> from astropy.cosmology import Planck18
    >>> round(cosmic_baryon_fraction(Planck18), 4)
    0.1581
    """
    ob0 = getattr(cosmo, "Ob0", None)
    if ob0 is None or not np.isfinite(ob0) or ob0 <= 0:
        raise LensInputError("This cosmology has no baryon density (Ob0): choose a preset such as Planck18, "
                             "or give one with a baryon density, to compare with the cosmic baryon fraction.")
    return float(ob0 / cosmo.Om0)


def aperture_weights(shape, pixel_arcsec: float, centres_arcsec, radius_arcsec: float) -> np.ndarray:
    """Exact pixel-circle overlap fractions (photutils) of circles around offsets: (n_centres, ny * nx)."""
    from photutils.aperture import CircularAperture

    n = shape[0]
    c = np.atleast_2d(np.asarray(centres_arcsec, float))
    pos = c / pixel_arcsec + n / 2 - 0.5
    masks = CircularAperture(pos, r=radius_arcsec / pixel_arcsec).to_mask(method="exact")
    masks = masks if isinstance(masks, list) else [masks]
    return np.array([m.to_image(shape).ravel() if m.to_image(shape) is not None else np.zeros(shape[0] * shape[1])
                     for m in masks])


def aperture_sums(image, pixel_arcsec: float, centres_arcsec, radius_arcsec: float) -> np.ndarray:
    """Sums of ``image`` (a map on the mass grid) inside circles around offsets (arcsec from the centre).

    Exact pixel-circle overlap (photutils). Pixels that are NaN count as zero.
    """
    img = np.nan_to_num(np.asarray(image, float))
    return aperture_weights(img.shape, pixel_arcsec, centres_arcsec, radius_arcsec) @ img.ravel()


def map_aperture_masses(kappa_maps, pixel_arcsec: float, centres_arcsec, radius_arcsec: float,
                        sigma_cr_msun_per_mpc2: float, d_l_mpc: float) -> np.ndarray:
    """Projected masses (Msun) inside apertures on convergence maps: shape (n_maps, n_centres)."""
    area_mpc2 = (pixel_arcsec * ARCSEC_RAD * d_l_mpc) ** 2
    maps = np.array([np.nan_to_num(np.asarray(k, float)).ravel() for k in kappa_maps])
    weights = aperture_weights(np.shape(kappa_maps[0]), pixel_arcsec, centres_arcsec, radius_arcsec)
    return maps @ weights.T * sigma_cr_msun_per_mpc2 * area_mpc2


def nfw_aperture_masses(draws_log10_m200, halo_centres_arcsec, aperture_centres_arcsec, radius_arcsec: float,
                        concentrations, *, z_l: float, cosmo, d_l_mpc: float, halo_definition: str = "200c",
                        n_radial: int = 24, n_angle: int = 32) -> np.ndarray:
    """Projected mass of all fitted halos inside each aperture, per posterior draw (n_draws, n_apertures).

    A halo centred on the aperture contributes its projected mass M_2D(<R) (Bartelmann 1996);
    an off-centre halo is integrated over the disc on a polar Gauss-Legendre x uniform-angle grid
    (its surface density is smooth there). ``concentrations``: callable log10 M -> c (vectorised)
    or an array like the draws.
    """
    draws = np.atleast_2d(np.asarray(draws_log10_m200, float))
    hc = np.atleast_2d(np.asarray(halo_centres_arcsec, float))
    ac = np.atleast_2d(np.asarray(aperture_centres_arcsec, float))
    u, wu = np.polynomial.legendre.leggauss(n_radial)
    r = 0.5 * radius_arcsec * (u + 1.0)  # radii in arcsec, weights for r dr
    wr = 0.5 * radius_arcsec * wu * r
    phi = 2 * np.pi * (np.arange(n_angle) + 0.5) / n_angle
    px = (r[:, None] * np.cos(phi)[None, :]).ravel()
    py = (r[:, None] * np.sin(phi)[None, :]).ravel()
    weights = np.repeat(wr, n_angle) * (2 * np.pi / n_angle)  # arcsec^2
    area_mpc2 = (ARCSEC_RAD * d_l_mpc) ** 2
    radius_mpc = radius_arcsec * ARCSEC_RAD * d_l_mpc
    out = np.zeros((draws.shape[0], ac.shape[0]))
    for h in range(hc.shape[0]):
        m = 10.0 ** draws[:, h]
        c = concentrations(draws[:, h]) if callable(concentrations) else np.asarray(concentrations)[:, h]
        halo = nfw_halo(m[:, None], np.asarray(c, float)[:, None], z_l, cosmo, halo_definition)
        for a in range(ac.shape[0]):
            if np.hypot(*(ac[a] - hc[h])) < 1e-6 * radius_arcsec:
                out[:, a] += nfw_mass_2d_msun(np.array([radius_mpc]), halo)[:, 0]
                continue
            rad = np.hypot(ac[a, 0] + px - hc[h, 0], ac[a, 1] + py - hc[h, 1]) * ARCSEC_RAD * d_l_mpc
            sig = nfw_surface_density_msun_per_mpc2(rad[None, :], halo)
            out[:, a] += sig @ weights * area_mpc2
    return out


def member_aperture_masses(x_arcsec, y_arcsec, mass_msun, centres_arcsec, radius_arcsec: float, *,
                           n_draws: int = 4000, systematic_dex: float = 0.15, seed: int | None = 0):
    """Stellar mass inside apertures: (measured (n_apertures,), draws (n_draws, n_apertures), counts)."""
    x = np.asarray(x_arcsec, float)
    y = np.asarray(y_arcsec, float)
    m = np.asarray(mass_msun, float)
    c = np.atleast_2d(np.asarray(centres_arcsec, float))
    inside = np.hypot(x[None, :] - c[:, 0:1], y[None, :] - c[:, 1:2]) <= radius_arcsec  # (n_ap, n_members)
    measured = (inside * m[None, :]).sum(axis=1)
    rng = np.random.default_rng(seed)
    draws = np.empty((int(n_draws), c.shape[0]))
    for i in range(int(n_draws)):  # loop over draws, vectorised over members
        draws[i] = (inside * (m * poisson_multiplicities(rng, m.size))[None, :]).sum(axis=1)
    draws *= 10.0 ** rng.normal(0.0, systematic_dex, (int(n_draws), 1))
    return measured, draws, inside.sum(axis=1)


def quantiles(draws) -> np.ndarray:
    """(2.5, 16, 50, 84, 97.5) percentiles along axis 0, NaN-aware."""
    return np.nanquantile(np.asarray(draws, float), QUANTILES, axis=0)


def budget_ratios(lens_draws, star_draws, gas_draws, cosmic_fb: float | None) -> dict[str, np.ndarray]:
    """Draws of the fractions and ratios for one aperture (1-D arrays of equal length; gas and cosmic_fb may be None)."""
    lens = np.asarray(lens_draws, float)
    star = np.asarray(star_draws, float)
    gas = np.zeros_like(star) if gas_draws is None else np.asarray(gas_draws, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        fb = (star + gas) / lens
        out = {
            "stellar_fraction": star / lens,
            "baryon_fraction": fb,
            "dark_fraction": 1.0 - fb,
            "lens_to_stellar_mass": lens / star,
        }
        if cosmic_fb is not None:
            out["baryon_fraction_over_cosmic"] = fb / cosmic_fb
        if gas_draws is not None:
            out["gas_fraction"] = gas / lens
    return out
