"""The figure of ``bouncelike spectrum``: P_s and P_t of one bounce run, as the sky sees them.

Upper panel (log-log, k in Mpc^-1), one row of ``spectrum.csv`` per point:

* ``P_s``, ``P_t`` (lines): the period mean where the row cannot resolve the oscillation
  (its period in ln k is shorter than RESOLVED_ROWS = 4 row spacings; column
  ``period_mean`` = 1), the integrated value elsewhere
  (:mod:`bouncelike.models.bounce_features`);
* ``P_s_low``/``P_s_high`` and ``P_t_low``/``P_t_high`` (thin lines, shaded between): the
  envelopes P_std |alpha|^2 (1 -+ rho)^2 the oscillation swings between;
* ``P_s_integrated``, ``P_t_integrated`` (dots): the modes integrated at the row's k, which
  sample the fast phase at random where ``period_mean`` = 1 (aliased);
* ``P_s_power_law``, ``P_t_power_law`` (dashed): the power law of the pivot summary
  (A_s, n_s; r A_s, n_t) at the run's pivot;
* the pivots of the summaries, the observable window, k_LQC and where the zoom lies.

Lower panel (``spectrum_zoom.csv``): a few periods of the oscillation around one k,
reconstructed from the exact decomposition of the run's modes
(:func:`bouncelike.perturbations.transfer_dense.reconstruct`), with its period mean and
envelopes and, as markers, modes integrated exactly there (a check of the reconstruction).

Only finite, positive values are drawn (a run whose spectra overflow keeps its CSV rows; the
figure leaves those points out and says how many).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from . import notation, style

FIELD_COLOURS = {"scalar": style.SERIES[0], "tensor": style.SERIES[1]}
SYMBOL = {"scalar": "P_s", "tensor": "P_t"}
#: Periods shown in the zoom and points per period of its curve.
ZOOM_PERIODS = 4
ZOOM_POINTS_PER_PERIOD = 60
#: Modes integrated exactly inside the zoom.
ZOOM_CHECKS = 7


def spectrum_curves(run: Any, spectra: Any, reference: Any) -> dict[str, np.ndarray]:
    """The columns of ``spectrum.csv`` (module docstring); ``reference``: the PivotSummary
    whose power law is drawn."""
    k = np.asarray(run.k_mpc, dtype=float)
    rows = spectra.period_mean_rows()
    f = run.features
    out: dict[str, np.ndarray] = {"k_mpc": k, "k_over_k_lqc": run.spectrum.k / run.spectrum.k_lqc,
                                  "period_mean": rows.astype(int),
                                  "oscillation_period_ln_k": (
                                      f.period if f is not None else np.full(len(k), math.inf))}
    a_s = math.exp(reference.ln_1e10_As) * 1e-10
    x = np.log(k / reference.pivot)
    with np.errstate(over="ignore", invalid="ignore"):
        power_law = {"scalar": a_s * np.exp((reference.n_s - 1) * x),
                     "tensor": reference.r * a_s * np.exp(np.nan_to_num(reference.n_t) * x)}
    for field in ("scalar", "tensor"):
        s = SYMBOL[field]
        point = np.asarray(getattr(run.spectrum, field), dtype=float)
        mean = f.mean[field] if f is not None else point
        out[s] = np.where(rows, mean, point)
        out[f"{s}_low"] = f.low[field] if f is not None else point
        out[f"{s}_high"] = f.high[field] if f is not None else point
        out[f"{s}_integrated"] = point
        out[f"{s}_power_law"] = power_law[field]
    return out


def zoom_curves(run: Any) -> dict[str, Any] | None:
    """The zoom (module docstring), or None when the run carries no decomposed features.

    Centre: the decomposed row with rho > 0.05 nearest k_LQC, preferring rows inside the
    observable window."""
    from ..models.bounce_features import exact_powers
    from ..perturbations.mapping import OBSERVABLE_WINDOW
    from ..perturbations.transfer_dense import period_mean, reconstruct

    f = run.features
    if f is None or f.decompositions is None or not math.isfinite(f.duration):
        return None
    decs = f.decompositions
    x_rows = decs["scalar"].x
    k_lqc_mpc = run.scales.k_lqc_mpc
    visible = (decs["scalar"].rho > 0.05) | (decs["tensor"].rho > 0.05)
    inside = visible & (x_rows * k_lqc_mpc >= OBSERVABLE_WINDOW[0]) & (
        x_rows * k_lqc_mpc <= OBSERVABLE_WINDOW[1])
    pool = inside if inside.any() else visible
    if not pool.any():
        return None
    x0 = float(x_rows[pool][np.argmin(np.abs(np.log(x_rows[pool])))])
    period = math.pi / f.duration
    x = x0 + period * np.linspace(-ZOOM_PERIODS / 2, ZOOM_PERIODS / 2,
                                  ZOOM_PERIODS * ZOOM_POINTS_PER_PERIOD + 1)
    x_check = x0 + period * np.linspace(-0.4 * ZOOM_PERIODS, 0.4 * ZOOM_PERIODS, ZOOM_CHECKS)
    exact = exact_powers(run, x_check * run.table.k_lqc)
    curves: dict[str, np.ndarray] = {"k_mpc": x * k_lqc_mpc}
    checks: dict[str, Any] = {"k_mpc": x_check * k_lqc_mpc}
    worst = 0.0
    for field in ("scalar", "tensor"):
        s = SYMBOL[field]
        curves[s] = reconstruct(decs[field], x)
        curves[f"{s}_period_mean"], curves[f"{s}_low"], curves[f"{s}_high"] = period_mean(
            decs[field], x)
        checks[f"{s}_exact"] = exact[field]
        at = reconstruct(decs[field], x_check)
        checks[f"{s}_reconstructed"] = at
        worst = max(worst, float(np.max(np.abs(at / exact[field] - 1))))
    checks["max_relative_difference"] = worst
    return {"curves": curves, "checks": checks, "k0_mpc": x0 * k_lqc_mpc,
            "period_k_mpc": period * k_lqc_mpc}


def _finite(k: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The points a log-log axis can draw: finite and positive in both coordinates."""
    k, y = np.asarray(k, dtype=float), np.asarray(y, dtype=float)
    ok = np.isfinite(k) & np.isfinite(y) & (k > 0) & (y > 0)
    return k[ok], y[ok]


def spectrum_figure(curves: dict[str, np.ndarray], zoom: dict[str, Any] | None,
                    info: dict[str, Any]) -> tuple[Any, dict[str, Any]]:
    """Draw the figure; returns it and the arrays each line was given (``{"main": {name:
    (k, P)}, "zoom": {...}}``: what a test compares with the CSV files).

    ``info``: ``title``, ``pivots`` (list of (k_*, label)), ``k_lqc_mpc``, ``window``,
    ``reference_label``."""
    drawn: dict[str, Any] = {"main": {}, "zoom": {}}
    with style.styled() as plt:
        if zoom is not None:
            fig, (ax, az) = plt.subplots(2, 1, figsize=(9.6, 7.6),
                                         gridspec_kw={"height_ratios": [3, 2]})
        else:
            fig, ax = plt.subplots(figsize=(9.6, 4.6))
            az = None
        k = curves["k_mpc"]
        dropped = 0
        for field in ("scalar", "tensor"):
            s, c = SYMBOL[field], FIELD_COLOURS[field]
            label = notation.SCALAR_SPECTRUM if field == "scalar" else notation.TENSOR_SPECTRUM
            label = label.replace("(k)", "")
            lo, hi = (np.asarray(curves[f"{s}_{e}"], dtype=float) for e in ("low", "high"))
            band = np.isfinite(lo) & np.isfinite(hi) & (lo > 0) & (hi > 0) & (k > 0)
            if band.any():
                ax.fill_between(k[band], lo[band], hi[band], color=c, alpha=0.15, lw=0)
            for name, kw in ((f"{s}_low", {"lw": 0.4, "alpha": 0.6}),
                             (f"{s}_high", {"lw": 0.4, "alpha": 0.6,
                                            "label": f"{label} envelope " + r"$(1 \mp \rho)^2$"}),
                             (s, {"lw": 1.5, "label": f"{label}: period mean where the "
                                                      "rows alias, else integrated"}),
                             (f"{s}_integrated", {"ls": "none", "marker": ".", "ms": 2.0,
                                                  "label": f"{label} integrated modes"}),
                             (f"{s}_power_law", {"ls": "--", "lw": 0.8, "color": style.INK
                                                 if field == "scalar" else style.MUTED,
                                                 "label": info.get("reference_label", "")
                                                 if field == "scalar" else
                                                 r"$r A_s$ power law ($n_t$)"})):
                kk, yy = _finite(k, curves[name])
                dropped += len(k) - len(kk)
                if len(kk):
                    ax.loglog(kk, yy, **{"color": c, **kw})
                    drawn["main"][name] = (kk, yy)
        shown = [y for _, y in drawn["main"].values()]
        if shown:  # explicit limits: autoscale margins of a log axis could overflow
            ys = np.concatenate(shown)
            ax.set_ylim(max(ys.min() / 3, 1e-300), min(ys.max() * 3, 1e300))
        lo_w, hi_w = info.get("window", (1e-4, 0.2))
        ax.axvspan(lo_w, hi_w, color=style.WINDOW, zorder=0,
                   label=f"observable window {lo_w:g}-{hi_w:g} " + r"Mpc$^{-1}$")
        for i, (kp, plabel) in enumerate(info.get("pivots", [])):
            ax.axvline(kp, color=style.MUTED, lw=0.8, ls=(":", "-.", "--")[i % 3], label=plabel)
        k_lqc = info.get("k_lqc_mpc", math.nan)
        if math.isfinite(k_lqc) and k.min() <= k_lqc <= k.max():
            ax.axvline(k_lqc, color=style.BEST_FIT, lw=0.8, ls="-.",
                       label=r"$k_\mathrm{LQC}$" + f" = {k_lqc:.3g} " + r"Mpc$^{-1}$")
        if zoom is not None:
            ax.axvline(zoom["k0_mpc"], color=style.SERIES[2], lw=0.8,
                       label="zoom (lower panel)")
        ax.set_xlabel(notation.WAVENUMBER)
        ax.set_ylabel("primordial power spectrum")
        title = info.get("title", "")
        if dropped:
            title += (f" ({dropped} value{'s' if dropped > 1 else ''} not finite and positive, "
                      "not drawn)")
        ax.set_title(title)
        ax.legend(fontsize=6.5, loc="upper left", bbox_to_anchor=(1.01, 1.0))
        if az is not None:
            _zoom_panel(az, zoom, drawn["zoom"])
        fig.tight_layout()
    return fig, drawn


def _zoom_panel(az: Any, zoom: dict[str, Any], drawn: dict[str, Any]) -> None:
    z, checks = zoom["curves"], zoom["checks"]
    kz = z["k_mpc"]
    for field in ("scalar", "tensor"):
        s, c = SYMBOL[field], FIELD_COLOURS[field]
        sym = (notation.SCALAR_SPECTRUM if field == "scalar"
               else notation.TENSOR_SPECTRUM).replace("(k)", "")
        for name, kw in ((s, {"lw": 1.0, "label": f"{sym} (reconstructed)"}),
                         (f"{s}_period_mean", {"lw": 1.0, "ls": "--",
                                               "label": f"{sym} period mean"}),
                         (f"{s}_low", {"lw": 0.5, "ls": ":"}),
                         (f"{s}_high", {"lw": 0.5, "ls": ":", "label": f"{sym} envelope"})):
            kk, yy = _finite(kz, z[name])
            if len(kk):
                az.semilogy(kk, yy, color=c, **kw)
                drawn[name] = (kk, yy)
        kk, yy = _finite(checks["k_mpc"], checks[f"{s}_exact"])
        if len(kk):
            az.semilogy(kk, yy, ls="none", marker="o", ms=3.5, mfc="none", color=c,
                        label=f"{sym} integrated exactly")
            drawn[f"{s}_exact"] = (kk, yy)
    # the curves are drawn against k (as in spectrum_zoom.csv); ticks read (k - k0) / period
    k0, period = zoom["k0_mpc"], zoom["period_k_mpc"]
    from matplotlib.ticker import FuncFormatter, MultipleLocator

    az.xaxis.set_major_locator(MultipleLocator(period, offset=k0))
    az.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{(v - k0) / period:+.0f}"))
    az.set_xlabel(r"$(k - k_0)$ / period" + f", k0 = {k0:.6g} " + r"Mpc$^{-1}$")
    shown = [y for name, (_, y) in drawn.items() if not name.endswith("_low")]
    if shown:
        ys = np.concatenate(shown)
        az.set_ylim(max(ys.min() / 2, 1e-300), min(ys.max() * 2, 1e300))
    az.set_ylabel("primordial power spectrum")
    az.set_title(f"zoom: {ZOOM_PERIODS} periods, period " + r"$\pi k_\mathrm{LQC}/D$"
                 f" = {period:.2g} " + r"Mpc$^{-1}$" + "; exact modes vs reconstruction: "
                 f"<= {100 * checks['max_relative_difference']:.2g}%")
    az.legend(fontsize=6.5, loc="upper left", bbox_to_anchor=(1.01, 1.0))
