"""Priors of the stacked NFW fit: the central point mass (the lenses' stars) and a free concentration.

Concentration scatter at fixed mass: about 0.15 dex in log10 c200 (from memory: Duffy et al. 2008,
MNRAS 390, L64, full sample; checked a second way against Bhattacharya et al. 2013, ApJ 766, 32,
who find sigma_c / c ~ 1/3 at fixed mass, i.e. 0.33 / ln 10 = 0.14 dex).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lensmass.core.errors import LensInputError

#: Upper end of the flat prior of a fitted central point mass (Msun): above the stars of any galaxy.
POINT_MASS_MAX_MSUN = 1e13
#: Default log-normal scatter of c200 about its c(M) relation (dex; see the module notes).
CONCENTRATION_SCATTER_DEX = 0.15
#: Widths of a log-normal prior searched on each side of its median.
_PRIOR_SPAN_SIGMA = 5.0


def point_mass_log_prior(point_mass_msun, prior: tuple[float, float] | None) -> np.ndarray:
    """Log prior density of a central point mass M_* (per Msun, up to a constant).

    ``prior`` None: flat on [0, :data:`POINT_MASS_MAX_MSUN`]; ``(median_msun, sigma_dex)``: log-normal,
    a Gaussian in log10 M_* (e.g. from the lenses' photometry; common practice).

    Examples
    --------
    >>> float(point_mass_log_prior(1e11, None)), float(point_mass_log_prior(2e13, None))
    (0.0, -inf)
    """
    m = np.asarray(point_mass_msun, float)
    if prior is None:
        return np.where((m >= 0) & (m <= POINT_MASS_MAX_MSUN), 0.0, -np.inf)
    median, dex = prior
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(m > 0, -0.5 * ((np.log10(m) - np.log10(median)) / dex) ** 2 - np.log(m), -np.inf)


def check_point_mass_prior(prior) -> tuple[float, float] | None:
    """The prior as (median, dex) after checks (one sentence for a bad one), or None."""
    if prior is None:
        return None
    try:
        median, dex = (float(v) for v in prior)
    except (TypeError, ValueError):
        raise LensInputError("The stellar-mass prior (`point_mass_prior`) is a median in Msun and a width in dex, "
                             "e.g. (3e11, 0.2).") from None
    if not (np.isfinite(median) and median > 0 and np.isfinite(dex) and 0 < dex <= 3):
        raise LensInputError(f"The stellar-mass prior (`point_mass_prior`) needs a median > 0 Msun and a width of "
                             f"0-3 dex, got {median:g} Msun and {dex:g} dex.")
    return median, dex


@dataclass(frozen=True)
class ConcentrationPrior:
    """Prior of a free c200: log-normal about the c(M) relation (``scatter_dex``), or flat in c on
    ``c_range``. The relation is evaluated at the fitted M200 and the pairs' mean lens redshift."""

    scatter_dex: float | None = None
    c_range: tuple[float, float] | None = None

    def log_density(self, log10_c, log10_c_relation) -> np.ndarray:
        """Log prior density per unit log10 c (up to a constant) at ``log10_c``, given the relation's value."""
        y = np.asarray(log10_c, float)
        if self.c_range is not None:
            lo, hi = np.log10(self.c_range)
            # flat in c: density in log10 c goes as c
            return np.where((y >= lo) & (y <= hi), y * np.log(10.0), -np.inf)
        assert self.scatter_dex is not None
        return -0.5 * ((y - np.asarray(log10_c_relation, float)) / self.scatter_dex) ** 2

    def log10_range(self, relation_lo: float, relation_hi: float) -> tuple[float, float]:
        """The log10 c range to search, given the relation's extreme values over the searched masses."""
        from lensmass.core.limits import CONCENTRATION_RANGE

        if self.c_range is not None:
            return float(np.log10(self.c_range[0])), float(np.log10(self.c_range[1]))
        assert self.scatter_dex is not None
        span = _PRIOR_SPAN_SIGMA * self.scatter_dex
        lo, hi = np.log10(CONCENTRATION_RANGE)
        return max(float(lo), relation_lo - span), min(float(hi), relation_hi + span)

    def describe(self, relation_label: str) -> str:
        if self.c_range is not None:
            return f"flat prior in c200 on [{self.c_range[0]:g}, {self.c_range[1]:g}]"
        return f"log-normal prior about {relation_label}, {self.scatter_dex:g} dex scatter"


def check_concentration_prior(prior) -> ConcentrationPrior:
    """A free concentration's prior from a scatter in dex (log-normal about the c(M) relation), a
    (c_min, c_max) pair (flat in c), or None (log-normal, :data:`CONCENTRATION_SCATTER_DEX`).

    Examples
    --------
    >>> check_concentration_prior((2, 12)).describe("a relation")
    'flat prior in c200 on [2, 12]'
    >>> check_concentration_prior(None).scatter_dex
    0.15
    """
    from lensmass.core.limits import CONCENTRATION_RANGE

    if prior is None:
        return ConcentrationPrior(scatter_dex=CONCENTRATION_SCATTER_DEX)
    if np.ndim(prior) == 0:
        try:
            dex = float(prior)
        except (TypeError, ValueError):
            dex = float("nan")
        if not (np.isfinite(dex) and 0 < dex <= 1):
            raise LensInputError(f"The concentration prior (`concentration_prior`) as a scatter needs 0-1 dex, got "
                                 f"{prior}; or give a range of c200 such as (2, 12).")
        return ConcentrationPrior(scatter_dex=dex)
    try:
        lo, hi = (float(v) for v in prior)
    except (TypeError, ValueError):
        raise LensInputError("The concentration prior (`concentration_prior`) is a scatter in dex (e.g. 0.15) or a "
                             "range of c200 (e.g. (2, 12)).") from None
    c_lo, c_hi = CONCENTRATION_RANGE
    if not (np.isfinite(lo) and np.isfinite(hi) and c_lo <= lo < hi <= c_hi):
        raise LensInputError(f"The concentration range (`concentration_prior`) needs {c_lo:g} <= c_min < c_max <= "
                             f"{c_hi:g}, got {lo:g} to {hi:g}.")
    return ConcentrationPrior(c_range=(lo, hi))
