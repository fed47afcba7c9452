"""Fractions of parameter points (prior draws, posterior samples) and their binomial errors.

A fraction is k points of n Monte Carlo draws. It is reported with the count and the exact
(Clopper-Pearson) 95% interval of a binomial proportion (Clopper & Pearson, Biometrika 26
(1934) 404): [B(0.025; k, n-k+1), B(0.975; k+1, n-k)] with B the beta quantile. At k = 0 the
two-sided interval is replaced by the one-sided 95% upper limit 1 - 0.05^(1/n) (and at k = n by
the lower limit 0.05^(1/n)), so that "0 of 400" reads "below 0.0075 (95%)".

:func:`classify_points` scores each point against the run's constraint sets and says what it
is: ``allowed`` (not excluded at 95%), ``excluded``, ``not_evaluable`` (the model has no
prediction the likelihood can score there: a point outside its domain, or featured spectra the
pivot summary does not represent), ``numerical_failure`` (the computation failed),
``model_error`` (an error from inside the model code) -- the kinds of the run folders'
``failures.csv`` (:mod:`bouncelike.sampling.failures`) -- or ``undetermined`` (capped spectra
whose lower-bound chi-square does not exclude). Points that are not evaluable are never counted
as excluded.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

from ..errors import InputError, NumericalFailure

CONFIDENCE = 0.95
OUTCOMES = ("allowed", "excluded", "undetermined", "not_evaluable", "numerical_failure",
            "model_error")
FRACTION_RULE = ("fractions of Monte Carlo draws with the exact (Clopper-Pearson) 95% binomial "
                 "interval; a one-sided 95% limit when none or all of the draws qualify")


def binomial_fraction(k: int, n: int, confidence: float = CONFIDENCE) -> dict[str, Any]:
    """Fraction k/n with its Clopper-Pearson interval (one-sided limit at k = 0 or k = n)."""
    from scipy.stats import beta

    k, n = int(k), int(n)
    if n <= 0:
        return {"count": k, "points": n, "fraction": math.nan, "lower": math.nan,
                "upper": math.nan, "kind": "undefined", "confidence": confidence}
    alpha = 1.0 - confidence
    f = k / n
    if k == 0:
        return {"count": 0, "points": n, "fraction": 0.0, "lower": 0.0,
                "upper": float(beta.ppf(confidence, 1, n)), "kind": "upper_limit",
                "confidence": confidence}
    if k == n:
        return {"count": n, "points": n, "fraction": 1.0, "lower": float(beta.ppf(alpha, n, 1)),
                "upper": 1.0, "kind": "lower_limit", "confidence": confidence}
    return {"count": k, "points": n, "fraction": f,
            "lower": float(beta.ppf(alpha / 2, k, n - k + 1)),
            "upper": float(beta.ppf(1 - alpha / 2, k + 1, n - k)), "kind": "interval",
            "confidence": confidence}


def fraction_text(b: dict[str, Any], what: str = "draws") -> str:
    """'0.0675 (27 of 400 draws; 95% interval 0.045-0.097)' or 'below 0.0075 (0 of 400 ...)'."""
    count = f"{b['count']} of {b['points']} {what}"
    if b["kind"] == "undefined":
        return f"undefined (no {what})"
    if b["kind"] == "upper_limit":
        return f"below {b['upper']:.2g} ({count}; one-sided 95% upper limit)"
    if b["kind"] == "lower_limit":
        return f"above {b['lower']:.3g} ({count}; one-sided 95% lower limit)"
    return (f"{b['fraction']:.3g} ({count}; 95% interval {b['lower']:.2g}-{b['upper']:.2g})")


def classify_points(spectra_of: Callable[[dict], Any], likelihood: Any,
                    points: Sequence[dict[str, float]]) -> list[str]:
    """The outcome (:data:`OUTCOMES`) of each parameter point against ``likelihood``."""
    return [outcome_of(spectra_of, likelihood, p) for p in points]


def outcome_of(spectra_of: Callable[[dict], Any], likelihood: Any, point: dict[str, float]
               ) -> str:
    """What one parameter point is for the likelihood (see the module docstring)."""
    return evaluate_point(spectra_of, likelihood, point)[0]


def evaluate_point(spectra_of: Callable[[dict], Any], likelihood: Any,
                   point: dict[str, float]) -> tuple[str, Any, Any]:
    """(outcome, spectra, score) of one point; spectra and score are None when the point
    could not be scored."""
    spectra, failed = spectra_or_failure(spectra_of, point)
    if spectra is None:
        return failed, None, None
    outcome, score = score_outcome(likelihood, spectra)
    return outcome, spectra, score


def spectra_or_failure(spectra_of: Callable[[dict], Any], point: dict[str, float]
                       ) -> tuple[Any, str]:
    """(spectra, "") or (None, "not_evaluable" | "numerical_failure")."""
    try:
        return spectra_of(point), ""
    except Exception as exc:  # noqa: BLE001 - every failure is classified and counted
        return None, _failure_kind(exc)


def score_outcome(likelihood: Any, spectra: Any) -> tuple[str, Any]:
    """(outcome, score) of spectra against ``likelihood``; score None when not scorable."""
    try:
        score = likelihood.score(spectra)
    except Exception as exc:  # noqa: BLE001 - every failure is classified and counted
        return _failure_kind(exc), None
    if not getattr(score, "fit_ok", True):
        return "not_evaluable", score  # the pivot summary does not represent the spectra
    if getattr(score, "bound", False) and score.verdict != "excluded":
        return "undetermined", score
    return ("allowed" if score.verdict == "allowed" else "excluded"), score


def _failure_kind(exc: BaseException) -> str:
    """The kind of a failed evaluation, as the run folders record it
    (:func:`bouncelike.sampling.failures.failure_of`): not evaluable, numerical failure, or a
    model error (an arithmetic or value error from inside the model). Other errors propagate."""
    from ..sampling.failures import MODEL_ERROR, MODEL_ERRORS, failure_of

    if isinstance(exc, (InputError, NumericalFailure)):
        return failure_of(exc).kind
    if isinstance(exc, MODEL_ERRORS):
        return MODEL_ERROR
    raise exc


def outcome_fractions(outcomes: Sequence[str]) -> dict[str, Any]:
    """Counts and binomial fractions of each outcome among all points."""
    n = len(outcomes)
    out: dict[str, Any] = {"points": n, "counts": {o: 0 for o in OUTCOMES}}
    for o in outcomes:
        out["counts"][o] += 1
    out["fractions"] = {o: binomial_fraction(c, n) for o, c in out["counts"].items()}
    out["fraction_allowed"] = out["counts"]["allowed"] / n if n else math.nan
    return out
