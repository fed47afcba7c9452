"""Bad input is refused up front: one line naming the key the user wrote and the allowed
range (with its physical reason), exit code 2, nothing written. Renamed keys point to their
new spelling. Each case here was accepted, or failed with a traceback, before the forward
models declared their parameters."""

from __future__ import annotations

import math
import os

import pytest
from cli_helpers import one_line_error
from config_texts import POWER_LAW_SCORE

from bouncelike.cli import main

POWER_LAW = POWER_LAW_SCORE

SLOW_ROLL = """
[model]
spectra = "slow_roll_quadratic"

[slow_roll]
N_star = 60
mass = 1.16e-6
"""

USER_SET = """
name = "mine"
title = "t"
citation = "c"
arxiv = "0"
table = "t"
data_combination = "d"
pivot = 0.05
forecast = false
overlap = ["x"]

[[term]]
quantity = "n_s"
kind = "gaussian"
mean = 0.965
sigma = 1e-320
"""

# config text, the key the message must name, a piece of the allowed range or pointer
SCORE_CASES = {
    "slow-roll mass 1e200 (was an OverflowError)": (
        SLOW_ROLL.replace("mass = 1.16e-6", "mass = 1e200"), "'slow_roll.mass' = 1e+200",
        "<= 0.1 m_Pl"),
    "slow-roll mass giving A_s > 1": (
        SLOW_ROLL.replace("mass = 1.16e-6", "mass = 0.05"), "'slow_roll.mass' = 0.05",
        "A_s <= 1"),
    "A_s 1e300 (was reported as ln_1e10_As)": (
        POWER_LAW.replace("ln_1e10_As = 3.044", "A_s = 1e300"), "'power_law.A_s' = 1e+300",
        "<= 1"),
    "ln(1e10 A_s) = +1e308": (
        POWER_LAW.replace("ln_1e10_As = 3.044", "ln_1e10_As = 1e308"),
        "'power_law.ln_1e10_As' = 1e+308", "<= 23.0259"),
    "ln(1e10 A_s) = -1e308": (
        POWER_LAW.replace("ln_1e10_As = 3.044", "ln_1e10_As = -1e308"),
        "'power_law.ln_1e10_As' = -1e+308", ">= -23.0259"),
    "r = 1e10": (POWER_LAW.replace("r = 0.01", "r = 1e10"), "'power_law.r' = 1e+10",
                 "16 epsilon_1"),
    "n_s = 1e300": (POWER_LAW.replace("n_s = 0.9649", "n_s = 1e300"), "'power_law.n_s'",
                    "<= 2"),
    "pivot 1e30 Mpc^-1": (POWER_LAW.replace("r = 0.01", "r = 0.01\npivot = 1e30"),
                          "'power_law.pivot' = 1e+30", "<= 1 Mpc^-1"),
    "running 1e10": (POWER_LAW.replace("r = 0.01", "r = 0.01\nrunning = 1e10"),
                     "'power_law.running'", "<= 1"),
    "user constraint set with sigma 1e-320": (
        POWER_LAW.replace('sets = ["planck2018_base", "bk18"]', 'files = ["mine.toml"]'),
        "term[0].sigma", ">= 1e-08"),
    "renamed: slow_roll.efolds": (
        SLOW_ROLL.replace("N_star = 60", "efolds = 60"), "'slow_roll.efolds' was renamed",
        "slow_roll.N_star"),
    "renamed: model slow_roll with a potential key": (
        SLOW_ROLL.replace('"slow_roll_quadratic"', '"slow_roll"'),
        "'model.spectra' = 'slow_roll' was renamed", "slow_roll_quadratic"),
    "renamed: slow_roll.potential": (
        SLOW_ROLL.replace("N_star = 60", 'N_star = 60\npotential = "quadratic"'),
        "'slow_roll.potential' was renamed", "slow_roll_quadratic"),
    "renamed: reheating.n_star": (
        '[model]\nspectra = "bounce"\n[reheating]\nn_star = 55.0\n',
        "'reheating.n_star' was renamed", "reheating.N_star"),
    "renamed: reheating.density": (
        '[model]\nspectra = "bounce"\n[reheating]\nequation_of_state = 0.0\ndensity = 1e-20\n',
        "'reheating.density' was renamed", "log10_reheating_density"),
    "reheating: N_star and a history together": (
        '[model]\nspectra = "bounce"\n[reheating]\nN_star = 55.0\nequation_of_state = 0.0\n',
        "[reheating] needs 'N_star', or both", "got N_star, equation_of_state"),
    "reheating density below nucleosynthesis": (
        '[model]\nspectra = "bounce"\n[reheating]\nequation_of_state = 0.0\n'
        "log10_reheating_density = -100.0\n", "'reheating.log10_reheating_density' = -100",
        "nucleosynthesis"),
    "k_max 1e300 k_LQC (was accepted)": (
        '[model]\nspectra = "bounce"\n[perturbations]\nk_max = 1e300\n[reheating]\nN_star = 55.0\n',
        "'perturbations.k_max' = 1e+300", "<= 10000 k_LQC"),
    "k_count 1e9 (was accepted)": (
        '[model]\nspectra = "bounce"\n[perturbations]\nk_count = 1000000000\n[reheating]\n'
        "N_star = 55.0\n", "'perturbations.k_count' = 1000000000", "<= 4000"),
    "renamed: background.contracting.density": (
        '[model]\nspectra = "bounce"\n[potential]\nname = "quadratic"\nmass = 1.2e-6\n'
        "[background.contracting]\ndensity = 1e-14\n[reheating]\nN_star = 55.0\n",
        "'background.contracting.density' was renamed", "start_density"),
}


def _no_output_one_line(tmp_path, monkeypatch, capsys, argv):
    work = tmp_path / "cwd"
    work.mkdir()
    monkeypatch.chdir(work)
    before = sorted(os.listdir(tmp_path))
    code = main(argv)
    captured = capsys.readouterr()
    lines = captured.err.strip().splitlines()
    assert code == 2 and captured.out == ""
    assert len(lines) == 1 and lines[0].startswith("bouncelike: error: ")
    assert sorted(os.listdir(tmp_path)) == before and os.listdir(work) == []
    return lines[0]


@pytest.mark.parametrize("case", sorted(SCORE_CASES))
def test_score_refuses_bad_values(case, tmp_path, monkeypatch, capsys):
    text, key, allowed = SCORE_CASES[case]
    cfg = tmp_path / "run.toml"
    cfg.write_text(text)
    (tmp_path / "mine.toml").write_text(USER_SET)
    line = _no_output_one_line(tmp_path, monkeypatch, capsys, ["score", str(cfg), "--json"])
    assert key in line and allowed in line, line


def test_unconstrained_quantity_is_named_in_the_score(capsys, tmp_path):
    # running = 0.5 is far outside every published running constraint (Planck 2018 VI,
    # arXiv:1807.06209: -0.0045 +- 0.0067), but neither chosen set constrains it: the score
    # must say so instead of letting "allowed" stand for it
    cfg = tmp_path / "run.toml"
    cfg.write_text(POWER_LAW.replace("r = 0.01", "r = 0.01\nrunning = 0.5"))
    assert main(["score", str(cfg)]) == 0
    out = capsys.readouterr().out
    assert "dn_s/dlnk = 0.5" in out and "not constrained by the chosen sets" in out


EFOLDS = """
[potential]
name = "quadratic"
mass = 1.21e-6

[background]
gamma = 0.2375

[efolds]
n_samples = 4
start_density = 1.0
convergence_samples = 0
"""

COMPARE = """
[potential]
name = "quadratic"
mass = 1.21e-6

[background]
gama = 0.2375

[compare]
n_samples = 3
cases = [{ label = "LQC", dynamics = "isotropic" }]
"""


@pytest.mark.parametrize("command, text, key, allowed", [
    # was refused naming a drawn value of background.contracting.density
    ("efolds", EFOLDS, "'efolds.start_density' = 1", "rho_c = 0.40937"),
    ("efolds", EFOLDS.replace("start_density = 1.0", "density = 1e-16"),
     "'efolds.density' was renamed", "efolds.start_density"),
    # the typo was ignored and five files were written
    ("compare", COMPARE, "unknown key 'background.gama'", "gamma"),
    # the rescaled critical density of a condensate case bounds the start density
    ("compare", COMPARE.replace("gama", "gamma").replace(
        'cases = [{ label = "LQC", dynamics = "isotropic" }]',
        'start_density = 0.3\ncases = [{ label = "half", dynamics = "condensate", '
        'rescale = 0.5 }]'), "'compare.start_density' = 0.3", "< 0.204687 Planck density"),
])
def test_background_commands_refuse_bad_values(command, text, key, allowed, tmp_path,
                                               monkeypatch, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(text)
    line = _no_output_one_line(tmp_path, monkeypatch, capsys,
                               [command, str(cfg), "--output", str(tmp_path / "out"), "--quiet"])
    assert key in line and allowed in line, line


PRIOR = """
[prior]
model = "slow_roll_quadratic"

[parameters.N_star]
role = "sampled"
distribution = "uniform"
min = 45.0
max = 65.0

[parameters.ln_1e10_As]
role = "sampled"
distribution = "uniform"
min = 2.5
max = 3.5
"""


@pytest.mark.parametrize("edit, key, allowed", [
    (("min = 45.0", "min = 0.5"), "'parameters.N_star.min' = 0.5", ">= 1"),
    (("max = 3.5", "max = 1e5"), "'parameters.ln_1e10_As.max' = 100000", "<= 23.0259"),
    (('role = "sampled"\ndistribution = "uniform"\nmin = 2.5\nmax = 3.5',
      'role = "fixed"\nvalue = 1e300'), "'parameters.ln_1e10_As.value' = 1e+300", "<= 23"),
    (("[parameters.N_star]", "[parameters.n_star]"), "'parameters.n_star' is not a parameter",
     "N_star"),
])
def test_prior_files_validate_against_the_declarations(edit, key, allowed, tmp_path,
                                                       monkeypatch, capsys):
    (tmp_path / "prior.toml").write_text(PRIOR.replace(*edit))
    cfg = tmp_path / "run.toml"
    cfg.write_text('[likelihood]\nsets = ["planck2018_base"]\n\n[sampling]\n'
                   f'prior = "{tmp_path / "prior.toml"}"\n')
    line = _no_output_one_line(tmp_path, monkeypatch, capsys, ["sample", str(cfg), "--quiet"])
    assert key in line and allowed in line, line


def test_gaussian_prior_is_truncated_to_the_declared_range():
    # a gaussian prior on r centred at 0: the declared range r >= 0 (r = P_t/P_s) truncates it,
    # so its density integrates to one over r >= 0 (twice the untruncated density there)
    from bouncelike.models.registry import forward_model
    from bouncelike.sampling.priors import prior_from_text

    text = PRIOR.replace('model = "slow_roll_quadratic"', 'model = "power_law"').replace(
        "[parameters.N_star]\nrole = \"sampled\"\ndistribution = \"uniform\"\nmin = 45.0\n"
        "max = 65.0\n", "[parameters.r]\nrole = \"sampled\"\ndistribution = \"gaussian\"\n"
        "mean = 0.0\nsigma = 0.1\n")
    for name, value in (("n_s", 1.0), ("running", 0.0), ("running_of_running", 0.0)):
        text += f"\n[parameters.{name}]\nrole = \"fixed\"\nvalue = {value}\n"
    prior = prior_from_text(text, model=forward_model("power_law"))
    r = prior.get("r")
    assert r.lower == 0.0 and r.upper == 16.0
    # scipy-free check: N(0; 0, 0.1) = 1/(0.1 sqrt(2 pi)), doubled by the truncation at 0
    assert math.exp(r.log_density([1e-12])[0]) == pytest.approx(2 / (0.1 * math.sqrt(2 * math.pi)))


BOUNCE = """
[model]
spectra = "bounce"

[potential]
name = "quadratic"
mass = {mass}

[background]
start = "bounce"

[background.bounce]
potential_fraction = {fraction}

[reheating]
N_star = {n_star}
"""


@pytest.mark.parametrize("mass, fraction, n_star, reason", [
    # was a ZeroDivisionError traceback from the slow-roll continuation
    (0.0, 1e-11, 55.0, "a field without potential energy never inflates"),
    # was "mode k=0.032072 has no positive frequency" (later: a bare reason without values)
    (1e-3, 2.5e-4, 1.0, "inflation after the bounce is too short"),
])
def test_bounce_model_failures_name_the_values_and_the_reason(mass, fraction, n_star, reason,
                                                              tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(BOUNCE.format(mass=mass, fraction=fraction, n_star=n_star))
    assert main(["score", str(cfg)]) == 1  # not evaluable: exit code 1, one line
    err = one_line_error(capsys.readouterr().err)
    assert f"potential.mass = {mass:g}" in err and f"reheating.N_star = {n_star:g}" in err
    assert reason in err


def test_physical_bounce_model_from_a_configuration(tmp_path, capsys):
    # the physical model scored from [bounce_physical] + [reheating] (the keys of its prior
    # files): m^2 phi^2 at N_* = 55 gives n_s = 1 - 2/(N + 1/2), r = 8/(N + 1/2) up to
    # O(1/N^2) (Encyclopaedia Inflationaris, arXiv:1303.3787), the bounce far below the window
    cfg = tmp_path / "run.toml"
    cfg.write_text('[model]\nspectra = "bounce_physical_dressed_metric"\n[bounce_physical]\n'
                   "log10_potential_fraction = -11.6\nmass = 1.2e-6\ncritical_density = 0.40937\n"
                   "[reheating]\nN_star = 55.0\n")
    assert main(["score", str(cfg), "--json"]) == 0
    import json

    terms = {t["quantity"]: t["predicted"] for t in json.loads(capsys.readouterr().out)["terms"]}
    assert terms["n_s"] == pytest.approx(1 - 2 / 55.5, abs=1e-3)
    assert terms["r"] == pytest.approx(8 / 55.5, rel=0.02)
    # one reheating choice: N_star and a history together are refused
    cfg.write_text(cfg.read_text().replace("N_star = 55.0", "N_star = 55.0\n"
                                           "equation_of_state = 0.0"))
    assert main(["score", str(cfg)]) == 2
    assert "needs 'N_star', or both" in capsys.readouterr().err
