"""Run folders under faults: locks, damaged files, interruptions, orphans, sets of outputs."""

from __future__ import annotations

import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from config_texts import SMALL_REPORT
from sampling_targets import SETTINGS, gaussian_posterior

from bouncelike.cli import main
from bouncelike.errors import InputError
from bouncelike.io import output_set, write_text_atomic
from bouncelike.sampling.driver import run_sampler
from bouncelike.sampling.lock import process_start
from bouncelike.sampling.storage import read_state

ROOT = Path(__file__).resolve().parents[1]

RUN = """
[likelihood]
sets = ["planck2018_base"]

[sampling]
prior = "power_law"
walkers = 8
max_steps = 120
min_steps = 120
checkpoint_every = 60
seed = 3
progress = false
prior_survey_draws = 20

""" + SMALL_REPORT


def _one_line_error(capsys, needle: str) -> str:
    err = capsys.readouterr().err.strip()
    assert err.startswith("bouncelike: error: ") and "\n" not in err, err
    assert needle in err, err
    return err


@pytest.fixture(scope="module")
def finished_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("finished")
    (tmp / "run.toml").write_text(RUN)
    assert main(["sample", str(tmp / "run.toml"), "--output", str(tmp / "run"), "--quiet"]) == 0
    return tmp / "run"


@pytest.fixture
def run_copy(finished_run, tmp_path):
    folder = tmp_path / "run"
    shutil.copytree(finished_run, folder)
    return folder


# -- locks ----------------------------------------------------------------------------------

@pytest.mark.parametrize("text", ["", "\x00\x17 garbage", "{\"pid\": 12", "12 13 14"])
def test_empty_or_garbage_lock_is_stale(tmp_path, text):
    folder = tmp_path / "run"
    folder.mkdir()
    (folder / ".lock").write_text(text)
    result = run_sampler(gaussian_posterior(), SETTINGS, folder, show_progress=False)
    assert result.steps > 0 and not (folder / ".lock").exists()


def test_lock_whose_pid_now_belongs_to_another_process_is_stale(tmp_path):
    if process_start(os.getpid()) is None:
        pytest.skip("process start times are read from /proc (Linux)")
    folder = tmp_path / "run"
    folder.mkdir()
    other = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        boot, tick = process_start(other.pid).split(":")
        lock = {"pid": other.pid, "host": socket.gethostname(),
                "process_start": f"{boot}:{int(tick) - 1000}", "since": "earlier"}
        (folder / ".lock").write_text(json.dumps(lock))
        run_sampler(gaussian_posterior(), SETTINGS, folder, show_progress=False)
        assert not (folder / ".lock").exists()
    finally:
        other.kill()
        other.wait()


def test_lock_of_another_host_is_refused_with_the_way_out(tmp_path):
    folder = tmp_path / "run"
    folder.mkdir()
    lock = {"pid": 4242, "host": "elsewhere.example", "process_start": None, "since": "noon"}
    (folder / ".lock").write_text(json.dumps(lock))
    with pytest.raises(InputError) as err:
        run_sampler(gaussian_posterior(), SETTINGS, folder, show_progress=False)
    text = str(err.value)
    assert "process 4242 on host 'elsewhere.example' since noon" in text
    assert f"rm '{folder / '.lock'}'" in text
    assert sorted(p.name for p in folder.iterdir()) == [".lock"]


def test_refusals_suggest_what_applies(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "run.toml").write_text(RUN)
    lock = json.dumps({"pid": 1, "host": "elsewhere.example"})
    for args, where, hint in ((["--output", "out"], Path("out"), "give another --output"),
                              ([], Path("chains") / "run", "choose another sampling.run_name")):
        where.mkdir(parents=True)
        (where / ".lock").write_text(lock)
        assert main(["sample", "run.toml", "--quiet", *args]) == 2
        err = _one_line_error(capsys, hint)
        assert ("run_name" in err) == (not args)


# -- damaged run folders --------------------------------------------------------------------

@pytest.mark.parametrize("damage, needle", [
    (lambda f: (f / "state.npz").write_bytes((f / "state.npz").read_bytes()[:300]),
     "state.npz' is damaged (truncated or not a checkpoint"),
    (lambda f: (f / "state.npz").write_bytes(b""), "state.npz' is damaged (empty"),
    (lambda f: np.savez(f / "state.npz", state_coords=np.zeros((8, 3))),
     "state.npz' was written by an older bouncelike"),
    (lambda f: (f / "chain.csv").write_text("step,walker\n"), "chain.csv' is shorter than its "
     "checkpoint says"),
])
def test_resume_from_a_damaged_checkpoint(run_copy, capsys, damage, needle):
    damage(run_copy)
    cfg = run_copy.parent / "run.toml"
    cfg.write_text(RUN.replace("max_steps = 120", "max_steps = 180"))
    assert main(["sample", str(cfg), "--output", str(run_copy), "--resume", "--quiet"]) == 2
    err = _one_line_error(capsys, needle)
    assert "start the run again" in err and "--output" in err


def _edit_manifest(folder, edit):
    m = json.loads((folder / "manifest.json").read_text())
    (folder / "manifest.json").write_text(json.dumps(edit(m)))


def _drop_column(path, column):
    import pandas as pd

    pd.read_csv(path).drop(columns=[column]).to_csv(path, index=False)


@pytest.mark.parametrize("damage, needle", [
    (lambda f: _edit_manifest(f, lambda m: {k: v for k, v in m.items() if k != "config"}),
     "manifest.json' is damaged: it lacks entry 'config'; rewrite it with 'bouncelike sample"),
    (lambda f: _edit_manifest(f, lambda m: [m]), "holds a JSON list"),
    (lambda f: (f / "samples.csv").unlink() or (f / "chain.csv").write_bytes(
        np.random.default_rng(1).bytes(4000)), "chain.csv' is not a text table (damaged"),
    (lambda f: (f / "samples.csv").write_text(
        (f / "samples.csv").read_text().splitlines()[0] + "\n"),
     "samples.csv' holds no rows, only its header (damaged"),
    (lambda f: (f / "samples.csv").unlink() or _drop_column(f / "chain.csv", "log_posterior"),
     "chain.csv' lacks the column(s) log_posterior"),
])
def test_report_on_a_damaged_run_folder(run_copy, capsys, damage, needle):
    damage(run_copy)
    assert main(["report", str(run_copy), "--quiet"]) == 2
    _one_line_error(capsys, needle)
    assert not (run_copy / "report").exists()


@pytest.mark.parametrize("table", ["samples.csv", "chain.csv"])
def test_report_says_the_cut_last_row_was_dropped(run_copy, capsys, table):
    if table == "chain.csv":
        (run_copy / "samples.csv").unlink()
    text = (run_copy / table).read_text()
    (run_copy / table).write_text(text[:-25])  # cut mid-line
    assert main(["report", str(run_copy), "--quiet"]) == 0
    err = capsys.readouterr().err
    note = f"the last row of '{run_copy / table}' was incomplete (cut mid-line) and was dropped"
    assert err.strip() == f"bouncelike: note: {note}"
    assert note in (run_copy / "report" / "verdicts.md").read_text()


# -- orphans, refused starts, sets of files -------------------------------------------------

def test_resume_removes_orphan_temporary_files(tmp_path):
    folder = tmp_path / "run"
    run_sampler(gaussian_posterior(), SETTINGS, folder, show_progress=False, stop_after=70)
    # what a writer killed between creating and renaming its temporary file leaves
    for name in (".state.npz.k2j4l.tmp", ".chain.csv.x9q.tmp", ".lock.999999.tmp"):
        (folder / name).write_text("partial")
    (folder / ".staging-999999-ab12").mkdir()
    run_sampler(gaussian_posterior(), SETTINGS, folder, show_progress=False, resume=True)
    assert sorted(p.name for p in folder.iterdir() if p.name.startswith(".")) == []


def test_refused_start_leaves_no_folder(tmp_path):
    folder = tmp_path / "chains" / "run"
    with pytest.raises(InputError, match="could not place 12 walkers"):
        run_sampler(gaussian_posterior(fail_above=-100.0), SETTINGS, folder,
                    show_progress=False)
    assert list(tmp_path.iterdir()) == []


def test_output_set_is_written_whole_or_not_at_all(tmp_path):
    out = tmp_path / "out"
    with output_set(out) as files:
        write_text_atomic(out / "a.txt", "one")
        write_text_atomic(out / "sub" / "b.txt", "two")
        assert not (out / "a.txt").exists()  # staged until the set is complete
    assert files.files == [out / "a.txt", out / "sub" / "b.txt"]
    assert (out / "sub" / "b.txt").read_text() == "two"
    with pytest.raises(RuntimeError), output_set(out):  # an error: nothing changes
        write_text_atomic(out / "a.txt", "new")
        raise RuntimeError("failed while computing the next file")
    (out / "c.txt").mkdir()
    with pytest.raises(InputError, match="a folder '.*c.txt' is in the way"), output_set(out):
        write_text_atomic(out / "a.txt", "new")
        write_text_atomic(out / "c.txt", "three")
    assert (out / "a.txt").read_text() == "one"
    assert sorted(p.name for p in out.iterdir()) == ["a.txt", "c.txt", "sub"]
    with pytest.raises(RuntimeError), output_set(tmp_path / "fresh"):
        write_text_atomic(tmp_path / "fresh" / "x.txt", "x")
        raise RuntimeError
    assert not (tmp_path / "fresh").exists()  # a folder the set created goes again


EFOLDS = """
[potential]
name = "quadratic"
mass = 1.21e-6

[efolds]
n_samples = 8
seed = 4
start_density = 1e-15
start_density_decades = 1.0
convergence_samples = 0
"""


def test_efolds_with_a_folder_in_the_way_writes_nothing(tmp_path, capsys):
    (tmp_path / "run.toml").write_text(EFOLDS)
    out = tmp_path / "out"
    (out / "efolds.png").mkdir(parents=True)
    assert main(["efolds", str(tmp_path / "run.toml"), "--output", str(out), "--quiet"]) == 2
    _one_line_error(capsys, f"cannot write '{out / 'efolds.png'}': a folder")
    assert [p.name for p in out.iterdir()] == ["efolds.png"]


# -- constraint-set files -------------------------------------------------------------------

def test_report_rebuilds_user_set_files_from_the_manifest(tmp_path, capsys, monkeypatch):
    data = ROOT / "bouncelike" / "likelihood" / "data" / "planck2018_base.toml"
    cfgdir = tmp_path / "config"
    cfgdir.mkdir()
    (cfgdir / "myset.toml").write_text(data.read_text().replace(
        'name = "planck2018_base"', 'name = "myset"'))
    (cfgdir / "run.toml").write_text(RUN.replace('sets = ["planck2018_base"]',
                                                 'files = ["myset.toml"]'))
    run = tmp_path / "run"
    assert main(["sample", str(cfgdir / "run.toml"), "--output", str(run), "--quiet"]) == 0
    m = json.loads((run / "manifest.json").read_text())
    (src,) = m["likelihood_sources"]
    assert src["path"] == str((cfgdir / "myset.toml").resolve()) and not src["shipped"]
    assert 'name = "myset"' in src["text"] and len(src["sha256"]) == 64
    (cfgdir / "myset.toml").unlink()  # the report needs only the run folder
    other = tmp_path / "elsewhere"
    other.mkdir()
    monkeypatch.chdir(other)
    capsys.readouterr()
    assert main(["report", str(run), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["constraint_sets"] == ["myset"]


# -- Ctrl-C with worker processes -----------------------------------------------------------

INTERRUPTED = RUN.replace("walkers = 8", "walkers = 32").replace(
    "max_steps = 120", "max_steps = 1500").replace("min_steps = 120", "min_steps = 1500").replace(
    "checkpoint_every = 60", "checkpoint_every = 100").replace(
    'sets = ["planck2018_base"]', 'sets = ["planck2018_base", "bk18"]')


@pytest.fixture(scope="module")
def uninterrupted(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("whole")
    (tmp / "run.toml").write_text(INTERRUPTED)
    assert main(["sample", str(tmp / "run.toml"), "--output", str(tmp / "run"), "--quiet"]) == 0
    return tmp / "run"


@pytest.mark.slow
@pytest.mark.parametrize("delay", [0.0, 0.37])
def test_ctrl_c_with_two_workers(tmp_path, uninterrupted, delay):
    (tmp_path / "run.toml").write_text(INTERRUPTED)
    folder = tmp_path / "run"
    cmd = [sys.executable, "-m", "bouncelike", "sample", str(tmp_path / "run.toml"),
           "--output", str(folder), "--workers", "2", "--quiet"]
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OMP_NUM_THREADS": "1"}
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env=env, start_new_session=True)  # its own process group
    deadline = time.time() + 120
    while time.time() < deadline and proc.poll() is None:
        try:
            if int(read_state(folder)["steps"]) >= 100:
                break
        except (InputError, FileNotFoundError):
            pass
        time.sleep(0.02)
    time.sleep(delay)
    assert proc.poll() is None, "the run ended before it could be interrupted"
    os.killpg(proc.pid, signal.SIGINT)  # Ctrl-C in a terminal: the whole group
    try:
        out, err = proc.communicate(timeout=60)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        pytest.fail("the interrupted run hung")
    assert proc.returncode == 130
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("bouncelike: interrupted: stopped after "
                                                   "step "), err
    assert "--resume" in lines[0]
    assert not (folder / ".lock").exists()
    steps = int(read_state(folder)["steps"])
    assert 100 <= steps < 1500
    resumed = subprocess.run(cmd + ["--resume"], capture_output=True, text=True, env=env,
                             timeout=300)
    assert resumed.returncode == 0, resumed.stderr
    for name in ("chain.csv", "samples.csv", "failures.csv"):
        assert (folder / name).read_bytes() == (uninterrupted / name).read_bytes(), name
    with np.load(folder / "state.npz") as a, np.load(uninterrupted / "state.npz") as b:
        assert a.files == b.files
        for k in a.files:
            np.testing.assert_array_equal(a[k], b[k], err_msg=k)


def test_report_reads_prior_texts_with_the_earlier_key_names(run_copy, capsys):
    # a run made before the walkers' keys were renamed keeps 'start' in its stored prior text
    _edit_manifest(run_copy, lambda m: {**m, "prior_file_text": m["prior_file_text"].replace(
        "walkers_centre", "start").replace("walkers_spread", "start_width")})
    assert "start_width" in json.loads((run_copy / "manifest.json").read_text())[
        "prior_file_text"]
    assert main(["report", str(run_copy), "--quiet"]) == 0
    assert (run_copy / "report" / "verdicts.json").is_file()
