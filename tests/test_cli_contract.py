"""The command-line contract, for every command: exit codes, one-line errors, nothing written
on error, ``--json`` as one parseable object with the provenance block, the shared options
declared once, and a ``--help`` that imports no numerical library."""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys
from pathlib import Path

import pytest
from cli_helpers import check_provenance, listing, one_line_error

from bouncelike import cli
from bouncelike.cli import COMMANDS, main
from bouncelike.parallel import MAX_WORKERS

REPO = Path(__file__).resolve().parents[1]

EFOLDS = """
[potential]
name = "quadratic"
mass = 1.21e-6

[efolds]
n_samples = 4
seed = 4
start_density = 1e-15
start_density_decades = 1.0
convergence_samples = 0
"""

COMPARE = """
[potential]
name = "quadratic"
mass = 1.21e-6

[compare]
n_samples = 2
start_density = 1e-15
start_density_decades = 1.0
cases = [{ label = "LQC", dynamics = "isotropic" }]
"""

SCORE = """
[model]
spectra = "power_law"

[power_law]
ln_1e10_As = 3.044
n_s = 0.9649

[likelihood]
sets = ["planck2018_base", "bk18"]
"""

SAMPLE = """
[likelihood]
sets = ["planck2018_base"]

[sampling]
prior = "power_law"
walkers = 8
max_steps = 50
"""


def _run(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


# -- the layer -------------------------------------------------------------------------------

def test_every_command_module_is_listed_explicitly():
    on_disk = {p.stem for p in (REPO / "bouncelike" / "commands").glob("*.py")
               if not p.name.startswith("_")}
    assert {m.__name__.rsplit(".", 1)[1] for m in COMMANDS} == on_disk
    assert len({m.NAME for m in COMMANDS}) == len(COMMANDS)


def test_help_imports_no_numerical_library():
    code = ("import sys; from bouncelike.cli import build_parser; build_parser().format_help(); "
            "print(sorted(m for m in ('numpy', 'scipy', 'numba', 'pandas', 'matplotlib', "
            "'emcee') if m in sys.modules))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          env={"PYTHONPATH": str(REPO), "PATH": "/usr/bin:/bin"}, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "[]"


@pytest.mark.parametrize("mod", COMMANDS, ids=[m.NAME for m in COMMANDS])
def test_shared_options_are_declared_by_the_layer(mod, capsys):
    with pytest.raises(SystemExit) as exc:
        main([mod.NAME, "--help"])
    assert exc.value.code == 0
    text = capsys.readouterr().out
    for flag in ("--json", "--quiet", "--plugin"):
        assert flag in text
    assert ("--output" in text) == (mod.OPTIONS.output is not None)
    assert ("--workers" in text) == (mod.OPTIONS.workers is not None)


# -- errors: one line, exit 2, nothing written ----------------------------------------------

ERROR_CASES = {
    "score": (["score", "absent.toml"], "absent.toml"),
    "efolds": (["efolds", "absent.toml"], "absent.toml"),
    "compare": (["compare", "absent.toml"], "absent.toml"),
    "spectrum": (["spectrum", "absent.toml"], "absent.toml"),
    "sample": (["sample", "absent.toml"], "absent.toml"),
    "report": (["report", "no_run"], "no_run"),
    "constraints": (["constraints", "planck2099"], "planck2099"),
    "transfer-check": (["transfer-check", "--points", "1"], "--points"),
    "demo": (["demo", "--output", "a_file"], "a_file"),
}


def test_every_command_has_an_error_case():
    assert set(ERROR_CASES) == {m.NAME for m in COMMANDS}


@pytest.mark.parametrize("name", sorted(ERROR_CASES))
def test_bad_input_is_one_line_exit_2_nothing_written(name, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "a_file").write_text("x")
    before = listing(tmp_path)
    argv, needle = ERROR_CASES[name]
    code, out, err = _run(capsys, argv)
    assert code == 2 and out == ""
    one_line_error(err, needle)
    assert listing(tmp_path) == before


@pytest.mark.parametrize("name,config", [("efolds", EFOLDS), ("compare", COMPARE),
                                         ("sample", SAMPLE)])
@pytest.mark.parametrize("workers", ["0", str(MAX_WORKERS + 1)])
def test_workers_have_one_bound(name, config, workers, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "run.toml").write_text(config)
    code, out, err = _run(capsys, [name, "run.toml", "--workers", workers])
    assert code == 2 and out == ""
    one_line_error(err, f"'--workers' = {workers} is out of range; allowed: >= 1 and <= "
                        f"{MAX_WORKERS}")
    assert listing(tmp_path) == ["run.toml"]


@pytest.mark.parametrize("name,config,key", [("efolds", EFOLDS, "efolds"),
                                             ("compare", COMPARE, "compare"),
                                             ("sample", SAMPLE, "sampling")])
def test_configured_workers_have_the_same_bound(name, config, key, tmp_path, monkeypatch,
                                                capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "run.toml").write_text(config.replace(f"[{key}]\n",
                                                      f"[{key}]\nworkers = 1000\n"))
    code, _, err = _run(capsys, [name, "run.toml"])
    assert code == 2
    one_line_error(err, f"'{key}.workers' = 1000 is out of range; allowed: >= 1 and <= "
                        f"{MAX_WORKERS}")


def test_retired_run_section_gets_a_pointer(tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text('[run]\nbogus = 3\n' + SCORE)
    code, out, err = _run(capsys, ["score", str(cfg)])
    assert code == 2 and out == ""
    one_line_error(err, "section [run] is not read by any command")


def test_renamed_report_key_gets_a_pointer(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "run.toml").write_text(SAMPLE + '\n[report]\ncompare = ["chains/other"]\n')
    code, out, err = _run(capsys, ["sample", "run.toml"])
    assert code == 2 and out == ""
    one_line_error(err, "'report.compare' is now 'report.compare_runs'")
    assert listing(tmp_path) == ["run.toml"]


def test_stored_runs_keep_the_earlier_report_key():
    from bouncelike.reporting.settings import report_settings

    config = {"report": {"compare": ["chains/other"]}}
    assert report_settings(config, ("a", "b"), stored=True)["compare_runs"] == ["chains/other"]


# -- numerical failures and file-system errors reaching the layer ---------------------------

@pytest.mark.parametrize("kind,needle", [("NotEvaluable", "not evaluable: no inflation"),
                                         ("NumericalFailure", "numerical failure: no inflation")])
def test_numerical_failures_are_one_line_exit_1(kind, needle, tmp_path, monkeypatch, capsys):
    from bouncelike import errors
    from bouncelike.background import efolds

    def fail(*args, **kwargs):
        raise getattr(errors, kind)("no inflation")

    monkeypatch.setattr(efolds, "efolds_distribution", fail)
    (tmp_path / "run.toml").write_text(EFOLDS)
    code, out, err = _run(capsys, ["efolds", str(tmp_path / "run.toml"), "--output",
                                   str(tmp_path / "out"), "--quiet", "--json"])
    assert code == 1 and out == ""
    one_line_error(err, needle)
    assert listing(tmp_path) == ["run.toml"]


def test_a_write_that_fails_is_one_line_exit_2(tmp_path, monkeypatch, capsys):
    from bouncelike import io

    def refuse(self):
        raise PermissionError(13, "Permission denied", str(self.files[0]))

    monkeypatch.setattr(io.OutputSet, "commit", refuse)
    (tmp_path / "run.toml").write_text(EFOLDS)
    out_dir = tmp_path / "out"
    code, out, err = _run(capsys, ["efolds", str(tmp_path / "run.toml"), "--output",
                                   str(out_dir), "--quiet"])
    assert code == 2 and out == ""
    one_line_error(err, "Permission denied")
    assert listing(tmp_path) == ["run.toml"]


# -- --json: one object with provenance -----------------------------------------------------

def test_score_json_carries_provenance(tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(SCORE)
    code, out, _ = _run(capsys, ["score", str(cfg), "--json"])
    assert code == 0
    data = json.loads(out)
    check_provenance(data["provenance"], "score", cfg, ("planck2018_base", "bk18"))
    assert set(data["timing"]) == {"wall_seconds", "compile_seconds"}
    # one changed byte, another hash
    cfg.write_text(SCORE.replace("0.9649", "0.9650"))
    _, out2, _ = _run(capsys, ["score", str(cfg), "--json"])
    assert (json.loads(out2)["provenance"]["config"]["sha256"]
            == hashlib.sha256(cfg.read_bytes()).hexdigest()
            != data["provenance"]["config"]["sha256"])


def test_score_with_low_ell_set_names_it_in_provenance(tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(SCORE.replace('"bk18"]', '"planck2018_lowell_tt"]'))
    code, out, _ = _run(capsys, ["score", str(cfg), "--json"])
    assert code == 0
    check_provenance(json.loads(out)["provenance"], "score", cfg,
                     ("planck2018_base", "planck2018_lowell_tt"))


def test_constraints_json_carries_provenance(capsys):
    code, out, _ = _run(capsys, ["constraints", "bk18", "planck2018_base", "--json"])
    assert code == 0
    data = json.loads(out)
    check_provenance(data["provenance"], "constraints", None, ("bk18", "planck2018_base"))
    assert [s["name"] for s in data["sets"]] == ["bk18", "planck2018_base"]


@pytest.mark.parametrize("name,config,summary", [
    ("efolds", EFOLDS, "efolds_summary.json"),
    ("compare", COMPARE, "compare_summary.json"),
])
def test_json_output_and_file_carry_the_same_provenance(name, config, summary, tmp_path,
                                                        capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(config)
    code, out, err = _run(capsys, [name, str(cfg), "--output", str(tmp_path / "o"), "--json",
                                   "--quiet"])
    assert code == 0, err
    data = json.loads(out)  # one object, nothing else on stdout
    check_provenance(data["provenance"], name, cfg, ())
    stored = json.loads((tmp_path / "o" / summary).read_text())
    assert stored["provenance"] == data["provenance"]
    assert data["timing"]["wall_seconds"] >= data["timing"]["compile_seconds"] >= 0
    assert err == ""  # --quiet: nothing on stderr


def test_text_output_reports_wall_time(tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(EFOLDS)
    code, out, _ = _run(capsys, ["efolds", str(cfg), "--output", str(tmp_path / "o"),
                                 "--quiet"])
    assert code == 0
    (line,) = [x for x in out.splitlines() if x.strip().startswith("time ")]
    assert " s on 1 worker(s); wrote " in line


def test_plugin_files_are_named_in_the_provenance(tmp_path, capsys):
    plugin = tmp_path / "nothing.py"
    plugin.write_text("VALUE = 1\n")
    cfg = tmp_path / "run.toml"
    cfg.write_text(SCORE)
    code, out, _ = _run(capsys, ["score", str(cfg), "--json", "--plugin", str(plugin)])
    assert code == 0
    plugins = json.loads(out)["provenance"]["plugins"]
    assert {"path": str(plugin.resolve()),
            "sha256": hashlib.sha256(plugin.read_bytes()).hexdigest()} in plugins


def test_emit_prints_exactly_one_object(capsys):
    from bouncelike.commands._layer import CommandResult, Options, Session

    class Args:
        json = True
        quiet = True
        config = None

    session = Session("constraints", Options(), Args())
    code = cli.emit(CommandResult(data={"a": float("nan")}, text="not shown", exit_code=3,
                                  message="bouncelike: one line"), session)
    out, err = capsys.readouterr()
    data = json.loads(out)
    assert code == 3 and data["a"] is None and "provenance" in data
    assert err == "bouncelike: one line\n"


def test_worker_resolver_knows_mpi(monkeypatch):
    from bouncelike.config import Table
    from bouncelike.parallel import resolve_workers

    for var in ("OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "MPI_LOCALNRANKS", "PMI_RANK"):
        monkeypatch.delenv(var, raising=False)
    table = Table({"workers": 3}, "efolds", ("workers",))
    assert resolve_workers(None) == 1 and resolve_workers(2, table) == 2
    assert resolve_workers(None, table) == 3
    monkeypatch.setenv("OMPI_COMM_WORLD_SIZE", "4")  # under mpiexec -n 4: the ranks count
    assert resolve_workers(None, table) == 4 and resolve_workers(2) == 4
