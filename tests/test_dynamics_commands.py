"""Every dynamics through ``bouncelike efolds`` (1 and 2 workers, bit-identical for a seed) and
``bouncelike compare``; the outputs name the dynamics' conventions."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from bouncelike.cli import main

BASE = """
[potential]
name = "quadratic"
mass = 1.21e-6

[background]
gamma = 0.2375
dynamics = "{dynamics}"
{extra}

[efolds]
n_samples = 30
seed = 3
start_density = {density}
start_density_decades = 1.0
convergence_samples = 3
bins = 8
"""

DYNAMICS = {
    "isotropic": ("", 1e-16),
    "condensate": ("[background.condensate]\nrescale = 0.8\ncondensate_term = 1e-12", 1e-16),
    "bianchi_i": ("[background.bianchi_i]\nshear_ratio = 1e-3\ndirection = 20.0", 1e-16),
    "asymmetric": ("", 1e-10),
}


def _efolds(tmp_path, capsys, name, workers, density=None):
    extra, dens = DYNAMICS[name]
    cfg = tmp_path / f"{name}.toml"
    cfg.write_text(BASE.format(dynamics=name, extra=extra, density=density or dens))
    out = tmp_path / f"{name}-{workers}"
    assert main(["efolds", str(cfg), "--output", str(out), "--json", "--quiet",
                 "--workers", str(workers)]) == 0
    result = json.loads(capsys.readouterr().out)
    return result, pd.read_csv(out / "efolds_samples.csv")


@pytest.mark.parametrize("name", sorted(DYNAMICS))
def test_every_dynamics_through_efolds_identical_for_any_worker_count(tmp_path, capsys, name):
    one, frame1 = _efolds(tmp_path, capsys, name, 1)
    two, frame2 = _efolds(tmp_path, capsys, name, 2)
    assert two["workers"] == 2
    assert one["status_counts"]["failed"] == 0
    assert one["status_counts"]["inflated"] > 0
    pd.testing.assert_frame_equal(frame1, frame2, check_exact=True)
    for key in ("median", "mode", "percentiles", "convergence", "max_constraint_residual"):
        assert one[key] == two[key]
    # the conventions of the dynamics travel with the result
    assert one["dynamics"] and one["settings"]["dynamics"] == name
    assert one["max_constraint_residual"] < 1e-6


def test_efolds_output_names_conventions_and_warns_only_where_it_applies(tmp_path, capsys):
    """The asymmetric contracting branch is de Sitter-like (Li, Singh & Wang,
    arXiv:1801.07313): the field does not oscillate, so no H/omega warning; the isotropic
    dynamics at the same high density (H/omega ~ 24) does get it."""
    cfg = tmp_path / "asymmetric.toml"
    cfg.write_text(BASE.format(dynamics="asymmetric", extra="", density=1e-10)
                   .replace("n_samples = 30", "n_samples = 4"))
    assert main(["efolds", str(cfg), "--output", str(tmp_path / "a"), "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "dynamics conventions" in text and "de Sitter" in text
    assert "contracting_start" in text and "H/omega" not in text

    result, _ = _efolds(tmp_path, capsys, "asymmetric", 1)
    assert result["field_oscillates_before_bounce"] is False
    assert result["hubble_to_frequency_at_start"] is None  # NaN -> null: does not apply
    assert "de Sitter" in result["dynamics"]["contracting_start"]

    result, _ = _efolds(tmp_path, capsys, "bianchi_i", 1)
    assert result["dynamics"]["shear_ratio"] == 1e-3
    assert result["dynamics"]["direction_degrees"] == 20.0

    cfg = tmp_path / "iso.toml"
    cfg.write_text(BASE.format(dynamics="isotropic", extra="", density=1e-10)
                   .replace("n_samples = 30", "n_samples = 4")
                   .replace("convergence_samples = 3", "convergence_samples = 0"))
    assert main(["efolds", str(cfg), "--output", str(tmp_path / "i"), "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "warning: H/omega" in text and "dynamics conventions" in text


COMPARE = """
[potential]
name = "quadratic"
mass = 1.21e-6

[background]
gamma = 0.2375

[compare]
n_samples = 30
seed = 2
start_density = 1e-16
start_density_decades = 1.0
cases = [
  { label = "LQC", dynamics = "isotropic" },
  { label = "condensate q", dynamics = "condensate", rescale = 0.8, condensate_term = 1e-12 },
  { label = "asymmetric", dynamics = "asymmetric" },
]
shear_ratios = [1e-3]
"""


def test_every_dynamics_through_compare_identical_for_any_worker_count(tmp_path, capsys):
    cfg = tmp_path / "cmp.toml"
    cfg.write_text(COMPARE)
    tables = []
    for workers in (1, 2):
        out = tmp_path / f"out{workers}"
        assert main(["compare", str(cfg), "--output", str(out), "--quiet", "--json",
                     "--workers", str(workers)]) == 0
        summary = json.loads(capsys.readouterr().out)
        assert [c["dynamics"] for c in summary["cases"]] == [
            "isotropic", "condensate", "asymmetric", "bianchi_i"]
        tables.append(pd.read_csv(out / "compare_table.csv").drop(columns=["seconds"]))
    pd.testing.assert_frame_equal(tables[0], tables[1], check_exact=True)
    assert np.all(tables[0]["n_failed"] == 0)
