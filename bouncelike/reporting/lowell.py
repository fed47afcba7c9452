"""The large-scale temperature term in a report: what it is, its approximation and sources, the
D_ell figure, and the range of k each multipole probes.

Every report states the term (:func:`term_statement`): for a run that used it, the set, the
multipoles, the approximation (anchoring to the best-fit LCDM spectrum) and the sources; for a
run without it, that its verdict comes from the pivot numbers alone. The D_ell figure is drawn
for every run whose spectra the projection can read: with the run's own term, or, for a run
without one, the shipped set :data:`DEFAULT_SET` as a comparison that is not part of the
run's likelihood (the caption says which).

**k range of a multipole** (:func:`multipole_k_ranges`). The anchored prediction is a sum over
the projection's nodes, D_ell = sum_j c_(ell j) (:meth:`~bouncelike.likelihood.lowell.
LowEllTemperature.contributions`); the range a multipole probes is where the central
:data:`SUPPORT_MASS` (68%) of its sum lies (the 16% and 84% points of the cumulative sum in
k, for the reference power law of the set), with the median point. For the Planck 2018 set
(measured): ell = 2 takes 68% of its power from 1.7e-4-1.4e-3 Mpc^-1 (median 3.1e-4), ell = 10
from 7.8e-4-2.2e-3 (median 9.2e-4), ell = 29 from 2.2e-3-4.4e-3 (median 2.4e-3); the upper
tails are the late ISW, which a multipole collects from distances well below chi_*.
tests/test_lowell_runs.py checks the Sachs-Wolfe part against an independent quadrature
of j_ell^2(k chi_*) dk/k.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from . import style

DEFAULT_SET = "planck2018_lowell_tt"
#: central fraction of a multipole's power that defines the k range it probes
SUPPORT_MASS = 0.68
#: band quantiles of the posterior predictions (2.5, 16, 50, 84, 97.5%)
QUANTILES = (0.025, 0.16, 0.5, 0.84, 0.975)
PROJECTION_SOURCES = (
    "Sachs & Wolfe 1967, ApJ 147, 73 (Sachs-Wolfe and integrated Sachs-Wolfe terms)",
    "Dodelson & Schmidt, Modern Cosmology, 2nd ed., anisotropy chapters (line-of-sight "
    "projection, growth of the potentials; chapter numbers from memory)",
    "Pritchard & Kamionkowski 2005, Ann. Phys. 318, 2 (tensor ISW; from memory)",
    "Hamimeche & Lewis 2008, arXiv:0801.0554 (inverse-gamma likelihood of one multipole)",
    "late universe: astropy.cosmology.Planck18 (Planck 2018 VI, arXiv:1807.06209)",
)
TERM_TEXT = (
    "large-scale temperature term: the measured temperature power D_ell at multipoles "
    "{lo}-{hi} ({name}: {citation}, arXiv:{arxiv}) against its prediction from the primordial "
    "spectra P_s and P_t by our Sachs-Wolfe + late integrated Sachs-Wolfe projection (tensor "
    "ISW for P_t), scored with a per-multipole inverse-gamma likelihood fitted to the "
    "published 68% intervals")
APPROXIMATION_TEXT = (
    "approximation: D_ell = D_ell^LCDM x K_ell[P] / K_ell[P_LCDM], anchored to the published "
    "best-fit LCDM spectrum ({reference}) and its primordial power law, so what the projection "
    "leaves out (early ISW, Doppler, the rise to the first acoustic peak, reionisation) cancels "
    "to first order for spectra that differ from the best fit smoothly over each multipole's "
    "kernel; oscillations finer than a kernel are seen through their period mean; the "
    "anchoring error is estimated per multipole in every score")
NOT_USED_TEXT = (
    "large-scale temperature term: not part of this run's likelihood; the verdicts come from "
    "the pivot constraints alone, which do not see the spectra below ~1e-3 Mpc^-1 where a "
    "bounce leaves its features (the D_ell figure shows the shipped {name} for comparison)")


def term_statement(likelihood: Any) -> dict[str, Any]:
    """What a report says about the term: used or not, set, multipoles, approximation,
    sources and the verdict rule of the combined statistic."""
    low = getattr(likelihood, "low_ell", None)
    if low is None:
        return {"used": False, "text": NOT_USED_TEXT.format(name=DEFAULT_SET),
                "sources": list(PROJECTION_SOURCES)}
    from ..likelihood.combined import COMBINED_RULE

    d = low.data
    lo, hi = int(low.ells[0]), int(low.ells[-1])
    return {
        "used": True, "set": d.name, "multipoles": [lo, hi],
        "text": TERM_TEXT.format(lo=lo, hi=hi, name=d.name, citation=d.citation,
                                 arxiv=d.arxiv),
        "approximation": APPROXIMATION_TEXT.format(reference=d.reference_citation),
        "overlap": d.overlap_treatment,
        "sources": [f"{d.citation} (arXiv:{d.arxiv})", d.reference_citation,
                    *PROJECTION_SOURCES],
        "rule": COMBINED_RULE,
    }


def statement_lines(statement: dict[str, Any]) -> list[str]:
    """The statement as lines of text (verdicts.md, captions)."""
    lines = [statement["text"] + "."]
    if statement.get("used"):
        lines += [statement["approximation"][0].upper() + statement["approximation"][1:] + ".",
                  "Overlap: " + statement["overlap"],
                  "Verdict rule of the combined statistic: " + statement["rule"] + "."]
    lines.append("Sources: " + "; ".join(statement["sources"]) + ".")
    return lines


def term_for_figure(likelihood: Any) -> tuple[Any, bool]:
    """(the term whose data the D_ell figure shows, whether the run's likelihood uses it)."""
    low = getattr(likelihood, "low_ell", None)
    if low is not None:
        return low, True
    from ..likelihood.lowell import LowEllTemperature

    return LowEllTemperature.from_file(DEFAULT_SET), False


def multipole_k_ranges(term: Any, spectra: Any = None, mass: float = SUPPORT_MASS
                       ) -> dict[str, Any]:
    """Per multipole, the k interval (Mpc^-1) holding the central ``mass`` of its anchored
    power, and the median point (module docstring); for the term's reference power law unless
    ``spectra`` are given."""
    c = term.contributions(term.reference if spectra is None else spectra)
    k = term.projection.k
    cum = np.cumsum(c, axis=1) - 0.5 * c  # each node's hat function is centred on it
    cum /= c.sum(axis=1, keepdims=True)
    lnk = np.log(k)
    tail = 0.5 * (1.0 - mass)

    def at(q: float) -> np.ndarray:
        return np.exp([np.interp(q, row, lnk) for row in cum])

    return {"ells": [int(e) for e in term.ells], "mass": mass, "k_low": at(tail),
            "k_median": at(0.5), "k_high": at(1.0 - tail)}


def figure_data(term: Any, best_spectra: Any, band_predictions: np.ndarray,
                used: bool) -> dict[str, Any]:
    """The numbers the D_ell figure draws (micro-K^2 at ``term.ells``)."""
    band = np.asarray(band_predictions, dtype=float).reshape(-1, len(term.ells))
    try:
        best = term.predict(best_spectra)
    except Exception:  # noqa: BLE001 - a best fit the projection cannot read is not drawn
        best = None
    d = term.data
    return {
        "set": d.name, "used_in_likelihood": used, "multipoles": [int(e) for e in term.ells],
        "measured": term.measured, "minus": term.measured - term.lower_edge,
        "plus": term.upper_edge - term.measured, "best_fit_lcdm": term.reference_dell,
        "model_best_fit": best, "quantiles": list(QUANTILES) if len(band) else [],
        "band": (np.quantile(band, QUANTILES, axis=0) if len(band) else None),
        "band_samples": int(len(band)),
        "k_ranges": multipole_k_ranges(term),
        "source": {"title": d.title, "citation": d.citation, "arxiv": d.arxiv,
                   "table": d.table, "reference": d.reference_citation},
    }


def dell_figure(data: dict[str, Any], title: str) -> Any:
    """Measured D_ell with asymmetric 68% errors, the best-fit LCDM spectrum, the model's best
    fit and its posterior 68%/95% bands, ell on a logarithmic axis."""
    ells = np.asarray(data["multipoles"], dtype=float)
    with style.styled() as plt:
        fig, ax = plt.subplots(figsize=(6.4, 3.6))
        band = data["band"]
        if band is not None:
            ax.fill_between(ells, band[0], band[4], color=style.POSTERIOR[1], lw=0, alpha=0.8,
                            step="mid", label="model posterior 95%")
            ax.fill_between(ells, band[1], band[3], color=style.POSTERIOR[0], lw=0, alpha=0.55,
                            step="mid", label="model posterior 68%")
        ax.plot(ells, data["best_fit_lcdm"], color=style.MUTED, lw=1.1, ls="--",
                label="best-fit LCDM (reference)")
        if data["model_best_fit"] is not None:
            ax.plot(ells, data["model_best_fit"], color=style.BEST_FIT, lw=1.3,
                    label="model best fit")
        ax.errorbar(ells, data["measured"], yerr=[data["minus"], data["plus"]], fmt="o",
                    ms=3.2, color=style.INK, elinewidth=0.8, capsize=0,
                    label=f"{data['set']} (68%)")
        ax.set_xscale("log")
        ax.set_xticks([2, 3, 5, 10, 20, 29])
        ax.set_xticklabels(["2", "3", "5", "10", "20", "29"])
        ax.xaxis.set_minor_formatter(plt.NullFormatter())
        ax.set_xlim(1.8, 31)
        ax.set_xlabel(r"multipole $\ell$")
        ax.set_ylabel(r"$D_\ell = \ell(\ell+1)C_\ell T_\mathrm{CMB}^2/2\pi\ [\mu\mathrm{K}^2]$")
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0)
        ax.set_title(title, loc="left")
    return fig


def caption(data: dict[str, Any], statement: dict[str, Any], cite: str) -> str:
    """The D_ell figure's caption: what is drawn, the anchoring, the k ranges, the term's
    statement (approximation, sources, verdict rule) and the sets' citations."""
    kr = data["k_ranges"]
    d = data["source"]
    use = ("the run's large-scale temperature term" if data["used_in_likelihood"] else
           "shown for comparison only: this set is NOT part of the run's likelihood")
    return (
        f"Temperature power D_ell at multipoles {data['multipoles'][0]}-"
        f"{data['multipoles'][-1]} ({use}). Points: {d['title']}, {d['citation']} (arXiv:"
        f"{d['arxiv']}), {d['table']}; error bars: the published asymmetric 68% intervals. "
        f"Dashed: the published best-fit LCDM spectrum ({d['reference']}). Line: the model's "
        "best fit; bands: "
        f"equal-tailed 68% and 95% quantiles of the predictions of {data['band_samples']} "
        "posterior samples at each multipole (drawn as steps). Model predictions are anchored to "
        "the best-fit LCDM spectrum: D_ell = D_ell^LCDM x K_ell[P] / K_ell[P_LCDM] with K_ell "
        "our Sachs-Wolfe + late-ISW (+ tensor ISW) projection, so what it leaves out cancels to "
        f"first order. Each multipole probes k = {kr['k_low'][0]:.2g}-{kr['k_high'][0]:.2g} "
        f"Mpc^-1 (ell = {kr['ells'][0]}) to {kr['k_low'][-1]:.2g}-{kr['k_high'][-1]:.2g} "
        f"Mpc^-1 (ell = {kr['ells'][-1]}) (central {kr['mass']:.0%} of its power for the "
        "reference spectrum).\n" + "\n".join(statement_lines(statement)) + "\n" + cite)


def mark_k_ranges(ax: Any, k_ranges: dict[str, Any]) -> None:
    """Ticks at the top of a spectra panel: each multipole's median k, with a bar over the
    central range of ell = 2 and of the highest multipole."""
    from matplotlib.transforms import blended_transform_factory

    tr = blended_transform_factory(ax.transData, ax.transAxes)
    med = np.asarray(k_ranges["k_median"])
    for km in med:
        ax.plot([km, km], [0.95, 1.0], transform=tr, color=style.INK, lw=0.6, clip_on=False)
    ells = k_ranges["ells"]
    for i, y in ((0, 0.915), (len(ells) - 1, 0.915)):
        ax.plot([k_ranges["k_low"][i], k_ranges["k_high"][i]], [y, y], transform=tr,
                color=style.INK, lw=1.0, solid_capstyle="butt", clip_on=False)
        ax.text(med[i], y - 0.012, rf"$\ell={ells[i]}$", transform=tr, ha="center", va="top",
                fontsize=6.5, color=style.INK)


def bounce_bounds(columns: dict[str, np.ndarray], verdict: dict[str, Any]) -> dict[str, Any] | None:
    """The data's bound on where the bounce sits: one-sided 95% limits N_B* > q_5% and
    k_LQC < 10^(q_95% of log10 k_LQC) Mpc^-1 of the posterior samples, each with the report's
    judgement of whether it is a data bound or the edge of a not-evaluable region
    (:func:`bouncelike.reporting.refusals.derived_coincidences`, same side). None for a model
    without a bounce scale."""
    ne = verdict.get("not_evaluable") or {}
    rows = [*ne.get("coincidences", []), *ne.get("derived", [])]
    out: dict[str, Any] = {}
    for name, q, side, what in (("N_B_star", 0.05, "below", "lower"),
                                ("log10_k_lqc", 0.95, "above", "upper")):
        x = np.asarray(columns.get(name, ()), dtype=float)
        x = x[np.isfinite(x)]
        if not x.size:
            continue
        row = next((r for r in rows if r["parameter"] == name and r["side"] == side), None)
        judged = None if row is None else row["coincides"]
        out[name] = {"limit95": float(np.quantile(x, q)), "kind": f"{what}_limit",
                     "coincides_with_not_evaluable": judged,
                     "judged_through": (row or {}).get("carrier_bound") or (row or {}).get(
                         "bound")}
    if not out:
        return None
    term = verdict.get("large_scale_term") or {}
    out["likelihood"] = ("with the large-scale temperature term" if term.get("used") else
                         "from the pivot constraints alone (blind below ~1e-3 Mpc^-1)")
    return out


def bounce_text(b: dict[str, Any]) -> str:
    """One line: the data's bound on the bounce and whether it is a data bound."""
    parts = []
    if "N_B_star" in b:
        parts.append(f"N_B* > {b['N_B_star']['limit95']:.3g}")
    if "log10_k_lqc" in b:
        parts.append(f"k_LQC < {10 ** b['log10_k_lqc']['limit95']:.2g} Mpc^-1")
    judged = [v["coincides_with_not_evaluable"] for k, v in b.items() if isinstance(v, dict)]
    if any(j is True for j in judged):
        verdict = ("this bound COINCIDES WITH THE EDGE OF A REGION WHERE THE MODEL IS NOT "
                   "EVALUABLE: it is not a data bound")
    elif judged and all(j is False for j in judged):
        verdict = "a data bound (not the edge of a not-evaluable region)"
    else:
        verdict = ("not judged against the not-evaluable region (no sampled parameter carries "
                   "it, or its carrier has no bound on that side)")
    return (f"where the bounce may sit (one-sided 95%, {b['likelihood']}): "
            f"{', '.join(parts)}; {verdict}")
