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
    # the bounce run is the quadratic inflaton on the bounce in physical parameters:
    # Planck 2018 X (arXiv:1807.06211), Sec. 4, excludes V ~ phi^2 once BICEP/Keck is
    # added, with or without a bounce far from the window; physics notes, section 5:
    # features reach the pivot only for N_B* <~ 13-15, so the data keep N_B* above ~13
    assert v["bounce"]["best_fit"]["verdict"] == "excluded"
    report = out / "chains" / "bounce" / "report"
    for f in ("efolds.png", "ns_r.png", "not_evaluable.png", "not_evaluable.json"):
        assert (report / f).is_file(), f
    bounce = json.loads((report / "verdicts.json").read_text())
    manifest = json.loads((out / "chains" / "bounce" / "manifest.json").read_text())
    check_provenance(manifest["provenance"], "sample", out / "bounce.toml")
    check_provenance(bounce["provenance"], "demo", out / "chains" / "bounce" / "manifest.json")
    assert bounce["provenance"]["upstream"] == manifest["provenance"]
    # the lower limit on the bounce potential fraction is where the spectra stop being
    # representable by the pivot summary (features in the window), not a data bound
    edge = {c["parameter"]: c for c in bounce["not_evaluable"]["coincidences"]
            if c["side"] == "below"}
    assert edge["log10_potential_fraction"]["coincides"]
    assert "not a data bound" in (report / "verdicts.md").read_text()
    samples = pd.read_csv(out / "chains" / "bounce" / "samples.csv")
    assert samples["N_B_star"].quantile(0.05) > 13.0
    # every run folder lists its failed evaluations; no staging folder is left anywhere
    for name in ("starobinsky", "quadratic", "bounce"):
        assert (out / "chains" / name / "failures.csv").is_file()
    assert not list(out.rglob(".staging-*")) and not list(out.rglob(".*.tmp"))
