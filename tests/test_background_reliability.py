"""Budgets, physical ranges and interruptions of the background engine: every integration ends
with a status and a one-line reason, never a hang (the three configurations below each hung
for minutes, and Ctrl-C was ignored inside compiled loops, before the engine ran in chunks).

Hang checks run the command line in a subprocess with a timeout, so a regression fails the
test instead of freezing the suite.
"""

from __future__ import annotations

import math
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from cli_helpers import one_line_error

from bouncelike.background.bianchi import BianchiIDynamics
from bouncelike.background.initial import ContractingStart, IntegrationSettings
from bouncelike.background.isotropic import IsotropicDynamics
from bouncelike.background.potentials import CustomPotential, Quadratic
from bouncelike.errors import InputError

ROOT = Path(__file__).resolve().parents[1]
MASS = 1.21e-6  # Linsefors & Barrau, Phys. Rev. D 87 (2013) 123509


def _cli(args: list[str], cwd: Path, timeout: float) -> subprocess.CompletedProcess:
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OMP_NUM_THREADS": "1"}
    return subprocess.run([sys.executable, "-m", "bouncelike", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=timeout)


def _spectrum_config(path: Path, background: str) -> Path:
    path.write_text('[model]\nspectra = "bounce"\n[potential]\nname = "quadratic"\n'
                    f'mass = 1.2e-6\n[background]\ndynamics = "isotropic"\nstart = "bounce"\n'
                    f'{background}\n[reheating]\nN_star = 55.0\n[likelihood]\n'
                    'sets = ["planck2018_base"]\n')
    return path


def test_bounce_with_all_energy_in_the_potential_ends_with_one_line(tmp_path):
    # x_V = 1: no kinetic energy at the bounce; the time-reversed contracting branch inflates
    # (deflates) for longer than any cap, so the remote past cannot be reached. Once a hang in
    # the past integration; now a one-line numerical failure.
    cfg = _spectrum_config(tmp_path / "x1.toml", "[background.bounce]\npotential_fraction = 1.0")
    out = _cli(["score", str(cfg)], tmp_path, timeout=120)
    assert out.returncode == 1
    one_line_error(out.stderr)
    assert "contracting branch" in out.stderr and "potential-dominated" in out.stderr


def test_critical_density_outside_its_physical_range_is_refused(tmp_path):
    cfg = _spectrum_config(tmp_path / "rc.toml", "critical_density = 1e-300\n"
                           "[background.bounce]\npotential_fraction = 1e-11")
    out = _cli(["score", str(cfg)], tmp_path, timeout=120)
    assert out.returncode == 2
    assert "'background.critical_density' = 1e-300 is out of range" in out.stderr
    assert "allowed: >= 1e-10 and <= 1e+06 Planck density" in out.stderr
    with pytest.raises(InputError, match="critical_density"):
        IsotropicDynamics(1e-300)


def test_huge_shear_is_refused_before_any_integration(tmp_path):
    cfg = tmp_path / "shear.toml"
    cfg.write_text('[potential]\nname = "quadratic"\nmass = 1.21e-6\n[background]\n'
                   'dynamics = "bianchi_i"\n[background.bianchi_i]\nshear_ratio = 1e100\n'
                   '[efolds]\nn_samples = 10\n')
    out = _cli(["efolds", str(cfg), "--output", str(tmp_path / "out"), "--quiet"], tmp_path,
               timeout=120)
    assert out.returncode == 2
    assert "shear_ratio" in out.stderr and "allowed" in out.stderr
    assert not (tmp_path / "out").exists()


def test_ctrl_c_interrupts_a_long_compiled_integration(tmp_path):
    # a Bianchi I run from rho_0 = 1e-40 needs millions of steps (about 4e12 field oscillations
    # before the bounce); Ctrl-C must stop it within a second, not after the compiled loop
    script = tmp_path / "long.py"
    script.write_text(textwrap.dedent("""
        from bouncelike.background.bianchi import BianchiIDynamics
        from bouncelike.background.initial import ContractingStart, IntegrationSettings
        from bouncelike.background.potentials import Quadratic
        from bouncelike.units import critical_density
        dyn = BianchiIDynamics(critical_density())
        pot = Quadratic(1.21e-6)
        dyn.evolve_summary(pot, ContractingStart(1e-10, 0.1), IntegrationSettings(max_time=1e3))
        print("started", flush=True)
        dyn.evolve_summary(pot, ContractingStart(1e-40, 0.3))
        print("finished", flush=True)
    """))
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OMP_NUM_THREADS": "1"}
    proc = subprocess.Popen([sys.executable, str(script)], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=env)
    try:
        assert proc.stdout.readline().strip() == "started"
        time.sleep(0.3)
        proc.send_signal(signal.SIGINT)
        sent = time.monotonic()
        _, err = proc.communicate(timeout=60)
        elapsed = time.monotonic() - sent
    finally:
        proc.kill()
    assert "KeyboardInterrupt" in err
    assert elapsed < 1.0


def test_budgets_end_a_run_with_the_physical_state():
    dyn = IsotropicDynamics()
    pot = Quadratic(MASS)
    s = dyn.evolve_summary(pot, ContractingStart(1e-16, 0.3), IntegrationSettings(max_steps=200))
    assert s.status == "failed" and s.reason == "step_budget"
    assert "budget of 200 accepted steps" in s.message
    assert "rho = " in s.message and "t = " in s.message
    # 4e12 oscillations before the bounce: only the wall-clock budget ends it
    t0 = time.monotonic()
    s = dyn.evolve_summary(pot, ContractingStart(1e-40, 0.3),
                           IntegrationSettings(max_steps=10**9, max_seconds=0.3))
    assert time.monotonic() - t0 < 5.0
    assert s.status == "failed" and s.reason == "wall_budget"
    assert "wall-clock budget of 0.3 s" in s.message and "rho = " in s.message


def test_numerical_failure_carries_a_physical_reason():
    # a user potential defined only for phi < 1 (Python raises beyond): the field, kicked at
    # phi = 0 in the contracting branch, runs past phi = 1 through the bounce; the uncompiled
    # engine reports where the state left the domain, not the Python exception
    class Fenced:
        m2 = 1e-4

        def V(self, phi):
            return 0.5 * self.m2 * phi**2 * (1.0 + 0.0 * math.sqrt(1.0 - float(phi)))

        def dV(self, phi):
            return self.m2 * phi

        def d2V(self, phi):
            return self.m2 + 0.0 * phi

    pot = CustomPotential(Fenced(), "test:Fenced")
    s = IsotropicDynamics().evolve_summary(pot, ContractingStart(1e-3, 0.0))
    assert s.status == "failed" and s.reason == "nonfinite"
    assert "left the range where this dynamics is defined" in s.message
    assert "rho = " in s.message
    assert "domain" not in s.message and "division" not in s.message


@pytest.mark.parametrize("make, key", [
    (lambda: Quadratic(1.0), "potential.mass"),
    (lambda: IsotropicDynamics(1e7), "critical_density"),
    (lambda: BianchiIDynamics(shear_ratio=5e13), "shear_ratio"),
])
def test_physical_ranges_are_checked_up_front(make, key):
    with pytest.raises(InputError, match=key):
        make()


def test_batch_runs_keep_the_budgets_per_run():
    # the e-fold distributions run many draws in one compiled loop: a draw that would take
    # millions of steps ends at its own wall-clock budget, the others are unaffected
    dyn = IsotropicDynamics()
    pot = Quadratic(MASS)
    starts = [ContractingStart(1e-16, 0.3), ContractingStart(1e-40, 0.3),
              ContractingStart(1e-16, 2.0)]
    out = dyn.evolve_summaries(pot, starts, IntegrationSettings(max_steps=10**9,
                                                                max_seconds=0.3))
    assert [s.status for s in out] == ["inflated", "failed", "inflated"]
    assert out[1].reason == "wall_budget"
    single = dyn.evolve_summary(pot, starts[2])
    assert out[2].inflationary_efolds == single.inflationary_efolds
