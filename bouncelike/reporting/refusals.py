"""Where a model cannot be evaluated, and which reported bounds are really that edge.

A posterior has no weight where the model has no prediction (a point outside its domain, a
featured spectrum the pivot summary does not represent, a numerical failure), so a marginal
limit can sit where the model stops being evaluable rather than where the data exclude it.
Such a limit is not a data bound. Rule (ours): posterior samples are moved across the bound
-- the parameter redrawn uniformly on the ruled-out side (between a one-sided 95% limit and the
prior bound beyond it, or beyond either end of the 95% interval), the other parameters kept --
and each moved point is scored as one configuration. The bound *coincides with a
not-evaluable region* when at least :data:`COINCIDENCE_FRACTION` of the moved points cannot
be evaluated. Only sampled parameters are probed (a derived one cannot be moved on its own).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from .marginals import shown
from .proportions import binomial_fraction

REFUSED = ("not_evaluable", "numerical_failure")
COINCIDENCE_FRACTION = 0.5
PROBES = 60
RULE = ("a bound coincides with a not-evaluable region when, of posterior samples moved across "
        "it (the parameter redrawn uniformly on the ruled-out side, the others kept), at least "
        f"{COINCIDENCE_FRACTION:.0%} cannot be evaluated; it is then not a data bound")


def _sides(entry: dict[str, Any], lower: float, upper: float) -> list[tuple[str, float, float]]:
    """(side, bound, far end) of each ruled-out side of a marginal within the prior."""
    kind = entry.get("kind")
    width = 3.0 * max(entry.get("upper68", 0.0) - entry.get("lower68", 0.0), 1e-300)
    lo = lower if math.isfinite(lower) else None
    hi = upper if math.isfinite(upper) else None
    out = []
    if kind == "upper_limit":
        b = entry["limit95"]
        out.append(("above", b, hi if hi is not None else b + width))
    elif kind == "lower_limit":
        b = entry["limit95"]
        out.append(("below", b, lo if lo is not None else b - width))
    elif kind == "two_sided":
        out.append(("below", entry["lower95"], lo if lo is not None else entry["lower95"] - width))
        out.append(("above", entry["upper95"], hi if hi is not None else entry["upper95"] + width))
    return [(side, b, far) for side, b, far in out if far != b]


def bound_text(entry: dict[str, Any], side: str) -> str:
    s = shown(entry)
    e = f" x 10^{s.exponent}" if s.exponent else ""
    if s.op:
        return f"{entry['name']} {s.op} {s.value}{e}"
    value = s.lo95 if side == "below" else s.hi95
    return f"{entry['name']} {'>' if side == 'below' else '<'} {value}{e} (end of the 95% interval)"


def coincidences(marginals: Sequence[dict[str, Any]], bounds: dict[str, tuple[float, float]],
                 probe: Callable[[str, float, float], Sequence[str]]) -> list[dict[str, Any]]:
    """Each bound of a sampled parameter (``bounds``: its prior range) with the share of moved
    posterior samples beyond it that cannot be evaluated (see the module docstring).
    ``probe(name, a, b)`` returns the outcomes of posterior samples with ``name`` redrawn
    uniformly between a and b."""
    rows = []
    for e in marginals:
        if e["name"] not in bounds:
            continue
        for side, value, far in _sides(e, *bounds[e["name"]]):
            outcomes = list(probe(e["name"], min(value, far), max(value, far)))
            n = len(outcomes)
            k = sum(o in REFUSED for o in outcomes)
            rows.append({"parameter": e["name"], "side": side, "value": float(value),
                         "bound": bound_text(e, side), "probes": n, "not_evaluable": k,
                         "fraction": binomial_fraction(k, n),
                         "coincides": bool(n > 0 and k >= COINCIDENCE_FRACTION * n)})
    return rows


def refused_points(folder: Any, names: Sequence[str]) -> np.ndarray | None:
    """Parameter values (columns ``names``) of the evaluations a run recorded as failed or
    refused in its ``failures.csv`` (None when the run folder has none)."""
    import pandas as pd

    path = folder / "failures.csv"
    if not path.is_file():
        return None
    frame = pd.read_csv(path)
    if not set(names) <= set(frame.columns):
        return None
    if "kind" in frame.columns:
        frame = frame[frame["kind"] != "capped"]
    return frame[list(names)].to_numpy(dtype=float)
