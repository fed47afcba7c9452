"""Exclusion verdicts of a posterior run.

What a run says about a model, in numbers a referee can check:

* **Marginal statistics** per parameter: mean, standard deviation, median, equal-tailed 68% and
  95% credible intervals, and a 95% upper (lower) limit instead of an interval when the
  posterior does not separate from the lower (upper) prior bound. Rule (ours, common practice):
  the marginal is one-sided when its histogram density in the 5% of the prior range next to the
  bound exceeds 20% of its peak density.
* **Allowed prior fraction**: the fraction of the prior volume (Monte Carlo over prior draws)
  whose spectra are not excluded at 95% by the run's constraint sets -- the "how much of the
  model survives" number. The same for the posterior (fraction of posterior samples allowed).
* **Nested settings, Savage-Dickey**: for a parameter whose prior file names a
  ``nested_value`` (e.g. r = 0), the Bayes factor of the nested model against the full one is
  B_01 = p(theta_0 | d) / pi(theta_0) (Dickey 1971; Verdinelli & Wasserman, JASA 90 (1995) 614),
  with the marginal posterior density from a Gaussian kernel density estimate (reflected at a
  prior bound when theta_0 sits on it).
* **Discrete settings, evidence by importance sampling**: ln Z = ln E_q[L pi / q] with the
  defensive mixture proposal q = 1/2 N(mean, (1.5)^2 cov) + 1/2 prior (Hesterberg,
  Technometrics 37 (1995) 185) built from the posterior samples; its Monte Carlo error is
  reported. Two runs (e.g. two potentials, prescriptions or states) are compared by their
  best-fit chi-square difference and ln Z_1 - ln Z_2 (the likelihood's constant cancels when
  both use the same constraint sets).
* **Which constraint set excludes it**: the best fit and a thinned set of posterior samples are
  rescored against each shipped constraint set alone (forecasts included) and the fraction of
  samples each set excludes at 95% is reported.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

ONE_SIDED_EDGE = 0.05
ONE_SIDED_DENSITY = 0.2


def marginal_statistics(samples: np.ndarray, names: Sequence[str], lower: Sequence[float],
                        upper: Sequence[float], weights: np.ndarray | None = None
                        ) -> list[dict[str, Any]]:
    """Per-parameter summary of equally weighted samples (n, k)."""
    samples = np.asarray(samples, dtype=float)
    out = []
    for i, name in enumerate(names):
        x = samples[:, i]
        if np.all((x == 0.0) | (x == 1.0)):  # an indicator (e.g. "certified"): a fraction
            out.append({"name": name, "kind": "indicator", "mean": float(np.mean(x)),
                        "std": float(np.std(x, ddof=1)) if x.size > 1 else math.nan,
                        "median": float(np.median(x))})
            continue
        q = np.quantile(x, [0.025, 0.16, 0.5, 0.84, 0.975])
        kind = _sidedness(x, lower[i], upper[i])
        entry = {
            "name": name, "mean": float(np.mean(x)), "std": float(np.std(x, ddof=1)),
            "median": float(q[2]), "lower68": float(q[1]), "upper68": float(q[3]),
            "lower95": float(q[0]), "upper95": float(q[4]), "kind": kind,
        }
        if kind == "upper_limit":
            entry["limit95"] = float(np.quantile(x, 0.95))
        elif kind == "lower_limit":
            entry["limit95"] = float(np.quantile(x, 0.05))
        out.append(entry)
    return out


def _sidedness(x: np.ndarray, lo: float, hi: float) -> str:
    finite_lo, finite_hi = math.isfinite(lo), math.isfinite(hi)
    if not (finite_lo or finite_hi):
        return "two_sided"
    a = lo if finite_lo else float(np.min(x))
    b = hi if finite_hi else float(np.max(x))
    hist, _ = np.histogram(x, bins=int(round(1 / ONE_SIDED_EDGE)), range=(a, b))
    peak = hist.max() if hist.size else 0
    if peak == 0:
        return "two_sided"
    if finite_lo and hist[0] > ONE_SIDED_DENSITY * peak:
        return "upper_limit"
    if finite_hi and hist[-1] > ONE_SIDED_DENSITY * peak:
        return "lower_limit"
    return "two_sided"


def format_interval(entry: dict[str, Any], digits: int = 4) -> str:
    """'0.9649 +0.0042 -0.0041' style text (68%), or '< 0.036 (95%)' for a limit."""
    if entry["kind"] == "indicator":
        return f"true in a fraction {entry['mean']:.3g} of the posterior"
    if entry["kind"] == "upper_limit":
        return f"< {entry['limit95']:.{digits}g} (95%)"
    if entry["kind"] == "lower_limit":
        return f"> {entry['limit95']:.{digits}g} (95%)"
    m = entry["mean"]
    return (f"{m:.{digits}g} +{entry['upper68'] - m:.2g} -{m - entry['lower68']:.2g} "
            f"(68%), [{entry['lower95']:.{digits}g}, {entry['upper95']:.{digits}g}] (95%)")


def savage_dickey(x: np.ndarray, value: float, prior_log_density: Callable[[np.ndarray],
                  np.ndarray], lower: float, upper: float) -> dict[str, float]:
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


def log_evidence(log_likelihood: Callable[[np.ndarray], float], prior: Any,
                 samples: np.ndarray, n: int = 4000, seed: int = 0) -> dict[str, float]:
    """ln Z by defensive importance sampling (see module docstring), with its error."""
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
    log_w = np.where(np.isfinite(log_pi) & np.isfinite(log_l), log_l + log_pi - log_q, -np.inf)
    ln_z = float(logsumexp(log_w) - math.log(n))
    w = np.exp(log_w - log_w.max()) if np.isfinite(log_w.max()) else np.zeros(n)
    rel = float(np.std(w) / (np.mean(w) * math.sqrt(n))) if np.mean(w) > 0 else math.inf
    ess = float(w.sum() ** 2 / np.sum(w * w)) if np.sum(w * w) > 0 else 0.0
    return {"ln_Z": ln_z, "ln_Z_error": rel, "n_draws": n, "importance_ess": ess,
            "method": "defensive importance sampling, q = 0.5 N(mean, 2.25 cov) + 0.5 prior"}


def compare_evidence(a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
    """Compare two runs' verdicts: best-fit chi-square difference and ln evidence ratio."""
    dchi2 = a["best_fit"]["chi2"] - b["best_fit"]["chi2"]
    ev_a, ev_b = a.get("evidence") or {}, b.get("evidence") or {}
    ln_b = (ev_a.get("ln_Z", math.nan) - ev_b.get("ln_Z", math.nan))
    err = math.hypot(ev_a.get("ln_Z_error", math.nan), ev_b.get("ln_Z_error", math.nan))
    return {"run": a.get("run_name"), "against": b.get("run_name"), "delta_chi2_min": dchi2,
            "ln_evidence_ratio": ln_b, "ln_evidence_ratio_error": err,
            "interpretation": _jeffreys(ln_b)}


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


def rescore_by_set(spectra_of: Callable[[dict], Any], best: dict[str, float],
                   subset: Sequence[dict[str, float]], set_names: Sequence[str]
                   ) -> list[dict[str, Any]]:
    """Score the best fit and a posterior subset against each constraint set alone."""
    from ..likelihood.gaussian import GaussianLikelihood

    spectra_best = spectra_of(best)
    spectra_sub = []
    for p in subset:
        try:
            spectra_sub.append(spectra_of(p))
        except Exception:  # noqa: BLE001 - a failed point cannot be scored, it is counted
            spectra_sub.append(None)
    rows = []
    for name in set_names:
        lk = GaussianLikelihood.from_names([name])
        cset = lk.sets[0]
        sc = lk.score(spectra_best)
        excluded = 0
        scored = 0
        for s in spectra_sub:
            if s is None:
                continue
            scored += 1
            excluded += lk.score(s).verdict == "excluded"
        rows.append({
            "set": name, "title": cset.title, "citation": cset.citation,
            "arxiv": cset.arxiv, "forecast": cset.is_forecast,
            "best_fit_chi2": sc.chi2, "best_fit_p_value": sc.p_value,
            "best_fit_verdict": sc.verdict, "best_fit_excluded_at": sc.excluded_at,
            "posterior_fraction_excluded_95": excluded / scored if scored else math.nan,
            "samples_scored": scored,
        })
    return rows


def allowed_fraction(spectra_of: Callable[[dict], Any], likelihood: Any,
                     points: Sequence[dict[str, float]]) -> dict[str, float]:
    """Fraction of the given parameter points whose spectra are not excluded at 95%."""
    allowed = failed = 0
    for p in points:
        try:
            sc = likelihood.score(spectra_of(p))
        except Exception:  # noqa: BLE001 - counted as failed, not as allowed
            failed += 1
            continue
        allowed += sc.verdict == "allowed"
    n = len(points)
    return {"fraction_allowed": allowed / n if n else math.nan, "points": n,
            "failed": failed}
