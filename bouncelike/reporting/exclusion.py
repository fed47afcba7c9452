"""Exclusion map of a posterior run over two sampled parameters (the others at the best fit).

Each grid point is one configuration scored against the run's constraint sets together (its
verdict: allowed, excluded at 95% or at 99.7%; p with dof = number of terms) and against each
set alone (excluded at 95% or not). A point the model cannot evaluate (outside its domain, a
featured spectrum the pivot summary does not represent, a numerical failure) is marked not
evaluable -- never excluded -- and capped spectra whose lower-bound chi-square does not exclude
are marked undetermined.

Adaptive refinement: the map starts on a ``grid`` x ``grid`` lattice; ``refine`` times, every
cell whose four corners differ (in the combined verdict or in any set's) is split in four and
its new points are evaluated, while uniform cells are filled from their corners (bilinearly,
for the distances below). The final
lattice has (grid - 1) 2^refine + 1 points per axis, evaluated only near the boundaries (a
region smaller than a coarse cell that touches no coarse corner can be missed; raise ``grid``
to see it).

Each set's boundary is drawn where its statistic crosses its 95% threshold (p = 0.05 for that
set alone: the chi-square quantile for its number of terms; for the large-scale temperature
set the quantile of the calibrated law of its statistic), interpolated linearly between
lattice points.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from . import notation, style

ALLOWED, EXCLUDED_95, EXCLUDED_997, UNDETERMINED, NOT_EVALUABLE = 0, 1, 2, 3, 4
CODES = {ALLOWED: "allowed", EXCLUDED_95: "excluded at 95%", EXCLUDED_997: "excluded at 99.7%",
         UNDETERMINED: "undetermined (capped spectra)", NOT_EVALUABLE: "not evaluable"}


#: Entries of a point's status before the per-set distances: the combined code and the
#: combined chi2 minus its 95% and 99.7% thresholds.
HEAD = 3


def point_status(spectra_of: Callable[[dict], Any], likelihood: Any, singles: Sequence[Any],
                 params: dict[str, float]) -> np.ndarray:
    """[combined code, combined statistic minus its 95% and 99.7% thresholds, then per set
    statistic minus its own 95% threshold (> 0: excluded at 95% by that set alone)]; NaN where
    the point cannot be scored. Thresholds (one configuration, p = 0.05 and 0.003): chi-square
    quantiles for the number of terms, or, with the large-scale temperature term, quantiles of
    its calibrated law (:func:`~bouncelike.likelihood.combined.statistic_threshold`)."""
    from ..likelihood.combined import statistic_threshold
    from .proportions import evaluate_point, score_outcome

    out = np.full(HEAD + len(singles), np.nan)
    outcome, spec, sc = evaluate_point(spectra_of, likelihood, params)
    if outcome in ("not_evaluable", "numerical_failure", "model_error"):
        out[0] = NOT_EVALUABLE
        return out
    if outcome == "undetermined":
        out[0] = UNDETERMINED
    elif outcome == "allowed":
        out[0] = ALLOWED
    else:
        out[0] = EXCLUDED_997 if sc.excluded_at and sc.excluded_at > 0.99 else EXCLUDED_95
    out[1] = sc.chi2 - statistic_threshold(likelihood, sc, 0.05)
    out[2] = sc.chi2 - statistic_threshold(likelihood, sc, 0.003)
    for k, lk in enumerate(singles):
        o, s1 = score_outcome(lk, spec)
        if o in ("allowed", "excluded"):
            out[HEAD + k] = s1.chi2 - statistic_threshold(lk, s1, 0.05)
    return out


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    """Same combined verdict and the same side of every set's boundary."""
    if a[0] != b[0]:
        return False
    sa, sb = np.sign(a[1:]), np.sign(b[1:])
    return bool(np.all((sa == sb) | (np.isnan(sa) & np.isnan(sb))))


def refined_map(evaluate: Callable[[float, float], np.ndarray], xa: tuple[float, float],
                ya: tuple[float, float], grid: int, refine: int, width: int
                ) -> dict[str, Any]:
    """Status vectors (length ``width``) on the refined lattice (module docstring)."""
    n = (grid - 1) * 2**refine + 1
    x = np.linspace(*xa, n)
    y = np.linspace(*ya, n)
    status = np.full((n, n, width), np.nan)
    evaluated = np.zeros((n, n), dtype=bool)
    step = 2**refine

    def at(j: int, i: int) -> None:
        if not evaluated[j, i]:
            status[j, i] = evaluate(x[i], y[j])
            evaluated[j, i] = True

    for j in range(0, n, step):
        for i in range(0, n, step):
            at(j, i)
    while step > 1:
        half = step // 2
        for j in range(0, n - 1, step):
            for i in range(0, n - 1, step):
                corners = [status[j, i], status[j, i + step], status[j + step, i],
                           status[j + step, i + step]]
                new = [(j, i + half), (j + half, i), (j + half, i + half),
                       (j + half, i + step), (j + step, i + half)]
                if all(_same(c, corners[0]) for c in corners[1:]):
                    for jj, ii in new:
                        if not evaluated[jj, ii]:  # bilinear fill of the distances
                            fy, fx = (jj - j) / step, (ii - i) / step
                            status[jj, ii] = ((1 - fy) * ((1 - fx) * corners[0] + fx * corners[1])
                                              + fy * ((1 - fx) * corners[2] + fx * corners[3]))
                else:
                    for jj, ii in new:
                        at(jj, ii)
        step = half
    return {"x": x, "y": y, "status": status, "evaluated": evaluated,
            "evaluations": int(evaluated.sum())}


def exclusion_map_figure(m: dict[str, Any], set_labels: Sequence[str],
                         axis: tuple[tuple[str, str], tuple[str, str]], samples: np.ndarray,
                         refused: dict[str, np.ndarray], best: tuple[float, float], title: str
                         ) -> tuple[Any, dict[str, Any]]:
    """The map (combined verdict shaded, each set's boundary drawn and labelled, posterior
    samples and refused evaluations on top) and the numbers it draws."""
    from matplotlib.colors import ListedColormap
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    (na, la), (nb, lb) = axis
    ex = notation.scale_exponent(m["x"])
    ey = notation.scale_exponent(m["y"])
    fx, fy = 10.0**-ex, 10.0**-ey
    x, y = m["x"] * fx, m["y"] * fy
    code = np.rint(m["status"][:, :, 0]).astype(int)
    summary = {"codes": {CODES[c]: int(np.sum(code == c)) for c in CODES},
               "sets": {}, "evaluations": m["evaluations"], "lattice": [len(m["x"])] * 2}
    with style.styled() as plt:
        fig, ax = plt.subplots(figsize=(7.6, 4.6))
        colors = ["#ffffff", style.EXCLUDED[0], style.EXCLUDED[1], "#f6e7b8",
                  style.NOT_EVALUABLE]
        d95, d997 = m["status"][:, :, 1], m["status"][:, :, 2]
        if np.any(np.isfinite(d95)):  # smooth boundaries from the chi-square distances
            top = float(np.nanmax(np.abs(m["status"][:, :, 1:3]))) + 1.0
            ax.contourf(x, y, d95, levels=[0.0, top], colors=[colors[1]])
            ax.contourf(x, y, d997, levels=[0.0, top], colors=[colors[2]])
        else:  # no distances (the low-ell statistic): the verdicts cell by cell
            ax.pcolormesh(x, y, np.where(code <= EXCLUDED_997, code, ALLOWED),
                          cmap=ListedColormap(colors[:3]), vmin=-0.5, vmax=2.5,
                          shading="nearest", rasterized=True)
        for c in (UNDETERMINED, NOT_EVALUABLE):
            if np.any(code == c):
                ax.contourf(x, y, (code == c).astype(float), levels=[0.5, 1.5],
                            colors=[colors[c]], hatches=["////" if c == NOT_EVALUABLE else ""])
        handles = [Patch(facecolor=colors[c], edgecolor=style.MUTED, lw=0.4,
                         label=CODES[c] + (" (all sets together)" if c in (1, 2) else ""),
                         hatch="////" if c == NOT_EVALUABLE else None)
                   for c in CODES if np.any(code == c) and c != ALLOWED]
        for k, label in enumerate(set_labels):
            dist = m["status"][:, :, HEAD + k]
            scorable = np.isfinite(dist)
            color = style.SERIES[k % len(style.SERIES)]
            share = float(np.mean(dist[scorable] > 0)) if np.any(scorable) else float("nan")
            if 0 < share < 1:
                ax.contour(x, y, dist, levels=[0.0], colors=[color], linewidths=1.4)
                text = f"{label}: 95% exclusion boundary"
            elif share == 1:
                text = f"{label}: excludes the whole map"
            elif share == 0:
                text = f"{label}: excludes none of the map"
            else:
                text = f"{label}: no scorable point"
            summary["sets"][label] = {"excluded_fraction_of_map": share}
            handles.append(Line2D([], [], color=color, lw=1.4 if 0 < share < 1 else 0,
                                  marker=None if 0 < share < 1 else "s", ms=5, label=text))
        if samples.size:
            ax.plot(samples[:, 0] * fx, samples[:, 1] * fy, "o", ms=2.2, mfc=style.INK,
                    mec="white", mew=0.25, alpha=0.75, ls="", clip_on=False)
            handles.append(Line2D([], [], marker="o", ms=3, mfc=style.INK, mec="white",
                                  ls="", label="posterior samples"))
        for kind, marker in (("not_evaluable", "x"), ("numerical_failure", "+"),
                             ("model_error", "1")):
            pts = refused.get(kind)
            if pts is None or not len(pts):
                continue
            ax.plot(pts[:, 0] * fx, pts[:, 1] * fy, marker, ms=3.5, color="#4a5560", mew=0.8,
                    ls="", alpha=0.8, clip_on=False)
            handles.append(Line2D([], [], marker=marker, color="#4a5560", ls="",
                                  label=f"{kind.replace('_', ' ')} during the run "
                                        f"({len(pts)}, projected)"))
            summary.setdefault("recorded_refusals", {})[kind] = int(len(pts))
        ax.plot(best[0] * fx, best[1] * fy, marker="*", ms=9, color=style.BEST_FIT,
                mec="white", mew=0.6, ls="", clip_on=False, zorder=5)
        handles.append(Line2D([], [], marker="*", ms=8, color=style.BEST_FIT, ls="",
                              label="best fit"))
        ax.set_xlim(x[0], x[-1])
        ax.set_ylim(y[0], y[-1])
        ax.set_xlabel(notation.axis_label(na, la, ex))
        ax.set_ylabel(notation.axis_label(nb, lb, ey))
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.02, 1.0),
                  borderaxespad=0.0, handlelength=1.6)
        ax.set_title(title, loc="left")
        for side in ("top", "right"):
            ax.spines[side].set_visible(True)
    return fig, summary
