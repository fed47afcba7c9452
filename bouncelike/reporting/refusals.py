"""Where a model cannot be evaluated, and which reported bounds are really that edge.

A posterior has no weight where the model has no prediction (a point outside its domain, a
featured spectrum the pivot summary does not represent, a numerical failure), so a marginal
limit can sit where the model stops being evaluable rather than where the data exclude it.
Such a limit is not a data bound. Rule (ours): posterior samples are moved across the bound
-- the parameter redrawn uniformly on the ruled-out side (between a one-sided 95% limit and the
prior bound beyond it, or beyond either end of the 95% interval), the other parameters kept --
and each moved point is scored as one configuration. The bound *coincides with a
not-evaluable region* when at least :data:`COINCIDENCE_FRACTION` of the moved points cannot
be evaluated while the data do not disfavour the evaluable ones: their mean likelihood is at
least :data:`DATA_RATIO` of the mean likelihood of the samples they were moved from (or none
is evaluable). Where the evaluable points beyond are disfavoured, the bound is a data bound
even if some points there cannot be evaluated. Only sampled parameters are probed (a derived
one cannot be moved on its own); a bound of a derived parameter (N_B*, k_LQC of a physical
bounce) is judged by the sampled parameter that carries it (:func:`derived_coincidences`):
the one most correlated with it over the posterior, if |correlation| >=
:data:`CARRIER_CORRELATION`, whose bound on the corresponding side (the same side for a
positive correlation, the other for a negative one) decides; with no such carrier, or no bound
of the carrier on that side, the derived bound is reported as not judged.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from .marginals import shown
from .proportions import binomial_fraction

REFUSED = ("not_evaluable", "numerical_failure", "model_error")
COINCIDENCE_FRACTION = 0.25
DATA_RATIO = 0.5
PROBES = 60
CARRIER_CORRELATION = 0.5
RULE = ("a bound coincides with a not-evaluable region when, of posterior samples moved across "
        "it (the parameter redrawn uniformly on the ruled-out side, the others kept), at least "
        f"{COINCIDENCE_FRACTION:.0%} cannot be evaluated and the evaluable ones keep at least "
        f"{DATA_RATIO:.0%} of the mean likelihood of the samples they were moved from (the data "
        "do not disfavour that side); it is then not a data bound. A bound of a derived "
        "parameter is judged by the sampled parameter most correlated with it (|r| >= "
        f"{CARRIER_CORRELATION:g}), through that parameter's bound on the corresponding side")


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
                 probe: Callable[[str, float, float], tuple[list[str], float]]
                 ) -> list[dict[str, Any]]:
    """Each bound of a sampled parameter (``bounds``: its prior range) with the share of moved
    posterior samples beyond it that cannot be evaluated and the likelihood ratio of the
    evaluable ones (see the module docstring). ``probe(name, a, b)`` returns the outcomes of
    posterior samples with ``name`` redrawn uniformly between a and b, and the ratio of their
    mean likelihood (evaluable ones) to that of the samples they came from (NaN if none)."""
    rows = []
    for e in marginals:
        if e["name"] not in bounds:
            continue
        for side, value, far in _sides(e, *bounds[e["name"]]):
            outcomes, ratio = probe(e["name"], min(value, far), max(value, far))
            n = len(outcomes)
            k = sum(o in REFUSED for o in outcomes)
            undisfavoured = not math.isfinite(ratio) or ratio >= DATA_RATIO
            rows.append({"parameter": e["name"], "side": side, "value": float(value),
                         "bound": bound_text(e, side), "probes": n, "not_evaluable": k,
                         "fraction": binomial_fraction(k, n), "likelihood_ratio": ratio,
                         "coincides": bool(n > 0 and k >= COINCIDENCE_FRACTION * n
                                           and undisfavoured)})
    return rows


def derived_coincidences(marginals: Sequence[dict[str, Any]], rows: Sequence[dict[str, Any]],
                         columns: dict[str, np.ndarray], sampled: Sequence[str]
                         ) -> list[dict[str, Any]]:
    """Each bound of a derived parameter judged by its carrier (module docstring): ``rows``
    are the sampled parameters' rows of :func:`coincidences`, ``columns`` the posterior
    samples by name. ``coincides`` is True, False or None (not judged)."""
    out = []
    for e in marginals:
        name = e["name"]
        if name in sampled or name not in columns:
            continue
        sides = [side for side, _, _ in _sides(e, -math.inf, math.inf)]
        if not sides:
            continue
        x = np.asarray(columns[name], dtype=float)
        best, corr = None, 0.0
        for c in sampled:
            y = np.asarray(columns[c], dtype=float)
            ok = np.isfinite(x) & np.isfinite(y)
            if ok.sum() > 2 and np.std(x[ok]) > 0 and np.std(y[ok]) > 0:
                r = float(np.corrcoef(x[ok], y[ok])[0, 1])
                if abs(r) > abs(corr):
                    best, corr = c, r
        for side in sides:
            row = None
            if best is not None and abs(corr) >= CARRIER_CORRELATION:
                carried = side if corr > 0 else ("above" if side == "below" else "below")
                row = next((r for r in rows if r["parameter"] == best
                            and r["side"] == carried), None)
            out.append({"parameter": name, "side": side, "bound": bound_text(e, side),
                        "carrier": best, "correlation": corr,
                        "carrier_bound": row["bound"] if row else None,
                        "coincides": bool(row["coincides"]) if row else None})
    return out


def recorded_refusals(folder: Any, names: Sequence[str]) -> dict[str, np.ndarray]:
    """Parameter values (columns ``names``) of the evaluations a run recorded in its
    ``failures.csv`` (:mod:`bouncelike.sampling.failures`), per kind (capped evaluations, which
    have a bound, are left out); empty when the run recorded none."""
    from ..sampling.failures import load_failures

    frame = load_failures(folder)
    if frame.empty or not set(names) <= set(frame.columns):
        return {}
    frame = frame[frame["kind"].isin(REFUSED)]
    return {str(kind): g[list(names)].to_numpy(dtype=float)
            for kind, g in frame.groupby("kind")}


def survey_rows(summary: dict[str, Any]) -> list[dict[str, Any]]:
    """The run's failure reasons (manifest ``failure_summary``) with the prior fraction each
    covers in the run's prior survey, as an exact binomial interval."""
    draws = int((summary.get("prior_survey") or {}).get("draws", 0) or 0)
    rows = []
    for e in summary.get("by_reason", []):
        rows.append({"kind": e["kind"], "reason": e["reason"], "count": int(e["count"]),
                     "survey_count": int(e["survey_count"]),
                     "prior_fraction": binomial_fraction(int(e["survey_count"]), draws)})
    return rows


def refusals_figure(posterior: np.ndarray, names: Sequence[str], labels: dict[str, str],
                    ranges: dict[str, tuple[float, float]], recorded: dict[str, np.ndarray],
                    probe_rows: Sequence[dict[str, Any]], title: str
                    ) -> tuple[Any, dict[str, Any]]:
    """One panel per sampled parameter: the posterior, where the run recorded evaluations it
    could not use, and the reported bounds (dashed where they coincide with the edge)."""
    from . import notation, style

    n = len(names)
    data: dict[str, Any] = {"parameters": list(names), "recorded": {k: int(len(v))
                                                                    for k, v in recorded.items()},
                            "bounds": list(probe_rows)}
    with style.styled() as plt:
        cols = min(n, 3)
        rows = (n + cols - 1) // cols
        fig, axes = plt.subplots(rows, cols, figsize=(3.1 * cols + 2.0, 2.5 * rows),
                                 squeeze=False)
        for k, name in enumerate(names):
            ax = axes[k // cols, k % cols]
            lo, hi = ranges[name]
            col = posterior[:, k]
            if not (math.isfinite(lo) and math.isfinite(hi)):
                lo, hi = float(np.min(col)), float(np.max(col))
            e = notation.scale_exponent([lo, hi])
            f = 10.0**-e
            bins = np.linspace(lo * f, hi * f, 31)
            ax.hist(col * f, bins=bins, color=style.POSTERIOR[1], edgecolor=style.POSTERIOR[0],
                    lw=0.4, label="posterior samples", density=True)
            for kind, pts in recorded.items():
                ax.hist(pts[:, k] * f, bins=bins, histtype="step", lw=1.2, density=True,
                        color="#4a5560", ls="-" if kind == "not_evaluable" else ":",
                        label=f"{kind.replace('_', ' ')} during the run ({len(pts)})")
            for row in probe_rows:
                if row["parameter"] == name:
                    ax.axvline(row["value"] * f, color=style.BEST_FIT,
                               ls="--" if row["coincides"] else "-", lw=1.0)
            ax.set_xlabel(notation.axis_label(name, labels.get(name, ""), e))
            ax.set_yticks([])
            ax.spines["left"].set_visible(False)
        for k in range(n, rows * cols):
            axes[k // cols, k % cols].set_visible(False)
        from matplotlib.lines import Line2D

        handles, _ = axes[0, 0].get_legend_handles_labels()
        handles += [Line2D([], [], color=style.BEST_FIT, lw=1.0, label="reported bound"),
                    Line2D([], [], color=style.BEST_FIT, lw=1.0, ls="--",
                           label="bound at the not-evaluable edge")]
        axes[0, cols - 1].legend(handles=handles, loc="upper left", bbox_to_anchor=(1.03, 1.0),
                                 borderaxespad=0.0)
        axes[0, 0].set_title(title, loc="left")
        fig.tight_layout()
    return fig, data


def coincidence_notes(v: dict[str, Any]) -> list[str]:
    """One line per bound that coincides with a not-evaluable region (derived bounds through
    their carrier)."""
    ne = v.get("not_evaluable") or {}
    rows = ne.get("coincidences", [])
    notes = [f"{c['bound']} coincides with the edge of the region where the model is not "
             f"evaluable ({c['not_evaluable']} of {c['probes']} samples moved beyond it are "
             "not evaluable): not a data bound" for c in rows if c["coincides"]]
    notes += [f"{d['bound']} coincides with the edge of the region where the model is not "
              f"evaluable (carried by {d['carrier_bound']}, correlation "
              f"{d['correlation']:+.2f}): not a data bound"
              for d in ne.get("derived", []) if d["coincides"]]
    return notes
