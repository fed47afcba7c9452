"""``bouncelike report RUN_DIR``: verdicts, marginal tables, triangle plot and figure pack."""

from __future__ import annotations

import argparse
import json

from ..io import json_safe

NAME = "report"
HELP = "write verdicts, tables, triangle plot and figures of a posterior run into RUN/report/"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("run_dir", help="run folder written by 'bouncelike sample'")
    parser.add_argument("--json", action="store_true",
                        help="print the verdicts and marginal statistics as one JSON object")
    parser.add_argument("--output", default=None,
                        help="folder for the report files (default: RUN_DIR/report)")
    parser.add_argument("--quiet", action="store_true", help="print nothing but errors")


def run(args: argparse.Namespace) -> int:
    import sys
    from pathlib import Path

    from ..io import output_set
    from ..reporting.outputs import write_report
    from ..reporting.report import compute_report

    data = compute_report(args.run_dir)
    v = data["verdicts"]
    for note in v.get("loading_notes", []):
        print(f"bouncelike: note: {note}", file=sys.stderr)
    out = Path(args.output) if args.output is not None else Path(args.run_dir) / "report"
    with output_set(out):  # all report files, or none
        written = write_report(args.run_dir, data, output=args.output)
    if args.json:
        out = {k: v[k] for k in ("run_name", "model", "run_folder", "constraint_sets",
                                 "marginals", "best_fit", "allowed_prior_fraction",
                                 "allowed_posterior_fraction", "savage_dickey", "evidence",
                                 "comparisons", "by_set", "failures", "not_evaluable",
                                 "p_value_rules", "methods")}
        out["files"] = [str(p) for p in written]
        print(json.dumps(json_safe(out), indent=2, default=str))
    elif not args.quiet:
        print(summary_text(v, written))
    return 0


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
    excl = [r["set"] + (" (forecast)" if r["forecast"] else "") for r in v["by_set"]
            if r["best_fit_verdict"] == "excluded"]
    lines.append("best fit excluded by: " + (", ".join(excl) if excl else "no single set"))
    folder = written[0].parent if written else ""
    lines.append(f"report written to {folder}/ ({len(written)} files)")
    return "\n".join(lines)
