"""The lens light set against the lensing mass: luminosity, M/L, stars versus dark matter.

:func:`add_light` extends a result of :func:`lensmass.core.estimate.estimate` (the window
and the command line both call it), reusing the estimate's Monte Carlo draws so that the
Einstein radius, redshift and magnitude errors all reach the intervals.

References
----------
Distance modulus and k-correction: Hogg et al. (2002), arXiv:astro-ph/0210394, eq. (1) (number from memory):
  m = M + DM + K (+ A for Galactic extinction), DM = 5 log10(D_L / 10 pc).
Solar absolute magnitudes: Willmer (2018), ApJS 236, 47 (:mod:`lensmass.core.sun_magnitudes`).
Enclosed light: Sersic / de Vaucouleurs (Graham & Driver 2005), Hernquist (1990).
Two-component lens (stars plus NFW halo), mean convergence one inside theta_E: e.g.
  Treu (2010), ARA&A 48, 87; the NFW part uses Wright & Brainerd (2000).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from lensmass.core.concentration import concentration_relation
from lensmass.core.cosmology import luminosity_distance_mpc, resolve_cosmology
from lensmass.core.errors import LensInputError
from lensmass.core.nfw import nfw_mass_for_einstein_radius
from lensmass.core.stellar_profiles import PROFILE_LABELS, projected_mass_fraction
from lensmass.core.sersic import check_sersic_index
from lensmass.core.sun_magnitudes import normalise_system, solar_magnitude
from lensmass.core.uncertainty import DEFAULT_SAMPLES, DEFAULT_SEED, normal_samples, summarize_many

#: Keys :func:`add_light` may add (each gets a median and intervals under Monte Carlo).
LIGHT_KEYS = (
    "distance_modulus",
    "light_fraction_einstein",
    "light_abs_mag",
    "light_abs_mag_total",
    "light_luminosity_lsun",
    "light_luminosity_total_lsun",
    "mass_to_light",
    "stellar_ml",
    "stellar_mass_total_msun",
    "stellar_mass_einstein_msun",
    "dark_fraction_einstein",
    "two_component_halo_m200_msun",
    "two_component_halo_c200",
)

#: Stellar masses below this are taken to be log10 values typed by mistake.
_SMALLEST_STELLAR_MASS = 1e3


def distance_modulus(z, cosmo) -> np.ndarray:
    """DM = 5 log10(D_L / 10 pc) from the luminosity distance (Hogg 1999, eq. 24).

    Examples
    --------
    >>> from astropy.cosmology import FlatLambdaCDM
    >>> round(float(distance_modulus(0.1, FlatLambdaCDM(70, 0.3))), 2)
    38.32
    """
    return 5.0 * np.log10(luminosity_distance_mpc(z, cosmo)) + 25.0


def absolute_magnitude(apparent_mag, z, cosmo, kcorr=0.0, extinction=0.0) -> np.ndarray:
    """M = m - DM - K - A (Hogg et al. 2002, eq. 1, with Galactic extinction A)."""
    return np.asarray(apparent_mag, float) - distance_modulus(z, cosmo) - np.asarray(kcorr, float) - np.asarray(extinction, float)


def luminosity_lsun(abs_mag, sun_abs_mag) -> np.ndarray:
    """L / L_sun in the band of ``sun_abs_mag``: 10^(-0.4 (M - M_sun))."""
    return 10.0 ** (-0.4 * (np.asarray(abs_mag, float) - float(sun_abs_mag)))


def two_component_halo(r_e_mpc, mass_einstein_msun, stellar_mass_einstein_msun, z_l, cosmo,
                       concentration_of_mass, halo_definition: str = "200c") -> tuple[np.ndarray, np.ndarray]:
    """NFW M_Delta and c that, added to the stars, make the mean convergence inside R_E one.

    The condition is M_2D,stars(<R_E) + M_2D,NFW(<R_E) = M(<theta_E); NaN where the stars
    alone reach the Einstein mass (no halo needed, or the stellar M/L is too high).
    """
    residual = np.asarray(mass_einstein_msun, float) - np.asarray(stellar_mass_einstein_msun, float)
    residual = np.where(residual > 0, residual, np.nan)
    return nfw_mass_for_einstein_radius(r_e_mpc, residual, z_l, cosmo, concentration_of_mass, halo_definition)


def _finite(name: str, value, param: str, *, positive=False, non_negative=False) -> float | None:
    if value is None:
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise LensInputError(f"{name} (`{param}`) must be a number, got {value!r}.") from None
    if not np.isfinite(v) or (positive and v <= 0) or (non_negative and v < 0):
        need = "a positive" if positive else "a zero or positive" if non_negative else "a finite"
        raise LensInputError(f"{name} (`{param}`) must be {need} number, got {value}.")
    return v


def _light_quantities(theta, z_l, mass_e, r_e_mpc, inp: dict, cosmo, c_of_m, halo_definition) -> dict[str, np.ndarray]:
    """Every light number for (arrays of) theta_E, z_l, M(<theta_E), R_E and the light inputs."""
    out: dict[str, np.ndarray] = {}
    theta = np.asarray(theta, float)
    frac = None
    if inp["r_eff"] is not None:
        frac = projected_mass_fraction(inp["profile"], theta, inp["r_eff"], inp["sersic_n"])
        out["light_fraction_einstein"] = frac
    l_e = l_tot = None
    if inp["mag"] is not None:
        dm = distance_modulus(z_l, cosmo)
        out["distance_modulus"] = dm
        m_abs = np.asarray(inp["mag"], float) - dm - inp["kcorr"] - inp["extinction"]
        lum = luminosity_lsun(m_abs, inp["sun_mag"])
        if inp["mag_kind"] == "total":
            l_tot, l_e = lum, frac * lum
            out["light_abs_mag_total"] = m_abs
            out["light_abs_mag"] = m_abs - 2.5 * np.log10(frac)
        else:
            l_e = lum
            out["light_abs_mag"] = m_abs
            if frac is not None:
                l_tot = lum / frac
                out["light_abs_mag_total"] = m_abs + 2.5 * np.log10(frac)
        out["light_luminosity_lsun"] = l_e
        if l_tot is not None:
            out["light_luminosity_total_lsun"] = l_tot
        out["mass_to_light"] = mass_e / l_e
    m_star_e = None
    if inp["stellar_ml"] is not None:
        ml = np.where(np.asarray(inp["stellar_ml"], float) > 0, inp["stellar_ml"], np.nan)
        out["stellar_ml"] = ml + 0 * theta
        m_star_e = ml * l_e
        if l_tot is not None:
            out["stellar_mass_total_msun"] = ml * l_tot
    elif inp["stellar_mass"] is not None:
        m_star = np.asarray(inp["stellar_mass"], float) + 0 * theta
        out["stellar_mass_total_msun"] = m_star
        m_star_e = frac * m_star
        if l_e is not None:
            out["stellar_ml"] = m_star_e / l_e
    if m_star_e is not None:
        out["stellar_mass_einstein_msun"] = m_star_e
        out["dark_fraction_einstein"] = 1.0 - m_star_e / mass_e
        m200, c200 = two_component_halo(r_e_mpc, mass_e, m_star_e, z_l, cosmo, c_of_m, halo_definition)
        out["two_component_halo_m200_msun"] = m200
        out["two_component_halo_c200"] = c200
    return out


def _validated_inputs(band, mag_system, lens_mag, lens_mag_err, aperture_mag, aperture_mag_err, r_eff_arcsec,
                      sersic_n, stellar_profile, kcorr, extinction, stellar_ml, stellar_ml_err,
                      stellar_mass_msun, stellar_mass_err_dex) -> dict[str, Any]:
    if lens_mag is not None and aperture_mag is not None:
        raise LensInputError("Give the lens magnitude one way only: a total catalogue magnitude or the photometry on the image.")
    if stellar_ml is not None and stellar_mass_msun is not None:
        raise LensInputError("Give either a stellar mass-to-light ratio (`stellar_ml`) or a stellar mass (`stellar_mass_msun`), not both.")
    mag = _finite("The lens magnitude", lens_mag if lens_mag is not None else aperture_mag, "lens_mag")
    if mag is None and stellar_mass_msun is None:
        raise LensInputError("The light step needs a lens magnitude (`lens_mag`, or a `zeropoint` for the image) or a stellar mass (`stellar_mass_msun`).")
    inp: dict[str, Any] = {
        "mag": mag,
        "mag_kind": "total" if lens_mag is not None else "aperture",
        "mag_err": _finite("The magnitude error", lens_mag_err if lens_mag is not None else aperture_mag_err,
                           "lens_mag_err", non_negative=True) or 0.0,
        "r_eff": _finite("The effective radius", r_eff_arcsec, "r_eff_arcsec", positive=True),
        "sersic_n": None if sersic_n is None else float(check_sersic_index(sersic_n)),
        "kcorr": _finite("The k-correction", kcorr, "kcorr") or 0.0,
        "extinction": _finite("The Galactic extinction", extinction, "extinction", non_negative=True) or 0.0,
        "stellar_ml": _finite("The stellar mass-to-light ratio", stellar_ml, "stellar_ml", positive=True),
        "stellar_ml_err": _finite("The error of the stellar M/L", stellar_ml_err, "stellar_ml_err", non_negative=True) or 0.0,
        "stellar_mass": _finite("The stellar mass", stellar_mass_msun, "stellar_mass_msun", positive=True),
        "stellar_mass_err_dex": _finite("The stellar-mass error", stellar_mass_err_dex, "stellar_mass_err_dex", non_negative=True) or 0.0,
    }
    inp["profile"] = "sersic" if inp["sersic_n"] is not None else str(stellar_profile or "devaucouleurs").lower()
    projected_mass_fraction(inp["profile"], 1.0, 1.0, inp["sersic_n"])  # validates the name
    if inp["stellar_mass"] is not None and inp["stellar_mass"] < _SMALLEST_STELLAR_MASS:
        raise LensInputError(
            f"A stellar mass of {inp['stellar_mass']:g} Msun looks like a log10 value: give it in Msun, e.g. 2.5e11."
        )
    if mag is not None:
        if band is None:
            raise LensInputError("A lens magnitude needs its band: give the band (`band`), for example V, sdss_r or 2mass_ks.")
        sun = solar_magnitude(band)
        system = normalise_system(mag_system)
        inp.update(band=sun.band, system=system, sun_mag=sun.in_system(system), sun_entry=sun)
        if inp["mag_kind"] == "total" and inp["r_eff"] is None:
            raise LensInputError(
                "A total magnitude needs the effective radius to find the light inside theta_E: give it in arcsec (`r_eff_arcsec`)."
            )
    if inp["stellar_mass"] is not None and inp["r_eff"] is None:
        raise LensInputError("A total stellar mass needs the effective radius to find the part inside theta_E: give it in arcsec (`r_eff_arcsec`).")
    if inp["stellar_ml"] is not None and mag is None:
        raise LensInputError("A stellar mass-to-light ratio needs the lens light: give the lens magnitude (`lens_mag`) and its band (`band`).")
    return inp


def add_light(
    result: dict[str, Any],
    *,
    band: str | None = None,
    mag_system: str = "AB",
    lens_mag: float | None = None,
    lens_mag_err: float = 0.0,
    aperture_mag: float | None = None,
    aperture_mag_err: float = 0.0,
    r_eff_arcsec: float | None = None,
    sersic_n: float | None = None,
    stellar_profile: str = "devaucouleurs",
    kcorr: float = 0.0,
    extinction: float = 0.0,
    stellar_ml: float | None = None,
    stellar_ml_err: float = 0.0,
    stellar_mass_msun: float | None = None,
    stellar_mass_err_dex: float = 0.0,
    imf: str | None = None,
    cosmology: Any = None,
    concentration: str | float = "duffy08",
    halo_definition: str = "200c",
    samples: int | None = None,
    seed: int | None = None,
) -> dict[str, Any]:
    """Add the lens light, M/L, stellar mass, dark fraction and two-component halo to ``result``.

    Parameters
    ----------
    result : dict
        A single-lens result of :func:`lensmass.core.estimate.estimate` (modified in place
        and returned). Its Monte Carlo draws, when present, are reused.
    band, mag_system : str
        Band of the magnitude (``V``, ``sdss_r``, ``2mass_ks``...) and ``"AB"`` or ``"Vega"``.
    lens_mag, lens_mag_err : float
        Total apparent magnitude of the lens (catalogue) and its 1-sigma error; needs
        ``r_eff_arcsec`` to find the light inside theta_E.
    aperture_mag, aperture_mag_err : float
        Or: the magnitude measured inside theta_E on the image (photometry module).
    r_eff_arcsec, sersic_n, stellar_profile : optional
        Effective radius; the enclosed light follows a Sersic profile of index ``sersic_n``
        when given, otherwise ``stellar_profile`` (``"devaucouleurs"`` or ``"hernquist"``).
    kcorr, extinction : float
        k-correction K and Galactic extinction A in magnitudes (default 0, noted).
    stellar_ml, stellar_ml_err : float
        Stellar mass-to-light ratio in solar units of the band, or instead
    stellar_mass_msun, stellar_mass_err_dex : float
        total stellar mass and its error in dex (log-normal).
    imf : str, optional
        The IMF behind the stellar M/L or mass (e.g. ``"Chabrier"``), quoted in the notes.
    cosmology, concentration, halo_definition
        As given to :func:`~lensmass.core.estimate.estimate` (used for D_L and the halo).
    samples, seed : int, optional
        Monte Carlo size and seed when the estimate had no draws but the light has errors.

    Returns
    -------
    dict
        ``result`` with keys of :data:`LIGHT_KEYS` that apply, ``light_band``,
        ``light_mag_system``, ``light_sun_abs_mag``, notes and models, and medians and
        intervals of the new keys when any error is present.

    Examples
    --------
    >>> from lensmass.core.estimate import estimate
    >>> r = add_light(estimate(1.2, 0.2, 0.7), band="V", mag_system="Vega", lens_mag=17.5,
    ...               r_eff_arcsec=2.5, stellar_ml=4.0)
    >>> 0 < r["dark_fraction_einstein"] < 1
    True
    """
    if np.ndim(result.get("theta_e_arcsec")) != 0:
        raise LensInputError("The light step works on one lens at a time: run it per lens (or use 'lensmass batch').")
    inp = _validated_inputs(band, mag_system, lens_mag, lens_mag_err, aperture_mag, aperture_mag_err, r_eff_arcsec,
                            sersic_n, stellar_profile, kcorr, extinction, stellar_ml, stellar_ml_err,
                            stellar_mass_msun, stellar_mass_err_dex)
    cosmo = resolve_cosmology(cosmology)
    c_of_m, c_label = concentration_relation(concentration, halo_definition)
    central = _light_quantities(
        result["theta_e_arcsec"], result["z_l"], result["mass_einstein_msun"], result["r_e_kpc"] * 1e-3,
        inp, cosmo, c_of_m, halo_definition,
    )
    for key, value in central.items():
        result[key] = float(value)

    base = result.get("_samples")
    light_errors = any(inp[k] > 0 for k in ("mag_err", "stellar_ml_err", "stellar_mass_err_dex"))
    if base is not None or light_errors:
        if base is not None:
            n = len(base["theta_e_arcsec"])
            drawn = {k: base[k] for k in ("theta_e_arcsec", "z_l", "mass_einstein_msun", "r_e_kpc")}
        else:
            n = int(samples or DEFAULT_SAMPLES)
            if n < 100:
                raise LensInputError(f"Use at least 100 Monte Carlo samples, got {n}.")
            drawn = {k: np.full(n, float(result[k])) for k in ("theta_e_arcsec", "z_l", "mass_einstein_msun", "r_e_kpc")}
        rng = np.random.default_rng([int(result.get("mc_seed", seed if seed is not None else DEFAULT_SEED)), 6])
        sampled_inp = dict(inp)
        if inp["mag"] is not None:
            sampled_inp["mag"] = normal_samples(inp["mag"], inp["mag_err"], n, rng)
        if inp["stellar_ml"] is not None:
            sampled_inp["stellar_ml"] = normal_samples(inp["stellar_ml"], inp["stellar_ml_err"], n, rng)
        if inp["stellar_mass"] is not None:
            sampled_inp["stellar_mass"] = inp["stellar_mass"] * 10.0 ** normal_samples(0.0, inp["stellar_mass_err_dex"], n, rng)
        sampled = _light_quantities(drawn["theta_e_arcsec"], drawn["z_l"], drawn["mass_einstein_msun"],
                                    drawn["r_e_kpc"] * 1e-3, sampled_inp, cosmo, c_of_m, halo_definition)
        summary = summarize_many(sampled)
        for block in ("medians", "intervals68", "intervals95"):
            result.setdefault(block, {}).update(summary[block])
        result.setdefault("_samples", {}).update(sampled)
        result.setdefault("mc_samples", n)
        if inp["stellar_ml"] is not None and np.any(sampled_inp["stellar_ml"] <= 0):
            result.setdefault("notes", []).append(
                f"{int(np.sum(sampled_inp['stellar_ml'] <= 0))} draws of the stellar M/L were not positive and were left out."
            )

    if inp["mag"] is not None:
        result["light_band"] = inp["band"]
        result["light_mag_system"] = inp["system"]
        result["light_sun_abs_mag"] = inp["sun_mag"]
    result.setdefault("notes", []).extend(_notes(result, inp, imf))
    result.setdefault("models", {}).update(_models(result, inp, imf, c_label, halo_definition))
    return result


def _notes(result: dict, inp: dict, imf: str | None) -> list[str]:
    notes = []
    if inp["mag"] is not None:
        if inp["extinction"] == 0:
            notes.append("No Galactic extinction was applied (A = 0): give the extinction of the field if it matters.")
        if inp["kcorr"] == 0:
            notes.append("No k-correction was applied (K = 0): the luminosity is in the observed band at the lens redshift.")
        sun = inp["sun_entry"]
        memo = " (table value quoted from memory)" if sun.from_memory else ""
        notes.append(f"Solar absolute magnitude {inp['sun_mag']:.2f} in {sun.description}, {inp['system']} "
                     f"(Willmer 2018){memo}; the magnitude is taken to be {inp['system']}.")
        if inp["mag_kind"] == "aperture":
            notes.append("The light inside theta_E was measured on the image; in the Monte Carlo it does not follow the "
                         "theta_E draws (only its photometric error is propagated).")
    if "light_fraction_einstein" in result and (inp["mag_kind"] == "total" or inp["stellar_mass"] is not None):
        label = PROFILE_LABELS[inp["profile"]] + (f" n = {inp['sersic_n']:g}" if inp["profile"] == "sersic" else "")
        notes.append(f"{100 * result['light_fraction_einstein']:.0f}% of the light lies inside theta_E for a {label} "
                     f"with R_e = {inp['r_eff']:g} arcsec.")
    if "stellar_mass_einstein_msun" in result:
        notes.append(f"Stellar masses assume the {imf} IMF." if imf else
                     "The stellar M/L or mass fixes the IMF assumption: a Salpeter IMF gives roughly 1.7-1.8 times the Chabrier mass (common practice).")
        if result["dark_fraction_einstein"] < 0:
            notes.append("The stars alone outweigh the lensing mass inside theta_E (negative dark fraction): the stellar "
                         "M/L or IMF is too heavy for this lens, so no two-component halo exists.")
        m_nfw, m_two = result.get("nfw_m200_msun"), result.get("two_component_halo_m200_msun")
        if m_nfw is not None and m_two is not None and np.isfinite(m_nfw) and np.isfinite(m_two) and m_two > 0:
            notes.append(f"With the stars in the model the halo needs M200 = {m_two:.3g} Msun, against {m_nfw:.3g} Msun "
                         f"for an NFW halo alone ({m_nfw / m_two:.3g} times more): the NFW-only halo must make the "
                         "stars' central mass itself.")
    return notes


def _models(result: dict, inp: dict, imf: str | None, c_label: str, halo_definition: str) -> dict[str, str]:
    models = {}
    profile = PROFILE_LABELS[inp["profile"]] + (f" n = {inp['sersic_n']:g}" if inp["profile"] == "sersic" else "")
    if inp["mag"] is not None:
        corr = f"K = {inp['kcorr']:g}, A = {inp['extinction']:g} mag"
        source = "total catalogue magnitude" if inp["mag_kind"] == "total" else "aperture photometry inside theta_E on the image"
        lum = f"{source} in {inp['band']} ({inp['system']}), DM from D_L, {corr}, M_sun = {inp['sun_mag']:.2f} (Willmer 2018)"
        if inp["mag_kind"] == "total":
            lum += f"; light inside theta_E from a {profile}"
        models.update({
            "distance_modulus": "5 log10(D_L / 10 pc), luminosity distance in " + str(result.get("cosmology", "")),
            "light_abs_mag": "absolute magnitude of the light inside theta_E: " + lum,
            "light_abs_mag_total": "total absolute magnitude: " + lum,
            "light_luminosity_lsun": "luminosity inside theta_E in solar units of the band: " + lum,
            "light_luminosity_total_lsun": "total luminosity in solar units of the band: " + lum,
            "mass_to_light": "M(<theta_E) / L(<theta_E): total (stars + dark) projected mass over light, solar units",
        })
    if inp["r_eff"] is not None:
        models["light_fraction_einstein"] = f"fraction of the light inside theta_E for a {profile}"
    imf_text = f"{imf} IMF" if imf else "IMF of the given stellar M/L or mass"
    if "stellar_mass_einstein_msun" in result:
        how = (f"stellar M/L {inp['stellar_ml']:g} times the light inside theta_E" if inp["stellar_ml"] is not None
               else f"given stellar mass times the {profile} fraction inside theta_E")
        models.update({
            "stellar_ml": f"stellar mass-to-light ratio ({imf_text})",
            "stellar_mass_total_msun": f"total stellar mass ({imf_text})",
            "stellar_mass_einstein_msun": f"projected stellar mass inside theta_E: {how} ({imf_text})",
            "dark_fraction_einstein": "f_DM = 1 - M*(<theta_E) / M(<theta_E), projected, inside theta_E",
            "two_component_halo_m200_msun": (
                f"stars ({how}) plus an NFW halo, boundary {halo_definition}, concentration from {c_label}; halo mass "
                "chosen so the mean convergence of stars plus halo inside theta_E is 1"),
        })
        models["two_component_halo_c200"] = models["two_component_halo_m200_msun"]
    return models
