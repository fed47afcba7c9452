"""Parallel likelihood evaluation: process pools and MPI ranks give the serial chain."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from sampling_targets import SETTINGS, gaussian_posterior

from bouncelike.parallel import ProcessPool
from bouncelike.sampling.driver import run_sampler
from bouncelike.sampling.posterior import install_posterior

ROOT = Path(__file__).resolve().parents[1]
TESTS = Path(__file__).resolve().parent


def _same_state(a: Path, b: Path) -> None:
    with np.load(a / "state.npz") as za, np.load(b / "state.npz") as zb:
        assert za.files == zb.files
        for k in za.files:
            np.testing.assert_array_equal(za[k], zb[k], err_msg=k)
    for name in ("chain.csv", "failures.csv"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


@pytest.fixture(scope="module")
def serial_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("serial") / "run"
    # a failing region, so that failure records travel back from the workers too
    run_sampler(gaussian_posterior(fail_above=1.5), SETTINGS, folder, show_progress=False)
    return folder


@pytest.mark.parametrize("installed", [False, True])
def test_process_pool_equals_serial(serial_run, tmp_path, installed):
    post = gaussian_posterior(fail_above=1.5)
    # installed: the pool's initializer gives each worker the posterior; tasks carry points
    pool = ProcessPool(2, install_posterior, (post,)) if installed else ProcessPool(2)
    with pool:
        run_sampler(post, SETTINGS, tmp_path / "pool", pool=pool, show_progress=False)
    _same_state(serial_run, tmp_path / "pool")


def _mpiexec() -> str | None:
    beside = Path(sys.executable).parent / "mpiexec"
    return str(beside) if beside.exists() else shutil.which("mpiexec")


def test_mpi_run_equals_serial(serial_run, tmp_path):
    mpiexec = _mpiexec()
    if mpiexec is None:
        pytest.skip("mpiexec not found (install an MPI launcher, e.g. 'pip install mpich')")
    folder = tmp_path / "mpi"
    code = (f"import sys; sys.path[:0] = [{str(ROOT)!r}, {str(TESTS)!r}]\n"
            "from bouncelike.parallel import make_pool, MPIPool\n"
            "from sampling_targets import SETTINGS, gaussian_posterior\n"
            "from bouncelike.sampling.driver import run_sampler\n"
            "from bouncelike.sampling.posterior import install_posterior\n"
            "post = gaussian_posterior(fail_above=1.5)\n"
            "pool = make_pool(1, initializer=install_posterior, initargs=(post,))\n"
            "assert isinstance(pool, MPIPool) and pool.workers == 2, type(pool)\n"
            f"run_sampler(post, SETTINGS, {str(folder)!r}, pool=pool, show_progress=False)\n"
            "pool.close()\n")
    proc = subprocess.run([mpiexec, "-n", "2", sys.executable, "-c", code],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
    _same_state(serial_run, folder)
