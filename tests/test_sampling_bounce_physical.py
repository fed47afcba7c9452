"""The bounce model in physical parameters (background included) for posterior runs."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from bouncelike.cli import main
from bouncelike.config import load_run_config
from bouncelike.errors import NumericalFailure
from bouncelike.likelihood.gaussian import GaussianLikelihood
from bouncelike.models.registry import forward_model
from bouncelike.sampling.driver import SamplerSettings, run_sampler
from bouncelike.sampling.posterior import ModelPosterior
from bouncelike.sampling.priors import SHIPPED_PRIORS, load_prior, prior_from_text
from bouncelike.spectra.summary import summarize


@pytest.fixture(autouse=True)
def _work_in_tmp(tmp_path, monkeypatch):
    """Runs write below the working folder (sampling.chains_dir is relative to it)."""
    monkeypatch.chdir(tmp_path)


RHO_C = 0.40937  # gamma = 0.2375 (physics notes, section 0)
# our own scenario: a bounce whose scale falls ~1.5 decades below the observable window, where
# the cached transfer is certified
POINT = {"log10_potential_fraction": math.log10(2.5e-12), "mass": 1.2e-6,
         "critical_density": RHO_C, "N_star": 55.0}

FULL = """
[model]
spectra = "bounce"
[potential]
name = "quadratic"
mass = 1.2e-6
[background]
dynamics = "isotropic"
start = "bounce"
critical_density = 0.40937
[background.bounce]
potential_fraction = 2.5e-12
phidot_sign = 1
[perturbations]
prescription = "dressed_metric"
state = "remote_past"
[reheating]
N_star = 55.0
"""


@pytest.fixture(scope="module")
def model():
    return forward_model("bounce_physical_dressed_metric")


def test_reproduces_full_forward_model_at_the_pivot(tmp_path, model):
    from bouncelike.models.bounce import run_from_config

    derived = model.derived(POINT)
    assert derived["certified"] == 1.0
    fast = summarize(model.spectra(POINT), 0.05)
    cfg = tmp_path / "full.toml"
    cfg.write_text(FULL)
    config = load_run_config(cfg)
    from bouncelike.models.registry import spectra_from_config

    full = summarize(spectra_from_config(config), 0.05)
    # the full forward model (background + exact mode integration; what `bouncelike score`
    # scores) against the physical model (engine background + slow-roll pivot spectrum +
    # cached transfer). Tolerances: 0.005 in ln(1e10 A_s) and 0.001 in n_s are 0.36 and 0.24
    # of the Planck 2018 errors (arXiv:1807.06209: 0.014, 0.0042); 1% in r.
    assert abs(fast.ln_1e10_As - full.ln_1e10_As) < 0.005
    assert abs(fast.n_s - full.n_s) < 1e-3
    assert abs(fast.r / full.r - 1) < 0.01
    # same bounce scale: N_B* and k_LQC of the forward model's map (physics notes, section 5)
    scales = run_from_config(config).scales
    assert abs(derived["N_B_star"] - scales.n_bounce_pivot) < 0.02
    assert abs(derived["log10_k_lqc"] - scales.ln_k_lqc_mpc / math.log(10)) < 0.01
    assert abs(derived["N_bounce_end"] - derived["N_B_star"] - 55.0) < 1e-9


def test_pivot_observables_against_slow_roll_formulas(model):
    # V = m^2 phi^2/2 at N_* = 55: n_s = 1 - 2/(N + 1/2), r = 8/(N + 1/2) (Martin, Ringeval &
    # Vennin, arXiv:1303.3787); corrections are O(1/N^2) ~ 3e-4 in n_s.
    d = model.derived(POINT)
    assert abs(d["n_s"] - (1 - 2 / 55.5)) < 1e-3
    assert abs(d["r"] / (8 / 55.5) - 1) < 0.02
    # A_s = m^2 (N + 1/2)^2 / (6 pi^2 M_Pl^2) at leading order (same source; M_Pl^2 = 1/(8 pi)
    # in Planck units); the next order of Stewart & Lyth (Phys. Lett. B 302 (1993) 171)
    # changes ln A_s by O(eps) ~ 2%
    a_s = 1.2e-6**2 * 55.5**2 * 8 * math.pi / (6 * math.pi**2)
    assert abs(math.log(d["A_s"] / a_s)) < 0.03


@pytest.mark.filterwarnings("ignore:invalid value encountered in divide")  # stuck walkers
def test_failing_backgrounds_give_minus_infinity_with_counted_reasons(tmp_path, model):
    text = (SHIPPED_PRIORS / "bounce_dressed_metric_physical.toml").read_text()
    # widen the potential fraction down to bounces that inflate for fewer e-folds than N_*
    text = text.replace("min = -11.75", "min = -12.6")
    prior = prior_from_text(text, model=model)
    lk = GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    post = ModelPosterior(prior, model, lk)
    bad = np.array([-12.5, 1.28e-6, 57.0])
    out = post(bad)
    assert out[0] == -math.inf and out[-1].reason.startswith("too little inflation")
    # a background whose inflation does not end within the e-fold cap (x_V = 1e-3)
    cap = dict(POINT, log10_potential_fraction=-3.0)
    with pytest.raises(NumericalFailure, match="efold_cap"):
        model.spectra(cap)
    # counted by the driver: a short run from walkers spread over the widened prior
    start = text.replace("walkers_centre = -11.45\nwalkers_spread = 0.05",
                         "walkers_centre = -11.9\nwalkers_spread = 0.3")
    prior2 = prior_from_text(start, model=model)
    settings = SamplerSettings(walkers=8, max_steps=6, min_steps=6, checkpoint_every=6, seed=3)
    r = run_sampler(ModelPosterior(prior2, model, lk), settings, tmp_path / "run",
                    show_progress=False)
    assert any(k.startswith("too little inflation") for k in r.failures)
    assert sum(r.failures.values()) > 0


def test_phase_prior_drives_the_inflationary_efolds(model):
    # the shipped prior whose N_inflation carries the contracting-branch phase prior
    # (Linsefors & Barrau, Phys. Rev. D 87 (2013) 123509: ~140-145 e-folds for m = 1.21e-6)
    prior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric_phase.toml", model)
    p = prior.get("N_inflation")
    assert p.distribution == "efolds_from_phase"
    grid = np.linspace(p.lower, p.upper, 201)
    mode = grid[np.argmax(p.log_density(grid))]
    assert 125 < mode < 160
    point = prior.full_parameters(np.array([mode, 1.28e-6, -40.0]))
    d = model.derived(point)
    # the secant search hits the requested count to its tolerance, 5e-4 in ln N
    assert abs(math.log(d["N_inflation"] / mode)) < 5e-4
    assert d["N_B_star"] > 60 and d["certified"] == 1.0  # bounce far below the window


def test_sample_and_report_end_to_end(tmp_path, capsys):
    cfg = tmp_path / "physical.toml"
    cfg.write_text(
        '[likelihood]\nsets = ["planck2018_base", "bk18"]\n\n[sampling]\n'
        'prior = "bounce_dressed_metric_physical"\nwalkers = 8\nmax_steps = 40\n'
        'min_steps = 40\ncheckpoint_every = 20\nseed = 2\nprogress = false\n'
        'chains_dir = "chains"\n\n[report]\n'
        'exclusion_map = ["log10_potential_fraction", "mass"]\ngrid = 4\nprior_draws = 20\n'
        'rescore_samples = 5\nband_samples = 10\nevidence_draws = 100\n')
    assert main(["sample", str(cfg), "--quiet", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    folder = Path(summary["run_folder"])
    chain = pd.read_csv(folder / "chain.csv")
    for name in ("N_inflation", "N_B_star", "log10_k_lqc", "ln_1e10_As", "n_s", "r",
                 "certified"):
        assert name in chain.columns
    ok = chain[np.isfinite(chain["log_likelihood"])]
    assert len(ok) > 0
    # derived consistency: N_bounce_end - N_* = N_B* is not stored, but N_B* > 0 and the
    # quadratic potential's r sits near 8/(N_* + 1/2) (arXiv:1303.3787)
    assert (ok["N_B_star"] > 0).all()
    assert np.allclose(ok["r"], 8 / (ok["N_star"] + 0.5), rtol=0.03)
    assert main(["report", str(folder), "--quiet", "--json"]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert rep["best_fit"]["verdict"] == "excluded"  # phi^2 vs BK18 (arXiv:2110.00483)
    for f in ("verdicts.md", "triangle.png", "marginals.tex", "efolds.png"):
        assert (folder / "report" / f).is_file()


@pytest.mark.parametrize("edit, message", [
    # both background choices: the potential fraction sampled and N_inflation fixed
    (lambda t: t.replace('[parameters.N_inflation]\nrole = "derived"',
                         '[parameters.N_inflation]\nrole = "fixed"\nvalue = 80.0'),
     "exactly one of"),
    (lambda t: t.replace("[parameters.N_star]", "[parameters.unused_N_star]"),
     "'parameters.unused_N_star' is not a parameter"),
    # N_* and a reheating equation of state together
    (lambda t: t.replace("[parameters.critical_density]", "[parameters.equation_of_state]\n"
                         "role = \"fixed\"\nvalue = 0.0\n\n[parameters.critical_density]"),
     "needs 'N_star', or both"),
])
def test_bad_physical_priors_exit_2_and_write_nothing(tmp_path, capsys, edit, message):
    text = edit((SHIPPED_PRIORS / "bounce_dressed_metric_physical.toml").read_text())
    (tmp_path / "prior.toml").write_text(text)
    cfg = tmp_path / "bad.toml"
    cfg.write_text('[likelihood]\nsets = ["planck2018_base"]\n\n[sampling]\n'
                   'prior = "prior.toml"\nchains_dir = "chains"\n')
    assert main(["sample", str(cfg), "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert message in err and "\n" not in err
    assert not (tmp_path / "chains").exists()


def test_process_pool_gives_the_serial_chain(tmp_path, model):
    # the N_inflation search must not depend on earlier evaluations: a chain run on 2 worker
    # processes equals the serial one byte for byte (same seed)
    from bouncelike.parallel import ProcessPool
    from bouncelike.sampling.posterior import install_posterior

    prior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric_phase.toml", model)
    post = ModelPosterior(prior, model, GaussianLikelihood.from_names(["planck2018_base"]))
    settings = SamplerSettings(walkers=8, max_steps=5, min_steps=5, checkpoint_every=5, seed=4,
                               prior_survey_draws=16)
    run_sampler(post, settings, tmp_path / "serial", show_progress=False)
    with ProcessPool(2, install_posterior, (post,)) as pool:
        run_sampler(post, settings, tmp_path / "pool", pool=pool, show_progress=False)
    for name in ("chain.csv", "failures.csv"):
        assert (tmp_path / "serial" / name).read_bytes() == (
            tmp_path / "pool" / name).read_bytes()
