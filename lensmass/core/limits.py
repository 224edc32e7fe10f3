"""What lensmass accepts as input, in one place: physical limits and limits on what one run may take.

Every check raises :class:`~lensmass.core.errors.LensInputError` with one sentence that names the
problem, the value and the fix. The command line, the batch runner, the window's loaders and the
Python API call these functions, so a limit is stated once.

Physical limits (a value outside them is not a measurement of anything):

- velocities below the speed of light (CODATA 2018 via ``astropy.constants.c``);
- declination within [-90, 90] deg and right ascension within [-360, 360] deg (the definition of
  equatorial coordinates; RA is taken modulo 360, common practice);
- pixel scales between 1e-4 arcsec (finer than any imager, common practice) and 1 deg a pixel;
- Einstein radii below 1 deg; the largest known cluster Einstein radii are under about one arcminute
  (common practice), so radii above :data:`THETA_E_NOTE_ARCSEC` get a note;
- a cosmology whose expansion rate is real from today back to z = 1100 (it has a big bang);
- seeds, bootstrap counts, margins >= 0; radii finite and positive.

Limits on one run (so a typo cannot take the machine's memory or cores) are derived from the
measured bytes per Monte Carlo draw and the memory the machine has.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterable

import numpy as np

from lensmass.core.errors import LensInputError

#: Speed of light in km/s (CODATA 2018, as in astropy.constants.c).
SPEED_OF_LIGHT_KMS = 299_792.458
#: Pixel-scale range accepted, arcsec per pixel.
PIXEL_SCALE_MIN_ARCSEC = 1e-4
PIXEL_SCALE_MAX_ARCSEC = 3600.0
#: Einstein radii at or above this are refused (arcsec): 1 deg.
THETA_E_MAX_ARCSEC = 3600.0
#: Einstein radii above this get a note: larger than any known lens (common practice: < ~1 arcmin).
THETA_E_NOTE_ARCSEC = 120.0
#: Smallest Einstein radius accepted (arcsec): a microarcsecond, far below any measured image splitting.
THETA_E_MIN_ARCSEC = 1e-6
#: Smallest redshift accepted: below ~1e-4 (about 0.4 Mpc) peculiar velocities swamp the Hubble flow,
#: so a redshift no longer gives a distance (common practice).
REDSHIFT_MIN = 1e-4
#: Largest redshift accepted for a lens or a source (beyond the surface of last scattering, z ~ 1100).
REDSHIFT_MAX = 1100.0
#: Peak bytes per Monte Carlo draw of :func:`lensmass.core.estimate.estimate` when it runs in chunks
#: (3 inputs + 13 derived numbers in float64, masks, percentile copies): measured with tracemalloc at
#: 201 bytes (2e6 draws) and 249 (1e6 draws) against 350 unchunked (benchmarks/bench_estimate.py).
MC_BYTES_PER_DRAW = 250
#: Monte Carlo draws of many rows summarised at once by ``estimate_many`` (the draws are derived
#: :data:`lensmass.core.estimate.DERIVE_BLOCK` at a time; this bounds the percentile copies).
MC_CHUNK = 250_000
#: Never more Monte Carlo draws than this, whatever the memory (10^8 draws: percentiles to 1e-4).
MC_SAMPLES_MAX = 100_000_000
#: Fraction of the available memory one run may plan to use.
MEMORY_FRACTION = 0.5
#: Fixed NFW concentrations accepted: halos in simulations and lensing data have c200 of about 1 to 30
#: (Duffy et al. 2008, fig. 1; common practice), so this range is generous.
CONCENTRATION_RANGE = (0.1, 100.0)
#: Radial bins of a shear profile, and bootstrap resamplings.
SHEAR_BINS_MAX = 1000
#: Each resampling holds one count per bootstrap group (2000 groups, 16 kB): 10^4 of them take 160 MB,
#: and a few hundred already fix a 68% error to a few per cent (common practice).
BOOTSTRAP_MAX = 10_000
#: Mass-map pixels per side, and noise realisations.
MAP_PIXELS_MAX = 4096
MAP_NOISE_MAX = 1000
#: Largest seed numpy's generators take (seeds are non-negative integers below 2^128).
SEED_MAX = 2**128 - 1
#: Deepest nesting accepted in a session or other JSON file.
JSON_DEPTH_MAX = 64
#: Largest image accepted (pixels): a 20k x 20k frame; Pillow's own guard is 2 x 89.5 million.
IMAGE_PIXELS_MAX = 400_000_000
#: Pixel coordinates beyond this many image sizes outside the frame are nonsense.
PIXEL_SLACK = 0.5


def available_memory_bytes() -> int:
    """Memory the machine can give now: MemAvailable from /proc/meminfo, else total physical memory."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return int(os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (AttributeError, ValueError, OSError):
        return 8 * 1024**3


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity), at least 1."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _first(values: np.ndarray, bad: np.ndarray) -> float | None:
    """The first value where ``bad`` holds (for the message), or None when none does."""
    hits = np.flatnonzero(np.ravel(bad))
    return float(np.ravel(values)[hits[0]]) if hits.size else None


def _fmt(value) -> str:
    try:
        return f"{float(value):g}"
    except (TypeError, ValueError):
        return repr(value)


def finite_number(value, what: str, fix: str) -> float:
    """``value`` as a finite float, or a sentence naming ``what`` and the ``fix``."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise LensInputError(f"{what} must be a number, got {value!r}; {fix}.") from None
    if not math.isfinite(v):
        raise LensInputError(f"{what} must be a finite number, got {_fmt(value)}; {fix}.")
    return v


def positive_radius(value, name: str) -> float:
    """A finite radius > 0; ``name`` says which, in words with its parameter in backquotes."""
    v = finite_number(value, name, "give a positive radius")
    if v <= 0:
        raise LensInputError(f"{name} must be a positive radius, got {_fmt(value)}; give a number above 0.")
    return v


def non_negative(value, name: str, what: str = "") -> float:
    """A finite number >= 0 (margins, errors); ``name`` says which, ``what`` what it does."""
    v = finite_number(value, name, "give zero or a positive number")
    if v < 0:
        label = f"{name} ({what})" if what else name
        raise LensInputError(f"{label} must be zero or positive, got {_fmt(value)}; give a number >= 0.")
    return v


def count(value, name: str, minimum: int, maximum: int, why: str = "") -> int:
    """An integer in [minimum, maximum]; ``name`` says which (in words, its parameter in backquotes),
    ``why`` explains the upper limit.

    Examples
    --------
    >>> count(20, "The number of radial bins (`n_bins`)", 1, 1000)
    20
    """
    try:
        n = int(value)
        if n != float(value):
            raise ValueError
    except (TypeError, ValueError, OverflowError):
        raise LensInputError(f"{name} must be a whole number, got {value!r}.") from None
    if n < minimum:
        raise LensInputError(f"{name} must be {minimum} or more, got {n}.")
    if n > maximum:
        extra = f" ({why})" if why else ""
        raise LensInputError(f"{name} must be at most {maximum:,}{extra}, got {n:,}; ask for fewer.")
    return n


def seed(value, name: str = "The random seed (`seed`)") -> int | None:
    """A random seed: None (fresh entropy) or an integer in [0, 2^128)."""
    if value is None:
        return None
    return count(value, name, 0, SEED_MAX)


def monte_carlo_samples(n, name: str = "The number of Monte Carlo draws (`samples`)", minimum: int = 100, per_draw_bytes: int = MC_BYTES_PER_DRAW,
                        memory_bytes: int | None = None) -> int:
    """Monte Carlo draws bounded by :data:`MC_SAMPLES_MAX` and half the available memory.

    Examples
    --------
    >>> monte_carlo_samples(10_000)
    10000
    """
    memory = available_memory_bytes() if memory_bytes is None else memory_bytes
    by_memory = int(MEMORY_FRACTION * memory / per_draw_bytes)
    most = max(minimum, min(MC_SAMPLES_MAX, by_memory))
    why = (f"about {per_draw_bytes} bytes a draw against {memory / 1024**3:.1f} GB of free memory"
           if by_memory < MC_SAMPLES_MAX else "more draws do not sharpen the percentiles")
    return count(n, name, minimum, most, why)


def pixel_scale(scale_arcsec, what: str = "The pixel scale", fix: str = "check the pixel scale (`pixel_scale_arcsec`) or the file's WCS"
                ) -> float:
    """A pixel scale between 1e-4 arcsec and 1 deg a pixel."""
    s = finite_number(scale_arcsec, what, fix)
    if not (PIXEL_SCALE_MIN_ARCSEC <= s <= PIXEL_SCALE_MAX_ARCSEC):
        raise LensInputError(
            f"{what} is {s:.3g}\" per pixel, outside {PIXEL_SCALE_MIN_ARCSEC:g}\" to 1 deg per pixel; {fix}."
        )
    return s


def einstein_radius_arcsec(theta, name: str = "the Einstein radius (`theta_e_arcsec`)") -> np.ndarray:
    """Einstein radii: positive, finite and below 1 deg (the SIS and thin-lens formulas assume small angles)."""
    arr = np.asarray(theta, dtype=float)
    shown = _first(arr, np.isfinite(arr) & (arr > 0) & (arr < THETA_E_MIN_ARCSEC))
    if shown is not None:
        raise LensInputError(f"The Einstein radius {shown:g}\" is below a microarcsecond, far smaller than any "
                             f"measured lens; check {name} (it is in arcsec).")
    shown = _first(arr, np.isfinite(arr) & (arr >= THETA_E_MAX_ARCSEC))
    if shown is not None:
        raise LensInputError(
            f"The Einstein radius {shown:g}\" is 1 deg or more, far beyond any lens (the largest known are about "
            f"1'); check {name} (it is in arcsec)."
        )
    return arr


def redshift_in_range(z, what: str, name: str) -> None:
    """Redshifts (``what`` in words, ``name`` its parameter in backquotes) above :data:`REDSHIFT_MAX` (before the surface of last scattering) or below
    :data:`REDSHIFT_MIN` (where redshift is no distance) are refused."""
    arr = np.asarray(z, dtype=float)
    shown = _first(arr, np.isfinite(arr) & (arr > 0) & (arr < REDSHIFT_MIN))
    if shown is not None:
        raise LensInputError(f"{what} {shown:g} is below {REDSHIFT_MIN:g}, where peculiar velocities swamp the "
                             f"expansion and a redshift gives no distance; check {name}.")
    shown = _first(arr, np.isfinite(arr) & (arr > REDSHIFT_MAX))
    if shown is not None:
        raise LensInputError(f"{what} {shown:g} is beyond z = {REDSHIFT_MAX:g} (nothing is seen from before the "
                             f"cosmic microwave background); check {name}.")


def below_light_speed(sigma_kms, what: str = "The SIS velocity dispersion", fix: str = "") -> None:
    """Refuse velocities at or above c: no lens of any mass makes them."""
    arr = np.asarray(sigma_kms, dtype=float)
    shown = _first(arr, np.isfinite(arr) & (arr >= SPEED_OF_LIGHT_KMS))
    if shown is not None:
        raise LensInputError(
            f"{what} would be {shown:,.0f} km/s, faster than light: {fix or 'check the Einstein radius and the redshifts'}."
        )


def sky_position(ra_deg, dec_deg, what: str = "The position", fix: str = "give RA and Dec in degrees") -> None:
    """RA within [-360, 360] deg and Dec within [-90, 90] deg, finite."""
    ra = np.asarray(ra_deg, dtype=float)
    dec = np.asarray(dec_deg, dtype=float)
    if not (np.all(np.isfinite(ra)) and np.all(np.isfinite(dec))):
        raise LensInputError(f"{what} has a NaN or infinite coordinate; {fix}.")
    shown = _first(dec, np.abs(dec) > 90)
    if shown is not None:
        raise LensInputError(f"{what} has declination {shown:g} deg, off the sphere (Dec lies within +-90 deg); {fix}.")
    shown = _first(ra, np.abs(ra) > 360)
    if shown is not None:
        raise LensInputError(f"{what} has right ascension {shown:g} deg, outside 0 to 360 deg; {fix}.")


def on_image(x, y, shape: tuple[int, int], what: str = "A point", fix: str = "check the positions") -> None:
    """Pixel positions inside the image (0-based column x, row y; pixel edges at -0.5 and n - 0.5)."""
    x = np.asarray(x, dtype=float).ravel()
    y = np.asarray(y, dtype=float).ravel()
    ny, nx = int(shape[0]), int(shape[1])
    bad = ~(np.isfinite(x) & np.isfinite(y)) | (x < -PIXEL_SLACK) | (x > nx - 1 + PIXEL_SLACK) \
        | (y < -PIXEL_SLACK) | (y > ny - 1 + PIXEL_SLACK)
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        n_bad = int(bad.sum())
        others = f" (and {n_bad - 1} more)" if n_bad > 1 else ""
        raise LensInputError(
            f"{what} at ({x[i]:.6g}, {y[i]:.6g}){others} is outside the {nx} x {ny} image; {fix} "
            "(0-based column,row of the array as stored)."
        )


def unique_names(names: Iterable[str], what: str, canonical=None) -> None:
    """Column names appear once (after ``canonical``, e.g. case folding and aliases)."""
    seen: dict[str, str] = {}
    for raw in names:
        key = canonical(raw) if canonical else raw
        if key in seen:
            twice = f"'{raw}'" if seen[key] == raw else f"'{seen[key]}' and '{raw}'"
            raise LensInputError(f"The {what} names column {twice} twice (both mean '{key}'): keep one column.")
        seen[key] = raw


def has_big_bang(cosmo) -> None:
    """Refuse a cosmology whose expansion rate E(z)^2 turns negative before z = 1100 (a bounce, no big bang).

    E(z)^2 = Om (1+z)^3 + Ok (1+z)^2 + Ode (+ radiation) for Lambda-CDM (Hogg 1999, eq. 14);
    astropy's ``efunc`` evaluates it and returns NaN where it is negative.
    """
    z = np.concatenate([np.linspace(0.0, 20.0, 2001), np.geomspace(20.0, REDSHIFT_MAX, 400)])
    import warnings

    with warnings.catch_warnings(), np.errstate(invalid="ignore"):
        warnings.simplefilter("ignore")
        try:
            e = np.asarray(cosmo.efunc(z), float)
        except (ValueError, TypeError, ArithmeticError):  # astropy refuses some parameter sets outright
            e = np.full(z.shape, np.nan)
    bad = ~(np.isfinite(e) & (e > 0))
    if np.any(bad):
        zb = float(z[np.flatnonzero(bad)[0]])
        raise LensInputError(
            f"This cosmology has no big bang: its expansion rate is imaginary at z = {zb:.3g} (the universe "
            "would have bounced); lower the dark-energy density (`ode0`) or raise the matter density (`om0`)."
        )
