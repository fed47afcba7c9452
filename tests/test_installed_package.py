"""The package as a user installs it: a wheel in a fresh virtual environment, run elsewhere.

Shipped data (prior files, constraint sets, transfer tables) must come with the wheel, not
from the source tree. The wheel is built from a copy of the sources without build isolation
and installed without dependencies into a virtual environment that sees this interpreter's
packages (numpy, emcee, ...), so nothing is downloaded.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SKIP = shutil.ignore_patterns(".git", "__pycache__", "*.egg-info", "build", "dist", "chains",
                              "bouncelike-out", ".pytest_cache", ".ruff_cache", "*.nbi",
                              "*.nbc", "tests", "benchmarks")

RUN = """
[likelihood]
sets = ["planck2018_base"]

[sampling]
prior = "power_law"
walkers = 8
max_steps = 20
min_steps = 20
checkpoint_every = 10
progress = false
prior_survey_draws = 10
"""


def _run(cmd, **kw):
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=600, **kw)
    assert proc.returncode == 0, (cmd, proc.stdout[-2000:], proc.stderr[-2000:])
    return proc


@pytest.mark.slow
def test_sample_from_an_installed_wheel(tmp_path):
    src = tmp_path / "src"
    shutil.copytree(ROOT, src, ignore=SKIP)
    _run([sys.executable, "-m", "pip", "wheel", str(src), "--no-deps", "--no-build-isolation",
          "--no-index", "-q", "-w", str(tmp_path / "dist")])
    (wheel,) = (tmp_path / "dist").glob("bouncelike-*.whl")
    venv = tmp_path / "venv"
    _run([sys.executable, "-m", "venv", "--system-site-packages", str(venv)])
    python = venv / "bin" / "python"
    _run([str(python), "-m", "pip", "install", "--no-deps", "--no-index", "-q", str(wheel)])
    work = tmp_path / "work"
    work.mkdir()
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    where = _run([str(python), "-c", "import bouncelike; print(bouncelike.__file__)"],
                 cwd=work, env=env).stdout.strip()
    assert Path(where).is_relative_to(venv), where  # the installed copy, not the sources
    (work / "run.toml").write_text(RUN)
    _run([str(venv / "bin" / "bouncelike"), "sample", "run.toml", "--quiet"], cwd=work,
         env=env)
    assert (work / "chains" / "run" / "samples.csv").is_file()
    (work / "bad.toml").write_text(RUN.replace('"power_law"', '"no_such_prior"'))
    bad = subprocess.run([str(venv / "bin" / "bouncelike"), "sample", "bad.toml"], cwd=work,
                         env=env, capture_output=True, text=True, timeout=300)
    assert bad.returncode == 2
    assert "give a path or one of: bounce_deformed_algebra, " in bad.stderr  # shipped priors
