"""Triangle plot of a posterior run: our own layout, densities from getdist.

Which parameters: the sampled ones, then the ones that decide the verdict (the quantities the
run's constraint sets score: n_s, r, ln(10^10 A_s), runnings; for bounces the bounce scale
log10 k_LQC and N_B*), then other derived numbers unless they add nothing (an exact linear
function of a parameter already shown, an indicator, fewer than 20 distinct values, a
positive number spanning more than three decades) -- at most :data:`MAX_PANELS`.

What is drawn: the 1D marginal densities and the 2D 68% / 95% regions are getdist's kernel
density estimates (boundary-corrected at the prior bounds); the shaded band under each 1D
density, the dashed median and the panel titles are the numbers of
:func:`bouncelike.reporting.marginals.marginal_statistics` (the same as marginals.md), whose
interval definition the caption states; the cross marks the best fit.
"""

from __future__ import annotations

import logging
import math
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np

from . import notation, style
from .marginals import INTERVAL_DEFINITION, title_math

MAX_PANELS = 10
DECISIVE_BOUNCE = ("log10_k_lqc", "N_B_star")
PANEL_INCH = 1.55


def triangle_parameters(frame: Any, sampled: Sequence[str], derived: Sequence[str],
                        decisive: Sequence[str]) -> list[str]:
    """The parameters of the triangle plot, in order (see the module docstring)."""
    order = list(sampled)
    order += [n for n in (*decisive, *DECISIVE_BOUNCE) if n in derived and n not in order]
    order += [n for n in derived if n not in order]
    kept: list[str] = []
    for n in order:
        v = frame[n].to_numpy(dtype=float)
        if not np.all(np.isfinite(v)) or np.unique(v).size < 20:
            continue
        must = n in sampled or n in decisive or n in DECISIVE_BOUNCE
        if not must:
            if np.min(v) > 0 and np.max(v) / np.min(v) > 1e3:
                continue
            if any(abs(_corr(v, frame[k].to_numpy(dtype=float))) > 0.9999 for k in kept):
                continue
        kept.append(n)
        if len(kept) == MAX_PANELS:
            break
    return kept


def _corr(a: np.ndarray, b: np.ndarray) -> float:
    with np.errstate(invalid="ignore", divide="ignore"):
        c = np.corrcoef(a, b)[0, 1]
    return float(c) if math.isfinite(c) else 0.0


def _densities(samples: np.ndarray, names: Sequence[str],
               ranges: dict[str, tuple[float, float]]) -> Any:
    import getdist.chains
    from getdist import MCSamples

    getdist.chains.print_load_details = False
    rng = {k: [v[0] if math.isfinite(v[0]) else None, v[1] if math.isfinite(v[1]) else None]
           for k, v in ranges.items() if k in names}
    return MCSamples(samples=np.asarray(samples), names=list(names), ranges=rng,
                     settings={"ignore_rows": 0, "mult_bias_correction_order": 0})


def triangle_figure(samples: np.ndarray, names: Sequence[str], prior_labels: dict[str, str],
                    ranges: dict[str, tuple[float, float]], stats: dict[str, dict[str, Any]],
                    best: dict[str, float]) -> tuple[Any, dict[str, Any]]:
    """The figure and the numbers it draws (titles, intervals, axis scales)."""
    samples = np.asarray(samples, dtype=float)
    n = len(names)
    scale = {nm: notation.scale_exponent(samples[:, i]) for i, nm in enumerate(names)}
    root = logging.getLogger()
    level = root.level
    root.setLevel(logging.ERROR)  # getdist logs smoothing-scale notes as warnings
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            mc = _densities(samples, names, ranges)
            d1 = {nm: mc.get1DDensity(nm) for nm in names}
            d2 = {(i, j): mc.get2DDensity(names[j], names[i]) for i in range(n)
                  for j in range(i)}
    finally:
        root.setLevel(level)
    limits = {}
    for i, nm in enumerate(names):
        lo, hi = np.quantile(samples[:, i], [0.0005, 0.9995])
        pad = 0.06 * (hi - lo) if hi > lo else abs(lo) * 0.01 + 1e-12
        a, b = ranges.get(nm, (-math.inf, math.inf))
        limits[nm] = (max(lo - pad, a), min(hi + pad, b))
    titles = {nm: title_math(stats[nm], notation.symbol(nm, prior_labels.get(nm, ""))[0])
              for nm in names}
    with style.styled() as plt:
        from matplotlib.ticker import MaxNLocator

        size = PANEL_INCH * max(n, 2)
        fig, axes = plt.subplots(n, n, figsize=(size + 0.6, size + 0.4), squeeze=False)
        fig.subplots_adjust(left=0.6 / (size + 0.6) + 0.02, bottom=0.55 / (size + 0.4) + 0.03,
                            right=0.985, top=0.965, wspace=0.08, hspace=0.08)
        for i in range(n):
            for j in range(n):
                ax = axes[i, j]
                if j > i:
                    ax.set_visible(False)
                    continue
                fx = 10.0 ** -scale[names[j]]
                if i == j:
                    _diagonal(ax, d1[names[i]], stats[names[i]], fx)
                    ax.set_title(titles[names[i]], pad=3,
                                 fontsize=7.5 if len(titles[names[i]]) < 60 else 6.5)
                else:
                    fy = 10.0 ** -scale[names[i]]
                    _pair(ax, d2[(i, j)], fx, fy)
                    if names[j] in best and names[i] in best:
                        ax.plot(best[names[j]] * fx, best[names[i]] * fy, marker="x",
                                color=style.BEST_FIT, ms=5, mew=1.3, ls="", clip_on=False)
                    ax.set_ylim(*(np.array(limits[names[i]]) * fy))
                ax.set_xlim(*(np.array(limits[names[j]]) * fx))
                ax.xaxis.set_major_locator(MaxNLocator(3, prune="both"))
                ax.yaxis.set_major_locator(MaxNLocator(3, prune="both"))
                if i == n - 1:
                    ax.set_xlabel(notation.axis_label(names[j], prior_labels.get(names[j], ""),
                                                      scale[names[j]]))
                    ax.tick_params(axis="x", labelrotation=40)
                else:
                    ax.tick_params(labelbottom=False)
                if j == 0 and i > 0:
                    ax.set_ylabel(notation.axis_label(names[i], prior_labels.get(names[i], ""),
                                                      scale[names[i]]))
                else:
                    ax.tick_params(labelleft=False)
                if i == j:
                    ax.set_yticks([])
                    ax.spines["left"].set_visible(False)
        if n >= 3:  # the key sits in the empty upper triangle
            box = axes[0, n - 1].get_position()
            fig.text(box.x1, box.y1, _key_text(), ha="right", va="top", fontsize=7.5,
                     color=style.INK, linespacing=1.5)
    data = {"parameters": list(names), "titles": titles,
            "marginals": {nm: stats[nm] for nm in names},
            "axis_power_of_ten": scale, "best_fit": {nm: best.get(nm) for nm in names},
            "interval_definition": INTERVAL_DEFINITION}
    return fig, data


def _key_text() -> str:
    return ("dark / light: 68% / 95% posterior regions\n"
            "shaded under the curve: 68% interval\n(or the side of a 95% limit)\n"
            "dashed: median;  x: best fit\n"
            "titles: median and equal-tailed 68%\ninterval, as in marginals.md")


def _diagonal(ax: Any, dens: Any, entry: dict[str, Any], fx: float) -> None:
    x = np.asarray(dens.x) * fx
    p = np.asarray(dens.P)
    p = p / p.max() if p.max() > 0 else p
    ax.plot(x, p, color=style.POSTERIOR[0], lw=1.2)
    kind = entry.get("kind")
    if kind == "two_sided":
        a, b = entry["lower68"] * fx, entry["upper68"] * fx
        sel = (x >= a) & (x <= b)
        ax.fill_between(x[sel], 0, p[sel], color=style.POSTERIOR[1], lw=0)
        ax.axvline(entry["median"] * fx, color=style.POSTERIOR[0], lw=0.8, ls="--")
    elif kind in ("upper_limit", "lower_limit"):
        lim = entry["limit95"] * fx
        sel = x <= lim if kind == "upper_limit" else x >= lim
        ax.fill_between(x[sel], 0, p[sel], color=style.POSTERIOR[1], lw=0)
        ax.axvline(lim, color=style.POSTERIOR[0], lw=0.8, ls=":")
    ax.set_ylim(0, 1.08)


def _pair(ax: Any, dens: Any, fx: float, fy: float) -> None:
    levels = sorted(float(v) for v in dens.getContourLevels((0.68, 0.95)))
    top = float(np.max(dens.P))
    if not (levels[0] < levels[1] < top):
        return
    xx, yy = np.asarray(dens.x) * fx, np.asarray(dens.y) * fy
    ax.contourf(xx, yy, dens.P, levels=[levels[0], levels[1], top * 1.0001],
                colors=[style.POSTERIOR[1], style.POSTERIOR[0]])
    ax.contour(xx, yy, dens.P, levels=levels, colors=[style.POSTERIOR[0]], linewidths=0.6)
