"""Marginal statistics of posterior samples: one computation, one interval definition.

The marginal tables (Markdown and LaTeX), the verdicts text, the command-line summary and the
titles of the triangle plot all print the numbers of :func:`marginal_statistics` through
:func:`shown`, so that they cannot disagree.

Interval definition (:data:`INTERVAL_DEFINITION`, stated in every caption and table): the
central value is the **median**; the 68% interval is the **equal-tailed** one between the 16th
and 84th percentiles of the samples, the 95% interval the one between the 2.5th and 97.5th.
When the marginal does not separate from a prior bound, a one-sided 95% limit replaces the
interval: the 95th percentile (upper limit) when the posterior piles against the lower bound,
the 5th (lower limit) against the upper bound. Rule for "does not separate" (ours, common
practice): the histogram density in the 5% of the prior range next to the bound exceeds 20% of
the peak density.

Printed precision: the smaller of the two 68% half-widths gets two significant digits and the
central value and the 95% ends are rounded to the same decimal place; a number below 1e-3 or
above 1e5 in size is printed with a common power of ten. Limits get three significant digits.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

ONE_SIDED_EDGE = 0.05
ONE_SIDED_DENSITY = 0.2
INTERVAL_DEFINITION = (
    "median with the equal-tailed 68% interval (16th to 84th percentile) and 95% interval "
    "(2.5th to 97.5th percentile) of the posterior samples; a one-sided 95% limit (95th or "
    "5th percentile) where the marginal does not separate from a prior bound (its density in "
    f"the {ONE_SIDED_EDGE:.0%} of the prior range next to the bound above "
    f"{ONE_SIDED_DENSITY:.0%} of its peak)")


def marginal_statistics(samples: np.ndarray, names: Sequence[str], lower: Sequence[float],
                        upper: Sequence[float]) -> list[dict[str, Any]]:
    """Per-parameter summary of equally weighted samples (n, k), see the module docstring.

    Each entry: ``name``, ``kind`` (``two_sided``, ``upper_limit``, ``lower_limit`` or
    ``indicator`` for a 0/1 column), ``mean``, ``std``, ``median``, ``lower68``/``upper68``,
    ``lower95``/``upper95`` and, for a limit, ``limit95``.
    """
    samples = np.asarray(samples, dtype=float)
    out = []
    for i, name in enumerate(names):
        x = samples[:, i]
        x = x[np.isfinite(x)]
        if x.size == 0:
            out.append({"name": name, "kind": "undefined", "samples": 0})
            continue
        if np.all((x == 0.0) | (x == 1.0)):  # an indicator (e.g. "certified"): a fraction
            out.append({"name": name, "kind": "indicator", "mean": float(np.mean(x)),
                        "std": float(np.std(x, ddof=1)) if x.size > 1 else math.nan,
                        "median": float(np.median(x)), "samples": int(x.size)})
            continue
        q = np.quantile(x, [0.025, 0.16, 0.5, 0.84, 0.975])
        kind = _sidedness(x, lower[i], upper[i])
        entry = {
            "name": name, "mean": float(np.mean(x)),
            "std": float(np.std(x, ddof=1)) if x.size > 1 else math.nan,
            "median": float(q[2]), "lower68": float(q[1]), "upper68": float(q[3]),
            "lower95": float(q[0]), "upper95": float(q[4]), "kind": kind,
            "samples": int(x.size),
        }
        if kind == "upper_limit":
            entry["limit95"] = float(np.quantile(x, 0.95))
        elif kind == "lower_limit":
            entry["limit95"] = float(np.quantile(x, 0.05))
        out.append(entry)
    return out


def _sidedness(x: np.ndarray, lo: float, hi: float) -> str:
    finite_lo, finite_hi = math.isfinite(lo), math.isfinite(hi)
    if not (finite_lo or finite_hi):
        return "two_sided"
    a = lo if finite_lo else float(np.min(x))
    b = hi if finite_hi else float(np.max(x))
    if not b > a:
        return "two_sided"
    hist, _ = np.histogram(x, bins=int(round(1 / ONE_SIDED_EDGE)), range=(a, b))
    peak = hist.max() if hist.size else 0
    if peak == 0:
        return "two_sided"
    if finite_lo and hist[0] > ONE_SIDED_DENSITY * peak:
        return "upper_limit"
    if finite_hi and hist[-1] > ONE_SIDED_DENSITY * peak:
        return "lower_limit"
    return "two_sided"


# -- the printed numbers ---------------------------------------------------------------------

@dataclass(frozen=True)
class Shown:
    """The numbers of one marginal as printed (strings), with a common power of ten."""

    kind: str
    value: str = ""
    plus: str = ""
    minus: str = ""
    lo95: str = ""
    hi95: str = ""
    exponent: int = 0
    op: str = ""


def _exponent(x: float) -> int:
    if not math.isfinite(x) or x == 0 or 1e-3 <= abs(x) < 1e5:
        return 0
    return int(math.floor(math.log10(abs(x))))


def shown(entry: dict[str, Any]) -> Shown:
    """The rounded numbers of a :func:`marginal_statistics` entry (module docstring)."""
    kind = entry["kind"]
    if kind == "indicator":
        return Shown(kind, value=f"{entry['mean']:.3g}")
    if kind == "undefined":
        return Shown(kind)
    if kind in ("upper_limit", "lower_limit"):
        lim = entry["limit95"]
        e = _exponent(lim)
        return Shown(kind, value=f"{lim / 10.0**e:.3g}", exponent=e,
                     op="<" if kind == "upper_limit" else ">")
    m = entry["median"]
    up, lo = entry["upper68"] - m, m - entry["lower68"]
    e = _exponent(m if m != 0 else max(abs(entry["lower95"]), abs(entry["upper95"])))
    s = 10.0**e
    err = min(up, lo) / s
    if err > 0 and math.isfinite(err):
        d = min(max(0, 1 - int(math.floor(math.log10(err)))), 12)

        def fmt(v: float) -> str:
            return f"{v / s:.{d}f}"
    else:
        def fmt(v: float) -> str:
            return f"{v / s:.4g}"
    return Shown(kind, value=fmt(m), plus=fmt(up), minus=fmt(lo), lo95=fmt(entry["lower95"]),
                 hi95=fmt(entry["upper95"]), exponent=e)


def _times(e: int, latex: bool) -> str:
    if e == 0:
        return ""
    return f"\\times 10^{{{e}}}" if latex else f" x 10^{e}"


def interval_text(entry: dict[str, Any]) -> str:
    """Plain text: '0.9650 +0.0031 -0.0032 (68%), [0.9577, 0.9689] (95%)' or '< 0.036 (95%)'."""
    s = shown(entry)
    if s.kind == "indicator":
        return f"true in a fraction {s.value} of the posterior"
    if s.kind == "undefined":
        return "no finite samples"
    if s.op:
        return f"{s.op} {s.value}{_times(s.exponent, False)} (95%)"
    if s.exponent:
        return (f"({s.value} +{s.plus} -{s.minus}){_times(s.exponent, False)} (68%), "
                f"[{s.lo95}, {s.hi95}]{_times(s.exponent, False)} (95%)")
    return f"{s.value} +{s.plus} -{s.minus} (68%), [{s.lo95}, {s.hi95}] (95%)"


def cells(entry: dict[str, Any], latex: bool) -> tuple[str, str]:
    """(central value and 68% interval, 95% interval or limit) table cells."""
    s = shown(entry)
    if s.kind == "indicator":
        return f"fraction {s.value}", "--"
    if s.kind == "undefined":
        return "--", "--"
    t = _times(s.exponent, latex)
    if s.op:
        limit = f"{s.op} {s.value}{t}"
        return "--", (f"${limit}$" if latex else f"{limit} (95%)")
    if latex:
        core = f"{s.value}^{{+{s.plus}}}_{{-{s.minus}}}"
        return (f"$({core}){t}$" if t else f"${core}$", f"$[{s.lo95}, {s.hi95}]{t}$")
    core = f"{s.value} +{s.plus} -{s.minus}"
    return (f"({core}){t}" if t else core), f"[{s.lo95}, {s.hi95}]{t}"


def title_math(entry: dict[str, Any], label: str) -> str:
    """Mathtext title of a marginal panel with the same numbers as the tables."""
    s = shown(entry)
    if s.kind == "indicator":
        return f"${label}$: fraction {s.value}"
    if s.kind == "undefined":
        return f"${label}$"
    t = _times(s.exponent, True)
    if s.op:
        return f"${label} {s.op} {s.value}{t}$ (95%)"
    core = f"{s.value}^{{+{s.plus}}}_{{-{s.minus}}}"
    return f"${label} = ({core}){t}$" if t else f"${label} = {core}$"
