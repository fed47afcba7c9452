"""Reports of short posterior runs: files, the numbers the figures draw, rules in the text."""

from __future__ import annotations

import json
import math
import os
from pathlib import Path

import pytest
from scipy.stats import chi2

from bouncelike.cli import main
from bouncelike.reporting.marginals import cells

REPORT = ('\n[report]\ngrid = 6\nrefine = 1\nprior_draws = 120\nrescore_samples = 30\n'
          'band_samples = 30\nevidence_draws = 400\n')


def _run(tmp: Path, name: str, prior: str, sets: list[str], steps: int, extra: str = "") -> Path:
    if "\n" in prior:
        (tmp / f"{name}_prior.toml").write_text(prior)
        prior = f"{name}_prior.toml"
    (tmp / f"{name}.toml").write_text(
        f'[likelihood]\nsets = {json.dumps(sets)}\n\n[sampling]\nprior = "{prior}"\n'
        f"walkers = 12\nmax_steps = {steps}\nmin_steps = {steps}\ntau_multiple = 5\n"
        'tau_tolerance = 0.5\ncheckpoint_every = 100\nseed = 3\nchains_dir = "chains"\n'
        "progress = false\nprior_survey_draws = 100\n" + REPORT + extra)
    here = os.getcwd()
    os.chdir(tmp)
    try:
        assert main(["sample", f"{name}.toml", "--quiet"]) == 0
        assert main(["report", f"chains/{name}", "--quiet"]) == 0
    finally:
        os.chdir(here)
    return tmp / "chains" / name / "report"


@pytest.fixture(scope="module")
def quadratic(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("quad")
    return _run(tmp, "quad", "quadratic_slow_roll", ["planck2018_base", "bk18"], 500)


def test_report_files_and_captions(quadratic):
    for stem in ("triangle", "ns_r", "exclusion_map", "spectra"):
        for ext in (".pdf", ".png", ".caption.txt", ".json"):
            assert (quadratic / f"{stem}{ext}").is_file(), stem + ext
        caption = (quadratic / f"{stem}.caption.txt").read_text()
        # the data-set citations (Planck 2018 VI, BK18) in every caption
        assert "arXiv:1807.06209" in caption and "arXiv:2110.00483" in caption
    assert "equal-tailed" in (quadratic / "triangle.caption.txt").read_text()
    assert "half-Gaussian" in (quadratic / "ns_r.caption.txt").read_text()
    assert "dof = number of terms" in (quadratic / "exclusion_map.caption.txt").read_text()


def test_triangle_titles_are_the_marginal_table(quadratic):
    tri = json.loads((quadratic / "triangle.json").read_text())
    table = (quadratic / "marginals.md").read_text()
    # the parameter that decides the verdict (r against BK18) is drawn
    assert "r" in tri["parameters"] and "n_s" in tri["parameters"]
    for name in tri["parameters"]:
        entry = tri["marginals"][name]
        c68, c95 = cells(entry, latex=False)
        row = next(line for line in table.splitlines() if line.startswith(f"| {name} ("))
        assert c68 in row and c95 in row
        if entry["kind"] == "two_sided":
            v = c68.split(" +")[0].strip("(")
            assert v in tri["titles"][name]


def test_best_fit_p_value_uses_terms_minus_fitted_parameters(quadratic):
    v = json.loads((quadratic / "verdicts.json").read_text())
    bf = v["best_fit"]
    assert bf["n_terms"] == 3 and bf["dof"] == 3 - bf["fitted_parameters"]
    assert bf["p_value"] == pytest.approx(chi2.sf(bf["chi2"], bf["dof"]))  # scipy.stats.chi2
    assert bf["p_value_one_configuration"] == pytest.approx(chi2.sf(bf["chi2"], 3))
    text = (quadratic / "verdicts.md").read_text()
    assert "dof = number of terms minus the fitted parameters" in text
    assert "p-value, one configuration" in text


def test_prior_fraction_with_its_binomial_limit(quadratic):
    v = json.loads((quadratic / "verdicts.json").read_text())
    f = v["allowed_prior_fraction"]
    # V ~ phi^2 is excluded everywhere by BK18 (r = 8/(N + 1/2) > 0.13): none of the draws is
    # allowed, quoted as the one-sided 95% Clopper-Pearson limit 1 - 0.05^(1/n)
    assert f["counts"]["allowed"] == 0 and f["points"] == 120
    assert f["fractions"]["allowed"]["upper"] == pytest.approx(1 - 0.05 ** (1 / 120))
    assert "below 0.025 (0 of 120 prior draws" in (quadratic / "verdicts.md").read_text()
    ev = v["evidence"]
    assert ev["importance_ess"] > 0 and isinstance(ev["reliable"], bool)


def test_ns_r_figure_data(quadratic):
    d = json.loads((quadratic / "ns_r.json").read_text())
    assert d["published"]["sets"] == ["planck2018_base", "bk18"]
    assert d["published"]["extents"]["95"]["r_max"] < 0.05
    assert {m["model"] for m in d["reference"]} == {"slow_roll_quadratic",
                                                     "slow_roll_starobinsky"}
    # the posterior of V ~ phi^2 sits at r = 8/(N + 1/2) ~ 0.12-0.16, far above the region
    assert d["posterior"]["points"] > 0 and 0.1 < d["posterior"]["r_median"] < 0.17


def test_exclusion_map_data(quadratic):
    d = json.loads((quadratic / "exclusion_map.json").read_text())
    assert d["lattice"] == [(6 - 1) * 2 + 1] * 2
    assert d["codes"]["excluded at 99.7%"] == 11 * 11  # BK18 excludes phi^2 everywhere
    assert d["sets"]["BICEP/Keck 2018"]["excluded_fraction_of_map"] == 1.0


def test_a_bound_at_the_edge_of_the_not_evaluable_region_is_not_a_data_bound(
        tmp_path, monkeypatch):
    import reporting_targets

    from bouncelike.models import registry

    monkeypatch.setitem(registry.MODELS, "test_edge_power_law", reporting_targets.EdgePowerLaw)
    report = _run(tmp_path, "edge", reporting_targets.PRIOR, ["planck2018_base"], 400,
                  '\nexclusion_map = ["n_s", "ln_1e10_As"]\n')
    v = json.loads((report / "verdicts.json").read_text())
    rows = {(c["parameter"], c["side"]): c for c in v["not_evaluable"]["coincidences"]}
    # Planck 2018 (n_s = 0.9649 +- 0.0042) would allow n_s up to ~0.973; the model stops at
    # 0.968, so the upper end of the n_s interval is the model's edge, not the data's
    edge = rows[("n_s", "above")]
    assert edge["coincides"] and edge["not_evaluable"] == edge["probes"]
    assert not rows[("n_s", "below")]["coincides"]
    assert v["marginals"][1]["upper95"] <= reporting_targets.EDGE
    # the prior fraction not evaluable: (1.05 - 0.968) / 0.15 = 0.547, inside its interval
    pf = v["not_evaluable"]["prior_fraction"]
    assert pf["lower"] < (1.05 - reporting_targets.EDGE) / 0.15 < pf["upper"]
    text = (report / "verdicts.md").read_text()
    assert "not a data bound" in text and "not evaluable" in text
    drawn = json.loads((report / "not_evaluable.json").read_text())
    assert drawn["recorded"].get("not_evaluable", 0) > 0  # from the run's failures.csv
    emap = json.loads((report / "exclusion_map.json").read_text())
    assert emap["codes"]["not evaluable"] > 0
    assert emap["recorded_refusals"]["not_evaluable"] > 0
    assert math.isfinite(v["best_fit"]["chi2"])


def test_report_without_the_term_says_so_and_shows_it_for_comparison(quadratic):
    v = json.loads((quadratic / "verdicts.json").read_text())
    assert v["large_scale_term"]["used"] is False
    assert "pivot constraints alone" in (quadratic / "verdicts.md").read_text()
    d = json.loads((quadratic / "dell.json").read_text())
    assert d["used_in_likelihood"] is False and d["set"] == "planck2018_lowell_tt"
    assert "NOT part of the run's likelihood" in (quadratic / "dell.caption.txt").read_text()
    # the shipped sets are rescored one by one, the large-scale temperature set among them
    assert "planck2018_lowell_tt" in {r["set"] for r in v["by_set"]}
