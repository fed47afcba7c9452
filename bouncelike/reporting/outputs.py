"""The files of a report: verdicts, marginal tables and the figure pack, each figure with a
caption (data-set citations, interval definitions and rules) and the numbers it draws.

==========================  ===================================================================
``verdicts.md`` / ``.json``  best fit with its p-value rule, surviving prior volume, marginals,
                             Bayes factors, the best fit against each set, the rules
``marginals.md`` / ``.tex``  median and 68% interval, 95% interval or limit per parameter
``triangle``                 1D and 2D marginals (the titles are the marginals.md numbers)
``ns_r``                     the n_s - r plane: published regions, posterior, slow-roll marks
``exclusion_map``            combined verdict over two sampled parameters, each set's boundary
``not_evaluable``            where the model could not be evaluated (when it could not)
``spectra``                  P_s and P_t with posterior bands and the sets' constraints, the k
                             each multipole of the large-scale temperature term probes
``dell``                     D_ell at multipoles 2-29: data, best-fit LCDM, the model's best fit
                             and posterior bands (the term, its approximation and sources)
``efolds``                   prior and posterior of an e-fold number (when the model has one)
==========================  ===================================================================

Figures come as ``.pdf`` and ``.png`` with ``.caption.txt``; the triangle plot, the n_s - r
plane, the exclusion map, the spectra and the D_ell figure also write the numbers they draw as
``.json``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from ..io import json_safe, write_json_atomic, write_text_atomic
from . import exclusion, figures, notation, nsr, proportions, refusals, style, tables, triangle
from .goodness import P_VALUE_RULES
from .marginals import INTERVAL_DEFINITION

FIGURES = ("triangle", "ns_r", "exclusion_map", "not_evaluable", "spectra", "dell", "efolds")


def write_report(folder: str | Path, data: dict[str, Any],
                 output: str | Path | None = None) -> list[Path]:
    """Write the report files computed by :func:`~.report.compute_report` into RUN/report/
    (or ``output``)."""
    folder = Path(folder)
    out = Path(output) if output is not None else folder / "report"
    v = data["verdicts"]
    prior = data["prior"]
    labels = prior.labels()
    roles = {p.name: p.role for p in prior.parameters}
    sets_meta = v["constraint_set_citations"]
    cite = style.citations_text(sets_meta)
    model = v.get("model_title", v["model"])
    written = [
        write_json_atomic(out / "verdicts.json", json_safe(v)),
        write_text_atomic(out / "verdicts.md", tables.verdicts_markdown(v)),
        write_text_atomic(out / "marginals.md", tables.marginal_markdown(v["marginals"], labels,
                                                                          roles)),
        write_text_atomic(out / "marginals.tex", tables.marginal_latex(
            v["marginals"], labels, f"Marginal posterior constraints, run {v['run_name']} "
            f"({model}) against {', '.join(notation.set_label(s) for s in sets_meta)}; "
            f"{INTERVAL_DEFINITION}.")),
    ]
    written += _triangle(out, data, v, cite, model)
    written += _ns_r(out, data, v, cite, model)
    written += _exclusion_map(out, data, v, cite, model)
    written += _not_evaluable(out, data, v, cite, model)
    fd = data["figures"]
    kr = fd["dell"]["k_ranges"]
    fig, drawn = figures.spectra_figure(fd["k"], fd["best"], fd["scalar"], fd["tensor"],
                                        list(data["constraint_sets"]),
                                        f"{model}: best fit and posterior bands", kr)
    written += style.save_with_caption(
        fig, out / "spectra",
        "Primordial scalar and tensor power spectra P_s and P_t (comoving k in Mpc^-1): best "
        "fit (line), posterior 68% and 95% bands (equal-tailed quantiles of "
        f"{len(fd['scalar'])} posterior samples at each k), the observable window 1e-4 to "
        "0.2 Mpc^-1 (common practice), the 68% bands of amplitude and tilt of the sets "
        "(errors combined as independent) and their 95% upper limits on r drawn as tensor "
        "amplitudes r_lim x A_s with the Planck 2018 A_s. Ticks at the top of the scalar "
        f"panel: the median k of each multipole {kr['ells'][0]}-{kr['ells'][-1]} of the "
        "large-scale temperature term; bars: the k range holding the central "
        f"{kr['mass']:.0%} of the power of ell = {kr['ells'][0]} and {kr['ells'][-1]} (for the "
        "reference power law; see dell.caption.txt).\n" + cite, drawn)
    written += _dell(out, data, v, cite, model)
    if fd["efold"] is not None:
        e = fd["efold"]
        fig = figures.efolds_figure(e["posterior"], e["prior"], e["name"], e["label"],
                                    f"{model}: e-folds {notation.inline(e['name'], e['label'])}")
        written += style.save_with_caption(
            fig, out / "efolds", f"Prior and posterior distribution of {e['name']} "
            f"(histograms, {len(e['posterior'])} posterior samples).\n" + cite)
    return written


def _dell(out: Path, data: dict[str, Any], v: dict[str, Any], cite: str, model: str
          ) -> list[Path]:
    """The D_ell figure of the large-scale temperature term (every report)."""
    from . import lowell

    d = data["figures"]["dell"]
    fig = lowell.dell_figure(d, f"{model}: temperature power at the largest scales")
    return style.save_with_caption(fig, out / "dell",
                                   lowell.caption(d, v["large_scale_term"], cite), d)


def _triangle(out: Path, data: dict[str, Any], v: dict[str, Any], cite: str, model: str
              ) -> list[Path]:
    prior, frame = data["prior"], data["frame"]
    decisive = [q for s in data["constraint_sets"] for q in s.quantities]
    names = triangle.triangle_parameters(frame, data["sampled"], data["derived"], decisive)
    stats = {e["name"]: e for e in v["marginals"]}
    fig, drawn = triangle.triangle_figure(
        frame[names].to_numpy(), names, prior.labels(),
        {p.name: (p.lower, p.upper) for p in prior.sampled} | (
            {"r": (0.0, float("inf"))} if "r" in names and "r" in data["derived"] else {}),
        stats, {n: data["best_row"][n] for n in names})
    left_out = [n for n in data["sampled"] + data["derived"] if n not in names]
    return style.save_with_caption(
        fig, out / "triangle",
        f"Marginal posteriors of run {v['run_name']} ({model}), {v['samples_used']} samples "
        "after burn-in. Filled regions: 68% and 95% of the posterior mass (getdist kernel "
        "density estimates, boundary-corrected at the prior bounds). Panel titles, shaded "
        f"bands and dashed lines: {INTERVAL_DEFINITION} -- the numbers of marginals.md. "
        "Cross: best fit." + (f" Not shown: {', '.join(left_out)} (redundant, indicators or "
                              "spanning many decades; see marginals.md)." if left_out else "")
        + "\n" + cite, drawn)


def _ns_r(out: Path, data: dict[str, Any], v: dict[str, Any], cite: str, model: str
          ) -> list[Path]:
    fd = data["figures"]
    regions = nsr.published_regions(list(data["constraint_sets"]))
    fig, drawn = nsr.nsr_figure(regions, fd["ns_r_points"], fd["ns_r_best"],
                                f"{model} in the $n_s$-$r$ plane")
    used = ", ".join(regions["labels"]) if regions else "none of the run's sets"
    return style.save_with_caption(
        fig, out / "ns_r",
        "The n_s - r plane at k = 0.05 Mpc^-1. Shaded: the 68% and 95% highest-density "
        f"regions of the run's constraints on n_s and r ({used}) as the likelihood treats "
        "them (Gaussian n_s; upper limits on r as half-Gaussians in r >= 0 whose 95% point is "
        "the published limit; each set at its own pivot), with flat priors on n_s and r >= 0. "
        f"Points: the pivot summary of {len(fd['ns_r_points'])} posterior samples of this "
        "model; star: its best fit. Open marks: m^2 phi^2 and Starobinsky at leading order in "
        "slow roll (Encyclopaedia Inflationaris, arXiv:1303.3787) at N_* = 50 and 60.\n"
        + cite, drawn)


def _exclusion_map(out: Path, data: dict[str, Any], v: dict[str, Any], cite: str, model: str
                   ) -> list[Path]:
    fd = data["figures"]
    m = fd["map"]
    fixed = ", ".join(f"{k} = {val:.4g}" for k, val in fd["map_fixed"].items())
    set_labels = [notation.set_label(s) for s in v["constraint_set_citations"]]  # every set
    fig, drawn = exclusion.exclusion_map_figure(
        m, set_labels, fd["map_axes"], fd["map_samples"], fd.get("map_refused") or {},
        fd["map_best"], f"{model}: exclusion map")
    drawn["fixed_at_best_fit"] = fd["map_fixed"]
    (na, _), (nb, _) = fd["map_axes"]
    grid = len(m["x"])
    return style.save_with_caption(
        fig, out / "exclusion_map",
        f"Exclusion map over {na} and {nb}"
        + (f" (other sampled parameters at the best fit: {fixed})" if fixed else "")
        + ". Each point is one configuration scored against the run's constraint sets "
        f"together ({P_VALUE_RULES['one_configuration']}; excluded at 95% if p < 0.05, at "
        "99.7% if p < 0.003), and the line of each set is its own 95% exclusion boundary. "
        "Hatched: not evaluable at these values (the model has no prediction the likelihood "
        "can score there: never read as a data bound). Points: posterior samples; crosses: "
        "evaluations the run recorded as not evaluable or failed (failures.csv), projected "
        "onto the plane from all sampled parameters; star: best fit. Grid: "
        f"{grid} x {grid} after adaptive refinement near the boundaries "
        f"({m['evaluations']} evaluations).\n" + cite, drawn)


def _not_evaluable(out: Path, data: dict[str, Any], v: dict[str, Any], cite: str, model: str
                   ) -> list[Path]:
    """Where the model could not be evaluated (only when it could not somewhere)."""
    fd, ne = data["figures"], v["not_evaluable"]
    recorded = fd.get("recorded_refusals") or {}
    if not recorded and not ne["prior_fraction"]["count"]:
        return []
    prior = data["prior"]
    names = data["sampled"]
    fig, drawn = refusals.refusals_figure(
        data["frame"][names].to_numpy(), names, prior.labels(),
        {p.name: (p.lower, p.upper) for p in prior.sampled}, recorded,
        ne["coincidences"], f"{model}: where the model is not evaluable")
    drawn["prior_fraction_not_evaluable"] = ne["prior_fraction"]
    frac = proportions.fraction_text(ne["prior_fraction"], "prior draws")
    return style.save_with_caption(
        fig, out / "not_evaluable",
        "Where the model could not be evaluated. Filled: posterior samples of each sampled "
        "parameter; lines: the evaluations the run recorded in failures.csv as not evaluable "
        "(solid) or failed (dotted), normalised like the posterior; vertical lines: the "
        "reported bounds (dashed where the bound coincides with the edge of the not-evaluable "
        f"region and is not a data bound; rule: {refusals.RULE}). Prior volume not evaluable: "
        f"{frac}. A point the model cannot evaluate is reported as not evaluable, never as "
        "excluded.\n" + cite, drawn)
