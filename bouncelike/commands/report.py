"""``bouncelike report RUN_DIR``: verdicts, marginal tables, triangle plot and figure pack."""

from __future__ import annotations

import argparse
from typing import Any

from ._layer import CommandResult, Options

NAME = "report"
HELP = "write verdicts, tables, triangle plot and figures of a posterior run into RUN/report/"
OPTIONS = Options(output="RUN_DIR/report", compiles=True)
JSON_KEYS = ("run_name", "model", "run_folder", "constraint_sets", "marginals", "best_fit",
             "allowed_prior_fraction", "allowed_posterior_fraction", "savage_dickey",
             "evidence", "comparisons", "by_set", "failures", "not_evaluable", "p_value_rules",
             "methods", "large_scale_term", "bounce")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("run_dir", help="run folder written by 'bouncelike sample'")


def run(args: argparse.Namespace, session: Any) -> CommandResult:
    from pathlib import Path

    from ..io import output_set
    from ..reporting.outputs import write_report
    from ..reporting.report import compute_report
    from ..sampling import chains

    run_dir = Path(args.run_dir)
    chains.read_manifest(run_dir, chains.MANIFEST_NEEDS)  # a run folder? (before the output)
    out = session.output_folder(default=run_dir / "report")
    data = compute_report(run_dir)
    v = data["verdicts"]
    for note in v.get("loading_notes", []):
        session.warn(note)
    manifest = data["manifest"]
    sources = {s.get("name"): s for s in manifest.get("likelihood_sources", []) or []}
    sets = [{**c, **{k: sources.get(c.get("name"), {}).get(k) for k in ("path", "sha256")}}
            for c in v.get("constraint_set_citations", [])]
    provenance = session.provenance(sets, config=run_dir / chains.MANIFEST,
                                    upstream=manifest.get("provenance"))
    v["provenance"] = provenance
    with output_set(out):  # all report files, or none
        written = write_report(args.run_dir, data, output=args.output)
    result = {k: v[k] for k in JSON_KEYS}
    result["files"] = [str(p) for p in written]
    return CommandResult(data=result, text=summary_text(v, written), provenance=provenance,
                         files=tuple(result["files"]))


def summary_text(v: dict, written: list) -> str:
    from ..reporting.evidence import evidence_text
    from ..reporting.goodness import goodness_text
    from ..reporting.marginals import interval_text
    from ..reporting.refusals import coincidence_notes
    from ..reporting.tables import outcome_text

    bf = v["best_fit"]
    lines = [f"run {v['run_name']} ({v.get('model_title', v['model'])}) against "
             f"{', '.join(v['constraint_sets'])}",
             f"best fit: {goodness_text(bf)}; verdict {bf['verdict']}"
             + (f" at {bf['excluded_at']:.1%}" if bf["excluded_at"] else ""),
             "prior volume allowed at 95%: "
             + outcome_text(v["allowed_prior_fraction"], "prior draws"),
             "evidence: " + evidence_text(v["evidence"])]
    lines += [f"  {e['name']}: {interval_text(e)}" for e in v["marginals"]]
    lines += [f"  note: {n}" for n in coincidence_notes(v)]
    if v.get("bounce"):
        from ..reporting.lowell import bounce_text

        lines.append(bounce_text(v["bounce"]))
    excl = [r["set"] + (" (forecast)" if r["forecast"] else "") for r in v["by_set"]
            if r["best_fit_verdict"] == "excluded"]
    lines.append("best fit excluded by: " + (", ".join(excl) if excl else "no single set"))
    folder = written[0].parent if written else ""
    lines.append(f"report written to {folder}/ ({len(written)} files)")
    return "\n".join(lines)
