"""The n_s - r plane: published regions of the run's sets, the model's posterior predictions
and the shipped slow-roll models as reference marks.

Published regions, as the likelihood treats them: the run's constraint sets reduced to their
n_s and r terms (a set's other terms do not enter; its n_s is the one it publishes,
marginalised over whatever else it freed) score power-law spectra at k = 0.05 Mpc^-1 on a
grid of (n_s, r >= 0), with each set's re-expansion to its own pivot and the half-Gaussian
treatment of upper limits on r. With flat priors on n_s and r >= 0, the 68% and 95% regions are
the highest-density regions of exp(-chi2/2) holding 68% and 95% of its mass. For one set with
a Gaussian n_s and a half-Gaussian r this is the half-disk (n_s - mean)^2/sigma^2 +
(r/sigma_r)^2 < chi2_2^-1(p) (the chi-square quantile with two degrees of freedom, 5.99 at
95%). When no set constrains r (or n_s) the region is a band in the other quantity.

The model: the pivot summary (n_s, r at 0.05 Mpc^-1) of the spectra of a thinned set of
posterior samples -- what the likelihood sees -- and the best fit. Reference marks: V = m^2
phi^2 / 2 and the Starobinsky model at leading order in slow roll (Encyclopaedia Inflationaris,
arXiv:1303.3787) at N_* = 50 and 60, joined by their N_* range.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from ..quantities import PIVOT
from . import notation, style

REFERENCE_MODELS = (("slow_roll_quadratic", r"$m^2\phi^2$", "s"),
                    ("slow_roll_starobinsky", "Starobinsky", "D"))
REFERENCE_N = (50.0, 60.0)
LEVELS = (0.68, 0.95)


def reference_marks() -> list[dict[str, Any]]:
    """n_s and r of the shipped slow-roll models at N_* = 50 and 60."""
    from ..models.registry import forward_model

    out = []
    for name, label, marker in REFERENCE_MODELS:
        model = forward_model(name)
        for n in REFERENCE_N:
            d = model.derived({"N_star": n, "ln_1e10_As": 3.044})
            out.append({"model": name, "label": label, "marker": marker, "N_star": n,
                        "n_s": d["n_s"], "r": d["r"]})
    return out


def _restricted(sets: Sequence[Any]) -> list[Any]:
    """The sets reduced to their n_s and r terms (sets without either are dropped)."""
    out = []
    for s in sets:
        terms = tuple(t for t in s.terms if t.quantity in ("n_s", "r"))
        if terms:
            out.append(dataclasses.replace(s, terms=terms, correlations=()))
    return out


def _hpd_levels(density: np.ndarray, cell: np.ndarray) -> list[float]:
    """Density levels enclosing LEVELS of the mass (highest density first)."""
    mass = (density * cell).ravel()
    order = np.argsort(density.ravel())[::-1]
    cum = np.cumsum(mass[order]) / mass.sum()
    return [float(density.ravel()[order][min(np.searchsorted(cum, lv), len(cum) - 1)])
            for lv in LEVELS]


def published_regions(sets: Sequence[Any], n: int = 241) -> dict[str, Any] | None:
    """Grid, density and HPD levels of the run's n_s and r constraints (module docstring)."""
    from ..likelihood.gaussian import GaussianLikelihood
    from ..spectra.powerlaw import PowerLawSpectra

    reduced = _restricted(sets)
    if not reduced:
        return None
    lk = GaussianLikelihood(reduced, allow_overlap=True)
    ns_terms = [t for s in reduced for t in s.terms if t.quantity == "n_s"]
    r_terms = [t for s in reduced for t in s.terms if t.quantity == "r"]
    if ns_terms:
        w = sum(1 / t.sigma**2 for t in ns_terms)
        mu = sum(t.mean / t.sigma**2 for t in ns_terms) / w
        sig = w**-0.5
        ns = np.linspace(mu - 5 * sig, mu + 5 * sig, n)
    else:
        ns = np.linspace(0.94, 0.99, n)
    if r_terms:
        sr = min(t.sigma for t in r_terms)
        r = np.linspace(0.0, 5.5 * sr + max(0.0, *(t.mean for t in r_terms)), n)
    else:
        r = np.linspace(0.0, 0.2, n)
    chi2 = np.empty((n, n))
    for j, rv in enumerate(r):
        for i, nv in enumerate(ns):
            chi2[j, i] = -2.0 * lk.log_likelihood(PowerLawSpectra(
                ln_1e10_As=3.044, n_s=float(nv), r=float(rv), pivot=PIVOT))
    dens = np.exp(-0.5 * (chi2 - np.min(chi2)))
    cell = np.outer(np.gradient(r), np.gradient(ns))
    if ns_terms and r_terms:
        levels = _hpd_levels(dens, cell)
        kind = "region"
    elif ns_terms:  # a band in n_s: the HPD of the n_s marginal
        levels = _hpd_levels(dens[:1, :], cell[:1, :])
        kind = "n_s band"
    else:
        levels = _hpd_levels(dens[:, :1], cell[:, :1])
        kind = "r band"
    extents = {}
    for lv, name in zip(levels, ("68", "95"), strict=True):
        inside = dens >= lv
        cols = np.nonzero(inside.any(axis=0))[0]
        rows = np.nonzero(inside.any(axis=1))[0]
        extents[name] = {"n_s_min": float(ns[cols.min()]) if ns_terms else None,
                         "n_s_max": float(ns[cols.max()]) if ns_terms else None,
                         "r_max": float(r[rows.max()]) if r_terms else None}
    return {"n_s": ns, "r": r, "density": dens, "levels": levels, "kind": kind,
            "extents": extents, "sets": [s.name for s in reduced],
            "labels": [notation.set_label(s) for s in reduced]}


def posterior_points(spectra_of: Any, points: Sequence[dict[str, float]]) -> np.ndarray:
    """(n_s, r) at 0.05 Mpc^-1 of the spectra of ``points`` (rows that fail are left out)."""
    from ..spectra.summary import summarize

    out = []
    for p in points:
        try:
            s = summarize(spectra_of(p), PIVOT)
        except (ArithmeticError, ValueError, RuntimeError):
            continue
        if s.fit_ok and math.isfinite(s.n_s) and math.isfinite(s.r):
            out.append((s.n_s, s.r))
    return np.array(out).reshape(-1, 2)


def nsr_figure(regions: dict[str, Any] | None, points: np.ndarray, best: tuple[float, float]
               | None, title: str) -> tuple[Any, dict[str, Any]]:
    """The n_s - r figure and the numbers it draws."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    marks = reference_marks()
    data: dict[str, Any] = {"pivot": PIVOT, "reference": marks,
                            "posterior": {"points": int(len(points))}}
    with style.styled() as plt:
        fig, ax = plt.subplots(figsize=(6.8, 4.3))
        handles = []
        xs = [m["n_s"] for m in marks]
        ys = [m["r"] for m in marks]
        if regions is not None:
            ns, r, dens = regions["n_s"], regions["r"], regions["density"]
            l68, l95 = regions["levels"]
            ax.contourf(ns, r, dens, levels=[l95, l68, dens.max() * 1.0001],
                        colors=[style.PUBLISHED[1], style.PUBLISHED[0]], alpha=0.9)
            ax.contour(ns, r, dens, levels=[l95, l68], colors=[style.PUBLISHED[0]],
                       linewidths=0.7)
            names = " + ".join(regions["labels"])
            handles += [Patch(color=style.PUBLISHED[0], label=f"{names}: 68%"),
                        Patch(color=style.PUBLISHED[1], label=f"{names}: 95%")]
            e95 = regions["extents"]["95"]
            xs += [v for v in (e95["n_s_min"], e95["n_s_max"]) if v is not None]
            ys += [e95["r_max"]] if e95["r_max"] is not None else []
            data["published"] = {"sets": regions["sets"], "kind": regions["kind"],
                                 "extents": regions["extents"]}
        if len(points):
            ax.plot(points[:, 0], points[:, 1], "o", ms=2.0, color=style.POSTERIOR[0],
                    alpha=0.45, mew=0, ls="")
            handles.append(Line2D([], [], marker="o", ms=3, color=style.POSTERIOR[0], ls="",
                                  label="this model: posterior samples"))
            xs += list(np.quantile(points[:, 0], [0.005, 0.995]))
            ys += list(np.quantile(points[:, 1], [0.005, 0.995]))
            data["posterior"].update({"n_s_median": float(np.median(points[:, 0])),
                                      "r_median": float(np.median(points[:, 1]))})
        if best is not None:
            ax.plot(*best, marker="*", ms=10, color=style.BEST_FIT, mec="white", mew=0.6,
                    ls="")
            handles.append(Line2D([], [], marker="*", ms=8, color=style.BEST_FIT, ls="",
                                  label="this model: best fit"))
            xs.append(best[0])
            ys.append(best[1])
            data["best_fit"] = {"n_s": best[0], "r": best[1]}
        for k, (name, label, marker) in enumerate(REFERENCE_MODELS):
            pts = [m for m in marks if m["model"] == name]
            color = style.SERIES[(k + 2) % len(style.SERIES)]
            ax.plot([m["n_s"] for m in pts], [m["r"] for m in pts], "-", color=color, lw=1.0)
            ax.plot([m["n_s"] for m in pts], [m["r"] for m in pts], marker=marker, ls="",
                    mfc="white", mec=color, mew=1.2, ms=5)
            for m in pts:
                ax.annotate(f"{m['N_star']:.0f}", (m["n_s"], m["r"]), xytext=(4, 3),
                            textcoords="offset points", fontsize=6.5, color=color)
            handles.append(Line2D([], [], color=color, marker=marker, mfc="white", mec=color,
                                  label=f"{label} slow roll, $N_*$ = 50-60"))
        x0, x1 = min(xs), max(xs)
        pad = 0.08 * (x1 - x0 if x1 > x0 else 0.01)
        ax.set_xlim(x0 - pad, x1 + pad)
        ax.set_ylim(0.0, max(ys) * 1.1 if max(ys) > 0 else 0.1)
        ax.set_xlabel(r"$n_s$ at $k_* = 0.05\ \mathrm{Mpc}^{-1}$")
        ax.set_ylabel(r"$r$ at $k_* = 0.05\ \mathrm{Mpc}^{-1}$")
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.02, 1.0),
                  borderaxespad=0.0)
        ax.set_title(title, loc="left")
    return fig, data
