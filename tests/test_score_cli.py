"""The score and constraints commands: output, JSON keys and one-line errors with exit 2."""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from config_texts import POWER_LAW_SCORE

from bouncelike.cli import main

ROOT = Path(__file__).resolve().parents[1]

POWER_LAW = POWER_LAW_SCORE

SET_FILE_MISSING_SIGMA = """
name = "broken"
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
mean = 0.96
"""


def _run(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def test_score_table(capsys):
    code, out, err = _run(capsys, ["score", str(ROOT / "examples" / "powerlaw_planck2018.toml")])
    assert code == 0
    for text in ("ln(1e10 A_s)", "n_s", "planck2018_base (arXiv:1807.06209)", "total chi2",
                 "verdict: allowed", "half-Gaussian", "p-value"):
        assert text in out


def test_score_json_keys(capsys):
    code, out, _ = _run(
        capsys, ["score", str(ROOT / "examples" / "quadratic_slowroll.toml"), "--json"]
    )
    assert code == 0
    data = json.loads(out)
    for key in ("chi2", "dof", "p_value", "verdict", "excluded_at", "terms", "notes",
                "fit_quality"):
        assert key in data
    assert data["verdict"] == "excluded" and data["excluded_at"] == 0.997
    assert data["dof"] == len(data["terms"]) == 3
    for term in data["terms"]:
        assert {"quantity", "predicted", "chi2", "source"} <= set(term)
    assert sum(t["chi2"] for t in data["terms"]) == pytest.approx(data["chi2"])


def test_starobinsky_example_allowed(capsys):
    code, out, _ = _run(
        capsys, ["score", str(ROOT / "examples" / "starobinsky_slowroll.toml"), "--json"]
    )
    assert code == 0 and json.loads(out)["verdict"] == "allowed"


def test_constraints_listing(capsys):
    code, out, _ = _run(capsys, ["constraints"])
    assert code == 0
    assert "arXiv:1807.06209" in out and "FORECAST" in out
    code, out, _ = _run(capsys, ["constraints", "--json"])
    sets = {s["name"]: s for s in json.loads(out)["sets"]}
    # 11 sets of pivot constraints and the large-scale temperature set
    assert len(sets) == 12 and sets["forecast_ground_r"]["forecast"] is True
    assert sets["planck2018_lowell_tt"]["kind"] == "temperature_low_ell"
    assert sets["planck2018_lowell_tt"]["arxiv"] == "1907.12875"


BAD = {
    "unknown key": (POWER_LAW.replace("r = 0.01", "r = 0.01\ntilt = 1"), "power_law.tilt"),
    "wrong type": (POWER_LAW.replace("n_s = 0.9649", 'n_s = "red"'), "power_law.n_s"),
    "negative amplitude": (
        POWER_LAW.replace("ln_1e10_As = 3.044", "A_s = -2.1e-9"), "power_law.A_s"),
    "r below zero": (POWER_LAW.replace("r = 0.01", "r = -0.01"), "power_law.r"),
    "unknown set": (POWER_LAW.replace('"bk18"', '"bk99"'), "bk99"),
    "NaN": (POWER_LAW.replace("n_s = 0.9649", "n_s = nan"), "power_law.n_s"),
    "unknown model": (POWER_LAW.replace('"power_law"', '"ekpyrotic"'), "model.spectra"),
    "overlapping sets": (
        POWER_LAW.replace('"bk18"', '"planck2018_base_bao"'), "allow_overlap"),
    "unknown section": (POWER_LAW + "\n[plotting]\ncolour = 1\n", "plotting"),
    "not TOML": (POWER_LAW + "\n[model\n", "not valid TOML"),
    "two amplitudes": (POWER_LAW.replace("n_s =", "A_s = 2e-9\nn_s ="), "A_s"),
    "bad n_t": (POWER_LAW.replace("r = 0.01", 'r = 0.01\nn_t = "free"'), "power_law.n_t"),
    "missing model": (POWER_LAW.replace('[model]\nspectra = "power_law"', ""), "model"),
    "N_star zero": (
        '[model]\nspectra = "slow_roll_quadratic"\n[slow_roll]\nN_star = 0\n'
        "ln_1e10_As = 3.0\n", "slow_roll.N_star"),
    "two amplitudes in slow roll": (
        '[model]\nspectra = "slow_roll_starobinsky"\n[slow_roll]\nN_star = 55\n'
        "mass = 1e-6\nA_s = 2e-9\n", "exactly one amplitude"),
    "unknown slow-roll model": (
        '[model]\nspectra = "slow_roll_hilltop"\n[slow_roll]\nN_star = 55\n'
        "ln_1e10_As = 3.0\n", "model.spectra"),
    "allow_overlap not boolean": (
        POWER_LAW.replace("[likelihood]", '[likelihood]\nallow_overlap = "yes"'),
        "likelihood.allow_overlap"),
    "missing set file": (
        POWER_LAW.replace('sets = ["planck2018_base", "bk18"]', 'files = ["nowhere.toml"]'),
        "nowhere.toml"),
    "malformed set file": (
        POWER_LAW.replace('sets = ["planck2018_base", "bk18"]', 'files = ["broken.toml"]'),
        "term[0].sigma"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_input_one_line_exit_2_nothing_written(case, tmp_path, monkeypatch, capsys):
    text, needle = BAD[case]
    cfg = tmp_path / "run.toml"
    cfg.write_text(text)
    (tmp_path / "broken.toml").write_text(SET_FILE_MISSING_SIGMA)
    work = tmp_path / "cwd"
    work.mkdir()
    monkeypatch.chdir(work)
    before = sorted(os.listdir(tmp_path))
    code, out, err = _run(capsys, ["score", str(cfg), "--json"])
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("bouncelike: error: ")
    assert needle in lines[0]
    assert sorted(os.listdir(tmp_path)) == before and os.listdir(work) == []


def test_missing_config_file(tmp_path, capsys):
    code, out, err = _run(capsys, ["score", str(tmp_path / "absent.toml")])
    assert code == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and "absent.toml" in err


def test_module_entry_point(tmp_path):
    cfg = tmp_path / "run.toml"
    cfg.write_text(POWER_LAW.replace("r = 0.01", "r = -1.0"))
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    bad = subprocess.run([sys.executable, "-m", "bouncelike", "score", str(cfg)], cwd=tmp_path,
                         capture_output=True, text=True, env=env)
    assert bad.returncode == 2 and bad.stdout == ""
    assert bad.stderr.count("\n") == 1 and "power_law.r" in bad.stderr
    cfg.write_text(POWER_LAW)
    good = subprocess.run([sys.executable, "-m", "bouncelike", "score", str(cfg), "--json"],
                          cwd=tmp_path, capture_output=True, text=True, env=env)
    assert good.returncode == 0 and json.loads(good.stdout)["verdict"] == "allowed"


def test_constraints_user_file_and_unknown_name(tmp_path, capsys):
    good = SET_FILE_MISSING_SIGMA.replace("mean = 0.96", "mean = 0.96\nsigma = 0.01")
    (tmp_path / "mine.toml").write_text(good)
    code, out, _ = _run(capsys, ["constraints", str(tmp_path / "mine.toml")])
    assert code == 0 and "broken" in out and "0.96 +- 0.01" in out
    code, out, err = _run(capsys, ["constraints", "planck2099"])
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1
