"""``bouncelike demo``: a score, short posterior runs and their reports, in about a minute.

The built-in scenario (our own, illustrative): is a plateau potential preferred over the
quadratic one by Planck 2018 + BICEP/Keck 2018, and how close to the observable window may a
bounce put its scale? It scores the Starobinsky model at N_* = 55, samples the slow-roll
posteriors of both potentials (N_* and the amplitude free) and, when the bounce transfer model
is part of the build, the dressed-metric bounce model in physical parameters with its
background (bounce potential fraction, inflaton mass and N_* free; the e-folds, N_B*, the
bounce scale and the pivot observables derived from each background), and reports verdicts,
the evidence ratio of the two potentials (a discrete setting), tables and figures.
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
# name, prior, seed, runs compared with, exclusion-map axes, tau multiple, module needed
RUNS = (
    ("starobinsky", "starobinsky_slow_roll", 3, ["chains/quadratic"],
     ["N_star", "ln_1e10_As"], 40, None),
    ("quadratic", "quadratic_slow_roll", 4, [], ["N_star", "ln_1e10_As"], 40, None),
    ("bounce", "bounce_dressed_metric_physical", 5, [], ["log10_potential_fraction", "mass"],
     30, "bouncelike.perturbations.transfer"),
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
            tau_multiple: int) -> str:
    sets = ", ".join(f'"{s}"' for s in SETS)
    comp = ", ".join(f'"{c}"' for c in compare)
    axes = ", ".join(f'"{a}"' for a in emap)
    return f"""# Demo scenario of our own: posterior against Planck 2018 + BK18.
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
    from ..io import json_safe, output_set, write_json_atomic, write_text_atomic
    from ..likelihood.gaussian import GaussianLikelihood
    from ..reporting.evidence import comparison_text, evidence_text
    from ..reporting.goodness import goodness_text
    from ..reporting.marginals import interval_text
    from ..reporting.outputs import write_report
    from ..reporting.refusals import coincidence_notes
    from ..reporting.report import compute_report
    from ..reporting.tables import outcome_text
    from ..sampling.convergence import result_summary
    from ..sampling.driver import run_sampler
    from ..sampling.parametric import parametric_model
    from ..sampling.priors import resolve_prior_path
    from ..sampling.setup import build_run

    out = session.output_folder(("score.json",), default=DEFAULT_OUTPUT)
    say = session.say
    # 1. score one point of the scenario
    model = parametric_model("slow_roll_starobinsky")
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
        for name, prior_name, seed, compare, emap, tau_mult, _ in runs:
            prior_src = resolve_prior_path(prior_name)
            write_text_atomic(out / "priors" / prior_src.name,
                              prior_src.read_text(encoding="utf-8"))
            write_text_atomic(out / f"{name}.toml", _config(Path("priors") / prior_src.name,
                                                            seed, compare, emap, tau_mult))
    # 2. posterior runs
    summaries = {}
    for r in RUNS:
        if r not in runs:
            say(f"      (run '{r[0]}' skipped: {r[6]} is not part of this build)")
    for i, (name, *_) in enumerate(runs):
        setup = build_run(out / f"{name}.toml", quiet=session.quiet or session.json,
                          output=out / "chains" / name)
        say(f"[2/3] posterior run {i + 1}/{len(runs)}: {setup.model.name} "
            f"({setup.settings.walkers} walkers) -> {setup.folder}")
        result = run_sampler(setup.posterior, setup.settings, setup.folder, resume=True,
                             manifest=setup.manifest, fingerprint=setup.fingerprint,
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
        for e in v["marginals"]:
            if e["name"] in ("log10_k_lqc", "N_B_star"):
                say(f"      {e['name']}: {interval_text(e)}")
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
                  "triangle, ns_r, exclusion_map, spectra, efolds, not_evaluable where the model "
                  "could not be evaluated (.pdf/.png, .caption.txt, drawn numbers in .json)"]
    data = {"output": str(out), "score": score.as_dict(), "runs": summaries,
            "verdicts": {k: {"best_fit": v["best_fit"], "comparisons": v["comparisons"]}
                         for k, v in reports.items()}}
    return CommandResult(data=data, text="\n".join(lines), provenance=provenance)
