"""``bouncelike score CONFIG.toml``: score one configuration against published constraints.

The spectra come from ``[model] spectra = "power_law" | "slow_roll" | "bounce" | "table"`` (see
:mod:`bouncelike.models`), the constraint sets from ``[likelihood]``
(:func:`bouncelike.likelihood.gaussian.likelihood_from_config`). Prints a table of terms, the total
chi-square, p-value and verdict, fit-quality warnings and notes; ``--json`` prints the same as
one JSON object. Nothing is written to disk.

With a large-scale temperature set (e.g. ``planck2018_lowell_tt``) the table shows the pivot
terms, then the low-ell statistic, its largest per-multipole pulls and the anchoring-error
estimate per multipole; ``--json`` lists every multipole among ``terms`` (quantity ``D_<ell>``,
values in micro-K^2). A point that cannot be scored prints ``not evaluable: <reason>`` (exit 1;
with ``--json`` a JSON object with ``"verdict": "not evaluable"``).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ._layer import CommandResult, Options

NAME = "score"
HELP = "score one configuration against published CMB constraints (table or --json)"
OPTIONS = Options(config="[model], the model's section and [likelihood]", compiles=True)


def add_arguments(parser: Any) -> None:
    """No options of its own: CONFIG, --json, --quiet are shared."""


def _num(x: float | None, digits: int = 4) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x:.{digits}g}"


def _bounded(text: str, bound: str) -> str:
    """A value that is a lower bound (capped spectra) printed as one."""
    return f"> {text}" if bound == "lower" else text


def _p_text(p: float, bound: bool) -> str:
    """'p-value = 0.5'; an upper bound for capped spectra, '< 1e-300' where it underflows."""
    if p == 0.0:
        return "p-value < 1e-300"
    return f"p-value < {p:.3g}" if bound else f"p-value = {p:.3g}"


def _published(term: Any) -> str:
    if term.kind == "upper_limit":
        return (f"< {term.published:g} ({100 * term.confidence:g}%, half-Gaussian "
                f"sigma {term.sigma:.3g})")
    return f"{term.published:g} +- {term.error_or_limit:g}"


def format_low_ell(score: Any, largest: int = 5) -> list[str]:
    """Lines of the large-scale temperature block (statistic, largest pulls, anchoring)."""
    low = score.low_ell
    ells = [int(e) for e in low.ells]
    lines = ["", f"large-scale temperature, ell {ells[0]}-{ells[-1]} ({low.source}): "
             f"T = sum -2 ln(L/L_max) = {low.total:.3f} over {len(ells)} multipoles "
             f"(the set's reference best-fit power law: {low.reference_total:.3f}, difference "
             f"{low.total - low.reference_total:+.3f}); this term alone: p = "
             f"{'< ' if low.p_value_alone_is_bound else ''}{low.p_value_alone:.3g} "
             "(calibrated null distribution)"]
    header = ("multipole", "predicted [uK^2]", "measured (68% interval)", "nu", "pull",
              "-2 ln L/Lmax", "anchoring error")
    rows = []
    for i in low.largest_pulls(largest):
        rows.append((f"D_{ells[i]}", f"{low.predicted[i]:.1f}",
                     f"{low.measured[i]:.1f} ({low.lower_edge[i]:.1f}-{low.upper_edge[i]:.1f})",
                     f"{low.nu[i]:.2f}", f"{low.pulls[i]:+.2f}", f"{low.chi2_terms[i]:.3f}",
                     f"{100 * low.anchoring_error[i]:.2g}%"))
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    lines.append("largest pulls (pull = sign(D - mode) sqrt(-2 ln L/Lmax)):")
    lines.append("  ".join(h.ljust(w) for h, w in zip(header, widths, strict=True)).rstrip())
    lines.append("  ".join("-" * w for w in widths))
    for r in rows:
        lines.append("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)).rstrip())
    lines.append("anchoring error estimate per multipole (%): " + " ".join(
        f"{e}:{100 * a:.2g}" for e, a in zip(ells, low.anchoring_error, strict=True)))
    if low.sampling_spread is not None:
        lines.append("table sampling spread per multipole (%, even vs odd rows): " + " ".join(
            f"{e}:{100 * a:.2g}" for e, a in zip(ells, low.sampling_spread, strict=True)))
    return lines


def format_score(score: Any, title: str = "") -> str:
    """The human-readable score table."""
    from ..likelihood.sets import QUANTITY_LABELS

    header = ("quantity", "k_* [1/Mpc]", "predicted", "published (68% error or limit)", "pull",
              "chi2", "source")
    rows = [
        (
            QUANTITY_LABELS.get(t.quantity, t.quantity),
            f"{t.pivot:g}",
            _bounded(_num(t.predicted, 5), getattr(t, "bound", "")),
            _published(t),
            _bounded(f"{t.pull:+.2f}", getattr(t, "bound", "")),
            _bounded(f"{t.chi2:.3f}", getattr(t, "bound", "")),
            t.source,
        )
        for t in score.terms
        if t.kind != "inverse_gamma"
    ]
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    lines = []
    if title:
        lines += [title, ""]
    if rows:
        lines.append("  ".join(h.ljust(w) for h, w in zip(header, widths,
                                                          strict=True)).rstrip())
        lines.append("  ".join("-" * w for w in widths))
        for r in rows:
            lines.append("  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)).rstrip())
    if score.low_ell is not None:
        lines.extend(format_low_ell(score))
    lines.append("")
    bound = bool(getattr(score, "bound", False))
    p_text = _p_text(score.p_value, bound or score.p_value_is_bound)
    rel = ">" if bound else "="
    if score.low_ell is not None:
        lines.append(f"total statistic {rel} {score.chi2:.3f} (pivot chi2 + low-ell T), "
                     f"{score.dof} terms, {p_text} (calibrated, see the rule below)")
    else:
        lines.append(f"total chi2 {rel} {score.chi2:.3f}, dof = {score.dof} (one "
                     f"configuration: dof = number of terms), {p_text}")
    if bound:
        lines.append(f"bounds: the spectra are capped ({score.cap}); chi2 and the marked terms "
                     "are lower bounds, the p-value an upper bound")
    if score.verdict == "excluded":
        verdict = f"EXCLUDED at {100 * score.excluded_at:g}%"
        if bound:
            verdict += " (already by the lower bound on chi2)"
    elif score.verdict == "undetermined":
        verdict = "UNDETERMINED (capped spectra: the lower bound on chi2 does not exclude)"
    else:
        verdict = "allowed (not excluded at 95%)"
    if not score.fit_ok:
        verdict += "  [UNRELIABLE: fit quality failed, see warnings]"
    lines.append(f"verdict: {verdict}")
    fq = []
    for f in score.fit_quality:
        state = "ok" if f["fit_ok"] else "FAILED"
        if f["method"] == "exact":
            fq.append(f"k = {f['pivot']:g}: exact re-expansion")
        elif "rms_scalar" in f and f.get("period_mean"):  # combined: per-quantity check
            fq.append(
                f"k = {f['pivot']:g}: cubic fit of the period mean, residual rms ln P_s "
                f"{f['rms_scalar']:.2g}, ln(P_t/P_s) {f['rms_ratio']:.2g} (tolerance "
                f"{f['tolerance']:g}, checked for the quantities each set uses) ok")
        else:
            fq.append(
                f"k = {f['pivot']:g}: cubic fit"
                f"{' of the period mean' if f.get('period_mean') else ''} rms {f['fit_rms']:.2g} "
                f"(tolerance {f['tolerance']:g}) {state}"
            )
    if fq:
        lines.append("fit quality: " + "; ".join(fq))
    if score.notes:
        lines.append("notes:")
        lines.extend(f"  - {n}" for n in score.notes)
    return "\n".join(lines)


def run(args: Any, session: Any) -> CommandResult:
    from ..errors import NotEvaluable
    from ..likelihood.gaussian import likelihood_from_config
    from ..models import spectra_from_config
    from ..provenance import constraint_sets_of

    path = Path(args.config)
    config = session.config()
    likelihood = likelihood_from_config(config, base_dir=path.parent)
    spectra = spectra_from_config(config, base_dir=path.parent)
    provenance = session.provenance(constraint_sets_of(likelihood))
    try:
        score = likelihood.score(spectra)
    except NotEvaluable as exc:
        return CommandResult(data={"verdict": "not evaluable", "reason": str(exc),
                                   "config": str(path)},
                             provenance=provenance, exit_code=1,
                             message=f"bouncelike: not evaluable: {exc}")
    label = getattr(spectra, "label", "") or type(spectra).__name__
    out = score.as_dict()
    out["config"] = str(path)
    out["model"] = spectra.describe() if hasattr(spectra, "describe") else {"label": label}
    title = f"{label} ({path.name}) against: {', '.join(score.sets)}"
    text = format_score(score, title)
    validity = getattr(spectra, "validity", None)
    if validity is not None:  # bounce forward model: test field, trans-Planckian modes
        out["validity"] = validity.as_dict()
        text += "\n" + "\n".join(f"validity: {t}" for t in validity.lines())
    return CommandResult(data=out, text=text, provenance=provenance)
