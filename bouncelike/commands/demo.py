"""``bouncelike demo``: a score, short posterior runs and their reports, in about two minutes.

The built-in scenario (our own, illustrative): is a plateau potential preferred over the
quadratic one by Planck 2018 + BICEP/Keck 2018, and how close to the observable window may a
bounce put its scale? It scores the Starobinsky model at N_* = 55, samples the slow-roll
posteriors of both potentials (N_* and the amplitude free) and, when the bounce transfer model
is part of the build, a bounce on the Starobinsky plateau -- the potential r allows -- in
physical parameters with its background (bounce potential fraction, plateau mass M and N_*
free; the e-folds, N_B*, the bounce scale and the pivot observables derived from each
background; dressed-metric modes in the non-oscillating state, which the transfer cache
covers from 0.01 k_LQC on these bounces). That run adds the large-scale temperature term
(planck2018_lowell_tt): with r and n_s those of the plateau, whatever N_B*, the pivot numbers
cannot tell where the bounce sits, and the verdict on the bounce comes from the temperature
power at multipoles 2-29. The reports give verdicts, the data's bound on the bounce (N_B* from
below, k_LQC from above) and whether it is a data bound or the edge of a region where the
model is not evaluable, the evidence ratio of the two potentials (a discrete setting), tables
and figures. The wall time is printed at the end.
"""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from ._layer import CommandResult, Options

NAME = "demo"
HELP = "run a built-in scenario end to end (score, posterior runs, reports) and show outputs"
OPTIONS = Options(output="bouncelike-out/demo", compiles=True)
DEFAULT_OUTPUT = Path("bouncelike-out/demo")

SETS = ("planck2018_base", "bk18")
LOW_ELL = "planck2018_lowell_tt"
#: the bounce whose scale the data bound
BOUNCE_PARAMETERS = ("N_B_star", "log10_k_lqc")
# name, prior, seed, runs compared with, exclusion-map axes, tau multiple, module needed,
# extra sets, workers
RUNS = (
    ("starobinsky", "starobinsky_slow_roll", 3, ["chains/quadratic"],
     ["N_star", "ln_1e10_As"], 40, None, (), 1),
    ("quadratic", "quadratic_slow_roll", 4, [], ["N_star", "ln_1e10_As"], 40, None, (), 1),
    ("bounce", "bounce_dressed_metric_physical_non_oscillating_starobinsky", 5, [],
     ["log10_potential_fraction", "N_star"], 30, "bouncelike.perturbations.transfer",
     (LOW_ELL,), 2),
)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """No options of its own: --output, --json, --quiet are shared."""


def _available(module: str | None) -> bool:
    if module is None:
        return True
    import importlib.util

    try:
        return importlib.util.find_spec(module) is not None
    except ModuleNotFoundError:
        return False


def _config(prior_path: Path, seed: int, compare: list[str], emap: list[str],
            tau_multiple: int, extra_sets: tuple[str, ...], workers: int) -> str:
    sets = ", ".join(f'"{s}"' for s in (*SETS, *extra_sets))
    comp = ", ".join(f'"{c}"' for c in compare)
    axes = ", ".join(f'"{a}"' for a in emap)
    low = (" and the temperature power at multipoles 2-29 (Planck 2018 V)" if extra_sets
           else "")
    return f"""# Demo scenario of our own: posterior against Planck 2018 + BK18{low}.
[likelihood]
sets = [{sets}]

[sampling]
prior = "{prior_path.as_posix()}"
walkers = 16
max_steps = 3000
min_steps = 300
tau_multiple = {tau_multiple}
tau_tolerance = 0.1
checkpoint_every = 100
seed = {seed}
chains_dir = "chains"
workers = {workers}

[report]
exclusion_map = [{axes}]
grid = 20
refine = 2
prior_draws = 400
rescore_samples = 120
evidence_draws = 2000
compare_runs = [{comp}]
"""


def run(args: argparse.Namespace, session: Any) -> CommandResult:
    import os
    import time

    from ..io import json_safe, output_set, write_json_atomic, write_text_atomic
    from ..likelihood.gaussian import GaussianLikelihood
    from ..models.registry import forward_model
    from ..parallel import make_pool
    from ..reporting.evidence import comparison_text, evidence_text
    from ..reporting.goodness import goodness_text
    from ..reporting.lowell import bounce_text
    from ..reporting.marginals import interval_text
    from ..reporting.outputs import write_report
    from ..reporting.refusals import coincidence_notes
    from ..reporting.report import compute_report
    from ..reporting.tables import outcome_text
    from ..sampling.convergence import result_summary
    from ..sampling.driver import run_sampler
    from ..sampling.posterior import install_posterior
    from ..sampling.priors import resolve_prior_path
    from ..sampling.setup import build_run

    started = time.perf_counter()
    out = session.output_folder(("score.json",), default=DEFAULT_OUTPUT)
    say = session.say
    # 1. score one point of the scenario
    model = forward_model("slow_roll_starobinsky")
    likelihood = GaussianLikelihood.from_names(SETS)
    provenance = session.provenance(likelihood.sets)
    point = {"N_star": 55.0, "ln_1e10_As": 3.044}
    score = likelihood.score(model.spectra(point))
    say(f"[1/3] score: Starobinsky slow roll at N_* = 55 against {', '.join(SETS)}: "
        f"chi2 = {score.chi2:.3g} for {score.dof} terms, p = {score.p_value:.3g} (one "
        f"configuration: dof = {score.dof} terms), {score.verdict}")
    for t in score.terms:
        say(f"      {t.quantity:>11s}  predicted {t.predicted:.4g}  published "
            f"{t.published:.4g} ({t.kind})  pull {t.pull:+.2f}  [{t.source}]")
    runs = [r for r in RUNS if _available(r[6])]
    with output_set(out):  # the score and the runs' configurations, as one set
        write_json_atomic(out / "score.json", json_safe({"point": point, "model": model.name,
                                                         **score.as_dict(),
                                                         "provenance": provenance}))
        for name, prior_name, seed, compare, emap, tau_mult, _, extra, workers in runs:
            prior_src = resolve_prior_path(prior_name)
            write_text_atomic(out / "priors" / prior_src.name,
                              prior_src.read_text(encoding="utf-8"))
            workers = max(1, min(workers, os.cpu_count() or 1))
            write_text_atomic(out / f"{name}.toml",
                              _config(Path("priors") / prior_src.name, seed, compare, emap,
                                      tau_mult, extra, workers))
    # 2. posterior runs
    summaries = {}
    for r in RUNS:
        if r not in runs:
            say(f"      (run '{r[0]}' skipped: {r[6]} is not part of this build)")
    for i, (name, *_) in enumerate(runs):
        setup = build_run(out / f"{name}.toml", quiet=session.quiet or session.json,
                          output=out / "chains" / name)
        sets = ", ".join(s.name for s in setup.likelihood.sets)
        say(f"[2/3] posterior run {i + 1}/{len(runs)}: {setup.model.name} against {sets} "
            f"({setup.settings.walkers} walkers, {setup.workers} worker"
            f"{'s' if setup.workers > 1 else ''}) -> {setup.folder}")
        with make_pool(setup.workers, initializer=install_posterior,
                       initargs=(setup.posterior,)) as pool:
            result = run_sampler(setup.posterior, setup.settings, setup.folder, pool=pool,
                                 resume=True, manifest=setup.manifest,
                                 fingerprint=setup.fingerprint,
                                 show_progress=setup.show_progress)
        s = result_summary(result)
        summaries[name] = s
        say(f"      {s['status']} after {s['steps']} steps, acceptance "
            f"{s['acceptance_fraction']:.2f}, tau " +
            ", ".join(f"{k} {v:.0f}" for k, v in s["tau"].items()))
    # 3. reports (the quadratic run first: the plateau run compares itself with it)
    reports = {}
    for name, *_ in reversed(runs):
        folder = out / "chains" / name
        data = compute_report(folder)
        v = data["verdicts"]
        v["provenance"] = session.provenance(
            v.get("constraint_set_citations", []), config=folder / "manifest.json",
            upstream=data["manifest"].get("provenance"))
        with output_set(folder / "report"):
            write_report(folder, data)
        reports[name] = v
        bf = v["best_fit"]
        excl = [r["set"] for r in v["by_set"] if r["best_fit_verdict"] == "excluded"]
        say(f"[3/3] report {name}: best fit {goodness_text(bf)}; {bf['verdict']}"
            + (f" at {bf['excluded_at']:.1%}" if bf["excluded_at"] else "")
            + f"; best fit excluded by: {', '.join(excl) or 'no single set'}")
        say(f"      prior volume allowed: "
            f"{outcome_text(v['allowed_prior_fraction'], 'prior draws')}")
        say(f"      {evidence_text(v['evidence'])}")
        if v["large_scale_term"]["used"]:
            say(f"      large-scale temperature term ({v['large_scale_term']['set']}, ell "
                f"{v['large_scale_term']['multipoles'][0]}-"
                f"{v['large_scale_term']['multipoles'][1]}): anchored to the best-fit LCDM "
                "spectrum, so what our projection leaves out cancels to first order")
        for e in v["marginals"]:
            if e["name"] in BOUNCE_PARAMETERS:
                say(f"      {e['name']}: {interval_text(e)}")
        if v.get("bounce"):
            say(f"      {bounce_text(v['bounce'])}")
        for note in coincidence_notes(v):
            say(f"      note: {note}")
        for c in v.get("comparisons", []):
            say(f"      {comparison_text(c)}")
    lines = ["", f"outputs in {out}/:",
             "  score.json                 score of the scenario point"]
    for name, *_ in runs:
        lines += [f"  {name + '.toml':26s} configuration of the run (prior file in priors/)",
                  f"  {'chains/' + name + '/':26s} chain.csv (pandas.read_csv), samples.csv, "
                  "manifest.json",
                  f"  {'chains/' + name + '/report/':26s} verdicts.md, marginals.md/.tex, "
                  "triangle, ns_r, exclusion_map, spectra, dell, efolds, not_evaluable where the "
                  "model could not be evaluated (.pdf/.png, .caption.txt, drawn numbers in "
                  ".json)"]
    wall = time.perf_counter() - started
    lines.append(f"demo wall time: {wall:.0f} s")
    data = {"output": str(out), "score": score.as_dict(), "runs": summaries,
            "wall_time_s": wall,
            "verdicts": {k: {"best_fit": v["best_fit"], "comparisons": v["comparisons"],
                             "bounce": v.get("bounce")}
                         for k, v in reports.items()}}
    return CommandResult(data=data, text="\n".join(lines), provenance=provenance)
