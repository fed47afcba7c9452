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
#: the rules with the large-scale temperature term (stated in the reports of such runs)
COMBINED_P_VALUE_RULES = {
    "one_configuration_combined": "with the large-scale temperature term: p = P(X >= "
        "chi2_pivot + T), X = chi2_m + sum_ell nu_ell [u - ln u - 1] with u ~ chi2_nu/nu (the "
        "calibrated law of the statistic when the model is true; m = the pivot terms)",
    "best_fit_combined": "with the large-scale temperature term, for a best fit: the same "
        "calibrated law with the fitted parameters (counted as for 'best fit') taken off the "
        "m pivot terms, X = chi2_max(m - k, 0) + T (conservative when k > m: the low-ell part "
        "keeps all its multipoles)",
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
                      bound: bool = False, low_ell_terms: int = 0,
                      p_of: Callable[[float, int], tuple[float, bool]] | None = None
                      ) -> dict[str, Any]:
    """p-value of a best fit with dof = terms - fitted parameters (module docstring); with
    ``bound`` (capped spectra) chi2 is a lower bound, so "allowed" becomes "undetermined".

    With the large-scale temperature term (``low_ell_terms`` multipoles among the
    ``n_terms``), ``p_of(statistic, gaussian_terms)`` is its calibrated p-value
    (:meth:`~bouncelike.likelihood.lowell.LowEllTemperature.p_value`) and the rule is
    :data:`COMBINED_P_VALUE_RULES` ``best_fit_combined``."""
    from ..likelihood.score import verdict_from_p

    fitted = len(constrained)
    if math.isfinite(dimensionality):
        fitted = min(fitted, max(0, int(round(dimensionality))))
    out: dict[str, Any] = {
        "chi2": chi2, "bound": bool(bound), "n_terms": n_terms,
        "sampled_parameters": list(sampled), "constrained_parameters": list(constrained),
        "model_dimensionality": dimensionality, "fitted_parameters": fitted}
    if low_ell_terms and p_of is not None:
        m = n_terms - low_ell_terms
        g = max(m - fitted, 0)
        p, p_bound = p_of(chi2, g)
        p_one, _ = p_of(chi2, m)
        out.update({"dof": None, "low_ell_terms": int(low_ell_terms), "gaussian_terms_left": g,
                    "p_value": p, "p_value_is_bound": bool(p_bound),
                    "p_value_rule": "best_fit_combined"})
    else:
        dof = n_terms - fitted
        p_one = float(chi2_dist.sf(chi2, n_terms)) if n_terms > 0 else math.nan
        p = float(chi2_dist.sf(chi2, dof)) if dof > 0 else p_one
        out.update({"dof": dof if dof > 0 else None, "p_value": p,
                    "p_value_rule": "best_fit" if dof > 0 else "one_configuration"})
    verdict, level = verdict_from_p(p) if math.isfinite(p) else ("undetermined", None)
    if bound and verdict == "allowed":
        verdict = "undetermined"
    return {**out, "p_value_one_configuration": p_one, "verdict": verdict,
            "excluded_at": level}


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
    if g["p_value_rule"] == "best_fit_combined":
        rel_p = "<" if g.get("p_value_is_bound") else prel
        return (f"{head.replace('chi2', 'chi2_pivot + T', 1)}: p {rel_p} {g['p_value']:.3g} "
                f"from the calibrated law of chi2_{g['gaussian_terms_left']} + T "
                f"({g['low_ell_terms']} multipoles; as one configuration, all "
                f"{g['n_terms'] - g['low_ell_terms']} pivot terms: p {prel} "
                f"{g['p_value_one_configuration']:.3g})")
    if g["p_value_rule"] == "best_fit":
        return (f"{head}: dof = {g['dof']}, p {prel} {g['p_value']:.3g} (as one "
                f"configuration, dof = {g['n_terms']}: p {prel} "
                f"{g['p_value_one_configuration']:.3g})")
    return (f"{head}: no degree of freedom left, the goodness of fit of the best fit is "
            f"undefined; as one configuration (dof = {g['n_terms']}): p {prel} "
            f"{g['p_value']:.3g}")


def rescore_by_set(spectra_of: Callable[[dict], Any], best: dict[str, float],
                   subset: Sequence[dict[str, float]], sets: Sequence[Any],
                   run_likelihood: Any = None) -> list[dict[str, Any]]:
    """Score the best fit (as one configuration) and a posterior subset against each set
    alone (a large-scale temperature set with its calibrated p-value); the fraction of the
    subset each set excludes at 95% counts scorable points only, and the points that could
    not be scored are counted apart (a best fit a set cannot score: verdict "not
    evaluable")."""
    from ..likelihood.combined import single_set_likelihood
    from .proportions import binomial_fraction, score_outcome, spectra_or_failure

    spectra_best = spectra_of(best)
    evaluated = [spectra_or_failure(spectra_of, p)[0] for p in subset]
    rows = []
    for cset in sets:
        lk = single_set_likelihood(cset, run_likelihood)
        best_outcome, sc = score_outcome(lk, spectra_best)
        outcomes = [score_outcome(lk, s)[0] if s is not None else "not_evaluable"
                    for s in evaluated]
        scored = sum(o in ("allowed", "excluded") for o in outcomes)
        excluded = outcomes.count("excluded")
        nan = math.nan
        rows.append({
            "set": cset.name, "title": cset.title, "label": _label(cset),
            "citation": cset.citation, "arxiv": cset.arxiv, "forecast": cset.is_forecast,
            "kind": getattr(cset, "kind", "pivot_summary"),
            "best_fit_chi2": sc.chi2 if sc else nan, "best_fit_dof": sc.dof if sc else None,
            "best_fit_p_value": sc.p_value if sc else nan,
            "best_fit_p_value_is_bound": bool(getattr(sc, "p_value_is_bound", False)),
            "best_fit_verdict": sc.verdict if sc else best_outcome.replace("_", " "),
            "best_fit_excluded_at": sc.excluded_at if sc else None,
            "best_fit_bound": bool(getattr(sc, "bound", False)),
            "posterior_fraction_excluded_95": excluded / scored if scored else math.nan,
            "posterior_excluded": binomial_fraction(excluded, scored),
            "samples_scored": scored, "samples_not_scored": len(outcomes) - scored,
        })
    return rows


def _label(cset: Any) -> str:
    return getattr(cset, "short_title", "") or cset.title
