"""The report of a posterior run: all numbers first (:func:`compute_report`), then the files
(:func:`bouncelike.reporting.outputs.write_report`) into ``RUN/report/``.

The ``[report]`` section of the run configuration is described in :mod:`.settings`. The
statistics live in their own modules: marginals (:mod:`.marginals`), goodness of fit and the
p-value rules (:mod:`.goodness`), fractions of prior and posterior draws (:mod:`.proportions`),
Bayes factors (:mod:`.evidence`), the exclusion map (:mod:`.exclusion`) and the n_s - r plane
(:mod:`.nsr`).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..likelihood.combined import COMBINED_RULE
from ..likelihood.score import VERDICT_RULE
from ..sampling import chains
from ..sampling.setup import rebuild_from_manifest
from . import evidence as E
from . import exclusion, goodness, nsr, proportions, refusals
from . import lowell as lowell_report
from .marginals import INTERVAL_DEFINITION, marginal_statistics
from .settings import report_settings

EFOLD_PARAMETERS = ("N_star", "N_inflation", "N_B_star")


def compute_report(folder: str | Path) -> dict[str, Any]:
    """All numbers and figure data of a run's report (nothing is written)."""
    folder = Path(folder)
    manifest = chains.read_manifest(folder, chains.MANIFEST_NEEDS)
    prior, model, likelihood, posterior = rebuild_from_manifest(manifest)
    frame, loading_notes = chains.load_samples(
        folder, manifest, (*prior.sampled_names, "log_likelihood", "log_posterior"))
    frame = frame[np.isfinite(frame["log_posterior"])]
    if len(frame) < 10:
        raise InputError(f"run folder '{folder}' has fewer than 10 posterior samples")
    rs = report_settings(manifest["config"], prior.sampled_names, stored=True)
    rng = np.random.default_rng(rs["seed"])
    sampled = list(prior.sampled_names)
    derived = [n for n in prior.derived_names if n in frame.columns]
    x = frame[sampled].to_numpy()
    params_all = sampled + derived
    lower = [prior.get(n).lower if n in sampled else -math.inf for n in params_all]
    upper = [prior.get(n).upper if n in sampled else math.inf for n in params_all]
    if "r" in derived:
        lower[params_all.index("r")] = 0.0  # r >= 0 by construction of every model
    marg = marginal_statistics(frame[params_all].to_numpy(), params_all, lower, upper)

    def params_of(theta: np.ndarray) -> dict[str, float]:
        return prior.full_parameters(theta)

    i_best = int(np.argmax(frame["log_likelihood"].to_numpy()))
    best_theta = x[i_best]
    best_params = params_of(best_theta)
    best_spectra = model.spectra(best_params)
    best_score = likelihood.score(best_spectra)
    low_ell = getattr(likelihood, "low_ell", None)
    fit = goodness.best_fit_goodness(
        best_score.chi2, best_score.dof,
        goodness.model_dimensionality(frame["log_likelihood"].to_numpy()), sampled,
        goodness.constrained_parameters(x, prior.draw(rng, 4000), sampled),
        bound=bool(getattr(best_score, "bound", False)),
        low_ell_terms=len(low_ell.ells) if low_ell is not None else 0,
        p_of=low_ell.p_value if low_ell is not None else None)
    subset_idx = rng.choice(len(x), size=min(rs["rescore_samples"], len(x)), replace=False)
    subset = [params_of(x[i]) for i in subset_idx]
    by_set = goodness.rescore_by_set(model.spectra, best_params, subset,
                                     _all_sets(likelihood), likelihood)
    prior_points = [params_of(t) for t in prior.draw(rng, rs["prior_draws"])]
    prior_outcomes = proportions.classify_points(model.spectra, likelihood, prior_points)
    allowed_prior = proportions.outcome_fractions(prior_outcomes)
    allowed_post = proportions.outcome_fractions(
        proportions.classify_points(model.spectra, likelihood, subset))
    sd = {}
    for p in prior.sampled:
        if p.nested_value is not None:
            sd[p.name] = E.savage_dickey(frame[p.name].to_numpy(), p.nested_value,
                                         p.log_density, p.lower, p.upper)

    def log_like(theta: np.ndarray) -> float:
        out = posterior(theta)
        return out[1] if math.isfinite(out[0]) else -math.inf

    ev = E.log_evidence(log_like, prior, x, n=rs["evidence_draws"], seed=rs["seed"])
    sets = [s.as_dict() for s in likelihood.sets]  # pivot sets and any low-ell set
    rules = dict(goodness.P_VALUE_RULES)
    if low_ell is not None:
        rules.update(goodness.COMBINED_P_VALUE_RULES)
    verdict = {
        "run_name": manifest.get("run_name", folder.name), "model": manifest["model"],
        "model_title": prior.title or manifest["model"],
        "run_folder": str(folder),
        "constraint_sets": [s["name"] for s in sets],
        "constraint_set_citations": sets,
        "samples_used": int(len(frame)),
        "run": manifest.get("run", {}),
        "marginals": marg,
        "best_fit": {"parameters": best_params, **_score_dict(best_score), **fit},
        "allowed_prior_fraction": allowed_prior,
        "allowed_posterior_fraction": allowed_post,
        "savage_dickey": sd,
        "evidence": ev,
        "by_set": by_set,
        "verdict_rule": COMBINED_RULE if low_ell is not None else VERDICT_RULE,
        "p_value_rules": rules,
        "large_scale_term": lowell_report.term_statement(likelihood),
        "failures": manifest.get("run", {}).get("failures", {}),
        "failure_summary": manifest.get("run", {}).get("failure_summary", {}),
        "loading_notes": loading_notes,
        "not_evaluable": {
            "prior_fraction": proportions.binomial_fraction(
                sum(o in refusals.REFUSED for o in prior_outcomes), len(prior_outcomes)),
            "coincidences": refusals.coincidences(
                marg, {p.name: (p.lower, p.upper) for p in prior.sampled},
                _prober(model, likelihood, x, frame["log_likelihood"].to_numpy(), sampled,
                        params_of, rs["seed"])),
            "rule": refusals.RULE,
            "derived": [],
            "run_reasons": refusals.survey_rows(
                manifest.get("run", {}).get("failure_summary", {}) or {})},
        "methods": {
            "intervals": INTERVAL_DEFINITION,
            "allowed_fraction": "Monte Carlo over prior draws, each draw one configuration "
                                "scored against the combined constraint sets; "
                                + proportions.FRACTION_RULE + "; points the model cannot "
                                "evaluate are counted as not evaluable, never as excluded",
            "nested": "Savage-Dickey density ratio at the prior file's nested_value",
            "evidence": ev["method"] + "; " + E.RELIABILITY_RULE,
            "p_values": rules,
        },
    }
    ne = verdict["not_evaluable"]
    ne["derived"] = refusals.derived_coincidences(
        marg, ne["coincidences"], {n: frame[n].to_numpy() for n in params_all}, sampled)
    verdict["bounce"] = lowell_report.bounce_bounds(
        {n: frame[n].to_numpy() for n in params_all}, verdict)
    verdict["comparisons"] = _comparisons(verdict, rs, manifest)
    fig_data = _figure_data(folder, prior, model, likelihood, frame, x, best_spectra, rs, rng,
                            params_of, best_theta)
    return {"verdicts": verdict, "figures": fig_data, "settings": rs, "prior": prior,
            "frame": frame, "sampled": sampled, "derived": derived, "manifest": manifest,
            "constraint_sets": _pivot_sets(likelihood),
            "best_params": best_params,
            "best_row": {n: float(frame[n].iloc[i_best]) for n in params_all}}


def _prober(model: Any, likelihood: Any, x: np.ndarray, log_like: np.ndarray,
            sampled: list[str], params_of: Any, seed: int) -> Any:
    """probe(name, a, b): outcomes of posterior samples with ``name`` redrawn in [a, b], and
    the mean likelihood of the evaluable ones relative to that of the samples moved."""
    def probe(name: str, a: float, b: float) -> tuple[list[str], float]:
        rng = np.random.default_rng(seed)
        i = sampled.index(name)
        idx = rng.choice(len(x), size=min(refusals.PROBES, len(x)), replace=False)
        rows = x[idx].copy()
        rows[:, i] = rng.uniform(a, b, len(rows))
        outcomes, moved, orig = [], [], []
        for t, ll in zip(rows, log_like[idx], strict=True):
            outcome, _, score = proportions.evaluate_point(model.spectra, likelihood,
                                                           params_of(t))
            outcomes.append(outcome)
            if outcome not in refusals.REFUSED and score is not None:
                moved.append(score.log_likelihood)
                orig.append(ll)
        if not moved:
            return outcomes, math.nan
        c = max(orig)
        ratio = float(np.mean(np.exp(np.array(moved) - c)) / np.mean(np.exp(np.array(orig) - c)))
        return outcomes, ratio
    return probe


def _all_sets(likelihood: Any) -> list[Any]:
    """Every shipped set (pivot and large-scale temperature), plus the run's own set files
    (rescored one by one)."""
    from ..likelihood.lowell_data import available_low_ell_sets
    from ..likelihood.sets import available_sets, load_constraint_set

    shipped = [load_constraint_set(n) for n in available_sets()]
    names = {s.name for s in shipped}
    shipped += [load_constraint_set(n) for n in available_low_ell_sets()]
    names = {s.name for s in shipped}
    return shipped + [s for s in likelihood.sets if s.name not in names]


def _pivot_sets(likelihood: Any) -> tuple[Any, ...]:
    """The pivot constraint sets of a likelihood (the figures of amplitude, tilt and r)."""
    return tuple(getattr(likelihood, "pivot_sets", likelihood.sets))


def _comparisons(verdict: dict[str, Any], rs: dict[str, Any], manifest: dict[str, Any]
                 ) -> list[dict[str, Any]]:
    out = []
    for other in rs["compare_runs"]:
        path = Path(other)
        if not path.is_absolute():
            path = Path(manifest.get("config_file", ".")).parent / path
        if not (path / chains.MANIFEST).is_file():
            path = Path(other)
        other_v = compute_report_verdicts_only(path)
        if sorted(other_v["constraint_sets"]) != sorted(verdict["constraint_sets"]):
            raise InputError(
                f"'report.compare_runs': run '{other}' uses constraint sets "
                f"{', '.join(other_v['constraint_sets'])}, this run "
                f"{', '.join(verdict['constraint_sets'])}; chi-square and evidence compare only "
                "on the same sets")
        out.append(E.compare_evidence(verdict, other_v))
    return out


def compute_report_verdicts_only(folder: Path) -> dict[str, Any]:
    """Verdicts of another run (for comparisons): its stored verdicts.json if present."""
    import json

    stored = folder / "report" / "verdicts.json"
    if stored.is_file():
        return json.loads(stored.read_text())
    if not (folder / chains.MANIFEST).is_file():
        raise InputError(f"'report.compare_runs': '{folder}' is not a run folder")
    return compute_report(folder)["verdicts"]


def _score_dict(score: Any) -> dict[str, Any]:
    d = score.as_dict()
    out = {k: d[k] for k in ("chi2", "terms", "notes")}
    out["bound"] = bool(d.get("bound", False))
    out["cap"] = d.get("cap")
    return out


def _figure_data(folder: Path, prior: Any, model: Any, likelihood: Any, frame: Any,
                 x: np.ndarray,
                 best_spectra: Any, rs: dict[str, Any], rng: np.random.Generator,
                 params_of: Any, best_theta: np.ndarray) -> dict[str, Any]:
    from ..likelihood.combined import single_set_likelihood
    from ..spectra.summary import summarize

    k = np.logspace(-5, 0, 160)
    idx = rng.choice(len(x), size=min(rs["band_samples"], len(x)), replace=False)
    term, term_used = lowell_report.term_for_figure(likelihood)
    scal, tens, ns_r, dells = [], [], [], []
    for i in idx:
        outcome, s, sc = proportions.evaluate_point(model.spectra, likelihood,
                                                    params_of(x[i]))
        if s is None:
            continue  # a failed sample is left out of the bands
        scal.append(s.scalar(k))
        tens.append(s.tensor(k))
        dell = _dell_or_none(term, s, sc, term_used)
        if dell is not None:
            dells.append(dell)
        summ = next((m for m in sc.summaries if m.pivot == nsr.PIVOT), None)
        if summ is None:
            summ = summarize(s, nsr.PIVOT)
        if summ.fit_ok:
            ns_r.append((summ.n_s, summ.r))
    tens_arr = np.array(tens)
    has_tensor = bool(tens_arr.size and np.any(tens_arr > 0))
    best_summary = summarize(best_spectra, nsr.PIVOT)
    # exclusion map over two sampled parameters, the others at the best fit
    names = list(prior.sampled_names)
    ia, ib = (names.index(n) for n in rs["exclusion_map"])
    pa, pb = prior.sampled[ia], prior.sampled[ib]

    def axis(i: int, p: Any) -> tuple[float, float]:
        lo, hi = np.quantile(x[:, i], [0.001, 0.999])
        span = hi - lo
        return max(p.lower, lo - 0.6 * span), min(p.upper, hi + 0.6 * span)

    singles = [single_set_likelihood(s, likelihood) for s in likelihood.sets]

    def status(va: float, vb: float) -> np.ndarray:
        theta = best_theta.copy()
        theta[ia], theta[ib] = va, vb
        return exclusion.point_status(model.spectra, likelihood, singles, params_of(theta))

    emap = exclusion.refined_map(status, axis(ia, pa), axis(ib, pb), rs["grid"],
                                 rs["refine"], exclusion.HEAD + len(singles))
    others = {n: float(best_theta[i]) for i, n in enumerate(names) if i not in (ia, ib)}
    recorded = refusals.recorded_refusals(folder, names)
    refused = {k: v[:, [ia, ib]] for k, v in recorded.items()}
    return {"k": k, "scalar": np.array(scal), "tensor": tens_arr if has_tensor else None,
            "best": best_spectra, "map": emap, "map_samples": x[:, [ia, ib]][:2000],
            "map_axes": ((pa.name, pa.label), (pb.name, pb.label)),
            "map_best": (float(best_theta[ia]), float(best_theta[ib])), "map_fixed": others,
            "map_refused": refused, "recorded_refusals": recorded,
            "ns_r_points": np.array(ns_r).reshape(-1, 2),
            "ns_r_best": ((best_summary.n_s, best_summary.r) if best_summary.fit_ok
                          else None),
            "efold": _efold_data(prior, model, frame, names, rng, params_of),
            "dell": lowell_report.figure_data(term, best_spectra, np.array(dells), term_used)}


def _dell_or_none(term: Any, spectra: Any, score: Any, used: bool) -> np.ndarray | None:
    """A sample's anchored D_ell for the D_ell figure: its score's when the run's likelihood
    has the term (None when it could not score the sample), else predicted here (None when
    the projection cannot read the spectra)."""
    if used:
        return score.low_ell.predicted if getattr(score, "low_ell", None) is not None else None
    try:
        return term.predict(spectra)
    except Exception:  # noqa: BLE001 - e.g. a table not covering the projection's k range
        return None


def _efold_data(prior: Any, model: Any, frame: Any, names: list[str],
                rng: np.random.Generator, params_of: Any) -> dict[str, Any] | None:
    for n in EFOLD_PARAMETERS:
        if n in frame.columns and n in prior.sampled_names:
            i = names.index(n)
            return {"name": n, "posterior": frame[n].to_numpy(),
                    "prior": prior.draw(rng, 4000)[:, i], "label": prior.get(n).label}
        if n in frame.columns and n in prior.derived_names:
            # a derived e-fold number: its prior is the image of prior draws
            draws = []
            for t in prior.draw(rng, 2000):
                try:
                    draws.append(model.derived(params_of(t))[n])
                except (ArithmeticError, ValueError, RuntimeError):
                    continue  # a draw the model cannot evaluate has no image
            post = frame[n].to_numpy()
            arr = np.asarray(draws, dtype=float)
            arr = arr[np.isfinite(arr)]
            if arr.size and np.all(np.isfinite(post)):
                return {"name": n, "posterior": post, "prior": arr,
                        "label": prior.get(n).label}
    return None
