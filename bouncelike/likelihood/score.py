"""Results of scoring spectra against constraint sets: the terms, the score and the verdict rule.

A :class:`Score` is what every likelihood returns from ``score(spectra)``: the chi-square, its
degrees of freedom, the p-value and the verdict, the per-quantity :class:`Term` entries (pull,
contribution, source set), fit-quality records of the pivot summaries, notes, and -- for spectra
whose values are capped (:mod:`bouncelike.likelihood.bounds`) -- the cap, in which case chi2 is
a lower bound and p an upper bound.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import Any

from ..quantities import PIVOT
from ..spectra.summary import PivotSummary

#: (confidence level, p-value threshold), strictest first.
VERDICT_LEVELS = ((0.997, 0.003), (0.95, 0.05))
VERDICT_RULE = (
    "verdict: excluded at 99.7% if p < 0.003, excluded at 95% if p < 0.05, else allowed "
    "(p from the chi-square distribution with dof = number of terms)"
)

@dataclass(frozen=True)
class Term:
    """One term of a score.

    For ``kind == "gaussian"``: ``published`` is the mean and ``error_or_limit`` the 68 % error.
    For ``kind == "upper_limit"``: ``published`` is the published limit and ``error_or_limit`` the
    same limit; ``sigma`` is the half-Gaussian width used. ``pull`` = (predicted - mean) / sigma
    (mean 0 for limits); ``chi2`` is this term's contribution (pull^2 without correlations).
    ``bound`` is "lower" when ``predicted``, the pull and the contribution are lower bounds
    (capped spectra, :mod:`.bounds`).

    Multipoles of the large-scale temperature term (``kind == "inverse_gamma"``, quantity
    ``D_<ell>``, values in micro-K^2): ``published`` is the measured D_ell, ``error_or_limit``
    half the width of its 68% interval, ``interval_68`` the interval, ``nu`` and ``mode`` the
    fitted inverse gamma, ``chi2`` = -2 ln(L/L_max), ``pull`` = sign(D - mode) sqrt(chi2), and
    ``anchoring_error`` the estimated relative error of ``predicted`` from the anchoring.
    """

    quantity: str
    predicted: float
    published: float
    error_or_limit: float
    kind: str
    pull: float
    chi2: float
    source: str
    pivot: float = PIVOT
    sigma: float = math.nan
    confidence: float | None = None
    set_name: str = ""
    ell: int | None = None
    interval_68: tuple[float, float] | None = None
    nu: float | None = None
    mode: float | None = None
    anchoring_error: float | None = None
    bound: str = ""

    def as_dict(self) -> dict[str, Any]:
        d = asdict(self)
        if self.ell is None:
            for key in ("ell", "interval_68", "nu", "mode", "anchoring_error"):
                d.pop(key)
        return d


@dataclass(frozen=True)
class Score:
    """Result of scoring one spectra object against the chosen sets.

    ``cap`` names what caps the spectra (:mod:`.bounds`); then ``bound`` is true, ``chi2`` is a
    lower bound, ``p_value`` an upper bound and an "allowed" verdict becomes "undetermined".

    With the large-scale temperature term (:mod:`.combined`), ``chi2`` is the chi-square of the
    pivot terms plus the low-ell statistic, ``rule`` says how ``p_value`` was computed
    (``p_value_is_bound``: p is an upper bound), and ``low_ell`` holds that term's detail.
    """

    chi2: float
    dof: int
    p_value: float
    verdict: str
    excluded_at: float | None
    log_likelihood: float
    terms: tuple[Term, ...]
    notes: tuple[str, ...] = ()
    fit_quality: tuple[dict[str, Any], ...] = ()
    sets: tuple[str, ...] = ()
    summaries: tuple[PivotSummary, ...] = field(default=(), repr=False)
    rule: str = VERDICT_RULE
    p_value_is_bound: bool = False
    low_ell: Any = None
    cap: str = ""

    @property
    def bound(self) -> bool:
        """True for capped spectra: chi2 is a lower bound and p an upper bound
        (:mod:`.bounds`)."""
        return bool(self.cap)

    @property
    def fit_ok(self) -> bool:
        """True when every pivot summary represents the spectra within its tolerance."""
        return all(f["fit_ok"] for f in self.fit_quality)

    def as_dict(self) -> dict[str, Any]:
        plain = ("chi2", "dof", "p_value", "verdict", "excluded_at", "p_value_is_bound",
                 "bound", "log_likelihood", "fit_ok")
        return {
            **{name: getattr(self, name) for name in plain},
            "verdict_rule": self.rule,
            "cap": self.cap or None,
            "terms": [t.as_dict() for t in self.terms],
            "notes": list(self.notes),
            "fit_quality": [dict(f) for f in self.fit_quality],
            "sets": list(self.sets),
            "summaries": [s.as_dict() for s in self.summaries],
            **({"low_ell": self.low_ell.as_dict()} if self.low_ell is not None else {}),
        }


def verdict_from_p(p_value: float) -> tuple[str, float | None]:
    """Apply the documented verdict rule to a p-value."""
    for level, threshold in VERDICT_LEVELS:
        if p_value < threshold:
            return "excluded", level
    return "allowed", None


