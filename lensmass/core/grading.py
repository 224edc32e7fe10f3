"""Grading lensing answers: the expected numbers and the classic mistakes.

The expected value of every gradable quantity comes from
:func:`lensmass.core.estimate.derive_quantities` (one source for each number).
Each known mistake is a recomputation of the same quantities with one wrong
ingredient; an answer that misses the expected value but matches a mistake's
value within the tolerance is diagnosed with that mistake's name.

References
----------
Narayan & Bartelmann (1996), arXiv:astro-ph/9606001, eqs. (15)-(20) and section 3.3:
Sigma_cr = c^2 D_s / (4 pi G D_l D_ls), M(<theta_E) = pi Sigma_cr (D_l theta_E)^2,
theta_E = 4 pi (sigma_v / c)^2 D_ls / D_s.
Hogg (1999), arXiv:astro-ph/9905116, eqs. (15)-(21): comoving (D_C), transverse comoving,
angular-diameter (D_A = D_M / (1 + z)) and luminosity (D_L = (1 + z) D_M) distances.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from lensmass.core.constants import ARCSEC_RAD, C2_OVER_4PIG_MSUN_PER_MPC, C_KMS
from lensmass.core.cosmology import distance_grid, little_h
from lensmass.core.errors import LensInputError

#: Quantities a submission may carry, with their units (the columns of a submissions table).
GRADABLE = {
    "mass_einstein_msun": "Msun",
    "sis_sigma_v_kms": "km/s",
    "r_e_kpc": "kpc",
    "sigma_cr_msun_per_pc2": "Msun/pc^2",
    "d_l_mpc": "Mpc",
    "d_s_mpc": "Mpc",
    "d_ls_mpc": "Mpc",
}

DEFAULT_TOLERANCE = 0.05


def _quantities(d_l, d_s, d_ls, theta_rad, *, c_factor: float = 1.0, g_factor: float = 1.0) -> dict:
    """The gradable numbers from distances (Mpc) and theta_E in radians.

    ``c_factor`` and ``g_factor`` multiply the speed of light and the gravitational
    constant, for the unit mix-ups (Sigma_cr scales as c^2 / G, sigma_SIS as c).
    """
    sigma_cr_mpc2 = C2_OVER_4PIG_MSUN_PER_MPC * c_factor**2 / g_factor * d_s / (d_l * d_ls)
    r_e_mpc = d_l * theta_rad
    with np.errstate(invalid="ignore"):
        sigma_v = C_KMS * c_factor * np.sqrt(theta_rad * d_s / d_ls / (4 * np.pi))
    return {
        "mass_einstein_msun": np.pi * sigma_cr_mpc2 * r_e_mpc**2,
        "sis_sigma_v_kms": sigma_v,
        "r_e_kpc": r_e_mpc * 1e3,
        "sigma_cr_msun_per_pc2": sigma_cr_mpc2 * 1e-12,
        "d_l_mpc": d_l,
        "d_s_mpc": d_s,
        "d_ls_mpc": d_ls,
    }


def _comoving(z_l, z_s, cosmo):
    grid = distance_grid(cosmo)
    return grid.comoving_mpc(np.asarray(z_l, float)), grid.comoving_mpc(np.asarray(z_s, float))


def _angular(z_l, z_s, cosmo):
    from lensmass.core.cosmology import angular_diameter_distances_mpc

    return angular_diameter_distances_mpc(z_l, z_s, cosmo)


def _theta_rad(theta_e_arcsec):
    return np.asarray(theta_e_arcsec, float) * ARCSEC_RAD


def expected_quantities(theta_e_arcsec, z_l, z_s, cosmo) -> dict[str, np.ndarray]:
    """The correct gradable numbers, from :func:`lensmass.core.estimate.derive_quantities`.

    Examples
    --------
    >>> from astropy.cosmology import FlatLambdaCDM
    >>> q = expected_quantities(1.0, 0.3, 1.0, FlatLambdaCDM(70, 0.3))
    >>> f"{float(q['mass_einstein_msun']):.3g}"
    '1.77e+11'
    """
    from lensmass.core.concentration import concentration_relation
    from lensmass.core.estimate import derive_quantities

    c_of_m, _ = concentration_relation("duffy08", "200c")
    derived = derive_quantities(theta_e_arcsec, z_l, z_s, cosmo, c_of_m, "200c")
    return {key: derived[key] for key in GRADABLE}


# --- the known mistakes: each recomputes the answer with one wrong ingredient ---------------


def mistake_ds_for_dls(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """D_s used where D_ls belongs (so Sigma_cr = c^2 / (4 pi G D_l))."""
    d_l, d_s, _ = _angular(z_l, z_s, cosmo)
    return _quantities(d_l, d_s, d_s, _theta_rad(theta_e_arcsec))


def mistake_dls_as_difference(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """D_ls taken as D_s - D_l (angular-diameter distances do not subtract; Hogg 1999, eq. 19)."""
    d_l, d_s, _ = _angular(z_l, z_s, cosmo)
    return _quantities(d_l, d_s, d_s - d_l, _theta_rad(theta_e_arcsec))


def mistake_comoving_distance(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """Line-of-sight comoving distances D_C (and D_C(z_s) - D_C(z_l)) in place of D_A."""
    dc_l, dc_s = _comoving(z_l, z_s, cosmo)
    return _quantities(dc_l, dc_s, dc_s - dc_l, _theta_rad(theta_e_arcsec))


def mistake_luminosity_distance(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """Luminosity distances D_L (and D_L(z_s) - D_L(z_l)) in place of D_A."""
    from lensmass.core.cosmology import luminosity_distance_mpc

    dl_l = luminosity_distance_mpc(z_l, cosmo)
    dl_s = luminosity_distance_mpc(z_s, cosmo)
    return _quantities(dl_l, dl_s, dl_s - dl_l, _theta_rad(theta_e_arcsec))


def mistake_diameter_for_radius(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """The ring's diameter used as the Einstein radius (theta_E doubled)."""
    d_l, d_s, d_ls = _angular(z_l, z_s, cosmo)
    return _quantities(d_l, d_s, d_ls, 2 * _theta_rad(theta_e_arcsec))


def mistake_arcsec_without_pi_over_180(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """Arcsec to radians by dividing by 3600 only (the degree-to-radian pi/180 missing)."""
    d_l, d_s, d_ls = _angular(z_l, z_s, cosmo)
    return _quantities(d_l, d_s, d_ls, np.asarray(theta_e_arcsec, float) / 3600.0)


def mistake_arcsec_as_degrees(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """Arcsec treated as degrees (multiplied by pi/180 only, the 1/3600 missing)."""
    d_l, d_s, d_ls = _angular(z_l, z_s, cosmo)
    return _quantities(d_l, d_s, d_ls, np.deg2rad(np.asarray(theta_e_arcsec, float)))


def mistake_arcsec_as_radians(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """The angle in arcsec used as if it were already in radians."""
    d_l, d_s, d_ls = _angular(z_l, z_s, cosmo)
    return _quantities(d_l, d_s, d_ls, np.asarray(theta_e_arcsec, float))


def mistake_h_dropped(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
    """Distances computed in h^-1 Mpc and reported as Mpc.

    Lengths and masses come out a factor h too small (h^-1 Mpc, h^-1 kpc, h^-1 Msun),
    a surface density a factor h too large (h Msun / pc^2); sigma_SIS is unchanged.
    """
    h = little_h(cosmo)
    d_l, d_s, d_ls = _angular(z_l, z_s, cosmo)
    return _quantities(d_l * h, d_s * h, d_ls * h, _theta_rad(theta_e_arcsec))


def _unit_mixup(c_factor: float, g_factor: float, doc: str) -> Callable[..., dict]:
    """A mistake that scales c and G by the given factors (right distances and angle)."""

    def compute(theta_e_arcsec, z_l, z_s, cosmo) -> dict:
        d_l, d_s, d_ls = _angular(z_l, z_s, cosmo)
        return _quantities(d_l, d_s, d_ls, _theta_rad(theta_e_arcsec), c_factor=c_factor, g_factor=g_factor)

    compute.__doc__ = doc
    return compute


#: G = 6.674e-8 (cgs) used in an SI computation: G a factor 1000 too large.
mistake_g_cgs_in_si = _unit_mixup(1.0, 1e3, "G in cgs units (6.674e-8) used in an SI computation.")
#: G = 6.674e-11 (SI) used in a cgs computation: G a factor 1000 too small.
mistake_g_si_in_cgs = _unit_mixup(1.0, 1e-3, "G in SI units (6.674e-11) used in a cgs computation.")
#: c = 3e8 (m/s) used where km/s belong: c a factor 1000 too large.
mistake_c_in_m_per_s = _unit_mixup(1e3, 1.0, "c in m/s (3e8) used where km/s belong.")
#: c = 3e5 (km/s) used in an SI computation: c a factor 1000 too small.
mistake_c_in_km_per_s = _unit_mixup(1e-3, 1.0, "c in km/s (3e5) used in an SI computation.")


@dataclass(frozen=True)
class Mistake:
    """A named mistake: its short key, a sentence for the report, and its recomputation."""

    key: str
    description: str
    compute: Callable[..., dict]


MISTAKES: tuple[Mistake, ...] = (
    Mistake("ds_for_dls", "used D_s where D_ls belongs", mistake_ds_for_dls),
    Mistake("dls_as_difference", "took D_ls as D_s - D_l (angular-diameter distances do not subtract)",
            mistake_dls_as_difference),
    Mistake("comoving_distance", "used comoving distances instead of angular-diameter distances",
            mistake_comoving_distance),
    Mistake("luminosity_distance", "used luminosity distances instead of angular-diameter distances",
            mistake_luminosity_distance),
    Mistake("diameter_for_radius", "used the ring's diameter as the Einstein radius", mistake_diameter_for_radius),
    Mistake("arcsec_without_pi_over_180", "converted arcsec to radians by /3600 only (pi/180 missing)",
            mistake_arcsec_without_pi_over_180),
    Mistake("arcsec_as_degrees", "converted arcsec as if they were degrees (the /3600 missing)",
            mistake_arcsec_as_degrees),
    Mistake("arcsec_as_radians", "used the angle in arcsec as if it were in radians", mistake_arcsec_as_radians),
    Mistake("h_dropped", "dropped the h^-1 of distances in h^-1 Mpc (answer off by a factor h)", mistake_h_dropped),
    Mistake("g_cgs_in_si", "used G in cgs units (6.674e-8) in an SI computation", mistake_g_cgs_in_si),
    Mistake("g_si_in_cgs", "used G in SI units (6.674e-11) in a cgs computation", mistake_g_si_in_cgs),
    Mistake("c_in_m_per_s", "used c in m/s where km/s belong", mistake_c_in_m_per_s),
    Mistake("c_in_km_per_s", "used c in km/s in an SI computation", mistake_c_in_km_per_s),
)


def relative_error(submitted, expected) -> np.ndarray:
    """(submitted - expected) / |expected|."""
    s, e = np.asarray(submitted, float), np.asarray(expected, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (s - e) / np.abs(e)


def _check_inputs(theta_e_arcsec, z_l, z_s, tolerance) -> None:
    for name, value in (("theta_e_arcsec", theta_e_arcsec), ("z_l", z_l), ("z_s", z_s)):
        if not (np.isfinite(value) and value > 0):
            raise LensInputError(f"The {name} given is {value}: it must be a positive number.")
    if z_s <= z_l:
        raise LensInputError(f"The source must lie behind the lens, but z_s = {z_s:g} <= z_l = {z_l:g}: "
                             "check that the two redshifts are not swapped.")
    if not (np.isfinite(tolerance) and 0 < tolerance < 1):
        raise LensInputError(f"The tolerance must be a fraction between 0 and 1 (for example 0.05), got {tolerance}.")


def _grade_one(quantity: str, submitted: float, expected: float, wrong: dict[str, dict], tolerance: float) -> dict:
    rel = float(relative_error(submitted, expected))
    verdict = "pass" if np.isfinite(rel) and abs(rel) <= tolerance else "fail"
    mistakes = []
    if verdict == "fail" and np.isfinite(submitted):
        for mistake in MISTAKES:
            value = float(wrong[mistake.key][quantity])
            # a mistake that leaves this quantity unchanged (e.g. a dropped h for sigma_SIS) is never named
            if not np.isfinite(value) or abs(relative_error(value, expected)) <= tolerance:
                continue
            if abs(relative_error(submitted, value)) <= tolerance:
                mistakes.append(mistake)
    if verdict == "pass":
        diagnosis = ""
    elif not np.isfinite(submitted):
        diagnosis = "no number was submitted"
    elif mistakes:
        diagnosis = "matches the answer of someone who " + "; or who ".join(m.description for m in mistakes)
    else:
        diagnosis = f"off by a factor {submitted / expected:.3g}; no known mistake matches"
    return {"quantity": quantity, "submitted": float(submitted), "expected": expected, "relative_error": rel,
            "verdict": verdict, "diagnosis": diagnosis, "mistakes": [m.key for m in mistakes]}


def grade_answers(answers: dict[str, float], theta_e_arcsec: float, z_l: float, z_s: float, cosmo,
                  tolerance: float = DEFAULT_TOLERANCE) -> list[dict]:
    """Grade one student's answers ({quantity: value}) for the given lens; one dict per answer.

    Each dict has ``quantity``, ``submitted``, ``expected``, ``relative_error``,
    ``verdict`` (``"pass"`` when |relative error| <= tolerance, else ``"fail"``),
    ``diagnosis`` (a sentence, empty on a pass) and ``mistakes`` (keys of
    :data:`MISTAKES` whose value matches the submission within the tolerance).

    Examples
    --------
    A mass computed with D_s where D_ls belongs is failed and the mistake named:

    >>> from astropy.cosmology import Planck18
    >>> wrong = mistake_ds_for_dls(1.2, 0.3, 1.0, Planck18)["mass_einstein_msun"]
    >>> row = grade_answers({"mass_einstein_msun": float(wrong)}, 1.2, 0.3, 1.0, Planck18)[0]
    >>> row["verdict"], row["mistakes"]
    ('fail', ['ds_for_dls'])
    """
    unknown = [q for q in answers if q not in GRADABLE]
    if unknown:
        raise LensInputError(f"Cannot grade '{unknown[0]}': gradable quantities are {', '.join(GRADABLE)}.")
    theta, zl, zs = float(theta_e_arcsec), float(z_l), float(z_s)
    _check_inputs(theta, zl, zs, tolerance)
    expected = {k: float(v) for k, v in expected_quantities(theta, zl, zs, cosmo).items()}
    wrong = {m.key: m.compute(theta, zl, zs, cosmo) for m in MISTAKES}
    return [_grade_one(q, float(v), expected[q], wrong, tolerance) for q, v in answers.items()]


def grade_answer(quantity: str, submitted: float, theta_e_arcsec: float, z_l: float, z_s: float, cosmo,
                 tolerance: float = DEFAULT_TOLERANCE) -> dict:
    """Grade one submitted number (see :func:`grade_answers` for the keys).

    Examples
    --------
    >>> from astropy.cosmology import FlatLambdaCDM
    >>> cosmo = FlatLambdaCDM(70, 0.3)
    >>> good = float(expected_quantities(1.0, 0.3, 1.0, cosmo)["r_e_kpc"])
    >>> grade_answer("r_e_kpc", 2 * good, 1.0, 0.3, 1.0, cosmo)["mistakes"]
    ['diameter_for_radius']
    """
    return grade_answers({quantity: submitted}, theta_e_arcsec, z_l, z_s, cosmo, tolerance)[0]


# --- summaries: per student, and the class's mistakes counted by students ---------------------


def plural(n: int, word: str, many: str | None = None) -> str:
    """'1 student', '2 students' (``many`` for irregular plurals).

    Examples
    --------
    >>> plural(1, "student"), plural(3, "answer"), plural(0, "mistake")
    ('1 student', '3 answers', '0 mistakes')
    """
    return f"{n} {word if n == 1 else (many or word + 's')}"


@dataclass(frozen=True)
class StudentSummary:
    """One student's verdicts and the mistake that best explains the failed answers.

    ``explanation`` holds the keys of :data:`MISTAKES` that explain the most failed
    answers (several when the answers cannot tell them apart, empty when none
    matches); ``explained`` counts the failed answers they explain.
    """

    student: str
    passed: tuple[str, ...]
    failed: tuple[str, ...]
    missing: tuple[str, ...]
    not_graded: tuple[str, ...]
    explanation: tuple[str, ...]
    explained: int

    @property
    def sentence(self) -> str:
        """The summary as a sentence a teaching assistant reads."""
        answered = len(self.passed) + len(self.failed)
        parts = [f"{len(self.passed)} of {plural(answered, 'answer')} pass"]
        if self.explanation:
            desc = {m.key: m.description for m in MISTAKES}
            who = " or ".join(desc[k] for k in self.explanation)
            fails = len(self.failed) - len(self.not_graded)
            parts.append(f"{self.explained} of {fails} failed explained: {who}"
                         + (" (these answers cannot tell them apart)" if len(self.explanation) > 1 else ""))
        elif len(self.failed) > len(self.not_graded):
            parts.append("no known mistake explains the failed answers")
        if self.not_graded:
            parts.append(f"not graded: {', '.join(self.not_graded)}")
        if self.missing:
            parts.append(f"missing: {', '.join(self.missing)}")
        return "; ".join(parts)


def summarise_student(student: str, rows: list[dict], expected_quantities: list[str]) -> StudentSummary:
    """Summarise one student's graded rows (dicts with ``quantity``, ``verdict``, ``mistakes``).

    A failed answer may match several mistakes; the student's explanation is the mistake
    (or the set of mistakes that match exactly the same answers) matching the most of
    them, so one slip is never counted as two.
    """
    answered = [r for r in rows if r.get("verdict") in ("pass", "fail") and r.get("quantity")]
    passed = tuple(r["quantity"] for r in answered if r["verdict"] == "pass")
    failed = tuple(r["quantity"] for r in answered if r["verdict"] == "fail")
    not_graded = tuple(r["quantity"] for r in answered if r["verdict"] == "fail"
                       and str(r.get("diagnosis", "")).startswith("not graded"))
    given = {r["quantity"] for r in rows if r.get("quantity")}
    missing = tuple(q for q in expected_quantities if q not in given or
                    any(r["quantity"] == q and r.get("verdict") == "missing" for r in rows))
    matched: dict[str, frozenset] = {}
    for r in answered:
        for key in r.get("mistakes", []) or []:
            matched[key] = matched.get(key, frozenset()) | {r["quantity"]}
    if not matched:
        return StudentSummary(student, passed, failed, missing, not_graded, (), 0)
    best = max(len(v) for v in matched.values())
    order = [m.key for m in MISTAKES]
    top = sorted((k for k, v in matched.items() if len(v) == best), key=order.index)
    return StudentSummary(student, passed, failed, missing, not_graded, tuple(top), best)


def class_mistakes(summaries: list[StudentSummary]) -> list[tuple[tuple[str, ...], int]]:
    """Each explanation with the number of students it explains, most common first.

    A student counts once, under the one explanation of their answers (a set of
    mistakes when the answers cannot tell them apart).
    """
    counts: dict[tuple[str, ...], int] = {}
    for s in summaries:
        if s.explanation:
            counts[s.explanation] = counts.get(s.explanation, 0) + 1
    order = [m.key for m in MISTAKES]
    return sorted(counts.items(), key=lambda kv: (-kv[1], order.index(kv[0][0])))


def describe_explanation(keys: tuple[str, ...]) -> str:
    """The mistakes of an explanation in words ('A' or 'A or B')."""
    desc = {m.key: m.description for m in MISTAKES}
    return " or ".join(desc[k] for k in keys)
