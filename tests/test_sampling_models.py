"""Posterior runs of forward models against published constraint sets, and verdicts."""

from __future__ import annotations

import json
import math
import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from cli_helpers import check_provenance
from config_texts import FIXED_HIGHER_ORDER

from bouncelike.cli import main
from bouncelike.models.registry import forward_model
from bouncelike.reporting import evidence as V
from bouncelike.sampling.priors import ParameterPrior, Prior


@pytest.fixture(autouse=True)
def _work_in_tmp(tmp_path, monkeypatch):
    """Runs write below the working folder (sampling.chains_dir is relative to it)."""
    monkeypatch.chdir(tmp_path)


PRIOR_PL = """
[prior]
model = "power_law"
[parameters.ln_1e10_As]
role = "sampled"
distribution = "uniform"
min = 2.8
max = 3.3
walkers_centre = 3.05
walkers_spread = 0.02
[parameters.n_s]
role = "sampled"
distribution = "uniform"
min = 0.9
max = 1.05
walkers_centre = 0.965
walkers_spread = 0.005
""" + FIXED_HIGHER_ORDER


def _write_run(tmp: Path, name: str, prior: str, sets: list[str], walkers: int, steps: int,
               seed: int, extra: str = "") -> Path:
    if "\n" in prior:  # prior file text, else the name of a shipped prior
        (tmp / f"{name}_prior.toml").write_text(prior)
        prior = f"{name}_prior.toml"
    cfg = tmp / f"{name}.toml"
    cfg.write_text(
        f'[likelihood]\nsets = {json.dumps(sets)}\n\n[sampling]\nprior = "{prior}"\n'
        f"walkers = {walkers}\nmax_steps = {steps}\nmin_steps = 300\ntau_multiple = 50\n"
        f'tau_tolerance = 0.05\ncheckpoint_every = 200\nseed = {seed}\nchains_dir = "chains"\n'
        "progress = false\n" + extra)
    return cfg


def test_power_law_posterior_reproduces_planck_2018(tmp_path, capsys):
    # Planck 2018 VI (arXiv:1807.06209), TT,TE,EE+lowE+lensing, k_* = 0.05 Mpc^-1:
    # ln(1e10 A_s) = 3.044 +- 0.014, n_s = 0.9649 +- 0.0042. The posterior of a power law
    # scored against that set alone (flat priors) must return the inputs (the likelihood's
    # own consistency) within 0.1 sigma.
    cfg = _write_run(tmp_path, "pl", PRIOR_PL, ["planck2018_base"], 32, 6000, 7)
    assert main(["sample", str(cfg), "--quiet", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["status"] == "converged"
    check_provenance(summary["provenance"], "sample", cfg, ("planck2018_base",))
    manifest = json.loads((Path(summary["run_folder"]) / "manifest.json").read_text())
    assert manifest["provenance"] == summary["provenance"]
    samples = pd.read_csv(Path(summary["run_folder"]) / "samples.csv")
    for name, mean, sigma in (("ln_1e10_As", 3.044, 0.014), ("n_s", 0.9649, 0.0042)):
        mc_error = samples[name].std() / math.sqrt(summary["effective_sample_size"][name])
        assert mc_error < 0.04 * sigma
        assert abs(samples[name].mean() - mean) < 0.1 * sigma, name
        assert abs(samples[name].std() / sigma - 1.0) < 0.1


@pytest.fixture(scope="module")
def quadratic_report(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("quad")
    cfg = _write_run(tmp, "quad", "quadratic_slow_roll", ["planck2018_base", "bk18"], 16, 1200,
                     3, '\n[report]\ngrid = 8\nprior_draws = 100\nrescore_samples = 40\n'
                     'band_samples = 40\nevidence_draws = 400\n')
    here = os.getcwd()
    os.chdir(tmp)  # the run goes below the working folder
    try:
        assert main(["sample", str(cfg), "--quiet"]) == 0
    finally:
        os.chdir(here)
    run = tmp / "chains" / "quad"
    return run


def test_quadratic_slow_roll_excluded_by_bk18_and_planck(quadratic_report, capsys):
    # Planck 2018 X (arXiv:1807.06211), Sec. 4 and Fig. 8: V ~ phi^2 is strongly disfavoured
    # by Planck + BICEP/Keck, because r = 8/(N + 1/2) ~ 0.13-0.16 for N_* = 50-60
    # (Encyclopaedia Inflationaris, arXiv:1303.3787) exceeds r_0.05 < 0.036 (BK18,
    # arXiv:2110.00483), while its tilt is acceptable to Planck alone.
    assert main(["report", str(quadratic_report), "--json"]) == 0
    v = json.loads(capsys.readouterr().out)
    check_provenance(v["provenance"], "report", quadratic_report / "manifest.json",
                     ("planck2018_base", "bk18"))
    manifest = json.loads((quadratic_report / "manifest.json").read_text())
    assert v["provenance"]["upstream"] == manifest["provenance"]
    stored = json.loads((quadratic_report / "report" / "verdicts.json").read_text())
    assert stored["provenance"] == v["provenance"]
    assert v["best_fit"]["verdict"] == "excluded"
    assert v["best_fit"]["excluded_at"] == pytest.approx(0.997)
    by_set = {r["set"]: r for r in v["by_set"]}
    assert by_set["bk18"]["best_fit_verdict"] == "excluded"
    assert by_set["bk18"]["posterior_fraction_excluded_95"] == 1.0
    assert by_set["planck2018_base"]["best_fit_verdict"] == "allowed"
    assert by_set["forecast_ground_r"]["forecast"] is True
    assert v["allowed_posterior_fraction"]["fraction_allowed"] == 0.0
    r = {m["name"]: m for m in v["marginals"]}["r"]
    assert r["lower95"] > 0.1
    report = quadratic_report / "report"
    for f in ("triangle.pdf", "triangle.png", "marginals.md", "marginals.tex", "verdicts.md",
              "verdicts.json", "spectra.png", "exclusion_map.pdf", "efolds.png"):
        assert (report / f).is_file(), f
    caption = (report / "spectra.caption.txt").read_text()
    assert "arXiv:1807.06209" in caption and "arXiv:2110.00483" in caption
    assert "\\begin{tabular}" in (report / "marginals.tex").read_text()


def test_savage_dickey_and_evidence_against_analytic():
    # Analytic: Gaussian likelihood exp(-x^2/(2 s^2)) with a flat prior on [-L, L] (L >> s):
    # Z = sqrt(2 pi) s / (2 L); the posterior is N(0, s), so the Savage-Dickey ratio at x0
    # is N(x0; 0, s) * 2L.
    s, half = 0.5, 10.0
    prior = Prior("t", "t", (ParameterPrior("x", "sampled", "x", "uniform", -half, half),))
    rng = np.random.default_rng(1)
    x = rng.normal(0.0, s, 20000)
    sd = V.savage_dickey(x, 0.3, prior.get("x").log_density, -half, half)
    exact = math.exp(-0.5 * (0.3 / s) ** 2) / (math.sqrt(2 * math.pi) * s) * 2 * half
    assert sd["B01"] == pytest.approx(exact, rel=0.05)
    ev = V.log_evidence(lambda t: -0.5 * (t[0] / s) ** 2, prior, x[:, None], n=4000, seed=2)
    assert ev["ln_Z"] == pytest.approx(math.log(math.sqrt(2 * math.pi) * s / (2 * half)),
                                       abs=max(0.03, 4 * ev["ln_Z_error"]))


def test_cli_resume_and_changed_configuration(tmp_path, capsys):
    cfg = _write_run(tmp_path, "res", PRIOR_PL, ["planck2018_base"], 8, 300, 4)
    cfg.write_text(cfg.read_text().replace("max_steps = 300", "max_steps = 200"))
    assert main(["sample", str(cfg), "--quiet"]) == 0
    run = tmp_path / "chains" / "res"
    assert len(pd.read_csv(run / "chain.csv")) == 8 * 200
    manifest = json.loads((run / "manifest.json").read_text())
    assert manifest["seed"] == 4 and manifest["package_version"]
    assert [s["name"] for s in manifest["constraint_sets"]] == ["planck2018_base"]
    assert "arXiv" not in manifest["constraint_sets"][0]["arxiv"]  # bare id, cited in full
    assert manifest["constraint_sets"][0]["citation"]
    # same configuration, more steps: the run continues where it stopped
    cfg.write_text(cfg.read_text().replace("max_steps = 200", "max_steps = 300"))
    assert main(["sample", str(cfg), "--quiet", "--resume"]) == 0
    # min_steps = 300: no convergence claim before, so the chain has exactly 300 steps
    assert len(pd.read_csv(run / "chain.csv")) == 8 * 300
    capsys.readouterr()
    # a different seed is a different run: refused, nothing changed
    before = (run / "chain.csv").read_bytes()
    cfg.write_text(cfg.read_text().replace("seed = 4", "seed = 5"))
    assert main(["sample", str(cfg), "--quiet", "--resume"]) == 2
    assert "different configuration" in capsys.readouterr().err
    assert (run / "chain.csv").read_bytes() == before


def test_bounce_dressed_metric_model_and_short_run(tmp_path, capsys):
    m = forward_model("bounce_dressed_metric")
    p = {"ln_1e10_As": math.log(21.0), "n_s": 0.965, "r": 8 / 55.5,
         "log10_k_lqc": math.log10(0.05), "critical_density": 0.40937}
    # Physics notes, section 5 (orientation for m^2 phi^2, m = 1.2e-6, N_* = 55):
    # N_B* ~ 13 + ln(k_*/k_LQC); here k_LQC = k_*, and r = 8/(N + 1/2), A_s = 2.1e-9.
    assert m.derived(p)["N_B_star"] == pytest.approx(13.0, abs=0.3)
    p2 = dict(p, log10_k_lqc=p["log10_k_lqc"] - 2.0)
    assert m.derived(p2)["N_B_star"] - m.derived(p)["N_B_star"] == pytest.approx(
        2 * math.log(10.0))
    cfg = _write_run(tmp_path, "bounce", "bounce_dressed_metric", ["planck2018_base", "bk18"],
                     12, 150, 9, '\n[report]\ngrid = 6\nprior_draws = 50\nrescore_samples = 20\n'
                     'band_samples = 20\nevidence_draws = 200\n'
                     'exclusion_map = ["log10_k_lqc", "n_s"]\n')
    assert main(["sample", str(cfg), "--quiet"]) == 0
    capsys.readouterr()
    assert main(["report", str(tmp_path / "chains" / "bounce"), "--json"]) == 0
    v = json.loads(capsys.readouterr().out)
    stats = {e["name"]: e for e in v["marginals"]}
    assert stats["certified"]["kind"] == "indicator"
    # a bounce scale inside the observable window puts features at the pivot: excluded
    lk = __import__("bouncelike.likelihood.gaussian", fromlist=["x"]).GaussianLikelihood
    score = lk.from_names(["planck2018_base"]).score(m.spectra(dict(p, log10_k_lqc=-1.0)))
    assert score.verdict == "excluded"
    assert (tmp_path / "chains" / "bounce" / "report" / "efolds.png").is_file()


def test_featured_spectrum_not_represented_by_summary_is_not_scored():
    from bouncelike.likelihood.gaussian import GaussianLikelihood
    from bouncelike.sampling.failures import NOT_EVALUABLE, NOT_REPRESENTED
    from bouncelike.sampling.posterior import ModelPosterior
    from bouncelike.sampling.priors import SHIPPED_PRIORS, load_prior

    m = forward_model("bounce_dressed_metric")
    prior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric.toml", m)
    lk = GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    theta = np.array([3.044, 0.965, 0.01, -1.0])  # bounce scale inside the window: features
    params = prior.full_parameters(theta)
    assert not all(s.fit_ok for s in lk.summaries(m.spectra(params)))
    strict = ModelPosterior(prior, m, lk)(theta)
    assert strict[0] == -np.inf
    assert (strict[-1].kind, strict[-1].reason) == (NOT_EVALUABLE, NOT_REPRESENTED)
    loose = ModelPosterior(prior, m, lk, require_summary_fit=False)(theta)
    assert np.isfinite(loose[0]) and loose[-1] is None
    smooth = np.array([3.044, 0.965, 0.01, -6.0])  # far below the window: a power law there
    assert np.isfinite(ModelPosterior(prior, m, lk)(smooth)[0])
