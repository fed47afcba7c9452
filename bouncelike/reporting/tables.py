"""Marginal tables (Markdown and LaTeX) and the verdicts text of a posterior run."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any


def _num(x: float, digits: int = 4) -> str:
    if x is None or not math.isfinite(x):
        return "--"
    return f"{x:.{digits}g}"


def _latex_scale(x: float) -> tuple[float, str]:
    """Common power of ten for very small or large numbers: (10^e, r"\times 10^{e}")."""
    if x is None or not math.isfinite(x) or x == 0:
        return 1.0, ""
    e = int(math.floor(math.log10(abs(x))))
    if -3 <= e <= 4:
        return 1.0, ""
    return 10.0**e, f" \\times 10^{{{e}}}"


def _cell(e: dict[str, Any], latex: bool) -> tuple[str, str]:
    if e["kind"] == "indicator":
        return f"fraction {_num(e['mean'], 3)}", "--"
    if e["kind"] in ("upper_limit", "lower_limit"):
        op = ("<" if e["kind"] == "upper_limit" else ">")
        if latex:
            scale, tail = _latex_scale(e["limit95"])
            return f"${op} {_num(e['limit95'] / scale)}{tail}$", "95% limit"
        return f"{op} {_num(e['limit95'])}", "95% limit"
    m = e["mean"]
    up, lo = e["upper68"] - m, m - e["lower68"]
    if latex:
        scale, tail = _latex_scale(m)
        return (f"${_num(m / scale)}^{{+{_num(up / scale, 2)}}}_{{-{_num(lo / scale, 2)}}}"
                f"{tail}$", f"$[{_num(e['lower95'] / scale)}, {_num(e['upper95'] / scale)}]"
                f"{tail}$")
    return f"{_num(m)} +{_num(up, 2)} -{_num(lo, 2)}", (
        f"[{_num(e['lower95'])}, {_num(e['upper95'])}]")


def marginal_markdown(stats: Sequence[dict[str, Any]], labels: dict[str, str],
                      roles: dict[str, str]) -> str:
    lines = ["| parameter | role | mean ± 68% | 95% interval or limit | median | std |",
             "|---|---|---|---|---|---|"]
    for e in stats:
        c68, c95 = _cell(e, latex=False)
        if e["kind"] in ("upper_limit", "lower_limit"):
            c68, c95 = "--", c68 + " (95%)"
        lines.append(f"| {e['name']} (${labels.get(e['name'], e['name'])}$) | "
                     f"{roles.get(e['name'], '')} | {c68} | {c95} | {_num(e['median'])} | "
                     f"{_num(e['std'], 3)} |")
    return "\n".join(lines) + "\n"


def marginal_latex(stats: Sequence[dict[str, Any]], labels: dict[str, str],
                   caption: str) -> str:
    rows = []
    for e in stats:
        c68, c95 = _cell(e, latex=True)
        if e["kind"] in ("upper_limit", "lower_limit"):
            c68, c95 = "--", c68
        rows.append(f"${labels.get(e['name'], e['name'])}$ & {c68} & {c95} \\\\")
    body = "\n".join(rows)
    return (
        "\\begin{table}\n\\centering\n"
        f"\\caption{{{_latex_escape(caption)}}}\n"
        "\\begin{tabular}{lcc}\n\\hline\n"
        "Parameter & Mean and 68\\% & 95\\% interval or limit \\\\\n\\hline\n"
        f"{body}\n\\hline\n\\end{{tabular}}\n\\end{{table}}\n")


def _latex_escape(text: str) -> str:
    for a, b in (("\\", "\\textbackslash{}"), ("&", "\\&"), ("%", "\\%"), ("_", "\\_"),
                 ("#", "\\#")):
        text = text.replace(a, b)
    return text


def verdicts_markdown(v: dict[str, Any]) -> str:
    """Human-readable verdicts of a run."""
    bf = v["best_fit"]
    out = [f"# Verdicts: {v['run_name']} ({v['model']})", ""]
    out.append(f"Constraint sets: {', '.join(v['constraint_sets'])}.")
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
    out.append("")
    out.append(f"**Best fit** (highest likelihood among {v['samples_used']} posterior samples): "
               f"chi2 = {_num(bf['chi2'])} for {bf['dof']} data points, p = "
               f"{_num(bf['p_value'], 3)}, verdict **{bf['verdict']}**"
               + (f" at {bf['excluded_at']:.1%}" if bf.get("excluded_at") else "") + ".")
    out.append("")
    pf = v["allowed_prior_fraction"]
    out.append(f"**Prior volume allowed** (not excluded at 95% by the combined sets): "
               f"{_num(pf['fraction_allowed'], 3)} of {pf['points']} prior draws"
               + (f" ({pf['failed']} failed)" if pf["failed"] else "") + ".")
    po = v["allowed_posterior_fraction"]
    out.append(f"**Posterior samples allowed**: {_num(po['fraction_allowed'], 3)} of "
               f"{po['points']}.")
    out.append("")
    out.append("## Marginal constraints")
    for e in v["marginals"]:
        from ..sampling.verdicts import format_interval

        out.append(f"- {e['name']}: {format_interval(e)}")
    if v.get("savage_dickey"):
        out.append("")
        out.append("## Nested settings (Savage-Dickey density ratio)")
        for name, sd in v["savage_dickey"].items():
            if sd.get("resolved", True) or "B01_upper_bound" not in sd:
                out.append(f"- {name} = {sd['value']:g}: B01 = {_num(sd['B01'], 3)} (ln B01 = "
                           f"{_num(sd['ln_B01'], 3)}; > 0 favours the nested model)")
            else:
                out.append(f"- {name} = {sd['value']:g}: B01 < {_num(sd['B01_upper_bound'], 3)}"
                           " (the nested value lies beyond the posterior samples; the nested "
                           "model is disfavoured at least this strongly)")
    ev = v.get("evidence")
    if ev:
        out.append("")
        out.append(f"ln Z = {_num(ev['ln_Z'], 5)} ± {_num(ev['ln_Z_error'], 2)} "
                   f"({ev['method']}; likelihood normalised as -chi2/2)")
    if v.get("comparisons"):
        out.append("")
        out.append("## Discrete settings (other runs)")
        for c in v["comparisons"]:
            out.append(f"- {c['run']} vs {c['against']}: delta chi2_min = "
                       f"{_num(c['delta_chi2_min'], 3)}, ln(Z1/Z2) = "
                       f"{_num(c['ln_evidence_ratio'], 3)} ± "
                       f"{_num(c['ln_evidence_ratio_error'], 2)} ({c['interpretation']})")
    out.append("")
    out.append("## Which constraint set excludes it")
    out.append("")
    out.append("| set | forecast | best-fit chi2 | best-fit verdict | posterior fraction "
               "excluded (95%) | source |")
    out.append("|---|---|---|---|---|---|")
    for r in v["by_set"]:
        verdict = r["best_fit_verdict"] + (f" ({r['best_fit_excluded_at']:.1%})"
                                           if r.get("best_fit_excluded_at") else "")
        out.append(f"| {r['set']} | {'yes' if r['forecast'] else 'no'} | "
                   f"{_num(r['best_fit_chi2'], 3)} | {verdict} | "
                   f"{_num(r['posterior_fraction_excluded_95'], 3)} | arXiv:{r['arxiv']} |")
    out.append("")
    out.append(v["verdict_rule"])
    out.append("")
    out.append("Upper limits are treated as half-Gaussians in r >= 0 whose 95% point is the "
               "published limit (an approximation; see each set's file).")
    if v.get("failures"):
        out.append("")
        out.append("Failed forward-model evaluations during the run (log-likelihood -inf):")
        out.extend(f"- {n} x {t}" for t, n in v["failures"].items())
    return "\n".join(out) + "\n"
