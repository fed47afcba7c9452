"""The report of a posterior run: verdicts, marginal tables, triangle plot and figure pack.

``[report]`` section of the run configuration (all optional)::

    [report]
    exclusion_map = ["n_s", "r"]   # two sampled parameters for the exclusion map
    grid = 36                       # grid points per axis of the map
    prior_draws = 1000              # prior draws for the allowed prior fraction
    rescore_samples = 200           # thinned posterior samples rescored per constraint set
    band_samples = 200              # posterior samples for the spectra bands
    evidence_draws = 4000           # importance-sampling draws for ln Z
    compare = []                    # other run folders (discrete settings) to compare with
    seed = 0

Everything is computed first; then the files are written (atomically) into ``RUN/report/``.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np

from ..config import Table
from ..errors import InputError
from ..io import json_safe, write_json_atomic, write_text_atomic
from ..sampling import chains
from ..sampling import verdicts as V
from ..sampling.setup import rebuild_from_manifest
from . import figures, tables

REPORT_KEYS = ("exclusion_map", "grid", "prior_draws", "rescore_samples", "band_samples",
               "evidence_draws", "compare", "seed")
EFOLD_PARAMETERS = ("N_star", "N_inflation", "N_B_star")


def report_settings(config: dict[str, Any], sampled: tuple[str, ...]) -> dict[str, Any]:
    t = Table(config.get("report", {}), "report", REPORT_KEYS)
    emap = t.strings("exclusion_map", list(sampled[:2]))
    if len(emap) != 2 or len(set(emap)) != 2 or not all(n in sampled for n in emap):
        raise InputError(f"'report.exclusion_map' = {emap} must name two different sampled "
                         f"parameters; allowed: {', '.join(sampled)}")
    return {
        "exclusion_map": emap,
        "grid": t.integer("grid", 36, minimum=4, maximum=400),
        "prior_draws": t.integer("prior_draws", 1000, minimum=10),
        "rescore_samples": t.integer("rescore_samples", 200, minimum=1),
        "band_samples": t.integer("band_samples", 200, minimum=10),
        "evidence_draws": t.integer("evidence_draws", 4000, minimum=100),
        "compare": t.strings("compare", []),
        "seed": t.integer("seed", 0, minimum=0),
    }


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
    rs = report_settings(manifest["config"], prior.sampled_names)
    rng = np.random.default_rng(rs["seed"])
    sampled = list(prior.sampled_names)
    derived = [n for n in prior.derived_names if n in frame.columns]
    x = frame[sampled].to_numpy()
    params_all = sampled + derived
    lower = [prior.get(n).lower if n in sampled else -math.inf for n in params_all]
    upper = [prior.get(n).upper if n in sampled else math.inf for n in params_all]
    if "r" in derived:
        lower[params_all.index("r")] = 0.0  # r >= 0 by construction of every model
    marg = V.marginal_statistics(frame[params_all].to_numpy(), params_all, lower, upper)

    def params_of(theta: np.ndarray) -> dict[str, float]:
        return prior.full_parameters(theta)

    i_best = int(np.argmax(frame["log_likelihood"].to_numpy()))
    best_theta = x[i_best]
    best_params = params_of(best_theta)
    best_spectra = model.spectra(best_params)
    best_score = likelihood.score(best_spectra)
    subset_idx = rng.choice(len(x), size=min(rs["rescore_samples"], len(x)), replace=False)
    subset = [params_of(x[i]) for i in subset_idx]
    from ..likelihood.sets import available_sets

    by_set = V.rescore_by_set(model.spectra, best_params, subset, available_sets())
    prior_points = [params_of(t) for t in prior.draw(rng, rs["prior_draws"])]
    allowed_prior = V.allowed_fraction(model.spectra, likelihood, prior_points)
    allowed_post = V.allowed_fraction(model.spectra, likelihood, subset)
    sd = {}
    for p in prior.sampled:
        if p.nested_value is not None:
            sd[p.name] = V.savage_dickey(frame[p.name].to_numpy(), p.nested_value,
                                         p.log_density, p.lower, p.upper)

    def log_like(theta: np.ndarray) -> float:
        out = posterior(theta)
        return out[1] if math.isfinite(out[0]) else -math.inf

    evidence = V.log_evidence(log_like, prior, x, n=rs["evidence_draws"], seed=rs["seed"])
    sets = [s.as_dict() for s in likelihood.sets]
    from ..likelihood.gaussian import VERDICT_RULE

    verdict = {
        "run_name": manifest.get("run_name", folder.name), "model": manifest["model"],
        "run_folder": str(folder),
        "constraint_sets": [s["name"] for s in sets],
        "constraint_set_citations": sets,
        "samples_used": int(len(frame)),
        "run": manifest.get("run", {}),
        "marginals": marg,
        "best_fit": {"parameters": best_params, **_score_dict(best_score)},
        "allowed_prior_fraction": allowed_prior,
        "allowed_posterior_fraction": allowed_post,
        "savage_dickey": sd,
        "evidence": evidence,
        "by_set": by_set,
        "verdict_rule": VERDICT_RULE,
        "failures": manifest.get("run", {}).get("failures", {}),
        "failure_summary": manifest.get("run", {}).get("failure_summary", {}),
        "loading_notes": loading_notes,
        "methods": {
            "intervals": "equal-tailed quantiles of the posterior samples; one-sided 95% "
                         "limit when the marginal does not separate from a prior bound "
                         f"(density in the {V.ONE_SIDED_EDGE:.0%} of the range next to it "
                         f"above {V.ONE_SIDED_DENSITY:.0%} of the peak)",
            "allowed_fraction": "Monte Carlo over prior draws: fraction not excluded at 95% "
                                "by the combined constraint sets",
            "nested": "Savage-Dickey density ratio at the prior file's nested_value",
            "evidence": evidence["method"],
        },
    }
    comparisons = []
    for other in rs["compare"]:
        path = Path(other)
        if not path.is_absolute():
            path = Path(manifest.get("config_file", ".")).parent / path
        if not (path / chains.MANIFEST).is_file():
            path = Path(other)
        other_v = compute_report_verdicts_only(path)
        if sorted(other_v["constraint_sets"]) != sorted(verdict["constraint_sets"]):
            raise InputError(
                f"'report.compare': run '{other}' uses constraint sets "
                f"{', '.join(other_v['constraint_sets'])}, this run "
                f"{', '.join(verdict['constraint_sets'])}; chi-square and evidence compare only "
                "on the same sets")
        comparisons.append(V.compare_evidence(verdict, other_v))
    verdict["comparisons"] = comparisons
    fig_data = _figure_data(prior, model, likelihood, frame, x, best_spectra, rs, rng,
                            params_of, best_theta)
    return {"verdicts": verdict, "figures": fig_data, "settings": rs, "prior": prior,
            "frame": frame, "sampled": sampled, "derived": derived, "manifest": manifest,
            "constraint_sets": likelihood.sets}


def compute_report_verdicts_only(folder: Path) -> dict[str, Any]:
    """Verdicts of another run (for comparisons): its stored verdicts.json if present."""
    import json

    stored = folder / "report" / "verdicts.json"
    if stored.is_file():
        return json.loads(stored.read_text())
    if not (folder / chains.MANIFEST).is_file():
        raise InputError(f"'report.compare': '{folder}' is not a run folder")
    return compute_report(folder)["verdicts"]


def _score_dict(score: Any) -> dict[str, Any]:
    d = score.as_dict()
    return {k: d[k] for k in ("chi2", "dof", "p_value", "verdict", "excluded_at", "terms",
                              "notes")}


def _figure_data(prior: Any, model: Any, likelihood: Any, frame: Any, x: np.ndarray,
                 best_spectra: Any, rs: dict[str, Any], rng: np.random.Generator,
                 params_of: Any, best_theta: np.ndarray) -> dict[str, Any]:
    k = np.logspace(-5, 0, 160)
    idx = rng.choice(len(x), size=min(rs["band_samples"], len(x)), replace=False)
    scal, tens = [], []
    for i in idx:
        try:
            s = model.spectra(params_of(x[i]))
            scal.append(s.scalar(k))
            tens.append(s.tensor(k))
        except Exception:  # noqa: BLE001 - a failed sample is left out of the band
            continue
    tens_arr = np.array(tens)
    has_tensor = bool(tens_arr.size and np.any(tens_arr > 0))
    # exclusion map over two sampled parameters, the others at the best fit
    names = list(prior.sampled_names)
    ia, ib = (names.index(n) for n in rs["exclusion_map"])
    pa, pb = prior.sampled[ia], prior.sampled[ib]

    def axis(i: int, p: Any) -> np.ndarray:
        lo, hi = np.quantile(x[:, i], [0.001, 0.999])
        span = hi - lo
        lo, hi = max(p.lower, lo - 0.6 * span), min(p.upper, hi + 0.6 * span)
        return np.linspace(lo, hi, rs["grid"])

    ga, gb = axis(ia, pa), axis(ib, pb)
    from ..likelihood.gaussian import GaussianLikelihood

    singles = {s.name: GaussianLikelihood([s]) for s in likelihood.sets}
    level = np.full((gb.size, ga.size), np.nan)
    per_set = {n: np.zeros((gb.size, ga.size), bool) for n in singles}
    for j, vb in enumerate(gb):
        for i, va in enumerate(ga):
            theta = best_theta.copy()
            theta[ia], theta[ib] = va, vb
            try:
                spec = model.spectra(params_of(theta))
                sc = likelihood.score(spec)
            except Exception:  # noqa: BLE001 - unscorable grid point stays blank
                continue
            level[j, i] = 0 if sc.verdict == "allowed" else (2 if sc.excluded_at and
                                                               sc.excluded_at > 0.99 else 1)
            for n, lk in singles.items():
                per_set[n][j, i] = lk.score(spec).verdict == "excluded"
    efold = None
    for n in EFOLD_PARAMETERS:
        if n in frame.columns and n in prior.sampled_names:
            i = names.index(n)
            efold = {"name": n, "posterior": x[:, i],
                     "prior": prior.draw(rng, 4000)[:, i], "label": prior.get(n).label}
            break
        if n in frame.columns and n in prior.derived_names:
            # a derived e-fold number: its prior is the image of prior draws
            draws = []
            for t in prior.draw(rng, 2000):
                try:
                    draws.append(model.derived(params_of(t))[n])
                except Exception:  # noqa: BLE001 - a failed draw has no image
                    continue
            post = frame[n].to_numpy()
            draws = np.asarray(draws, dtype=float)
            draws = draws[np.isfinite(draws)]
            if draws.size and np.all(np.isfinite(post)):
                efold = {"name": n, "posterior": post, "prior": draws,
                         "label": prior.get(n).label}
                break
    return {"k": k, "scalar": np.array(scal), "tensor": tens_arr if has_tensor else None,
            "best": best_spectra, "map": (ga, gb, level, per_set,
                                          x[:, [ia, ib]][: 2000]),
            "map_labels": (pa.label, pb.label), "efold": efold}


def write_report(folder: str | Path, data: dict[str, Any],
                 output: str | Path | None = None) -> list[Path]:
    """Write the report files computed by :func:`compute_report` into RUN/report/ (or
    ``output``)."""
    folder = Path(folder)
    out = Path(output) if output is not None else folder / "report"
    v = data["verdicts"]
    prior = data["prior"]
    labels = prior.labels()
    roles = {p.name: p.role for p in prior.parameters}
    names = data["sampled"] + data["derived"]
    sets_meta = v["constraint_set_citations"]
    cite = figures.citations_text(sets_meta)
    written = [
        write_json_atomic(out / "verdicts.json", json_safe(v)),
        write_text_atomic(out / "verdicts.md", tables.verdicts_markdown(v)),
        write_text_atomic(out / "marginals.md", tables.marginal_markdown(v["marginals"], labels,
                                                                          roles)),
        write_text_atomic(out / "marginals.tex", tables.marginal_latex(
            v["marginals"], labels, f"Marginal posterior constraints, run {v['run_name']} "
            f"({v['model']}) against {', '.join(v['constraint_sets'])}.")),
    ]
    frame = data["frame"]
    # derived parameters that are exact linear functions of another (e.g. n_t = -r/8) add
    # nothing to the triangle plot; neither do indicators (e.g. "certified") or numbers
    # spanning many decades
    values = frame[names].to_numpy()
    with np.errstate(invalid="ignore", divide="ignore"):  # constant columns give NaN rows
        corr = np.corrcoef(values.T) if len(frame) > 2 else np.eye(len(names))
    n_sampled = len(data["sampled"])

    def plottable(i: int) -> bool:
        if i < n_sampled:
            return True
        v = values[:, i]
        if np.any(np.abs(corr[i, :i]) > 0.9999) or np.unique(v).size < 20:
            return False
        return not (np.min(v) > 0 and np.max(v) / np.min(v) > 1e3)

    names = [n for i, n in enumerate(names) if plottable(i)]
    fig = figures.triangle_figure(frame[names].to_numpy(), names, [labels[n] for n in names],
                                  {p.name: (p.lower, p.upper) for p in prior.sampled},
                                  v["run_name"])
    written += figures.save_with_caption(
        fig, out / "triangle", f"Marginal posteriors (68% and 95% regions) of run "
        f"{v['run_name']}, model {v['model']}, {v['samples_used']} samples after burn-in.\n"
        + cite)
    fd = data["figures"]
    set_objs = list(data["constraint_sets"])  # as the run used them (user set files too)
    fig = figures.spectra_figure(fd["k"], fd["best"], fd["scalar"], fd["tensor"], set_objs,
                                 f"{v['run_name']}: best fit and posterior bands")
    written += figures.save_with_caption(
        fig, out / "spectra", "Primordial scalar (and tensor) power spectra: best fit (red), "
        "68% and 95% posterior bands, the observable window 1e-4 to 0.2 Mpc^-1 (grey, common "
        "practice) and the 68% bands of amplitude and tilt / 95% upper limits on r of the "
        "constraint sets (tensor limits drawn at A_s = 2.1e-9).\n" + cite)
    ga, gb, level, per_set, pts = fd["map"]
    fig = figures.exclusion_map_figure(ga, gb, level, per_set, pts, fd["map_labels"],
                                       f"{v['run_name']}: exclusion map")
    a, b = data["settings"]["exclusion_map"]
    written += figures.save_with_caption(
        fig, out / "exclusion_map", f"Exclusion map over {a} and {b} (other parameters at the "
        "best fit): combined verdict of the run's constraint sets (p < 0.05 and p < 0.003), "
        "95% boundary of each set alone, posterior samples.\n" + cite)
    if fd["efold"] is not None:
        e = fd["efold"]
        fig = figures.efolds_figure(e["posterior"], e["prior"], e["label"],
                                    f"{v['run_name']}: e-folds {e['name']}")
        written += figures.save_with_caption(
            fig, out / "efolds", f"Prior and posterior distribution of {e['name']}.\n" + cite)
    return written
