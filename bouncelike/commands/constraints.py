"""``bouncelike constraints``: list the shipped constraint sets with their citations.

Given names or set-file paths, shows (and validates) only those. Forecast sets are labelled.
Sets of pivot constraints are listed first, then the large-scale temperature sets (kind
``temperature_low_ell``) with their citations, reference spectrum and approximations.
"""

from __future__ import annotations

from typing import Any

from ._layer import CommandResult, Options

NAME = "constraints"
HELP = "list the shipped constraint sets with their citations (forecasts labelled)"
OPTIONS = Options()


def add_arguments(parser: Any) -> None:
    parser.add_argument(
        "sets", nargs="*", help="set names or set-file paths to show (default: all shipped sets)"
    )


def format_low_ell_set(s: Any) -> str:
    tag = "  [FORECAST, not a measurement]" if s.is_forecast else ""
    ells = [int(e) for e in s.ells]
    m = s.reference_model
    return "\n".join([
        f"{s.name}{tag}  (large-scale temperature, kind temperature_low_ell)",
        f"    {s.title}",
        f"    {s.citation}, arXiv:{s.arxiv}",
        f"    where: {s.table}",
        f"    data: {s.data_combination}",
        f"    multipoles {ells[0]}-{ells[-1]} ({len(ells)}); {s.units}; overlap tags: "
        f"{', '.join(s.overlap_tags)}",
        f"    intervals read as {100 * s.interval_probability:.2f}% highest-density intervals "
        "of a per-multipole inverse gamma (Hamimeche & Lewis 2008, arXiv:0801.0554)",
        f"    reference: ln(1e10 A_s) = {m['ln_1e10_As']:g}, n_s = {m['n_s']:g}, r = {m['r']:g} "
        f"at k = {m['pivot']:g} Mpc^-1; {s.reference_citation}",
        f"    approximation: {s.approximation}",
        f"    overlap: {s.overlap_treatment}",
        *([f"    note: {s.notes}"] if s.notes else []),
    ])


def format_set(s: Any) -> str:
    from ..likelihood.lowell_data import LowEllData
    from ..likelihood.sets import QUANTITY_LABELS

    if isinstance(s, LowEllData):
        return format_low_ell_set(s)
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


def run(args: Any, session: Any) -> CommandResult:
    from ..likelihood.lowell_data import available_low_ell_sets
    from ..likelihood.sets import available_sets, load_constraint_set

    names = args.sets or [*available_sets(), *available_low_ell_sets()]
    sets = [load_constraint_set(n) for n in names]
    return CommandResult(data={"sets": [s.as_dict() for s in sets]},
                         text="\n\n".join(format_set(s) for s in sets),
                         provenance=session.provenance(sets))
