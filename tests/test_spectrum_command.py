"""The spectrum command: the same pivot summary as score, the figure's curves as CSV, a figure
that never sees NaN or Inf."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from perturbations_helpers import bounce_background

from bouncelike import cli
from bouncelike.models.bounce import PerturbationOptions, run_bounce
from bouncelike.models.reheating import Reheating

ROOT = Path(__file__).resolve().parents[1]


def _cli(capsys, argv):
    code = cli.main(argv)
    captured = capsys.readouterr()
    return code, captured.out


def test_spectrum_and_score_give_the_same_summaries(tmp_path, capsys):
    # one pivot summary (bouncelike.spectra.summary) for both commands, on the same spectra
    cfg = ROOT / "examples" / "bounce_features_quadratic.toml"
    code, out = _cli(capsys, ["spectrum", str(cfg), "--output", str(tmp_path), "--json",
                              "--quiet"])
    assert code == 0
    spec = json.loads(out)
    code, out = _cli(capsys, ["score", str(cfg), "--json", "--quiet"])
    assert code == 0
    score = json.loads(out)
    by_pivot = {s["pivot"]: s for s in spec["pivot_summaries"]}
    assert score["summaries"]
    for s in score["summaries"]:
        assert by_pivot[s["pivot"]] == s  # every number and the fit-quality flag
    assert spec["fit_ok"] == score["fit_ok"]
    # the featured example: the summaries read the period mean and still fail the tolerance
    assert all(s["period_mean"] for s in score["summaries"]) and not score["fit_ok"]
    assert spec["validity"] == score["validity"]
    assert score["validity"]["test_field"]["status"] in ("ok", "VIOLATED")
    text = cli.main(["spectrum", str(cfg), "--output", str(tmp_path), "--quiet"])
    assert text == 0
    printed = capsys.readouterr().out
    assert "FAILED" in printed and "validity: test field" in printed
    assert "validity: trans-Planckian" in printed
    caption = (tmp_path / "spectrum.caption.txt").read_text()
    assert "FAILED" in caption and "trans-Planckian" in caption


@pytest.fixture(scope="module")
def featured_run():
    return run_bounce(bounce_background(), PerturbationOptions(k_count=40),
                      Reheating(N_star=55.0))


def test_figure_draws_exactly_the_csv_columns(tmp_path, monkeypatch, capsys, featured_run):
    from bouncelike.models import bounce as forward
    from bouncelike.reporting import spectrum_figure as sf

    monkeypatch.setattr(forward, "run_from_config",
                        lambda config, show_progress=False: featured_run)
    figures = []
    original = sf.spectrum_figure

    def keep(*args, **kwargs):
        fig, drawn = original(*args, **kwargs)
        figures.append((fig, drawn))
        return fig, drawn

    monkeypatch.setattr(sf, "spectrum_figure", keep)
    cfg = tmp_path / "b.toml"
    cfg.write_text('[model]\nspectra = "bounce"\n')
    assert cli.main(["spectrum", str(cfg), "--output", str(tmp_path / "o"), "--quiet"]) == 0
    capsys.readouterr()
    table = pd.read_csv(tmp_path / "o" / "spectrum.csv")
    zoom = pd.read_csv(tmp_path / "o" / "spectrum_zoom.csv")
    fig, drawn = figures[0]
    main, lower = fig.axes[0], fig.axes[1]
    curve_columns = [c for c in table.columns if c.startswith("P_")]
    matched = set()
    for axis, frame in ((main, table), (lower, zoom)):
        for line in axis.get_lines():
            x, y = np.asarray(line.get_xdata(), float), np.asarray(line.get_ydata(), float)
            if len(x) == 2 and x[0] == x[1]:
                continue  # a vertical mark (pivot, k_LQC, zoom)
            hits = [c for c in frame.columns if c.startswith("P_") and len(frame) == len(x)
                    and np.allclose(frame["k_mpc"], x, rtol=1e-14, atol=0)
                    and np.allclose(frame[c], y, rtol=1e-14, atol=0)]
            if axis is lower and not hits:  # the exact check modes: in spectrum.json
                stored = json.loads((tmp_path / "o" / "spectrum.json").read_text())["zoom"]
                assert np.allclose(stored["k_mpc"], x, rtol=1e-14)
                assert any(np.allclose(stored[c], y, rtol=1e-14)
                           for c in ("P_s_exact", "P_t_exact"))
                continue
            assert hits, f"a drawn line is not a column ({line.get_label()})"
            if axis is main:
                matched.update(hits)
    assert set(curve_columns) == matched  # every CSV curve is drawn, nothing else
    assert set(drawn["main"]) == set(curve_columns)
    # the legend names the pivots with their wavenumbers, the axes carry units
    labels = [t.get_text() for t in main.get_legend().get_texts()]
    assert any("pivot" in t and "0.05" in t for t in labels)
    assert "Mpc" in main.get_xlabel() and "Mpc" in lower.get_xlabel()
    assert any(r"\mathcal{P}_s" in t for t in labels)
    # the featured rows show the period mean and say so
    assert table["period_mean"].sum() > 10
    assert np.all(np.isfinite(table["oscillation_period_ln_k"][table["period_mean"] == 1]))


def test_figure_never_sees_nan_or_inf(tmp_path, featured_run):
    # an older main crashed drawing a deformed-algebra spectrum ("Axis limits cannot be NaN or
    # Inf"); the figure draws only finite positive values and says how many it left out
    from bouncelike.io import save_figure_atomic
    from bouncelike.models.bounce import BounceTable
    from bouncelike.reporting import spectrum_figure as sf
    from bouncelike.spectra.summary import summarize

    spectra = BounceTable(featured_run)
    curves = sf.spectrum_curves(featured_run, spectra, summarize(spectra, 0.05))
    curves = {k: np.array(v, dtype=float) for k, v in curves.items()}
    curves["P_s"][3] = math.inf
    curves["P_t"][5] = math.nan
    curves["P_t_low"][:] = 0.0
    curves["P_s_high"][-4:] = math.inf
    curves["P_s_power_law"][:] = math.inf  # an overflowing reference
    fig, drawn = sf.spectrum_figure(curves, None, {"title": "t", "pivots": [(0.05, "pivot")],
                                                   "k_lqc_mpc": math.inf})
    for line in fig.axes[0].get_lines():
        assert np.all(np.isfinite(np.asarray(line.get_xdata(), float)))
        assert np.all(np.isfinite(np.asarray(line.get_ydata(), float)))
    assert all(np.isfinite(fig.axes[0].get_ylim())) and all(np.isfinite(fig.axes[0].get_xlim()))
    assert "not finite and positive" in fig.axes[0].get_title()
    save_figure_atomic(fig, tmp_path / "f.png")
    assert (tmp_path / "f.png").stat().st_size > 0


def test_deformed_algebra_figure_draws_only_finite_values(tmp_path):
    # the deformed algebra's capped ultraviolet (e^600) and vanishing lower envelopes
    from bouncelike.io import save_figure_atomic
    from bouncelike.models.bounce import BounceTable
    from bouncelike.reporting import spectrum_figure as sf
    from bouncelike.spectra.summary import summarize

    run = run_bounce(bounce_background(), PerturbationOptions(prescription="deformed_algebra",
                                                              k_count=24),
                     Reheating(N_star=55.0))
    spectra = BounceTable(run)
    fig, drawn = sf.spectrum_figure(sf.spectrum_curves(run, spectra, summarize(spectra, 0.05)),
                                    sf.zoom_curves(run), {"title": "deformed"})
    for ax in fig.axes:
        for line in ax.get_lines():
            assert np.all(np.isfinite(np.asarray(line.get_ydata(), float)))
        assert all(np.isfinite(ax.get_ylim()))
    save_figure_atomic(fig, tmp_path / "d.png")
