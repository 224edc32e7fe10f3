"""One registry of facts about every key a result can hold: unit, label, description, format.

The window, the command line, the exported tables and the report all read a key's unit,
label and meaning from here, so each fact has one source. A fact is a :class:`KeyFact`;
:data:`RESULT_KEYS` maps each key to its fact, in the order tables show them.

``unit`` is an astropy unit string (None for a pure number or text); the plain, HTML and
mathtext spellings of each unit come from :data:`UNIT_FORMS`. ``group`` says which step
makes the key (``estimate``, ``measure``, ``light``, ``shear``, ``profile``, ``meta``);
``table`` marks the keys the readable tables print. Keys starting with ``_`` are working
data (e.g. ``_samples``) and are never registered: they do not leave the program.

To add a key, add a :class:`KeyFact` row to :data:`_FACTS` below (or, from a plug-in or a
test, call :func:`register_key`): the exported ECSV, the command line's table, the window's
panels and the report then pick it up.

Examples
--------
>>> fact("mass_einstein_msun").unit
'solMass'
>>> fact("sigma_cr_msun_per_pc2").plain_unit
'Msun/pc^2'
>>> "nfw_m200_msun" in keys_in("estimate")
True
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass

#: Each unit's spellings: astropy string -> (plain text, HTML, matplotlib mathtext).
UNIT_FORMS: dict[str, tuple[str, str, str]] = {
    "arcsec": ("arcsec", "arcsec", "arcsec"),
    "deg": ("deg", "deg", "deg"),
    "pix": ("pix", "pix", "pix"),
    "Mpc": ("Mpc", "Mpc", "Mpc"),
    "kpc": ("kpc", "kpc", "kpc"),
    "km / s": ("km/s", "km/s", r"km s$^{-1}$"),
    "solMass": ("Msun", "M<sub>☉</sub>", r"M$_\odot$"),
    "solMass / pc2": ("Msun/pc^2", "M<sub>☉</sub>/pc²", r"M$_\odot$ pc$^{-2}$"),
    "solLum": ("Lsun (band)", "L<sub>☉</sub> (band)", r"L$_\odot$ (band)"),
    "solMass / solLum": ("Msun/Lsun", "M<sub>☉</sub>/L<sub>☉</sub>", r"M$_\odot$/L$_\odot$"),
    "mag": ("mag", "mag", "mag"),
    "dex": ("dex", "dex", "dex"),
}

#: The note every mass result carries, in words (no key names): the outputs list each number's model
#: beside it (the window's tooltips and copied text, the report's model block, the command line's table).
MODEL_NOTE = ("Masses are model-dependent estimates: each number is listed with the model and assumptions "
              "that produced it.")

#: Which step makes a key.
GROUPS = ("estimate", "measure", "light", "shear", "profile", "stack", "meta")
#: How a value is written: 4 significant figures, an integer count, text, a yes/no flag,
#: or a block (mapping or list) that tables do not print.
FORMATS = ("number", "count", "text", "flag", "block")


@dataclass(frozen=True)
class KeyFact:
    """Everything the program says about one result key.

    Examples
    --------
    >>> f = fact("mass_einstein_msun")
    >>> f.unit, f.group
    ('solMass', 'estimate')
    """

    key: str
    label: str
    unit: str | None
    description: str
    group: str = "meta"
    fmt: str = "number"
    table: bool = False
    rich: str | None = None
    math: str | None = None
    shown_unit: str | None = None

    def _unit_form(self, which: int) -> str:
        if self.shown_unit is not None:
            return self.shown_unit
        return UNIT_FORMS[self.unit][which] if self.unit else ""

    @property
    def plain_unit(self) -> str:
        """Unit as the command line prints it ('' for none)."""
        return self._unit_form(0)

    @property
    def rich_unit(self) -> str:
        """Unit as HTML for the window."""
        return self._unit_form(1)

    @property
    def math_unit(self) -> str:
        """Unit in matplotlib mathtext for the report."""
        return self._unit_form(2)

    @property
    def rich_label(self) -> str:
        """Label as HTML for the window (the plain label when no rich one is given)."""
        return self.rich or self.label

    @property
    def math_label(self) -> str:
        """Label in mathtext for the report (the plain label when no mathtext one is given)."""
        return self.math or self.label

    @property
    def quantity_unit(self):
        """The astropy Unit of the values (``dimensionless_unscaled`` for pure numbers); None for text."""
        import astropy.units as u

        if self.fmt in ("text", "flag", "block"):
            return None
        return u.Unit(self.unit) if self.unit else u.dimensionless_unscaled


def _f(key, label, unit, description, group, **kw) -> KeyFact:
    return KeyFact(key, label, unit, description, group, **kw)


_E, _M, _L, _S, _P, _X = "estimate", "measure", "light", "shear", "profile", "meta"
_K = "stack"

_FACTS: list[KeyFact] = [
    # ---------------------------------------------------------------- estimate (one per derived number)
    _f("theta_e_arcsec", "theta_E", "arcsec", "Einstein radius", _E, table=True,
       rich="θ<sub>E</sub>", math=r"$\theta_E$"),
    _f("z_l", "z_l", None, "lens redshift", _E, table=True, rich="z<sub>l</sub>", math=r"$z_l$"),
    _f("z_s", "z_s", None, "source redshift", _E, table=True, rich="z<sub>s</sub>", math=r"$z_s$"),
    _f("d_l_mpc", "D_l", "Mpc", "angular-diameter distance to the lens", _E, table=True,
       rich="D<sub>l</sub>", math=r"$D_l$"),
    _f("d_s_mpc", "D_s", "Mpc", "angular-diameter distance to the source", _E, table=True,
       rich="D<sub>s</sub>", math=r"$D_s$"),
    _f("d_ls_mpc", "D_ls", "Mpc", "angular-diameter distance from lens to source", _E, table=True,
       rich="D<sub>ls</sub>", math=r"$D_{ls}$"),
    _f("sigma_cr_msun_per_pc2", "Sigma_cr", "solMass / pc2", "critical surface density", _E, table=True,
       rich="Σ<sub>cr</sub>", math=r"$\Sigma_{cr}$"),
    _f("r_e_kpc", "R_E", "kpc", "Einstein radius at the lens", _E, table=True,
       rich="R<sub>E</sub> = D<sub>l</sub> θ<sub>E</sub>", math=r"$R_E = D_l\,\theta_E$"),
    _f("mass_einstein_msun", "M(<theta_E)", "solMass", "projected mass inside the Einstein radius", _E,
       table=True, rich="<b>M(&lt;θ<sub>E</sub>)</b>", math=r"$M(<\theta_E)$"),
    _f("sis_sigma_v_kms", "sigma_SIS", "km / s", "velocity dispersion of the SIS with this Einstein radius", _E,
       table=True, rich="σ<sub>SIS</sub>", math=r"$\sigma_{SIS}$"),
    _f("nfw_m200_msun", "NFW M200", "solMass", "NFW halo mass inside the halo boundary", _E, table=True,
       rich="NFW M<sub>200</sub>", math=r"NFW $M_{200}$"),
    _f("nfw_c200", "NFW c200", None, "NFW concentration", _E, table=True,
       rich="NFW c<sub>200</sub>", math=r"NFW $c_{200}$"),
    _f("nfw_r200_kpc", "NFW r200", "kpc", "NFW halo boundary radius", _E, table=True,
       rich="NFW r<sub>200</sub>", math=r"NFW $r_{200}$"),
    # ---------------------------------------------------------------- measurement on the image
    _f("theta_e_err_arcsec", "theta_E err", "arcsec", "1-sigma error of the fitted Einstein radius (the ring "
       "finder's: half its 1-sigma interval, which may be asymmetric)", _M,
       table=True, rich="σ(θ<sub>E</sub>)", math=r"$\sigma(\theta_E)$"),
    _f("theta_e_low1_arcsec", "theta_E -1 sigma", "arcsec", "ring finder: lower bound of theta_E's 1-sigma interval "
       "(15.87%; asymmetric for a lone arc)", _M, table=True, rich="θ<sub>E</sub> −1σ", math=r"$\theta_E\,-1\sigma$"),
    _f("theta_e_high1_arcsec", "theta_E +1 sigma", "arcsec", "ring finder: upper bound of theta_E's 1-sigma interval "
       "(84.13%)", _M, table=True, rich="θ<sub>E</sub> +1σ", math=r"$\theta_E\,+1\sigma$"),
    _f("theta_e_low2_arcsec", "theta_E -2 sigma", "arcsec", "ring finder: lower bound of theta_E's 2-sigma interval "
       "(2.275%)", _M, table=True, rich="θ<sub>E</sub> −2σ", math=r"$\theta_E\,-2\sigma$"),
    _f("theta_e_high2_arcsec", "theta_E +2 sigma", "arcsec", "ring finder: upper bound of theta_E's 2-sigma interval "
       "(97.725%)", _M, table=True, rich="θ<sub>E</sub> +2σ", math=r"$\theta_E\,+2\sigma$"),
    _f("fit_rms_arcsec", "fit rms", "arcsec", "rms distance of the marked points from the fitted curve", _M,
       table=True),
    _f("ring_score", "ring score", None, "ring finder's detection strength in noise sigma", _M, table=True,
       shown_unit="sigma"),
    _f("fit_axis_ratio", "axis ratio", None, "axis ratio of the fitted ellipse (1 for a circle)", _M, table=True),
    _f("pixel_scale_arcsec", "pixel scale", "arcsec", "angular size of one pixel", _M, table=True),
    _f("fit_position_angle_deg", "position angle", "deg", "position angle of the fitted ellipse's major axis", _M),
    _f("method", "method", None, "how the Einstein radius was measured", _M, fmt="text"),
    _f("n_points", "points", None, "number of marked or found points in the fit", _M, fmt="count"),
    _f("points_xy", "points", "pix", "the points fitted (0-based column, row)", _M, fmt="block"),
    _f("lens_model", "lens model", None, "SIE + external shear fitted to the marks: parameters with 68/95% "
       "intervals, priors, predicted images, time delays (lensmass.core.lens_model)", _M, fmt="block"),
    _f("center_x", "centre x", "pix", "lens centre, 0-based column", _M),
    _f("center_y", "centre y", "pix", "lens centre, 0-based row", _M),
    _f("center_ra", "centre RA", "deg", "lens centre, right ascension (ICRS, from the image's WCS)", _M),
    _f("center_dec", "centre Dec", "deg", "lens centre, declination (ICRS, from the image's WCS)", _M),
    _f("center_source", "lens centre", None, "which lens centre theta_E was measured about: marked by hand, "
       "given, found by the ring finder, or the fitted curve's own centre", _M, fmt="text"),
    _f("ring_confident", "ring confident", None, "whether the ring finder's detection clears its threshold", _M,
       fmt="flag"),
    # ---------------------------------------------------------------- lens light
    _f("distance_modulus", "DM", "mag", "distance modulus of the lens", _L, table=True),
    _f("light_abs_mag", "abs mag(<thE)", "mag", "absolute magnitude of the light inside theta_E", _L, table=True),
    _f("light_abs_mag_total", "abs mag total", "mag", "absolute magnitude of the whole lens galaxy", _L, table=True),
    _f("light_fraction_einstein", "L frac<theta_E", None, "fraction of the light inside theta_E", _L, table=True),
    _f("light_luminosity_lsun", "L(<theta_E)", "solLum", "luminosity inside theta_E in the band", _L, table=True,
       rich="L(&lt;θ<sub>E</sub>)"),
    _f("light_luminosity_total_lsun", "L_total", "solLum", "total luminosity in the band", _L, table=True,
       rich="L<sub>total</sub>"),
    _f("mass_to_light", "M/L(<theta_E)", "solMass / solLum", "mass-to-light ratio inside theta_E", _L,
       table=True, rich="M/L(&lt;θ<sub>E</sub>)"),
    _f("stellar_ml", "stellar M/L", "solMass / solLum", "stellar mass-to-light ratio used", _L, table=True),
    _f("stellar_mass_total_msun", "M*_total", "solMass", "total stellar mass", _L, table=True,
       rich="M<sub>*,total</sub>"),
    _f("stellar_mass_einstein_msun", "M*(<theta_E)", "solMass", "stellar mass inside theta_E", _L, table=True,
       rich="M<sub>*</sub>(&lt;θ<sub>E</sub>)"),
    _f("dark_fraction_einstein", "f_DM(<theta_E)", None, "dark-matter fraction inside theta_E", _L, table=True,
       rich="f<sub>DM</sub>(&lt;θ<sub>E</sub>)"),
    _f("two_component_halo_m200_msun", "stars+NFW M200", "solMass",
       "halo mass of the stars-plus-NFW model that gives theta_E", _L, table=True),
    _f("two_component_halo_c200", "stars+NFW c200", None, "concentration of that halo", _L, table=True),
    _f("light_band", "band", None, "photometric band of the light", _L, fmt="text"),
    _f("light_mag_system", "magnitude system", None, "AB or Vega", _L, fmt="text"),
    _f("light_sun_abs_mag", "Sun abs mag", "mag", "absolute magnitude of the Sun in the band", _L),
    _f("light_photometry", "photometry", None, "aperture photometry of the lens on the image", _L, fmt="block"),
    # ---------------------------------------------------------------- weak lensing
    _f("z_s_effective", "z_s (eff.)", None, "source redshift with the catalogue's mean D_ls/D_s", _S, table=True),
    _f("n_used", "galaxies", None, "galaxies used in the profile", _S, fmt="count", table=True),
    _f("sis_theta_e_arcsec", "SIS theta_E", "arcsec", "Einstein radius of the fitted SIS at z_s (eff.)", _S,
       table=True),
    _f("chi2_sis", "SIS chi^2", None, "chi^2 of the SIS fit", _S, table=True),
    _f("chi2_nfw", "NFW chi^2", None, "chi^2 of the NFW fit", _S, table=True),
    _f("cross_shear_pvalue", "g_x p-value", None, "p-value of the cross shear against zero", _S, table=True),
    _f("zeta", "zeta", None, "aperture densitometry statistic (mean kappa inside minus in the annulus)", _S,
       table=True),
    _f("zeta_mass_msun", "M_zeta >=", "solMass", "lower bound on the projected mass inside the zeta radius", _S,
       table=True),
    _f("zeta_radius_kpc", "  inside R", "kpc", "inner radius of the zeta statistic at the lens", _S, table=True),
    _f("detection_significance", "detection", None,
       "significance of the NFW fit against no lens (likelihood ratio), in sigma", _S, table=True),
    _f("sis_detection_significance", "SIS detection", None,
       "significance of the SIS fit against no lens (likelihood ratio), in sigma", _S),
    _f("detected", "detected", None, "whether the halo is detected (significance of 3 sigma or more)", _S, fmt="flag"),
    _f("nfw_m200_upper95_msun", "NFW M200 < (95%)", "solMass",
       "one-sided 95% upper limit on the NFW M200 when the halo is not detected", _S),
    _f("sis_sigma_v_upper95_kms", "SIS sigma_v < (95%)", "km / s",
       "one-sided 95% upper limit on the SIS velocity dispersion when the halo is not detected", _S),
    _f("zeta_weak_shear", "zeta (g as gamma)", None,
       "zeta with the reduced shear taken as the shear (no convergence correction)", _S),
    _f("zeta_mass_weak_shear_msun", "M_zeta (g as gamma)", "solMass",
       "zeta mass with the reduced shear taken as the shear; not a bound where the convergence is not small", _S),
    _f("priors", "priors", None, "the priors of the shear fits", _S, fmt="block"),
    _f("n_rows", "rows", None, "rows in the catalogue", _S, fmt="count"),
    _f("n_dropped", "dropped", None, "rows dropped, by reason", _S, fmt="block"),
    _f("source_redshifts", "source redshifts", None, "where the source redshifts came from", _S, fmt="text"),
    _f("beta_mean", "<D_ls/D_s>", None, "mean lensing efficiency of the sources", _S),
    _f("halo_definition", "halo boundary", None, "overdensity of the NFW halo boundary", _S, fmt="text"),
    _f("concentration", "concentration", None, "c(M, z) relation or fixed concentration", _S, fmt="text"),
    _f("best_fit", "best fit", None, "best-fit (maximum-likelihood) values of the fits", _S, fmt="block"),
    _f("dof_sis", "SIS dof", None, "degrees of freedom of the SIS fit", _S, fmt="count"),
    _f("pvalue_sis", "SIS p-value", None, "p-value of the SIS fit's chi^2", _S),
    _f("dof_nfw", "NFW dof", None, "degrees of freedom of the NFW fit", _S, fmt="count"),
    _f("pvalue_nfw", "NFW p-value", None, "p-value of the NFW fit's chi^2", _S),
    _f("cross_shear_chi2", "g_x chi^2", None, "chi^2 of the cross shear against zero", _S),
    _f("cross_shear_dof", "g_x dof", None, "degrees of freedom of the cross-shear test", _S, fmt="count"),
    _f("zeta_err", "zeta err", None, "1-sigma error of zeta", _S),
    _f("zeta_mass_err_msun", "M_zeta err", "solMass", "1-sigma error of the zeta mass", _S),
    _f("zeta_radius_arcsec", "zeta inner R", "arcsec", "inner radius of the zeta statistic", _S),
    _f("zeta_outer_radius_arcsec", "zeta outer R", "arcsec", "outer radius of the zeta annulus", _S),
    _f("zeta_outer_radius_kpc", "zeta outer R", "kpc", "outer radius of the zeta annulus at the lens", _S),
    _f("nfw_mass_2d_at_zeta_radius_msun", "NFW M_2D(<R_zeta)", "solMass",
       "projected mass of the best-fit NFW halo inside the zeta inner radius", _S),
    _f("free_concentration", "free c", None, "whether the NFW concentration was fitted freely", _S, fmt="flag"),
    _f("catalog", "catalogue", None, "the catalogue read and its columns", _S, fmt="block"),
    _f("profile", "profile", None, "the binned shear profile, one entry per radial bin", _S, fmt="block"),
    _f("map", "mass map", None, "the convergence map written and its peak", _S, fmt="block"),
    # ---------------------------------------------------------------- one radial bin of a shear profile
    _f("r_lo_arcsec", "r low", "arcsec", "inner edge of the radial bin", _P),
    _f("r_hi_arcsec", "r high", "arcsec", "outer edge of the radial bin", _P),
    _f("r_mean_arcsec", "r mean", "arcsec", "weighted mean radius of the bin's galaxies", _P),
    _f("r_mean_kpc", "r mean", "kpc", "weighted mean radius at the lens", _P),
    _f("n_galaxies", "galaxies", None, "galaxies in the bin", _P, fmt="count"),
    _f("g_t", "g_t", None, "weighted mean tangential ellipticity (reduced shear)", _P),
    _f("g_t_err", "g_t err", None, "1-sigma error of g_t from the shape noise", _P),
    _f("g_t_err_bootstrap", "g_t err (bootstrap)", None, "1-sigma error of g_t by bootstrap", _P),
    _f("g_x", "g_x", None, "weighted mean cross ellipticity", _P),
    _f("g_x_err", "g_x err", None, "1-sigma error of g_x from the shape noise", _P),
    _f("g_x_err_bootstrap", "g_x err (bootstrap)", None, "1-sigma error of g_x by bootstrap", _P),
    _f("g_t_model_sis", "g_t SIS", None, "reduced tangential shear of the fitted SIS", _P),
    _f("g_t_model_nfw", "g_t NFW", None, "reduced tangential shear of the fitted NFW halo", _P),
    _f("delta_sigma_msun_per_pc2", "Delta Sigma", "solMass / pc2", "excess surface density", _P,
       rich="ΔΣ", math=r"$\Delta\Sigma$"),
    _f("delta_sigma_err_msun_per_pc2", "Delta Sigma err", "solMass / pc2", "1-sigma error of Delta Sigma", _P),
    # ---------------------------------------------------------------- stacked galaxy-galaxy lensing (lensmass stack)
    _f("n_lenses", "lenses", None, "lenses stacked", _K, fmt="count"),
    _f("n_randoms", "random points", None, "random points whose Delta Sigma is subtracted", _K, fmt="count"),
    _f("n_sources_read", "sources read", None, "source rows read", _K, fmt="count"),
    _f("n_sources_used", "sources used", None, "sources with finite values, |e| < 1, w > 0, behind the nearest lens",
       _K, fmt="count"),
    _f("n_patches", "jackknife patches", None, "sky patches holding lenses in the jackknife", _K, fmt="count"),
    _f("mean_lens_z", "mean z_l", None, "weighted mean lens redshift", _K),
    _f("mean_halo_m200_msun", "mean halo M200", "solMass",
       "M200 of the NFW halo fitted to the stacked Delta Sigma (posterior median)", _K),
    _f("mean_halo_c200", "mean halo c200", None, "concentration of the mean halo: fitted with M200 (posterior "
       "median) when the concentration is free, else from the c(M) relation at the median M200", _K),
    _f("stack_likelihood_power", "likelihood power", None, "power m of the stacked fit's t-likelihood "
       "(1 + chi^2/(N_eff - 1))^(-m/2) for a covariance from N_eff effective jackknife patches "
       "(Percival et al. 2022)", _K),
    _f("stack_effective_patches", "effective patches", None, "effective number of jackknife patches, "
       "(sum W)^2 / sum W^2 of the patches' pair weights (Kish 1965), smallest over the bins", _K),
    _f("point_mass_msun", "central M_*", "solMass", "central point mass for the lenses' stars in the fit: given, or fitted with M200 (posterior median)", _K),
    _f("stack_chi2", "chi^2", None, "chi^2 of the stacked NFW fit (Hartlap-debiased inverse covariance)", _K),
    _f("stack_dof", "dof", None, "degrees of freedom of the stacked fit", _K, fmt="count"),
    _f("stack_pvalue", "p-value", None, "p-value of the stacked fit's chi^2", _K),
    _f("hartlap_factor", "Hartlap factor", None, "(N_patches - N_bins - 2) / (N_patches - 1)", _K),
    _f("covariance_msun2_per_pc4", "covariance", None, "jackknife covariance of Delta Sigma, (Msun/pc^2)^2", _K,
       fmt="block"),
    _f("catalogs", "catalogues", None, "the source, lens and random catalogues read", _K, fmt="block"),
    _f("r_lo_mpc", "R low", "Mpc", "inner edge of the physical radial bin", _K),
    _f("r_hi_mpc", "R high", "Mpc", "outer edge of the physical radial bin", _K),
    _f("r_mean_mpc", "R mean", "Mpc", "pair-weighted mean physical radius", _K),
    _f("n_pairs", "pairs", None, "lens-source pairs in the bin", _K, fmt="count"),
    _f("delta_sigma_lenses_msun_per_pc2", "Delta Sigma (lenses)", "solMass / pc2",
       "Delta Sigma around the lenses before boost and random subtraction", _K),
    _f("delta_sigma_randoms_msun_per_pc2", "Delta Sigma (randoms)", "solMass / pc2",
       "Delta Sigma around the random points", _K),
    _f("boost", "boost", None, "boost factor: weighted sources per lens over those per random point", _K),
    _f("delta_sigma_cross_msun_per_pc2", "Delta Sigma cross", "solMass / pc2",
       "the same estimator with e_x (expected 0)", _K),
    _f("shape_noise_err_msun_per_pc2", "shape-noise err", "solMass / pc2", "1-sigma shape-noise error of Delta Sigma",
       _K),
    _f("delta_sigma_model_msun_per_pc2", "Delta Sigma model", "solMass / pc2", "Delta Sigma of the fitted NFW halo",
       _K),
    # ---------------------------------------------------------------- what every result carries
    _f("cosmology", "cosmology", None, "cosmology of the distances", _X, fmt="text"),
    _f("notes", "notes", None, "caveats of the result", _X, fmt="block"),
    _f("models", "models", None, "which model and assumptions produced each number", _X, fmt="block"),
    _f("medians", "medians", None, "medians of the Monte Carlo draws", _X, fmt="block"),
    _f("intervals68", "68% intervals", None, "16th and 84th percentiles of the Monte Carlo draws", _X, fmt="block"),
    _f("intervals95", "95% intervals", None, "2.5th and 97.5th percentiles of the Monte Carlo draws", _X,
       fmt="block"),
    _f("mc_samples", "Monte Carlo draws", None, "Monte Carlo draws (0: no uncertainty propagated)", _X, fmt="count"),
    _f("mc_rejected", "rejected draws", None, "Monte Carlo draws rejected (source not behind the lens)", _X,
       fmt="count"),
    _f("mc_seed", "seed", None, "seed of the Monte Carlo draws", _X, fmt="count"),
    _f("problems", "problems", None, "for arrays with strict=False: why each bad lens was not computed (None if it was)",
       _X, fmt="block"),
    _f("source", "theta_E source", None, "where a batch row's Einstein radius came from", _X, fmt="text"),
    _f("versus_zs", "versus z_s", None, "mass and SIS dispersion over the source-redshift range", _X, fmt="block"),
]

#: key -> fact, in the order tables show them.
RESULT_KEYS: dict[str, KeyFact] = {}
_CHANGES = [0]  # bumped by every change of the registry: the live views cache their key lists on it


def register_key(new: KeyFact) -> KeyFact:
    """Add (or replace) the fact about ``new.key``; every table, panel and export picks it up.

    Raises ValueError for a working-data key (``_...``), an unknown group or format, or a
    unit astropy cannot read.

    Examples
    --------
    >>> toy = register_key(KeyFact("toy_mass_msun", "toy M", "solMass", "a toy mass", "estimate"))
    >>> fact("toy_mass_msun").label
    'toy M'
    >>> unregister_key("toy_mass_msun")
    """
    if new.key.startswith("_"):
        raise ValueError(f"'{new.key}' is working data (leading '_'): it is never shown, so it is not registered.")
    if new.group not in GROUPS:
        raise ValueError(f"Unknown group '{new.group}' for '{new.key}': use one of {', '.join(GROUPS)}.")
    if new.fmt not in FORMATS:
        raise ValueError(f"Unknown format '{new.fmt}' for '{new.key}': use one of {', '.join(FORMATS)}.")
    if new.unit is not None and new.unit not in UNIT_FORMS:
        raise ValueError(f"Unit '{new.unit}' of '{new.key}' has no spellings: add it to UNIT_FORMS.")
    RESULT_KEYS[new.key] = new
    _CHANGES[0] += 1
    return new


def unregister_key(key: str) -> None:
    """Remove a key added by :func:`register_key` (plug-ins and tests)."""
    RESULT_KEYS.pop(key, None)
    _CHANGES[0] += 1


for _fact in _FACTS:
    register_key(_fact)


def fact(key: str) -> KeyFact:
    """The fact about ``key``; a KeyError that says where to add a missing key."""
    try:
        return RESULT_KEYS[key]
    except KeyError:
        raise KeyError(f"Result key '{key}' is not registered: add a KeyFact for it in "
                       "lensmass/core/result_keys.py.") from None


class KeyGroup(Sequence):
    """The keys of one group (optionally only the printed ones), read from the registry on each use,
    so a key registered later appears everywhere the group is used."""

    def __init__(self, group: str, *, table_only: bool = False):
        if group not in GROUPS:
            raise ValueError(f"Unknown group '{group}': use one of {', '.join(GROUPS)}.")
        self.group, self.table_only = group, table_only
        self._cache: tuple[int, list[str]] = (-1, [])

    def _keys(self) -> list[str]:
        if self._cache[0] != _CHANGES[0]:
            keys = [k for k, f in RESULT_KEYS.items() if f.group == self.group and (f.table or not self.table_only)]
            self._cache = (_CHANGES[0], keys)
        return self._cache[1]

    def __getitem__(self, index):
        return self._keys()[index]

    def __len__(self) -> int:
        return len(self._keys())

    def __iter__(self) -> Iterator[str]:
        return iter(self._keys())

    def __contains__(self, key) -> bool:
        return key in self._keys()

    def __repr__(self) -> str:
        return f"KeyGroup({self.group!r}: {', '.join(self._keys())})"


def keys_in(group: str, *, table_only: bool = False) -> KeyGroup:
    """A live view of the keys of ``group`` (see :class:`KeyGroup`)."""
    return KeyGroup(group, table_only=table_only)


class TableRows(Sequence):
    """``(key, label, plain unit)`` rows for readable tables, read from the registry on each use.

    ``source`` is a group name (its printed keys) or a sequence of keys in the wanted order.
    """

    def __init__(self, source: str | Sequence[str], *, leave_out: Sequence[str] = ()):
        self.source, self.leave_out = source, tuple(leave_out)

    def _rows(self) -> list[tuple[str, str, str]]:
        keys = keys_in(self.source, table_only=True) if isinstance(self.source, str) else self.source
        return [(k, fact(k).label, fact(k).plain_unit) for k in keys if k not in self.leave_out]

    def __getitem__(self, index):
        return self._rows()[index]

    def __len__(self) -> int:
        return len(self._rows())

    def __iter__(self):
        return iter(self._rows())


def table_rows(source: str | Sequence[str], *, leave_out: Sequence[str] = ()) -> TableRows:
    """Rows ``(key, label, plain unit)`` of a readable table (a live view of the registry).

    Examples
    --------
    >>> list(table_rows(["theta_e_arcsec", "mass_einstein_msun"]))
    [('theta_e_arcsec', 'theta_E', 'arcsec'), ('mass_einstein_msun', 'M(<theta_E)', 'Msun')]
    """
    return TableRows(source, leave_out=leave_out)
