"""A configuration file is data: it never chooses code to run, nor where outside the working
folder to write. User potentials come from code the user chose to run (a plugin file named on
the command line, or a Python call), and that code is named in the outputs' provenance."""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from bouncelike.background import potentials as P
from bouncelike.config import Table
from bouncelike.errors import InputError
from bouncelike.sampling.setup import build_run

REPO = Path(__file__).resolve().parents[1]

# the configuration of the audit: a "custom" potential naming os:system with a shell command
AUDIT = """
[model]
spectra = "bounce"

[potential]
name = "custom"
object = "os:system"
arguments = {{ command = "touch {marker}" }}

[background]
start = "bounce"

[background.bounce]
potential_fraction = 1e-11

[reheating]
N_star = 55.0

[efolds]
n_samples = 2
convergence_samples = 0

[compare]
n_samples = 2
cases = [{{ label = "iso", dynamics = "isotropic" }}]
"""


def _cli(args, cwd):
    return subprocess.run([sys.executable, "-m", "bouncelike", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=300,
                          env={"PYTHONPATH": str(REPO), "PATH": "/usr/bin:/bin"})


@pytest.mark.parametrize("command", ["score", "spectrum", "efolds", "compare"])
def test_audit_config_runs_nothing_and_exits_2(tmp_path, command):
    marker = tmp_path / "pwned"
    cfg = tmp_path / "audit.toml"
    cfg.write_text(AUDIT.format(marker=marker))
    extra = [] if command == "score" else ["--output", str(tmp_path / "out")]
    proc = _cli([command, str(cfg), *extra], tmp_path)
    assert proc.returncode == 2
    assert not marker.exists()
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "potential.name" in lines[0] and "--plugin" in lines[0]
    assert "Traceback" not in proc.stderr
    assert not (tmp_path / "out").exists()


def test_config_cannot_name_an_object_even_for_a_registered_name():
    P.register_potential("cosh_test_a", _Cosh, {"scale": (0.0, None)}, origin="test")
    try:
        raw = {"potential": {"name": "cosh_test_a", "scale": 1e-12, "object": "os:system"}}
        with pytest.raises(InputError, match="potential.object"):
            P.potential_from_config(Table(raw, "", ("potential",)))
    finally:
        P.REGISTERED.pop("cosh_test_a")


class _Cosh:
    def __init__(self, scale):
        self.scale = scale

    def V(self, phi):
        return self.scale * (np.cosh(phi) - 1.0)

    def dV(self, phi):
        return self.scale * np.sinh(phi)

    def d2V(self, phi):
        return self.scale * np.cosh(phi)


def test_registered_potential_is_selected_by_name_with_numeric_parameters():
    P.register_potential("cosh_test_b", _Cosh, {"scale": (0.0, 1.0)}, origin="test")
    try:
        pot = P.potential_from_config(Table({"potential": {"name": "cosh_test_b",
                                                           "scale": 2e-12}}, "", ("potential",)))
        assert float(pot.V(1.0)) == pytest.approx(2e-12 * (math.cosh(1.0) - 1.0))
        assert pot.parameters == {"scale": 2e-12, "registered_by": "test"}
        bad_inputs = (({"scale": "x"}, "potential.scale"), ({"scale": 5.0}, "potential.scale"),
                      ({}, "potential.scale"), ({"scale": 1e-12, "mass": 1.0}, "potential.mass"))
        for bad, key in bad_inputs:
            with pytest.raises(InputError, match=key.replace(".", r"\.")):
                P.potential_from_config(Table({"potential": {"name": "cosh_test_b", **bad}},
                                              "", ("potential",)))
    finally:
        P.REGISTERED.pop("cosh_test_b")
    with pytest.raises(ValueError, match="built in"):
        P.register_potential("quadratic", _Cosh)


PLUGIN = '''
import numpy as np
from bouncelike.background.potentials import register_potential


class Quartic:
    """V = lambda phi^4 / 4."""

    def __init__(self, coupling):
        self.coupling = coupling

    def V(self, phi):
        return 0.25 * self.coupling * np.asarray(phi) ** 4

    def dV(self, phi):
        return self.coupling * np.asarray(phi) ** 3

    def d2V(self, phi):
        return 3.0 * self.coupling * np.asarray(phi) ** 2


register_potential("quartic_plugin", Quartic, {"coupling": (0.0, None)})
'''


def test_plugin_file_on_the_command_line_registers_and_is_named(tmp_path):
    plugin = tmp_path / "my_potentials.py"
    plugin.write_text(PLUGIN)
    cfg = tmp_path / "run.toml"
    cfg.write_text('[potential]\nname = "quartic_plugin"\ncoupling = 1e-3\n\n'
                   '[background.integration]\nmax_inflation_efolds = 30.0\n\n'
                   '[efolds]\nn_samples = 2\nconvergence_samples = 0\n')
    without = _cli(["efolds", str(cfg), "--output", str(tmp_path / "a"), "--quiet"], tmp_path)
    assert without.returncode == 2 and "quartic_plugin" in without.stderr
    proc = _cli(["efolds", str(cfg), "--output", str(tmp_path / "b"), "--quiet", "--json",
                 "--plugin", str(plugin)], tmp_path)
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    import hashlib

    digest = hashlib.sha256(plugin.read_bytes()).hexdigest()
    plugins = out["provenance"]["plugins"]
    assert plugins == [{"path": str(plugin.resolve()), "sha256": digest}]
    summary = json.loads((tmp_path / "b" / "efolds_summary.json").read_text())
    assert summary["provenance"]["plugins"] == plugins


def test_broken_plugin_is_one_line(tmp_path):
    plugin = tmp_path / "broken.py"
    plugin.write_text("raise RuntimeError('boom')\n")
    cfg = tmp_path / "run.toml"
    cfg.write_text('[potential]\nname = "quadratic"\nmass = 1e-6\n')
    proc = _cli(["efolds", str(cfg), "--plugin", str(plugin)], tmp_path)
    assert proc.returncode == 2
    assert proc.stderr.strip() == (f"bouncelike: error: --plugin '{plugin}' failed while "
                                   "loading: RuntimeError: boom")


@pytest.mark.parametrize("value", ["/tmp/elsewhere", "../outside", "chains/../../x", ""])
def test_chains_dir_from_config_must_stay_in_the_working_folder(tmp_path, monkeypatch, value):
    monkeypatch.chdir(tmp_path)
    cfg = tmp_path / "run.toml"
    cfg.write_text('[likelihood]\nsets = ["planck2018_base", "bk18"]\n\n'
                   f'[sampling]\nprior = "power_law"\nchains_dir = "{value}"\n')
    with pytest.raises(InputError, match="sampling.chains_dir.*--output"):
        build_run(cfg)
    # the command line may choose any place
    setup = build_run(cfg, output=tmp_path / "anywhere")
    assert setup.folder == tmp_path / "anywhere"


def test_chains_dir_symlink_out_of_the_working_folder_is_refused(tmp_path, monkeypatch):
    work = tmp_path / "work"
    work.mkdir()
    (work / "link").symlink_to(tmp_path)
    monkeypatch.chdir(work)
    cfg = work / "run.toml"
    cfg.write_text('[sampling]\nprior = "power_law"\nchains_dir = "link"\n')
    with pytest.raises(InputError, match="sampling.chains_dir"):
        build_run(cfg)
    cfg.write_text('[sampling]\nprior = "power_law"\nchains_dir = "runs/mine"\n')
    assert build_run(cfg).folder == Path("runs/mine/run")
