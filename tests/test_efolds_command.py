"""The ``bouncelike efolds`` command: outputs, JSON keys, bad input (exit 2, nothing written)."""

import json

import pandas as pd
import pytest

from bouncelike.cli import main

GOOD = """
[potential]
name = "quadratic"
mass = 1.21e-6

[background]
gamma = 0.2375

[efolds]
n_samples = 16
seed = 4
threshold = 60.0
start_density = 1e-15
start_density_decades = 1.0
convergence_samples = 4
bins = 10
"""


def _write(tmp_path, text, name="run.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_efolds_command_json_and_files(tmp_path, capsys):
    cfg = _write(tmp_path, GOOD)
    out = tmp_path / "out"
    assert main(["efolds", str(cfg), "--output", str(out), "--json", "--quiet",
                 "--workers", "2"]) == 0
    result = json.loads(capsys.readouterr().out)
    for key in ("n_samples", "median", "mode", "percentiles", "fraction_above",
                "max_constraint_residual", "convergence", "status_counts"):
        assert key in result
    assert set(result["percentiles"]) == {"5", "16", "50", "84", "95"}
    assert result["n_samples"] == 16 and result["workers"] == 2
    assert result["max_constraint_residual"] < 1e-6
    frame = pd.read_csv(out / "efolds_samples.csv")
    assert len(frame) == 16
    assert {"phase", "start_density", "status", "efolds_inflation"} <= set(frame.columns)
    assert frame["efolds_inflation"].median() == pytest.approx(result["median"], rel=1e-9)
    for name in ("efolds.pdf", "efolds.png", "efolds_summary.json"):
        assert (out / name).stat().st_size > 0


def test_efolds_command_table(tmp_path, capsys):
    cfg = _write(tmp_path, GOOD)
    assert main(["efolds", str(cfg), "--output", str(tmp_path / "o"), "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "median" in text and "percentiles" in text and "fraction above 60" in text


@pytest.mark.parametrize(
    "edit, key",
    [
        (("n_samples = 16", "n_samples = 0"), "efolds.n_samples"),
        (("seed = 4", "seed = 4\nsamples = 3"), "efolds.samples"),
        (("start_density = 1e-15", "start_density = -1e-15"), "efolds.start_density"),
        (("start_density_decades = 1.0", "start_density_decades = 20.0"),
         "efolds.start_density_decades"),
        (("threshold = 60.0", "threshold = 60.0\nfraction_min = 1e-12"), "efolds.fraction_min"),
        (("threshold = 60.0", "threshold = 60.0\nprior = 'uniform'"), "efolds.prior"),
        (("mass = 1.21e-6", "mass = -1.0"), "potential.mass"),
        (("gamma = 0.2375", "gamma = 0.2375\ncritical_density = 0.4"), "background.gamma"),
        (("bins = 10", "bins = 1"), "efolds.bins"),
        (("[efolds]", "[efolds]\nworkers = 0"), "efolds.workers"),
    ],
)
def test_bad_config_exits_2_and_writes_nothing(tmp_path, capsys, edit, key):
    cfg = _write(tmp_path, GOOD.replace(*edit))
    out = tmp_path / "out"
    assert main(["efolds", str(cfg), "--output", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("bouncelike: error:") and key in err
    assert len(err.splitlines()) == 1
    assert not out.exists()


def test_missing_or_broken_file_exits_2(tmp_path, capsys):
    assert main(["efolds", str(tmp_path / "none.toml"), "--output", str(tmp_path / "o")]) == 2
    bad = _write(tmp_path, "[efolds\nn_samples = 3")
    assert main(["efolds", str(bad), "--output", str(tmp_path / "o")]) == 2
    assert main(["efolds", str(_write(tmp_path, GOOD)), "--workers", "0",
                 "--output", str(tmp_path / "o")]) == 2
    assert not (tmp_path / "o").exists()
