"""Figures of a posterior run: primordial spectra with posterior bands, and e-folds.

The triangle plot, the exclusion map and the n_s - r plane have their own modules
(:mod:`.triangle`, :mod:`.exclusion`, :mod:`.nsr`); the palette, the layout and the saving
(PDF, PNG, caption with citations, drawn numbers as JSON) are in :mod:`.style`.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from . import notation, style

#: Observable window of comoving wavenumbers in Mpc^-1 (physics notes section 5: roughly
#: 1e-4 to 0.2 Mpc^-1, common practice).
OBSERVABLE_WINDOW = (1e-4, 0.2)
#: Amplitude used to draw upper limits on r as tensor amplitudes: P_t = r_lim A_s with the
#: Planck 2018 A_s = e^3.044 x 1e-10 (planck2018_base set file).
DRAWING_AS = float(np.exp(3.044) * 1e-10)


def spectra_figure(k: np.ndarray, best: Any, band_scalar: np.ndarray,
                   band_tensor: np.ndarray | None, sets: Sequence[Any], title: str,
                   k_ranges: dict[str, Any] | None = None) -> tuple[Any, dict[str, Any]]:
    """Best-fit P_s and P_t with 68/95% posterior bands (equal-tailed, per k), the observable
    window, the constraint bands of the sets (amplitude and tilt as a wedge, r limits as
    arrows) and, with ``k_ranges`` (:func:`.lowell.multipole_k_ranges`), the k each multipole
    of the large-scale temperature term probes (ticks at the top of the scalar panel); returns
    the figure and the numbers it draws."""
    n_panels = 2 if band_tensor is not None else 1
    data: dict[str, Any] = {"k_per_Mpc": k, "quantiles": [0.025, 0.16, 0.5, 0.84, 0.975]}
    with style.styled() as plt:
        fig, axes = plt.subplots(1, n_panels, figsize=(4.2 * n_panels + 2.2, 3.5),
                                 squeeze=False)
        axes = axes[0]
        panels = [("scalar", band_scalar, axes[0])]
        if band_tensor is not None:
            panels.append(("tensor", band_tensor, axes[1]))
        for kind, band, ax in panels:
            q = np.nanquantile(band, data["quantiles"], axis=0)
            data[f"{kind}_band"] = q
            ax.axvspan(*OBSERVABLE_WINDOW, color=style.WINDOW, zorder=-5, lw=0)
            ax.fill_between(k, q[0], q[4], color=style.POSTERIOR[1], lw=0, alpha=0.8)
            ax.fill_between(k, q[1], q[3], color=style.POSTERIOR[0], lw=0, alpha=0.55)
            ax.plot(k, best.scalar(k) if kind == "scalar" else best.tensor(k),
                    color=style.BEST_FIT, lw=1.4)
            _constraint_bands(ax, kind, sets, k)
            if k_ranges is not None and kind == "scalar":
                from .lowell import mark_k_ranges

                mark_k_ranges(ax, k_ranges)
                data["multipole_k_ranges"] = k_ranges
            ax.set_xscale("log")
            ax.set_yscale("log")
            ax.set_xlabel(notation.WAVENUMBER)
            ax.set_ylabel(notation.SCALAR_SPECTRUM if kind == "scalar"
                          else notation.TENSOR_SPECTRUM)
        from matplotlib.lines import Line2D
        from matplotlib.patches import Patch

        handles = [Patch(color=style.POSTERIOR[0], alpha=0.55, label="posterior 68%"),
                   Patch(color=style.POSTERIOR[1], alpha=0.8, label="posterior 95%"),
                   Line2D([], [], color=style.BEST_FIT, label="best fit"),
                   Patch(color=style.WINDOW, label="observable window")]
        for ax in axes:
            h, _ = ax.get_legend_handles_labels()
            handles += h
        axes[-1].legend(handles=handles, loc="upper left", bbox_to_anchor=(1.03, 1.0),
                        borderaxespad=0.0)
        axes[0].set_title(title, loc="left")
    return fig, data


def _constraint_bands(ax: Any, kind: str, sets: Sequence[Any], k: np.ndarray) -> None:
    for i, s in enumerate(sets):
        terms = {t.quantity: t for t in s.terms}
        color = style.SERIES[(i + 2) % len(style.SERIES)]
        style_ = "--" if s.is_forecast else "-"
        label = notation.set_label(s) + (" (forecast)" if s.is_forecast else "")
        if kind == "scalar" and "ln_1e10_As" in terms and "n_s" in terms:
            # ln P = ln A_s + (n_s - 1) x, errors combined as independent (no published
            # correlation, see the set files): sigma^2 = sigma_lnA^2 + x^2 sigma_ns^2
            a, n = terms["ln_1e10_As"], terms["n_s"]
            x = np.log(k / s.pivot)
            centre = a.mean + (n.mean - 1.0) * x
            err = np.sqrt(a.sigma**2 + (x * n.sigma) ** 2)
            ax.plot(k, np.exp(centre) * 1e-10, color=color, ls=style_, lw=0.8,
                    label=f"{label}: 68%")
            ax.fill_between(k, np.exp(centre - err) * 1e-10, np.exp(centre + err) * 1e-10,
                            color=color, alpha=0.15, lw=0)
        if kind == "tensor" and "r" in terms and terms["r"].kind == "upper_limit":
            top = terms["r"].limit * DRAWING_AS
            ax.errorbar([s.pivot], [top], yerr=[[top * 0.45], [0.0]], uplims=True, fmt="_",
                        ms=10, mew=1.6, color=color, elinewidth=1.2, capsize=0,
                        label=f"{label}: r < {terms['r'].limit:g} (95%)")


def efolds_figure(posterior: np.ndarray, prior_draws: np.ndarray, name: str, label: str,
                  title: str) -> Any:
    """Prior and posterior histograms of an e-fold number."""
    with style.styled() as plt:
        fig, ax = plt.subplots(figsize=(5.4, 3.4))
        lo = min(np.min(posterior), np.min(prior_draws))
        hi = max(np.max(posterior), np.max(prior_draws))
        bins = np.linspace(lo, hi, 41)
        ax.hist(prior_draws, bins=bins, density=True, histtype="step", color=style.MUTED,
                lw=1.1, label="prior")
        ax.hist(posterior, bins=bins, density=True, color=style.POSTERIOR[1],
                edgecolor=style.POSTERIOR[0], lw=0.4, label="posterior")
        ax.set_xlabel(notation.axis_label(name, label))
        ax.set_ylabel("probability density")
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0)
        ax.set_title(title, loc="left")
    return fig
