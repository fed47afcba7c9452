"""Marginal tables (Markdown and LaTeX) and the verdicts text of a posterior run.

Every number comes from the statistics modules (:mod:`.marginals`, :mod:`.goodness`,
:mod:`.proportions`, :mod:`.evidence`) through their own text functions, and every rule those
numbers follow is stated in the text.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from . import evidence as E
from . import goodness, proportions
from .marginals import INTERVAL_DEFINITION, cells, interval_text


def _num(x: float | None, digits: int = 4) -> str:
    if x is None or not math.isfinite(x):
        return "--"
    return f"{x:.{digits}g}"


def marginal_markdown(stats: Sequence[dict[str, Any]], labels: dict[str, str],
                      roles: dict[str, str]) -> str:
    lines = ["| parameter | role | median and 68% interval | 95% interval or limit | mean "
             "| std |", "|---|---|---|---|---|---|"]
    for e in stats:
        c68, c95 = cells(e, latex=False)
        lines.append(f"| {e['name']} (${labels.get(e['name'], e['name'])}$) | "
                     f"{roles.get(e['name'], '')} | {c68} | {c95} | {_num(e.get('mean'))} | "
                     f"{_num(e.get('std'), 3)} |")
    lines += ["", f"Intervals: {INTERVAL_DEFINITION}."]
    return "\n".join(lines) + "\n"


def marginal_latex(stats: Sequence[dict[str, Any]], labels: dict[str, str],
                   caption: str) -> str:
    rows = []
    for e in stats:
        c68, c95 = cells(e, latex=True)
        rows.append(f"${labels.get(e['name'], e['name'])}$ & {c68} & {c95} \\\\")
    body = "\n".join(rows)
    return (
        "\\begin{table}\n\\centering\n"
        f"\\caption{{{_latex_escape(caption)}}}\n"
        "\\begin{tabular}{lcc}\n\\hline\n"
        "Parameter & Median and 68\\% & 95\\% interval or limit \\\\\n\\hline\n"
        f"{body}\n\\hline\n\\end{{tabular}}\n\\end{{table}}\n")


def _latex_escape(text: str) -> str:
    for a, b in (("\\", "\\textbackslash{}"), ("&", "\\&"), ("%", "\\%"), ("_", "\\_"),
                 ("#", "\\#")):
        text = text.replace(a, b)
    return text


def outcome_text(f: dict[str, Any], what: str) -> str:
    """The allowed fraction with its interval, then the other outcomes that occurred."""
    fr = f["fractions"]
    parts = [proportions.fraction_text(fr["allowed"], what)]
    for o, name in (("excluded", "excluded"), ("undetermined", "undetermined (capped)"),
                    ("not_evaluable", "not evaluable"),
                    ("numerical_failure", "numerical failures"),
                    ("model_error", "model errors")):
        if f["counts"].get(o):
            parts.append(f"{name}: {proportions.fraction_text(fr[o], what)}")
    return "; ".join(parts)


def verdicts_markdown(v: dict[str, Any]) -> str:
    """Human-readable verdicts of a run."""
    bf = v["best_fit"]
    out = [f"# Verdicts: {v['run_name']} ({v.get('model_title', v['model'])})", ""]
    out.append(f"Model: {v['model']}. Constraint sets: "
               + ", ".join(f"{s.get('label', s['name'])} ({s['name']})"
                           for s in v["constraint_set_citations"]) + ".")
    run = v.get("run") or {}
    if run:
        tau = ", ".join(f"{k} {t:.1f}" for k, t in run.get("tau", {}).items())
        ess = ", ".join(f"{k} {e:.0f}" for k, e in run.get("effective_sample_size", {}).items())
        out.append("")
        out.append(f"Run: {run.get('status')} after {run.get('steps')} steps x "
                   f"{run.get('walkers')} walkers; acceptance "
                   f"{_num(run.get('acceptance_fraction'), 3)}; burn-in {run.get('burn_in')}, "
                   f"thinning {run.get('thin')}; autocorrelation times {tau}; effective sample "
                   f"sizes {ess}"
                   + ("" if run.get("tau_reliable", True) else
                      " (chain shorter than the chosen multiple of tau: estimates unreliable)")
                   + ".")
    for note in v.get("loading_notes", []):  # what reading the run folder had to drop
        out.append("")
        out.append(f"Note: {note}.")
    out += ["", "## Best fit", ""]
    verdict = f"**{bf['verdict']}**" + (f" at {bf['excluded_at']:.1%}"
                                        if bf.get("excluded_at") else "")
    out.append(f"Highest likelihood among {v['samples_used']} posterior samples: "
               f"{goodness.goodness_text(bf)}; verdict {verdict}.")
    if bf.get("bound"):
        out.append(f"The best-fit spectra are capped ({bf.get('cap')}): chi2 is a lower bound "
                   "and p an upper bound.")
    out += ["", "## How much of the model survives", ""]
    out.append("**Prior volume allowed** (each prior draw one configuration, not excluded at "
               "95% by the combined sets): "
               + outcome_text(v["allowed_prior_fraction"], "prior draws") + ".")
    out.append("")
    out.append("**Posterior samples allowed**: "
               + outcome_text(v["allowed_posterior_fraction"], "posterior samples") + ".")
    ne = v.get("not_evaluable") or {}
    edge = {(c["parameter"]) for c in (*ne.get("coincidences", []), *ne.get("derived", []))
            if c["coincides"]}
    out += ["", "## Marginal constraints", ""]
    out.extend(f"- {e['name']}: {interval_text(e)}"
               + (" -- coincides with a region where the model is not evaluable (below); "
                  "not a data bound" if e["name"] in edge else "") for e in v["marginals"])
    out += ["", f"Intervals: {INTERVAL_DEFINITION}."]
    if v.get("bounce"):
        from .lowell import bounce_text

        out += ["", "## Where the bounce may sit", "", bounce_text(v["bounce"]) + "."]
    if v.get("savage_dickey"):
        out += ["", "## Nested settings (Savage-Dickey density ratio)", ""]
        for name, sd in v["savage_dickey"].items():
            if sd.get("resolved", True) or "B01_upper_bound" not in sd:
                out.append(f"- {name} = {sd['value']:g}: B01 = {_num(sd['B01'], 3)} (ln B01 = "
                           f"{_num(sd['ln_B01'], 3)}; > 0 favours the nested model)")
            else:
                out.append(f"- {name} = {sd['value']:g}: B01 < {_num(sd['B01_upper_bound'], 3)}"
                           " (the nested value lies beyond the posterior samples; the nested "
                           "model is disfavoured at least this strongly)")
    if ne:
        out += ["", "## Where the model is not evaluable", ""]
        out.append("Prior volume where the model has no prediction the likelihood can score "
                   "(outside its domain, spectra the pivot summary does not represent, numerical "
                   "failures): " + proportions.fraction_text(ne["prior_fraction"], "prior draws")
                   + ". These points are reported as not evaluable, never as excluded.")
        rows = [c for c in ne.get("coincidences", []) if c["not_evaluable"]]
        if rows:
            out += ["", "| bound | posterior samples moved beyond it | not evaluable there | "
                        "likelihood of the evaluable ones (relative) | coincides with the "
                        "not-evaluable edge |", "|---|---|---|---|---|"]
            out.extend(f"| {c['bound']} | {c['probes']} | "
                       f"{proportions.fraction_text(c['fraction'], 'moved')} | "
                       f"{_num(c.get('likelihood_ratio'), 2)} | "
                       f"{'yes: not a data bound' if c['coincides'] else 'no'} |" for c in rows)
            out.append("")
        if ne.get("run_reasons"):
            out.append("Evaluations the run could not use (failures.csv), with the prior "
                       "fraction each reason covers in the run's prior survey:")
            out.append("")
            out.extend(f"- [{r['kind'].replace('_', ' ')}] {r['reason']}: {r['count']} during "
                       f"the run; prior fraction "
                       f"{proportions.fraction_text(r['prior_fraction'], 'survey draws')}"
                       for r in ne["run_reasons"])
            out.append("")
        derived = [d for d in ne.get("derived", []) if d["coincides"] is not None]
        if derived:
            out.append("Bounds of derived parameters, judged through the sampled parameter "
                       "that carries them:")
            out.append("")
            out.extend(f"- {d['bound']}: carried by {d['carrier']} (correlation "
                       f"{d['correlation']:+.2f}; {d['carrier_bound']}): "
                       + ("coincides with the not-evaluable edge, not a data bound"
                          if d["coincides"] else "a data bound") for d in derived)
            out.append("")
        if not any(c["coincides"] for c in (*ne.get("coincidences", []), *derived)):
            out.append("No bound coincides with a not-evaluable region.")
        out.append(f"Rule: {ne['rule']}.")
    ev = v.get("evidence")
    if ev:
        out += ["", "## Evidence", ""]
        out.append(f"{E.evidence_text(ev)}; {ev['method']}; likelihood normalised as "
                   f"-chi2/2. Rule: {E.RELIABILITY_RULE}.")
    if v.get("comparisons"):
        out += ["", "## Discrete settings (other runs)", ""]
        out.extend(f"- {E.comparison_text(c)}" for c in v["comparisons"])
    out += ["", "## Which constraint set excludes it", ""]
    out.append("| set | forecast | best-fit chi2 (dof) | best-fit verdict | posterior samples "
               "excluded at 95% | source |")
    out.append("|---|---|---|---|---|---|")
    for r in v["by_set"]:
        verdict = r["best_fit_verdict"] + (f" ({r['best_fit_excluded_at']:.1%})"
                                           if r.get("best_fit_excluded_at") else "")
        chi2 = ("> " if r.get("best_fit_bound") else "") + _num(r["best_fit_chi2"], 3)
        if r.get("kind") == "temperature_low_ell":
            chi2 = f"T = {chi2}"  # the low-ell statistic, with its calibrated p
        excl = r.get("posterior_excluded")
        frac = (proportions.fraction_text(excl, "scored") if excl
                else _num(r["posterior_fraction_excluded_95"], 3))
        if r.get("samples_not_scored"):
            frac += f"; {r['samples_not_scored']} not evaluable"
        out.append(f"| {r.get('label', r['set'])} ({r['set']}) | "
                   f"{'yes' if r['forecast'] else 'no'} | {chi2} ({r.get('best_fit_dof', '')}) "
                   f"| {verdict} | {frac} | arXiv:{r['arxiv']} |")
    if v.get("large_scale_term"):
        from .lowell import statement_lines

        out += ["", "## Large-scale temperature term", ""]
        out.extend(statement_lines(v["large_scale_term"]))
    out += ["", "## Rules", ""]
    out.append(f"- {v['verdict_rule']}.")
    for name, rule in v.get("p_value_rules", goodness.P_VALUE_RULES).items():
        out.append(f"- p-value, {name.replace('_', ' ')}: {rule}. The table above scores the "
                   "best fit against each set alone as one configuration."
                   if name == "one_configuration" else
                   f"- p-value, {name.replace('_', ' ')}: {rule}.")
    out.append(f"- Fractions: {proportions.FRACTION_RULE}; a point the model cannot evaluate "
               "is counted as not evaluable, never as excluded.")
    out.append("- Upper limits on r are treated as half-Gaussians in r >= 0 whose 95% point is "
               "the published limit (an approximation; see each set's file).")
    if v.get("failures") and not ne.get("run_reasons"):
        out += ["", "Evaluations the run could not use (log-likelihood -inf, no posterior "
                "weight):"]
        out.extend(f"- {n} x {t}" for t, n in v["failures"].items())
    return "\n".join(out) + "\n"
