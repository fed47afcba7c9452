"""``bouncelike spectrum CONFIG.toml``: primordial spectra of a bounce configuration.

Writes (:mod:`bouncelike.reporting.spectrum_figure` describes every column and curve):

* ``spectrum.csv``: one row per integrated wavenumber: k in Mpc^-1, k/k_LQC, P_s and P_t as
  drawn (the period mean where the rows cannot resolve the oscillation, flag ``period_mean``),
  the envelopes, the integrated values, the oscillation period in ln k and the power law of the
  pivot summary: exactly the curves of the figure's upper panel;
* ``spectrum_zoom.csv``: the curves of the lower panel (a few periods resolved), header only
  when the run has no oscillating features;
* ``spectrum.pdf``, ``spectrum.png``, ``spectrum.caption.txt``;
* ``spectrum.json``: the pivot summaries, validity flags, notes and provenance.

The pivot summaries are those ``bouncelike score`` computes for the same configuration
(:func:`bouncelike.spectra.summary.summarize` on the same spectra object, at the pivots of the
configured constraint sets and of ``[reheating] pivot``, with the ``[likelihood]`` fit
settings), their fit quality stated with their numbers.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ._layer import CommandResult, Options

NAME = "spectrum"
HELP = "primordial scalar and tensor spectra of a bounce configuration (table, figure, summary)"
OPTIONS = Options(config="[model] spectra = 'bounce'", output="bouncelike-out/<config stem>/",
                  compiles=True)
FILES = ("spectrum.csv", "spectrum_zoom.csv", "spectrum.pdf", "spectrum.png",
         "spectrum.caption.txt", "spectrum.json")


def add_arguments(parser: Any) -> None:
    """No options of its own: CONFIG, --output, --json, --quiet are shared."""


def summary_settings(config: Any, base_dir: Path | None) -> tuple[tuple[float, ...], float,
                                                                   float]:
    """(pivots, tolerance, half_width) of the pivot summaries ``score`` uses for ``config``."""
    from ..likelihood.gaussian import likelihood_from_config

    lik = likelihood_from_config(config, base_dir=base_dir)
    gauss = getattr(lik, "gaussian", lik)
    if gauss is None:  # a low-ell set alone: the fit settings of [likelihood] still apply
        from ..spectra.summary import DEFAULT_HALF_WIDTH

        return (), float(lik.tolerance), DEFAULT_HALF_WIDTH
    return tuple(gauss.pivots), float(gauss.tolerance), float(gauss.half_width)


def summary_text(s: Any) -> str:
    """One line: the numbers of a PivotSummary with its fit quality."""
    if s.method == "exact":
        quality = "exact re-expansion"
    else:
        quality = (f"cubic fit{' of the period mean' if s.period_mean else ''}, rms ln P "
                   f"{s.fit_rms:.2g} (ln P_s {s.rms_scalar:.2g}, ln(P_t/P_s) "
                   f"{s.rms_ratio:.2g}; tolerance {s.tolerance:g}) "
                   + ("ok" if s.fit_ok else "FAILED"))
    return (f"k_* = {s.pivot:g} Mpc^-1: ln(1e10 A_s) = {s.ln_1e10_As:.4f}, n_s = {s.n_s:.5f}, "
            f"running = {s.running:.3g}, r = {s.r:.4g}; {quality}")


def run(args: Any, session: Any) -> CommandResult:
    import numpy as np
    import pandas as pd

    from ..io import json_safe, output_set, write_csv_atomic, write_json_atomic
    from ..models.bounce import BounceTable, run_from_config
    from ..models.bounce_features import SKY_FRACTION, sky_resolution_k
    from ..perturbations.mapping import OBSERVABLE_WINDOW
    from ..reporting import spectrum_figure as sf
    from ..reporting.style import save_with_caption
    from ..spectra.summary import summarize
    from ..spectra.tabulated import RESOLVED_ROWS

    config = session.config()
    out = session.output_folder(FILES)
    base_dir = session.config_path.parent if session.config_path else None
    pivots, tolerance, half_width = summary_settings(config, base_dir)
    br = run_from_config(config, show_progress=session.progress)
    spectra = BounceTable(br)
    sp, scales = br.spectrum, br.scales
    all_pivots = sorted({*pivots, scales.pivot})
    summaries = {p: summarize(spectra, p, half_width=half_width, tolerance=tolerance)
                 for p in all_pivots}
    ref = summaries[scales.pivot]
    curves = sf.spectrum_curves(br, spectra, ref)
    zoom = sf.zoom_curves(br)
    rows = int(curves["period_mean"].sum())
    ok_text = "ok" if ref.fit_ok else "FAILED"
    info = {"title": f"{sp.prescription.replace('_', ' ')}, state {sp.state}",
            "pivots": [(p, r"pivot $k_*$" + f" = {p:g} " + r"Mpc$^{-1}$") for p in all_pivots],
            "k_lqc_mpc": scales.k_lqc_mpc, "window": OBSERVABLE_WINDOW,
            "reference_label": (r"$A_s$ power law of the pivot summary at $k_*$ = "
                                f"{ref.pivot:g}: " + r"$n_s$" + f" = {ref.n_s:.4f} (fit rms "
                                f"{ref.fit_rms:.2g}, {ok_text})")}
    fig, _ = sf.spectrum_figure(curves, zoom, info)
    sky_k = sky_resolution_k()
    period_k = br.features.period_k(scales.k_lqc_mpc) if br.features is not None else math.inf
    validity = br.validity.as_dict() if br.validity is not None else None
    validity_lines = br.validity.lines() if br.validity is not None else []
    rule = (f"a row shows the period mean P_std (|alpha|^2 + |beta|^2) of the feature "
            f"oscillation where its period in ln k is shorter than {RESOLVED_ROWS:g} row "
            "spacings (column period_mean = 1: the integrated values there are aliased), the "
            "integrated value elsewhere; the sky sees only the period mean where the period "
            f"in k is below {SKY_FRACTION:g} of pi/chi_* = {sky_k:.2g} Mpc^-1")
    timing = session.timing()
    result = {"pivot_summaries": [s.as_dict() for s in summaries.values()],
              "pivot_summary": ref.as_dict(),
              "fit_ok": all(s.fit_ok for s in summaries.values()),
              "validity": validity,
              "period_mean": {"rows": rows, "of": len(curves["k_mpc"]), "rule": rule,
                              "period_k_mpc": period_k, "sky_resolution_k_mpc": sky_k},
              "zoom": None if zoom is None else {
                  "k0_mpc": zoom["k0_mpc"], "period_k_mpc": zoom["period_k_mpc"],
                  **{k: np.asarray(v).tolist() if not np.isscalar(v) else v
                     for k, v in zoom["checks"].items()}},
              "k_lqc_mpc": scales.k_lqc_mpc,
              "log10_k_lqc_mpc": scales.ln_k_lqc_mpc / math.log(10),
              "n_star": scales.n_star, "n_bounce_to_pivot": scales.n_bounce_pivot,
              "prescription": sp.prescription, "state": sp.state,
              "sign_convention": sp.sign_convention,
              "max_wronskian_error": sp.max_wronskian_error,
              "background": br.table.label, **{f"background_{k}": v for k, v in
                                               br.table.info.items()},
              "notes": list(br.notes),
              "elapsed_seconds": timing["wall_seconds"],
              "compile_seconds": timing["compile_seconds"],
              "files": [str(out / n) for n in FILES]}
    summary_lines = [summary_text(s) for s in summaries.values()]
    caption = "\n".join([
        f"Primordial spectra of {getattr(session.config_path, 'name', 'the configuration')} "
        f"({info['title']}); k in Mpc^-1.",
        "Upper panel: " + rule + ". Shaded: the envelopes P_std |alpha|^2 (1 -+ rho)^2. Dots: "
        "the integrated modes. Dashed: the power law of the pivot summary at "
        f"k_* = {ref.pivot:g} Mpc^-1. Curves as in spectrum.csv.",
        ("Lower panel: " + f"{sf.ZOOM_PERIODS} periods around k = {zoom['k0_mpc']:.4g} "
         "Mpc^-1 reconstructed from the exact Bogoliubov decomposition of the run's modes; "
         "circles: modes integrated exactly (largest relative difference "
         f"{zoom['checks']['max_relative_difference']:.2g}). Curves as in spectrum_zoom.csv."
         ) if zoom is not None else "No oscillating features: no zoom panel.",
        "Pivot summaries (bouncelike.spectra.summary, as in bouncelike score):",
        *[f"  {t}" for t in summary_lines],
        "Validity:", *[f"  {t}" for t in validity_lines]])
    provenance = session.provenance()
    frame = pd.DataFrame(curves)
    zoom_frame = pd.DataFrame(zoom["curves"] if zoom is not None else {
        c: [] for c in ("k_mpc", "P_s", "P_t")})
    with output_set(out):  # every file, or none
        write_csv_atomic(out / "spectrum.csv", frame, index=False)
        write_csv_atomic(out / "spectrum_zoom.csv", zoom_frame, index=False)
        save_with_caption(fig, out / "spectrum", caption)
        write_json_atomic(out / "spectrum.json", json_safe({**result, "provenance": provenance}))
    lines = [f"k_LQC = 10^{scales.ln_k_lqc_mpc / math.log(10):.2f} Mpc^-1; "
             f"N_* = {scales.n_star:.2f}, N_B* = {scales.n_bounce_pivot:.2f}",
             "pivot summaries (as bouncelike score computes them):",
             *[f"  {t}" for t in summary_lines]]
    lines += [f"WARNING: fit quality failed at k = {s.pivot:g} Mpc^-1: the summary numbers do "
              "not represent the featured spectrum faithfully"
              for s in summaries.values() if not s.fit_ok]
    lines.append(f"table: {rows} of {len(curves['k_mpc'])} rows show the period mean ({rule})")
    lines += [f"validity: {t}" for t in validity_lines]
    lines.extend(f"note: {n}" for n in br.notes)
    lines.append(f"time {session.time_text()}; wrote {out}/spectrum.{{csv,pdf,png,json}}, "
                 "spectrum_zoom.csv, spectrum.caption.txt")
    return CommandResult(data=result, text="\n".join(lines), provenance=provenance,
                         files=tuple(result["files"]))
