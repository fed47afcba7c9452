"""Output folders are checked before any computation: a file given as --output, a folder that
cannot be written, a file in the way of a folder, a folder in the way of an output file. Each
case exits 2 with one line, runs nothing and writes nothing."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from cli_helpers import listing, one_line_error, unwritable_folder  # noqa: F401 (fixture)

from bouncelike.cli import main

REPO = Path(__file__).resolve().parents[1]

EFOLDS = """
[potential]
name = "quadratic"
mass = 1.21e-6

[efolds]
n_samples = 4
convergence_samples = 0
"""

COMPARE = """
[potential]
name = "quadratic"
mass = 1.21e-6

[compare]
n_samples = 2
cases = [{ label = "LQC", dynamics = "isotropic" }]
"""


class Computed(AssertionError):
    """Raised by a stand-in of a command's computation: the check came too late."""


def _forbid(monkeypatch, module, name):
    def computed(*args, **kwargs):
        raise Computed(f"{module.__name__}.{name} ran before the output folder was checked")

    monkeypatch.setattr(module, name, computed)


@pytest.fixture
def efolds_setup(tmp_path, monkeypatch):
    from bouncelike.background import efolds

    _forbid(monkeypatch, efolds, "efolds_distribution")
    (tmp_path / "run.toml").write_text(EFOLDS)
    return "efolds", "efolds.png"


@pytest.fixture
def compare_setup(tmp_path, monkeypatch):
    from bouncelike.background import efolds

    _forbid(monkeypatch, efolds, "efolds_distribution")
    (tmp_path / "run.toml").write_text(COMPARE)
    return "compare", "compare_summary.json"


@pytest.fixture
def spectrum_setup(tmp_path, monkeypatch):
    from bouncelike.models import bounce as forward

    _forbid(monkeypatch, forward, "run_from_config")
    shutil.copy(REPO / "examples" / "bounce_features_quadratic.toml", tmp_path / "run.toml")
    return "spectrum", "spectrum.json"


SETUPS = ["efolds_setup", "compare_setup", "spectrum_setup"]


def _check(capsys, tmp_path, argv, needle):
    before = listing(tmp_path)
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    one_line_error(err, needle)
    assert listing(tmp_path) == before


@pytest.mark.parametrize("setup", SETUPS)
def test_output_is_an_existing_file(setup, request, tmp_path, capsys):
    name, _ = request.getfixturevalue(setup)
    target = tmp_path / "taken"
    target.write_text("mine")
    _check(capsys, tmp_path, [name, str(tmp_path / "run.toml"), "--output", str(target)],
           f"--output '{target}' is a file")
    assert target.read_text() == "mine"


@pytest.mark.parametrize("setup", SETUPS)
def test_a_file_is_where_a_parent_folder_should_be(setup, request, tmp_path, capsys):
    name, _ = request.getfixturevalue(setup)
    (tmp_path / "taken").write_text("mine")
    _check(capsys, tmp_path, [name, str(tmp_path / "run.toml"), "--output",
                              str(tmp_path / "taken" / "sub")], "is a file")


@pytest.mark.parametrize("setup", SETUPS)
def test_output_folder_not_writable(setup, request, tmp_path, capsys, unwritable_folder):  # noqa: F811
    name, _ = request.getfixturevalue(setup)
    target = unwritable_folder / "bouncelike-out"
    _check(capsys, tmp_path, [name, str(tmp_path / "run.toml"), "--output", str(target)],
           "is not writable")
    assert not target.exists()


@pytest.mark.parametrize("setup", SETUPS)
def test_default_output_folder_not_writable(setup, request, tmp_path, monkeypatch, capsys,
                                            unwritable_folder):  # noqa: F811
    name, _ = request.getfixturevalue(setup)
    monkeypatch.chdir(unwritable_folder)
    _check(capsys, tmp_path, [name, str(tmp_path / "run.toml")],
           "the default output folder")


@pytest.mark.parametrize("setup", SETUPS)
def test_an_output_name_is_a_folder(setup, request, tmp_path, capsys):
    name, blocked = request.getfixturevalue(setup)
    out = tmp_path / "out"
    (out / blocked).mkdir(parents=True)
    _check(capsys, tmp_path, [name, str(tmp_path / "run.toml"), "--output", str(out)],
           f"cannot write '{out / blocked}': a folder")


def test_sample_run_folder_not_writable(tmp_path, monkeypatch, capsys, unwritable_folder):  # noqa: F811
    from bouncelike.sampling import driver

    _forbid(monkeypatch, driver, "run_sampler")
    (tmp_path / "run.toml").write_text('[likelihood]\nsets = ["planck2018_base"]\n\n'
                                       '[sampling]\nprior = "power_law"\nwalkers = 8\n'
                                       'max_steps = 50\n')
    _check(capsys, tmp_path, ["sample", str(tmp_path / "run.toml"), "--output",
                              str(unwritable_folder / "run")], "is not writable")


def test_report_output_is_a_file(tmp_path, monkeypatch, capsys):
    from bouncelike.reporting import report

    _forbid(monkeypatch, report, "compute_report")
    run = tmp_path / "run"
    run.mkdir()
    (run / "manifest.json").write_text(json.dumps(
        {"config": {}, "model": "power_law", "prior": {}, "prior_file_text": ""}))
    (tmp_path / "taken").write_text("mine")
    _check(capsys, tmp_path, ["report", str(run), "--output", str(tmp_path / "taken")],
           "is a file")


def test_demo_output_not_writable(tmp_path, capsys, unwritable_folder):  # noqa: F811
    _check(capsys, tmp_path, ["demo", "--output", str(unwritable_folder / "demo")],
           "is not writable")
