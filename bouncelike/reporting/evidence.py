"""Bayes factors of a posterior run: nested settings (Savage-Dickey) and discrete settings
(evidence by importance sampling), each with what makes it trustworthy.

* **Nested settings, Savage-Dickey**: for a parameter whose prior file names a
  ``nested_value`` (e.g. r = 0), the Bayes factor of the nested model against the full one is
  B_01 = p(theta_0 | d) / pi(theta_0) (Dickey 1971; Verdinelli & Wasserman, JASA 90 (1995) 614),
  with the marginal posterior density from a Gaussian kernel density estimate (reflected at a
  prior bound when theta_0 sits near it). Far outside the samples the estimate is replaced by
  an upper bound.
* **Discrete settings, evidence by importance sampling**: ln Z = ln E_q[L pi / q] with the
  defensive mixture proposal q = 1/2 N(mean, (1.5)^2 cov) + 1/2 prior (Hesterberg,
  Technometrics 37 (1995) 185) built from the posterior samples, with its Monte Carlo error
  and the effective number of draws n_eff = (sum w)^2 / sum w^2 (Kish's effective sample size
  of the importance weights). Below :data:`MIN_EFFECTIVE_DRAWS` effective draws (ours, common
  practice) the weights are dominated by a handful of draws, the error estimate itself is
  unreliable, and the evidence and every Bayes factor built on it are reported as "not
  reliable" instead of a number with an error.
* Two runs (two potentials, prescriptions or states) are compared by their best-fit
  chi-square difference and ln Z_1 - ln Z_2 (the likelihood's constant cancels when both use
  the same constraint sets), read on the scale of Kass & Raftery (JASA 90 (1995) 773).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

#: Fewest effective importance draws for a reported evidence (common practice).
MIN_EFFECTIVE_DRAWS = 100
RELIABILITY_RULE = (f"an evidence is reported only with at least {MIN_EFFECTIVE_DRAWS} "
                    "effective importance draws (Kish's n_eff = (sum w)^2 / sum w^2, common "
                    "practice); below that it is marked not reliable")


def savage_dickey(x: np.ndarray, value: float, prior_log_density: Callable[[np.ndarray],
                  np.ndarray], lower: float, upper: float) -> dict[str, Any]:
    """Bayes factor B_01 = p(value | d) / pi(value) of the nested model theta = value."""
    from scipy.stats import gaussian_kde

    x = np.asarray(x, dtype=float)
    kde = gaussian_kde(x)
    dens = float(kde(value)[0])
    width = float(np.sqrt(kde.covariance[0, 0]))
    # reflection at a prior bound within a few kernel widths (boundary correction)
    for edge in (lower, upper):
        if math.isfinite(edge) and abs(value - edge) < 3 * width:
            dens += float(kde(2 * edge - value)[0])
    prior_dens = float(np.exp(prior_log_density(np.array([value]))[0]))
    if not prior_dens > 0:
        return {"value": value, "B01": math.nan, "ln_B01": math.nan, "resolved": False}
    # Far outside the samples the kernel estimate says nothing; one sample's kernel at one
    # kernel width is the smallest density the samples resolve: quote a bound instead.
    floor = math.exp(-0.5) / (x.size * width * math.sqrt(2 * math.pi))
    if dens < floor:
        b = floor / prior_dens
        return {"value": value, "posterior_density": dens, "prior_density": prior_dens,
                "B01": math.nan, "ln_B01": math.nan, "B01_upper_bound": b,
                "ln_B01_upper_bound": math.log(b), "resolved": False}
    b = dens / prior_dens
    return {"value": value, "posterior_density": dens, "prior_density": prior_dens, "B01": b,
            "ln_B01": math.log(b) if b > 0 else -math.inf, "resolved": True}


def effective_draws(log_w: np.ndarray) -> float:
    """Kish's effective number of draws (sum w)^2 / sum w^2 of log importance weights."""
    log_w = np.asarray(log_w, dtype=float)
    if not np.any(np.isfinite(log_w)):
        return 0.0
    w = np.exp(log_w - np.max(log_w[np.isfinite(log_w)]))
    w = np.where(np.isfinite(w), w, 0.0)
    s2 = float(np.sum(w * w))
    return float(np.sum(w) ** 2 / s2) if s2 > 0 else 0.0


def log_evidence(log_likelihood: Callable[[np.ndarray], float], prior: Any,
                 samples: np.ndarray, n: int = 4000, seed: int = 0) -> dict[str, Any]:
    """ln Z by defensive importance sampling (see module docstring), with its error, its
    effective number of draws and whether it is reliable."""
    from scipy.special import logsumexp
    from scipy.stats import multivariate_normal

    rng = np.random.default_rng(seed)
    samples = np.asarray(samples, dtype=float)
    mean = samples.mean(axis=0)
    cov = np.atleast_2d(np.cov(samples.T)) * 1.5**2
    cov += np.eye(len(mean)) * 1e-12 * np.max(np.abs(np.diag(cov)))
    gauss = multivariate_normal(mean, cov, allow_singular=True)
    n_g = n // 2
    pts = np.vstack([gauss.rvs(size=n_g, random_state=rng).reshape(n_g, -1),
                     prior.draw(rng, n - n_g)])
    log_pi = np.array([prior.log_prior(p) for p in pts])
    log_q = np.logaddexp(np.log(0.5) + gauss.logpdf(pts).reshape(-1),
                         np.log(0.5) + log_pi)
    log_l = np.array([log_likelihood(p) if math.isfinite(lp) else -math.inf
                      for p, lp in zip(pts, log_pi, strict=False)])
    with np.errstate(invalid="ignore"):
        log_w = np.where(np.isfinite(log_pi) & np.isfinite(log_l), log_l + log_pi - log_q,
                         -np.inf)
    ln_z = float(logsumexp(log_w) - math.log(n))
    w = np.exp(log_w - log_w.max()) if np.isfinite(log_w.max()) else np.zeros(n)
    rel = float(np.std(w) / (np.mean(w) * math.sqrt(n))) if np.mean(w) > 0 else math.inf
    ess = effective_draws(log_w)
    return {"ln_Z": ln_z, "ln_Z_error": rel, "n_draws": n, "importance_ess": ess,
            "reliable": bool(ess >= MIN_EFFECTIVE_DRAWS and math.isfinite(ln_z)),
            "min_effective_draws": MIN_EFFECTIVE_DRAWS,
            "method": "defensive importance sampling, q = 0.5 N(mean, 2.25 cov) + 0.5 prior"}


def evidence_text(ev: dict[str, Any]) -> str:
    """'ln Z = -3.735 +- 0.030 (724 effective of 2000 draws)' or the not-reliable wording."""
    ess = f"{ev.get('importance_ess', math.nan):.0f} effective of {ev.get('n_draws')} draws"
    if not ev.get("reliable", False):
        return (f"ln Z not reliable ({ess}; at least {MIN_EFFECTIVE_DRAWS} effective draws are "
                "needed)")
    return f"ln Z = {ev['ln_Z']:.4g} +- {ev['ln_Z_error']:.2g} ({ess})"


def compare_evidence(a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
    """Compare two runs' verdicts: best-fit chi-square difference and ln evidence ratio."""
    dchi2 = a["best_fit"]["chi2"] - b["best_fit"]["chi2"]
    ev_a, ev_b = a.get("evidence") or {}, b.get("evidence") or {}
    ln_b = (ev_a.get("ln_Z", math.nan) - ev_b.get("ln_Z", math.nan))
    err = math.hypot(ev_a.get("ln_Z_error", math.nan), ev_b.get("ln_Z_error", math.nan))
    reliable = bool(ev_a.get("reliable", False) and ev_b.get("reliable", False))
    return {"run": a.get("run_name"), "against": b.get("run_name"), "delta_chi2_min": dchi2,
            "ln_evidence_ratio": ln_b, "ln_evidence_ratio_error": err,
            "effective_draws": [ev_a.get("importance_ess", math.nan),
                                ev_b.get("importance_ess", math.nan)],
            "draws": [ev_a.get("n_draws"), ev_b.get("n_draws")],
            "reliable": reliable,
            "interpretation": _jeffreys(ln_b) if reliable else "not reliable"}


def comparison_text(c: dict[str, Any]) -> str:
    """One line of a comparison of two runs, with the effective draws of both evidences."""
    ess = " and ".join(f"{e:.0f} of {n}" for e, n in zip(c["effective_draws"], c["draws"],
                                                          strict=True))
    head = f"{c['run']} vs {c['against']}: delta chi2_min = {c['delta_chi2_min']:.3g}, "
    if not c["reliable"]:
        return head + (f"ln(Z1/Z2) not reliable (effective importance draws {ess}; at least "
                       f"{MIN_EFFECTIVE_DRAWS} each are needed)")
    return head + (f"ln(Z1/Z2) = {c['ln_evidence_ratio']:.3g} +- "
                   f"{c['ln_evidence_ratio_error']:.2g} ({c['interpretation']}; effective "
                   f"importance draws {ess})")


def _jeffreys(ln_b: float) -> str:
    """Verbal scale of a ln Bayes factor (Kass & Raftery, JASA 90 (1995) 773, in ln units)."""
    if not math.isfinite(ln_b):
        return "undetermined"
    a = abs(ln_b)
    side = "favours the first" if ln_b > 0 else "favours the second"
    if a < 1:
        return "not worth more than a bare mention"
    if a < 3:
        return f"positive evidence ({side})"
    if a < 5:
        return f"strong evidence ({side})"
    return f"very strong evidence ({side})"
