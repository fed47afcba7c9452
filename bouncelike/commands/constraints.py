"""``bouncelike constraints``: list the shipped constraint sets with their citations.

Given names or set-file paths, shows (and validates) only those. Forecast sets are labelled.
"""

from __future__ import annotations

import json
from typing import Any

from ..io import json_safe
from ..likelihood.sets import QUANTITY_LABELS, ConstraintSet, available_sets, load_constraint_set

NAME = "constraints"
HELP = "list the shipped constraint sets with their citations (forecasts labelled)"


def add_arguments(parser: Any) -> None:
    parser.add_argument(
        "sets", nargs="*", help="set names or set-file paths to show (default: all shipped sets)"
    )
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def format_set(s: ConstraintSet) -> str:
    tag = "  [FORECAST, not a measurement]" if s.is_forecast else ""
    lines = [
        f"{s.name}{tag}",
        f"    {s.title}",
        f"    {s.citation}, arXiv:{s.arxiv}",
        f"    where: {s.table}",
        f"    data: {s.data_combination}",
        f"    pivot k_* = {s.pivot:g} Mpc^-1; overlap tags: {', '.join(s.overlap_tags)}",
    ]
    for t in s.terms:
        lines.append(f"    {QUANTITY_LABELS[t.quantity]:>14} {t.describe()}")
    if s.upper_limit_treatment:
        lines.append(f"    upper limits: {s.upper_limit_treatment}")
    if s.notes:
        lines.append(f"    note: {s.notes}")
    return "\n".join(lines)


def run(args: Any) -> int:
    names = args.sets or list(available_sets())
    sets = [load_constraint_set(n) for n in names]
    if args.json:
        print(json.dumps(json_safe({"sets": [s.as_dict() for s in sets]}), indent=2))
    else:
        print("\n\n".join(format_set(s) for s in sets))
    return 0
