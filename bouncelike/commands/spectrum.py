"""``bouncelike spectrum CONFIG.toml``: primordial spectra of a bounce configuration.

Writes ``spectrum.csv`` (k in Mpc^-1, k/k_LQC, P_s, P_t), ``spectrum.pdf`` and ``spectrum.png``
(P_s and P_t against k with the observable window, the pivot, the bounce scale and the
power-law reference of the pivot summary) and ``spectrum.json``; ``--json`` prints the summary.
"""

from __future__ import annotations

import math
from typing import Any

from ._layer import CommandResult, Options

NAME = "spectrum"
HELP = "primordial scalar and tensor spectra of a bounce configuration (table, figure, summary)"
OPTIONS = Options(config="[model] spectra = 'bounce'", output="bouncelike-out/<config stem>/",
                  compiles=True)
FILES = ("spectrum.csv", "spectrum.pdf", "spectrum.png", "spectrum.json")


def add_arguments(parser: Any) -> None:
    """No options of its own: CONFIG, --output, --json, --quiet are shared."""


def pivot_summary(k: Any, ps: Any, pt: Any, pivot: float, half_width: float = 1.0) -> dict:
    """Local quadratic fit of ln P_s in ln(k/k_*) over +-half_width: A_s, n_s, running; r."""
    import numpy as np

    x = np.log(k / pivot)
    m = np.abs(x) <= half_width
    if m.sum() < 4:
        return {"pivot": pivot, "fit_ok": False}
    c = np.polyfit(x[m], np.log(ps[m]), 2)
    ln_as = c[2]
    r = float(np.exp(np.interp(0.0, x, np.log(pt)) - ln_as))
    resid = np.log(ps[m]) - np.polyval(c, x[m])
    return {"pivot": pivot, "ln_1e10_As": float(ln_as + math.log(1e10)),
            "n_s": float(1 + c[1]), "running": float(2 * c[0]), "r": r,
            "fit_rms": float(np.sqrt(np.mean(resid**2))), "fit_ok": bool(
                np.sqrt(np.mean(resid**2)) < 1e-2)}


def _dense(run) -> dict | None:
    """Densely sampled spectra where the features oscillate (None when not applicable)."""
    import numpy as np

    from ..perturbations.transfer import dense_spectrum

    sp, tab = run.spectrum, run.table
    if (not tab.has_bounce or not np.isfinite(tab.t_inflation_end)
            or sp.settings.get("bogoliubov") is not None):
        return None
    x = sp.k / sp.k_lqc
    nodes = x[(x <= 100.0) & np.isfinite(sp.scalar) & np.isfinite(sp.tensor)]
    if len(nodes) < 8:
        return None
    d = dense_spectrum(tab, nodes, sp.prescription, sp.state)
    d["k_mpc"] = np.exp(np.log(d["x"] * sp.k_lqc) + run.scales.ln_mpc_per_bounce_unit)
    return d


def _figure(run, summary: dict):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    from ..perturbations.mapping import OBSERVABLE_WINDOW

    k, sp = run.k_mpc, run.spectrum
    fig, ax = plt.subplots(figsize=(7, 4.5))
    dense = _dense(run)
    if dense is None:
        ax.loglog(k, sp.scalar, label="$P_s$ (scalar)")
        ax.loglog(k, sp.tensor, label="$P_t$ (tensor)")
    else:
        # oscillations below ~3 k_LQC have period pi/(x D) in x: drawn from the exact
        # decomposition of this background, points = integrated modes
        kd = dense["k_mpc"]
        outside = (k < kd.min()) | (k > kd.max())
        for name, col, lab in (("scalar", "tab:blue", "$P_s$ (scalar)"),
                               ("tensor", "tab:orange", "$P_t$ (tensor)")):
            ax.loglog(kd, dense[name], color=col, lw=0.25, rasterized=True, label=lab)
            y = getattr(sp, name)
            ax.loglog(k[outside & (k < kd.min())], y[outside & (k < kd.min())], color=col)
            ax.loglog(k[outside & (k > kd.max())], y[outside & (k > kd.max())], color=col)
            ax.loglog(k, y, ".", color=col, ms=1.5)
    if summary.get("fit_ok") is not None and "n_s" in summary:
        kp = summary["pivot"]
        ref = np.exp(summary["ln_1e10_As"]) * 1e-10 * (k / kp) ** (summary["n_s"] - 1)
        ax.loglog(k, ref, "k--", lw=0.8, label=f"power law, $n_s$={summary['n_s']:.4f}")
        ax.loglog(k, summary["r"] * ref, "k:", lw=0.8, label=f"r x power law, r={summary['r']:.3g}")
        ax.axvline(kp, color="grey", lw=0.8)
    ax.axvspan(*OBSERVABLE_WINDOW, color="tab:green", alpha=0.12, label="observable window")
    if k.min() <= run.scales.k_lqc_mpc <= k.max():
        ax.axvline(run.scales.k_lqc_mpc, color="tab:red", lw=0.8, ls="-.", label="$k_{LQC}$")
    ax.set_xlabel("k [Mpc$^{-1}$]")
    ax.set_ylabel("power spectrum")
    ax.set_title(f"{sp.prescription.replace('_', ' ')}, state {sp.state}")
    finite = np.concatenate([sp.scalar, sp.tensor])
    ax.set_ylim(max(finite.min() * 0.5, 1e-300), min(finite.max() * 2, 1e300))
    ax.legend(fontsize=7)
    fig.tight_layout()
    return fig


def run(args: Any, session: Any) -> CommandResult:
    import pandas as pd

    from ..io import (
        json_safe,
        output_set,
        save_figure_atomic,
        write_csv_atomic,
        write_json_atomic,
    )
    from ..models.bounce import run_from_config

    config = session.config()
    out = session.output_folder(FILES)
    br = run_from_config(config, show_progress=session.progress)
    sp = br.spectrum
    summary = pivot_summary(br.k_mpc, sp.scalar, sp.tensor, br.scales.pivot)
    frame = pd.DataFrame({"k_mpc": br.k_mpc, "k_over_k_lqc": sp.k / sp.k_lqc,
                          "P_s": sp.scalar, "P_t": sp.tensor})
    fig = _figure(br, summary)
    timing = session.timing()
    result = {"pivot_summary": summary, "k_lqc_mpc": br.scales.k_lqc_mpc,
              "log10_k_lqc_mpc": br.scales.ln_k_lqc_mpc / math.log(10),
              "n_star": br.scales.n_star, "n_bounce_to_pivot": br.scales.n_bounce_pivot,
              "prescription": sp.prescription, "state": sp.state,
              "sign_convention": sp.sign_convention,
              "max_wronskian_error": sp.max_wronskian_error,
              "background": br.table.label, **{f"background_{k}": v for k, v in
                                               br.table.info.items()},
              "notes": list(br.notes),
              "elapsed_seconds": timing["wall_seconds"],
              "compile_seconds": timing["compile_seconds"],
              "files": [str(out / n) for n in FILES]}
    provenance = session.provenance()
    with output_set(out):  # all four files, or none
        write_csv_atomic(out / "spectrum.csv", frame, index=False)
        save_figure_atomic(fig, out / "spectrum.pdf")
        save_figure_atomic(fig, out / "spectrum.png", dpi=120)
        write_json_atomic(out / "spectrum.json", json_safe({**result, "provenance": provenance}))
    import matplotlib.pyplot as plt

    plt.close(fig)
    s = summary
    lines = [f"k_LQC = 10^{br.scales.ln_k_lqc_mpc / math.log(10):.2f} Mpc^-1; "
             f"N_* = {br.scales.n_star:.2f}, "
             f"N_B* = {br.scales.n_bounce_pivot:.2f}"]
    if "n_s" in s:
        lines.append(f"pivot {s['pivot']:g} Mpc^-1: ln(1e10 A_s) = {s['ln_1e10_As']:.4f}, "
                     f"n_s = {s['n_s']:.4f}, running = {s['running']:.2e}, r = {s['r']:.3g}")
    lines.extend(f"note: {n}" for n in br.notes)
    lines.append(f"time {session.time_text()}; wrote {out}/spectrum.{{csv,pdf,png,json}}")
    return CommandResult(data=result, text="\n".join(lines), provenance=provenance,
                         files=tuple(result["files"]))
