"""The demo (the README's first command) end to end."""

from __future__ import annotations

import json

import pandas as pd
import pytest
from cli_helpers import check_provenance

from bouncelike.cli import main


@pytest.mark.slow
def test_demo_runs_end_to_end(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["demo", "--output", str(out), "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["output"] == str(out)
    assert (out / "score.json").is_file()
    check_provenance(summary["provenance"], "demo", None, ("planck2018_base", "bk18"))
    assert json.loads((out / "score.json").read_text())["provenance"] == summary["provenance"]
    for name in ("starobinsky", "quadratic"):
        report = out / "chains" / name / "report"
        for f in ("verdicts.md", "marginals.tex", "triangle.png", "spectra.pdf",
                  "exclusion_map.png", "efolds.caption.txt", "ns_r.png", "ns_r.json"):
            assert (report / f).is_file(), (name, f)
        assert summary["runs"][name]["steps"] > 0
    # Planck 2018 X (arXiv:1807.06211), Sec. 4: plateau (R^2) inflation is allowed while
    # V ~ phi^2 is excluded once BICEP/Keck is added; the evidence must favour the plateau.
    v = summary["verdicts"]
    assert v["starobinsky"]["best_fit"]["verdict"] == "allowed"
    assert v["quadratic"]["best_fit"]["verdict"] == "excluded"
    (cmp,) = v["starobinsky"]["comparisons"]
    assert cmp["delta_chi2_min"] < -20 and cmp["ln_evidence_ratio"] > 5
    # the bounce run is the Starobinsky plateau on the bounce in physical parameters, scored
    # with the large-scale temperature term: r and n_s are those of the plateau (allowed,
    # Planck 2018 X, arXiv:1807.06211, Sec. 4), so the pivot numbers allow every N_B* where the
    # features miss the pivots, and the bound on the bounce comes from multipoles 2-29.
    # Dressed-metric studies (Agullo, Ashtekar & Nelson 2013; Agullo & Morris 2015; Ashtekar &
    # Gupt 2017; from memory): the bounce must sit at or beyond the largest observable scales.
    assert v["bounce"]["best_fit"]["verdict"] == "allowed"
    report = out / "chains" / "bounce" / "report"
    for f in ("efolds.png", "ns_r.png", "dell.png", "dell.json", "spectra.json"):
        assert (report / f).is_file(), f
    bounce = json.loads((report / "verdicts.json").read_text())
    manifest = json.loads((out / "chains" / "bounce" / "manifest.json").read_text())
    check_provenance(manifest["provenance"], "sample", out / "bounce.toml")
    check_provenance(bounce["provenance"], "demo", out / "chains" / "bounce" / "manifest.json")
    assert bounce["provenance"]["upstream"] == manifest["provenance"]
    assert "planck2018_lowell_tt" in bounce["constraint_sets"]
    assert bounce["large_scale_term"]["used"]
    bound = v["bounce"]["bounce"]
    # a data bound at the largest observable scales: features at ell < 30 are disfavoured
    # (measured: N_B* > 20.1, k_LQC < 2.6e-4 Mpc^-1)
    assert bound["N_B_star"]["coincides_with_not_evaluable"] is False
    assert 16.0 < bound["N_B_star"]["limit95"] < 25.0
    assert 1e-5 < 10 ** bound["log10_k_lqc"]["limit95"] < 2e-3
    text = (report / "verdicts.md").read_text()
    assert "## Where the bounce may sit" in text and "a data bound" in text
    assert "## Large-scale temperature term" in text
    samples = pd.read_csv(out / "chains" / "bounce" / "samples.csv")
    assert samples["N_B_star"].quantile(0.05) == pytest.approx(bound["N_B_star"]["limit95"])
    assert summary["wall_time_s"] > 0
    # every run folder lists its failed evaluations; no staging folder is left anywhere
    for name in ("starobinsky", "quadratic", "bounce"):
        assert (out / "chains" / name / "failures.csv").is_file()
    assert not list(out.rglob(".staging-*")) and not list(out.rglob(".*.tmp"))
