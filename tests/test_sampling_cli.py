"""Bad configurations and prior files: one line naming the key, exit 2, nothing written."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from config_texts import FIXED_HIGHER_ORDER

from bouncelike.cli import main

GOOD_PRIOR = """
[prior]
model = "power_law"
[parameters.ln_1e10_As]
role = "sampled"
distribution = "uniform"
min = 2.8
max = 3.3
[parameters.n_s]
role = "sampled"
distribution = "uniform"
min = 0.9
max = 1.05
""" + FIXED_HIGHER_ORDER

GOOD_SAMPLING = """
[likelihood]
sets = ["planck2018_base"]

[sampling]
prior = "prior.toml"
walkers = 8
max_steps = 50
"""

# (name, config text, prior text, substring the one-line message must contain)
CASES = [
    ("no sampling section", "[likelihood]\nsets = ['planck2018_base']\n", GOOD_PRIOR,
     "[sampling]"),
    ("unknown sampling key", GOOD_SAMPLING + "walker = 3\n", GOOD_PRIOR, "sampling.walker"),
    ("too few walkers", GOOD_SAMPLING.replace("walkers = 8", "walkers = 3"), GOOD_PRIOR,
     "sampling.walkers"),
    ("walkers not an integer", GOOD_SAMPLING.replace("walkers = 8", "walkers = 8.5"),
     GOOD_PRIOR, "sampling.walkers"),
    ("tau tolerance out of range", GOOD_SAMPLING + "tau_tolerance = 2.0\n", GOOD_PRIOR,
     "sampling.tau_tolerance"),
    ("unknown model", GOOD_SAMPLING + "model = 'cubic'\n", GOOD_PRIOR, "sampling.model"),
    ("model differs from prior", GOOD_SAMPLING + "model = 'slow_roll_quadratic'\n",
     GOOD_PRIOR, "sampling.model"),
    ("prior file missing", GOOD_SAMPLING.replace("prior.toml", "nowhere.toml"), GOOD_PRIOR,
     "nowhere.toml"),
    ("prior not TOML", GOOD_SAMPLING, "[prior\nmodel=", "not valid TOML"),
    ("unknown distribution", GOOD_SAMPLING, GOOD_PRIOR.replace(
        'distribution = "uniform"\nmin = 0.9', 'distribution = "flat"\nmin = 0.9'),
     "parameters.n_s.distribution"),
    ("min above max", GOOD_SAMPLING, GOOD_PRIOR.replace("min = 0.9", "min = 1.2"),
     "parameters.n_s.max"),
    ("log-uniform through zero", GOOD_SAMPLING, GOOD_PRIOR.replace(
        'distribution = "uniform"\nmin = 0.9', 'distribution = "log_uniform"\nmin = 0.0'),
     "parameters.n_s.min"),
    ("parameter not in model", GOOD_SAMPLING, GOOD_PRIOR + "[parameters.w]\nrole = 'fixed'\n"
     "value = 1.0\n", "parameters.w"),
    ("model parameter missing", GOOD_SAMPLING, GOOD_PRIOR.replace(
        "[parameters.r]\nrole = \"fixed\"\nvalue = 0.0\n", ""), "parameters.r"),
    ("unknown role", GOOD_SAMPLING, GOOD_PRIOR.replace(
        'role = "fixed"\nvalue = 0.0\n[parameters.running]',
        'role = "free"\nvalue = 0.0\n[parameters.running]'), "parameters.r.role"),
    ("gaussian without sigma", GOOD_SAMPLING, GOOD_PRIOR.replace(
        'distribution = "uniform"\nmin = 0.9\nmax = 1.05',
        'distribution = "gaussian"\nmean = 0.96'), "parameters.n_s.sigma"),
    ("walkers' centre outside support", GOOD_SAMPLING, GOOD_PRIOR.replace(
        "max = 1.05", "max = 1.05\nwalkers_centre = 1.5"), "parameters.n_s.walkers_centre"),
    ("old key start", GOOD_SAMPLING, GOOD_PRIOR.replace(
        "max = 1.05", "max = 1.05\nstart = 0.96"), "'parameters.n_s.start' is no longer a "
     "prior key: write 'walkers_centre' instead"),
    ("old key start_width", GOOD_SAMPLING, GOOD_PRIOR.replace(
        "max = 1.05", "max = 1.05\nstart_width = 0.01"), "write 'walkers_spread' instead"),
    ("walkers above the bound", GOOD_SAMPLING.replace("walkers = 8", "walkers = 10000000"),
     GOOD_PRIOR, "'sampling.walkers' = 10000000 is out of range; allowed: >= 2 and <= 4096"),
    ("max_steps above the bound", GOOD_SAMPLING.replace("max_steps = 50",
                                                        "max_steps = 100000000"),
     GOOD_PRIOR, "'sampling.max_steps' = 100000000 is out of range; allowed: >= 1 and <= 1e+06"),
    ("checkpoint_every above the bound", GOOD_SAMPLING + "checkpoint_every = 10000000\n",
     GOOD_PRIOR, "'sampling.checkpoint_every' = 10000000 is out of range"),
    ("chain too large", GOOD_SAMPLING.replace("walkers = 8", "walkers = 4000").replace(
        "max_steps = 50", "max_steps = 1000000"), GOOD_PRIOR, "at most 5e+07 chain rows"),
    ("min_steps above the bound", GOOD_SAMPLING + "min_steps = 2000000\n", GOOD_PRIOR,
     "'sampling.min_steps' = 2000000 is out of range; allowed: >= 0 and <= 1e+06"),
    ("workers above the bound", GOOD_SAMPLING + "workers = 5000\n", GOOD_PRIOR,
     "'sampling.workers' = 5000 is out of range"),
    ("prior survey above the bound", GOOD_SAMPLING + "prior_survey_draws = 1000000\n",
     GOOD_PRIOR, "'sampling.prior_survey_draws' = 1000000 is out of range"),
    ("fixed parameter with bounds", GOOD_SAMPLING, GOOD_PRIOR.replace(
        "[parameters.r]\nrole = \"fixed\"\nvalue = 0.0",
        "[parameters.r]\nrole = \"fixed\"\nvalue = 0.0\nmin = 0.0"), "parameters.r.min"),
    ("derived parameter the model lacks", GOOD_SAMPLING, GOOD_PRIOR
     + "[parameters.mass]\nrole = 'derived'\n", "parameters.mass.role"),
    ("bad report section", GOOD_SAMPLING + "\n[report]\nexclusion_map = ['n_s', 'w']\n",
     GOOD_PRIOR, "report.exclusion_map"),
    ("unknown constraint set", GOOD_SAMPLING.replace("planck2018_base", "planck2099"),
     GOOD_PRIOR, "planck2099"),
]


@pytest.mark.parametrize("name,config,prior,needle", CASES, ids=[c[0] for c in CASES])
def test_bad_input_one_line_exit_2_nothing_written(tmp_path, capsys, monkeypatch, name,
                                                   config, prior, needle):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "prior.toml").write_text(prior)
    (tmp_path / "run.toml").write_text(config)
    before = sorted(os.listdir(tmp_path))
    assert main(["sample", "run.toml", "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and err.startswith("bouncelike: error: ")
    assert needle in err, err
    assert sorted(os.listdir(tmp_path)) == before  # no chains/ folder, nothing written


def test_workers_zero_and_report_on_non_run(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "prior.toml").write_text(GOOD_PRIOR)
    (tmp_path / "run.toml").write_text(GOOD_SAMPLING)
    assert main(["sample", "run.toml", "--workers", "0"]) == 2
    assert "--workers" in capsys.readouterr().err
    assert main(["report", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert "not a run folder" in err and err.count("\n") == 1
    assert sorted(p.name for p in Path(tmp_path).iterdir()) == ["prior.toml", "run.toml"]


def test_shipped_priors_load():
    from bouncelike.models.registry import forward_model, samplable_models
    from bouncelike.sampling.priors import SHIPPED_PRIORS, load_prior

    names = sorted(p.stem for p in SHIPPED_PRIORS.glob("*.toml"))
    assert names == ["bounce_deformed_algebra", "bounce_deformed_algebra_physical",
                     "bounce_deformed_algebra_physical_starobinsky",
                     "bounce_dressed_metric", "bounce_dressed_metric_low_energy",
                     "bounce_dressed_metric_non_oscillating", "bounce_dressed_metric_phase",
                     "bounce_dressed_metric_physical", "bounce_dressed_metric_physical_low_energy",
                     "bounce_dressed_metric_physical_low_energy_starobinsky",
                     "bounce_dressed_metric_physical_non_oscillating",
                     "bounce_dressed_metric_physical_non_oscillating_starobinsky",
                     "bounce_dressed_metric_physical_starobinsky", "power_law",
                     "quadratic_slow_roll", "starobinsky_slow_roll"]
    for n in names:
        prior = load_prior(SHIPPED_PRIORS / f"{n}.toml")
        assert prior.model in samplable_models(), n
        model = forward_model(prior.model, sampled=True)
        full = load_prior(SHIPPED_PRIORS / f"{n}.toml", model)
        assert set(full.sampled_names) <= set(model.parameter_names), n


EFOLD_PRIOR = """
[prior]
model = "bounce_dressed_metric"
[parameters.N_inflation]
role = "sampled"
distribution = "efolds_from_phase"
min = 60.0
max = 250.0
[parameters.N_inflation.phase]
potential = "quadratic"
mass = 1.21e-6
n_samples = 60
seed = 1
"""


def test_efolds_from_phase_prior(tmp_path):
    import numpy as np

    from bouncelike.sampling.priors import load_prior

    (tmp_path / "p.toml").write_text(EFOLD_PRIOR)
    p = load_prior(tmp_path / "p.toml").get("N_inflation")
    # Linsefors & Barrau, Phys. Rev. D 87 (2013) 123509: for V = m^2 phi^2/2 with
    # m = 1.21e-6 m_Pl a flat phase prior gives inflationary e-folds sharply peaked near
    # 140-145 (physics notes, section 2).
    assert 130 < np.median(p.kde_points) < 155
    grid = np.linspace(60.0, 250.0, 3001)
    dens = np.exp(p.log_density(grid))
    assert np.trapezoid(dens, grid) == pytest.approx(1.0, abs=1e-3)  # normalised in [min, max]
    assert 120 < grid[np.argmax(dens)] < 160
