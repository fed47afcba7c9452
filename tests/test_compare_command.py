"""The ``compare`` command: one table and one figure for several dynamics; bad input exits 2."""

from __future__ import annotations

import json

import pandas as pd

from bouncelike.cli import main

CONFIG = """
[potential]
name = "quadratic"
mass = 1.21e-6

[background]
gamma = 0.2375

[compare]
n_samples = 3
seed = 4
start_density = 1e-16
start_density_decades = 1.0
cases = [
  { label = "LQC", dynamics = "isotropic" },
  { label = "half rho_c", dynamics = "condensate", rescale = 0.5 },
]
shear_ratios = [1e-2]
"""


def test_compare_writes_table_and_figure(tmp_path, capsys):
    cfg = tmp_path / "cmp.toml"
    cfg.write_text(CONFIG)
    out = tmp_path / "out"
    assert main(["compare", str(cfg), "--output", str(out), "--quiet", "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    labels = [c["label"] for c in summary["cases"]]
    assert labels == ["LQC", "half rho_c", "Bianchi I, shear 0.01"]
    table = pd.read_csv(out / "compare_table.csv")
    assert list(table["label"]) == labels
    for name in ("compare.pdf", "compare.png", "compare_summary.json"):
        assert (out / name).stat().st_size > 0
    med = dict(zip(table["label"], table["median"], strict=True))
    # lower critical density: bounce at lower density, fewer e-folds (same draws);
    # strong shear: far fewer (Linsefors & Barrau, CQG 32 (2015) 035010, qualitative)
    assert med["half rho_c"] < med["LQC"]
    assert med["Bianchi I, shear 0.01"] < med["LQC"] - 30


def test_compare_bad_input_exits_2_without_output(tmp_path, capsys):
    cfg = tmp_path / "bad.toml"
    cfg.write_text(CONFIG.replace('dynamics = "isotropic"', 'dynamics = "loopy"'))
    out = tmp_path / "out"
    assert main(["compare", str(cfg), "--output", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "compare.cases[0].dynamics" in err
    assert not out.exists()
