"""Figures of a posterior run: triangle plot, spectra with bands, e-folds, exclusion map.

Each function returns a matplotlib figure; :func:`save_with_caption` writes it as PDF and PNG
(atomically) beside a ``.caption.txt`` that names the constraint sets and their citations.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..io import save_figure_atomic, write_text_atomic

#: Observable window of comoving wavenumbers in Mpc^-1 (physics notes section 5: roughly
#: 1e-4 to 0.2 Mpc^-1, common practice).
OBSERVABLE_WINDOW = (1e-4, 0.2)


def _plt() -> Any:
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    return plt


def citations_text(sets: Sequence[dict[str, Any]]) -> str:
    lines = ["Constraint sets:"]
    for s in sets:
        tag = " [FORECAST, not a measurement]" if s.get("forecast") else ""
        lines.append(f"- {s['name']}{tag}: {s['title']}. {s['citation']} (arXiv:{s['arxiv']}); "
                     f"{s.get('table', '')}")
        if s.get("upper_limit_treatment"):
            lines.append(f"  Upper limit treatment: {s['upper_limit_treatment']}")
    return "\n".join(lines)


def save_with_caption(fig: Any, stem: Path, caption: str) -> list[Path]:
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)  # getdist's tick formatter
        paths = [save_figure_atomic(fig, stem.with_suffix(".pdf")),
                 save_figure_atomic(fig, stem.with_suffix(".png"), dpi=130)]
    paths.append(write_text_atomic(stem.with_suffix(".caption.txt"), caption.strip() + "\n"))
    _plt().close(fig)
    return paths


def triangle_figure(samples: np.ndarray, names: Sequence[str], labels: Sequence[str],
                    ranges: dict[str, tuple[float, float]], title: str) -> Any:
    """getdist triangle plot of equally weighted samples (an MCSamples built from arrays)."""
    _plt()
    import getdist.chains
    from getdist import MCSamples, plots

    getdist.chains.print_load_details = False

    rng = {k: [None if not np.isfinite(v[0]) else v[0], None if not np.isfinite(v[1]) else v[1]]
           for k, v in ranges.items()}
    mc = MCSamples(samples=np.asarray(samples), names=list(names), labels=list(labels),
                   ranges=rng, label=title,
                   settings={"ignore_rows": 0, "mult_bias_correction_order": 0})
    import logging
    import warnings

    root = logging.getLogger()
    level = root.level
    root.setLevel(logging.ERROR)  # getdist logs smoothing-scale notes as warnings
    try:
        with warnings.catch_warnings():
            # getdist's tick formatter uses matplotlib attributes deprecated recently
            warnings.simplefilter("ignore", DeprecationWarning)
            g = plots.get_subplot_plotter(width_inch=2.2 * max(2, len(names)))
            g.triangle_plot([mc], filled=True, title_limit=1)
            g.fig.canvas.draw()
    finally:
        root.setLevel(level)
    return g.fig


def spectra_figure(k: np.ndarray, best: Any, band_scalar: np.ndarray,
                   band_tensor: np.ndarray | None, sets: Sequence[Any], title: str) -> Any:
    """Best-fit P_s and P_t with 68/95% posterior bands, the observable window and the
    constraint bands of the sets (amplitude and tilt as a wedge, r limits as bars)."""
    plt = _plt()
    n_panels = 2 if band_tensor is not None else 1
    fig, axes = plt.subplots(1, n_panels, figsize=(6.0 * n_panels, 4.4), squeeze=False)
    axes = axes[0]
    panels = [("scalar", band_scalar, axes[0])]
    if band_tensor is not None:
        panels.append(("tensor", band_tensor, axes[1]))
    for kind, band, ax in panels:
        q = np.nanquantile(band, [0.025, 0.16, 0.5, 0.84, 0.975], axis=0)
        ax.fill_between(k, q[0], q[4], color="C0", alpha=0.18, lw=0, label="95% posterior")
        ax.fill_between(k, q[1], q[3], color="C0", alpha=0.35, lw=0, label="68% posterior")
        ax.plot(k, best.scalar(k) if kind == "scalar" else best.tensor(k), "C3", lw=1.5,
                label="best fit")
        ax.axvspan(*OBSERVABLE_WINDOW, color="0.9", zorder=-5, label="observable window")
        _constraint_bands(ax, kind, sets, k)
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel(r"$k\ [\mathrm{Mpc}^{-1}]$")
        ax.set_ylabel(r"$\mathcal{P}_\mathcal{R}(k)$" if kind == "scalar"
                      else r"$\mathcal{P}_T(k)$")
        ax.legend(fontsize=7, loc="best")
    fig.suptitle(title, fontsize=10)
    fig.tight_layout()
    return fig


def _constraint_bands(ax: Any, kind: str, sets: Sequence[Any], k: np.ndarray) -> None:
    for i, s in enumerate(sets):
        terms = {t.quantity: t for t in s.terms}
        color = f"C{(i + 1) % 10}"
        style = "--" if s.is_forecast else "-"
        if kind == "scalar" and "ln_1e10_As" in terms and "n_s" in terms:
            # ln P = ln A_s + (n_s - 1) x, errors combined as independent (no published
            # correlation, see the set files): sigma^2 = sigma_lnA^2 + x^2 sigma_ns^2
            a, n = terms["ln_1e10_As"], terms["n_s"]
            x = np.log(k / s.pivot)
            centre = a.mean + (n.mean - 1.0) * x
            err = np.sqrt(a.sigma**2 + (x * n.sigma) ** 2)
            ax.plot(k, np.exp(centre) * 1e-10, color=color, ls=style, lw=0.8,
                    label=f"{s.name} (68%)")
            ax.fill_between(k, np.exp(centre - err) * 1e-10, np.exp(centre + err) * 1e-10,
                            color=color, alpha=0.15, lw=0)
        if kind == "tensor" and "r" in terms and terms["r"].kind == "upper_limit":
            a_s = 2.1e-9  # scale for drawing the limit: P_T = r_lim A_s (A_s ~ 2.1e-9)
            ax.errorbar([s.pivot], [terms["r"].limit * a_s], yerr=[[terms["r"].limit * a_s *
                        0.5], [0]], uplims=True, fmt="v", color=color,
                        label=f"{s.name}: r < {terms['r'].limit:g}"
                        + (" (forecast)" if s.is_forecast else ""))


def efolds_figure(posterior: np.ndarray, prior_draws: np.ndarray, label: str,
                  title: str) -> Any:
    plt = _plt()
    fig, ax = plt.subplots(figsize=(6, 4))
    lo = min(np.min(posterior), np.min(prior_draws))
    hi = max(np.max(posterior), np.max(prior_draws))
    bins = np.linspace(lo, hi, 41)
    ax.hist(prior_draws, bins=bins, density=True, histtype="step", color="0.4", label="prior")
    ax.hist(posterior, bins=bins, density=True, alpha=0.6, color="C0", label="posterior")
    ax.set_xlabel(f"${label}$")
    ax.set_ylabel("probability density")
    ax.legend()
    ax.set_title(title, fontsize=10)
    fig.tight_layout()
    return fig


def exclusion_map_figure(x: np.ndarray, y: np.ndarray, level: np.ndarray,
                         per_set: dict[str, np.ndarray], samples: np.ndarray,
                         labels: tuple[str, str], title: str) -> Any:
    """Combined verdict over a grid (0 allowed, 1 excluded at 95%, 2 at 99.7%), the 95%
    exclusion boundary of each set alone, and posterior samples."""
    plt = _plt()
    from matplotlib.colors import ListedColormap

    fig, ax = plt.subplots(figsize=(6.2, 4.8))
    cmap = ListedColormap(["#ffffff", "#f4b6b6", "#d9534f"])
    ax.pcolormesh(x, y, level, cmap=cmap, vmin=-0.5, vmax=2.5, shading="nearest")
    handles = []
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    handles += [Patch(color="#f4b6b6", label="excluded at 95% (combined)"),
                Patch(color="#d9534f", label="excluded at 99.7% (combined)")]
    for i, (name, excl) in enumerate(per_set.items()):
        if np.any(excl) and not np.all(excl):
            ax.contour(x, y, excl.astype(float), levels=[0.5], colors=[f"C{i % 10}"],
                       linewidths=1.2)
        handles.append(Line2D([], [], color=f"C{i % 10}", label=f"{name}: 95% boundary"))
    if samples.size:
        ax.plot(samples[:, 0], samples[:, 1], ".", ms=1.5, color="k", alpha=0.4)
        handles.append(Line2D([], [], marker=".", ls="", color="k", label="posterior samples"))
    ax.set_xlabel(f"${labels[0]}$")
    ax.set_ylabel(f"${labels[1]}$")
    ax.legend(handles=handles, fontsize=7, loc="best")
    ax.set_title(title, fontsize=10)
    fig.tight_layout()
    return fig
