"""Goodness of fit of a posterior run: the p-value rules, and the best fit against each set.

Two rules, stated in every report (:data:`P_VALUE_RULES`):

* **one configuration** (a point given in advance: ``bouncelike score``, a prior draw, a grid
  point of the exclusion map, the run's best fit rescored against a set it was not fitted
  to): p = P(chi2_dof > chi2) with dof = number of terms;
* **a best fit** (the highest-likelihood posterior sample of the run, fitted to the run's
  sets): dof = number of terms minus the number of fitted parameters k, the smaller of
  - the Bayesian model dimensionality d = 2 var_posterior(ln L) (Handley & Lemos, Phys. Rev. D
    100 (2019) 023512; the variance form of p_D in Gelman et al., Bayesian Data Analysis, 3rd
    ed., Sect. 7.2; both from memory), rounded: for a likelihood Gaussian in k parameters the
    data constrain, chi2 - chi2_min over the posterior is chi-square with k degrees of freedom,
    whose variance is 2k, so d = k; and
  - the number of sampled parameters the data constrain: those whose posterior standard
    deviation is below :data:`CONSTRAINED_RATIO` of their prior's (ours, common practice: the
    posterior of a parameter the data say nothing about is its prior, ratio 1). This guards
    against d growing beyond the constrained parameters when the model fits badly and
    chi2 is far from quadratic over the posterior.
  With no degree of freedom left the goodness of fit of the best fit is undefined and only
  the one-configuration p-value is given (the larger of the two: a conservative statement).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
from scipy.stats import chi2 as chi2_dist

CONSTRAINED_RATIO = 0.8
P_VALUE_RULES = {
    "one_configuration": "p from the chi-square distribution with dof = number of terms (a "
                         "configuration given in advance, nothing fitted)",
    "best_fit": "p from the chi-square distribution with dof = number of terms minus the "
                "fitted parameters, counted as the smaller of the Bayesian model "
                "dimensionality d = 2 var(ln L) over the posterior (Handley & Lemos 2019), "
                "rounded, and the number of sampled parameters the data constrain (posterior "
                f"standard deviation below {CONSTRAINED_RATIO:g} of the prior's)",
}


def model_dimensionality(log_likelihood: np.ndarray) -> float:
    """d = 2 var(ln L) over equally weighted posterior samples (see module docstring)."""
    x = np.asarray(log_likelihood, dtype=float)
    x = x[np.isfinite(x)]
    return float(2.0 * np.var(x, ddof=1)) if x.size > 1 else math.nan


def constrained_parameters(posterior: np.ndarray, prior_draws: np.ndarray,
                           names: Sequence[str]) -> list[str]:
    """Sampled parameters whose posterior standard deviation is below CONSTRAINED_RATIO of
    their prior's (columns of ``posterior`` and ``prior_draws`` in the order of ``names``)."""
    post = np.std(np.asarray(posterior, dtype=float), axis=0, ddof=1)
    prior = np.std(np.asarray(prior_draws, dtype=float), axis=0, ddof=1)
    return [n for n, a, b in zip(names, post, prior, strict=True)
            if b > 0 and a < CONSTRAINED_RATIO * b]


def best_fit_goodness(chi2: float, n_terms: int, dimensionality: float,
                      sampled: Sequence[str], constrained: Sequence[str],
                      bound: bool = False) -> dict[str, Any]:
    """p-value of a best fit with dof = terms - fitted parameters (module docstring); with
    ``bound`` (capped spectra) chi2 is a lower bound, so "allowed" becomes "undetermined"."""
    from ..likelihood.score import verdict_from_p

    fitted = len(constrained)
    if math.isfinite(dimensionality):
        fitted = min(fitted, max(0, int(round(dimensionality))))
    dof = n_terms - fitted
    p_one = float(chi2_dist.sf(chi2, n_terms)) if n_terms > 0 else math.nan
    if dof > 0:
        p = float(chi2_dist.sf(chi2, dof))
        rule = "best_fit"
    else:
        p = p_one
        rule = "one_configuration"
    verdict, level = verdict_from_p(p) if math.isfinite(p) else ("undetermined", None)
    if bound and verdict == "allowed":
        verdict = "undetermined"
    return {"chi2": chi2, "bound": bool(bound), "n_terms": n_terms,
            "sampled_parameters": list(sampled),
            "constrained_parameters": list(constrained),
            "model_dimensionality": dimensionality, "fitted_parameters": fitted,
            "dof": dof if dof > 0 else None, "p_value": p, "p_value_rule": rule,
            "p_value_one_configuration": p_one, "verdict": verdict, "excluded_at": level}


def goodness_text(g: dict[str, Any]) -> str:
    """'chi2 = 0.041 for 3 terms, 1 fitted parameter (...): dof = 2, p = 0.98 (...)'."""
    k = g["fitted_parameters"]
    con = g.get("constrained_parameters", g["sampled_parameters"])
    rel, prel = (">", "<") if g.get("bound") else ("=", "=")  # capped spectra: bounds
    head = (f"chi2 {rel} {g['chi2']:.4g} for {g['n_terms']} terms, {k} fitted "
            f"parameter{'s' if k != 1 else ''} (the smaller of the model dimensionality "
            f"d = {g['model_dimensionality']:.2f} and the {len(con)} of "
            f"{len(g['sampled_parameters'])} sampled parameters the data constrain"
            + (f": {', '.join(con)}" if con else "") + ")")
    if g["p_value_rule"] == "best_fit":
        return (f"{head}: dof = {g['dof']}, p {prel} {g['p_value']:.3g} (as one "
                f"configuration, dof = {g['n_terms']}: p {prel} "
                f"{g['p_value_one_configuration']:.3g})")
    return (f"{head}: no degree of freedom left, the goodness of fit of the best fit is "
            f"undefined; as one configuration (dof = {g['n_terms']}): p {prel} "
            f"{g['p_value']:.3g}")


def rescore_by_set(spectra_of: Callable[[dict], Any], best: dict[str, float],
                   subset: Sequence[dict[str, float]], sets: Sequence[Any]
                   ) -> list[dict[str, Any]]:
    """Score the best fit (as one configuration) and a posterior subset against each set
    alone; the fraction of the subset each set excludes at 95% counts scorable points only,
    and the points that could not be scored are counted apart."""
    from ..likelihood.gaussian import GaussianLikelihood
    from .proportions import binomial_fraction, score_outcome, spectra_or_failure

    spectra_best = spectra_of(best)
    evaluated = [spectra_or_failure(spectra_of, p)[0] for p in subset]
    rows = []
    for cset in sets:
        lk = GaussianLikelihood([cset])
        sc = lk.score(spectra_best)
        outcomes = [score_outcome(lk, s)[0] if s is not None else "not_evaluable"
                    for s in evaluated]
        scored = sum(o in ("allowed", "excluded") for o in outcomes)
        excluded = outcomes.count("excluded")
        rows.append({
            "set": cset.name, "title": cset.title, "label": _label(cset),
            "citation": cset.citation, "arxiv": cset.arxiv, "forecast": cset.is_forecast,
            "best_fit_chi2": sc.chi2, "best_fit_dof": sc.dof, "best_fit_p_value": sc.p_value,
            "best_fit_verdict": sc.verdict, "best_fit_excluded_at": sc.excluded_at,
            "best_fit_bound": bool(getattr(sc, "bound", False)),
            "posterior_fraction_excluded_95": excluded / scored if scored else math.nan,
            "posterior_excluded": binomial_fraction(excluded, scored),
            "samples_scored": scored, "samples_not_scored": len(outcomes) - scored,
        })
    return rows


def _label(cset: Any) -> str:
    return getattr(cset, "short_title", "") or cset.title
