"""The large-scale temperature term through the commands and the configuration."""

import json
import shutil
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from config_texts import POWER_LAW_SCORE

from bouncelike.cli import main
from bouncelike.config import Table
from bouncelike.errors import NotEvaluable, NumericalFailure
from bouncelike.likelihood.combined import CombinedLikelihood
from bouncelike.likelihood.gaussian import likelihood_from_config
from bouncelike.perturbations.transfer import BounceSpectraModel
from bouncelike.spectra import PowerLawSpectra

ROOT = Path(__file__).resolve().parents[1]

POWER_LAW = POWER_LAW_SCORE.replace('"bk18"]', '"bk18", "planck2018_lowell_tt"]')

TABLE = """
[model]
spectra = "table"

[table]
file = "spectra.csv"

[likelihood]
sets = ["planck2018_base", "planck2018_lowell_tt"]
"""


def _run(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    return code, out, err


def _csv(k, ps, pt):
    rows = "\n".join(f"{a:.10e},{b:.10e},{c:.10e}" for a, b, c in zip(k, ps, pt, strict=True))
    return "# our own test table\nk,P_s,P_t\n" + rows + "\n"


def test_score_shows_the_term(tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(POWER_LAW)
    code, out, _ = _run(capsys, ["score", str(cfg)])
    assert code == 0
    for text in ("large-scale temperature, ell 2-29", "largest pulls", "D_2 ",
                 "anchoring error estimate per multipole (%): 2:", "this term alone: p =",
                 "numerical convolution", "the low multipoles counted once",
                 "cancel to first order", "verdict: allowed"):
        assert text in out, text
    # the pivot table lists only the pivot terms
    assert "D_29" not in out.split("large-scale temperature")[0]


def test_score_json_lists_every_multipole(tmp_path, capsys):
    cfg = tmp_path / "run.toml"
    cfg.write_text(POWER_LAW)
    code, out, _ = _run(capsys, ["score", str(cfg), "--json"])
    assert code == 0
    data = json.loads(out)
    multipoles = [t for t in data["terms"] if t["quantity"].startswith("D_")]
    assert [t["quantity"] for t in multipoles] == [f"D_{ell}" for ell in range(2, 30)]
    for t in multipoles:
        assert t["source"] == "planck2018_lowell_tt (arXiv:1907.12875)"
        assert t["kind"] == "inverse_gamma" and t["predicted"] > 0 and t["chi2"] >= 0
        lo, hi = t["interval_68"]
        assert lo < t["published"] < hi and t["nu"] > 2
    assert sum(t["chi2"] for t in data["terms"]) == pytest.approx(data["chi2"])
    assert data["dof"] == len(data["terms"]) == 31
    assert "convolution" in data["verdict_rule"] and data["p_value_is_bound"] is False
    low = data["low_ell"]
    assert len(low["anchoring_error"]) == 28 and low["sampling_spread"] is None
    assert low["statistic"] == pytest.approx(sum(t["chi2"] for t in multipoles))


def test_table_model_relative_to_the_config(tmp_path, capsys):
    k = np.geomspace(1e-5, 1.0, 300)
    pl = PowerLawSpectra(3.044, 0.9649, r=0.01)
    sub = tmp_path / "cfg"
    sub.mkdir()
    (sub / "spectra.csv").write_text(_csv(k, pl.scalar(k), pl.tensor(k)))
    (sub / "run.toml").write_text(TABLE)
    code, out, _ = _run(capsys, ["score", str(sub / "run.toml"), "--json"])
    assert code == 0
    data = json.loads(out)
    assert data["model"]["model"] == "tabulated" and data["verdict"] == "allowed"
    # the same spectra as the power law: the same low-ell statistic
    cfg = tmp_path / "pl.toml"
    cfg.write_text(POWER_LAW.replace(', "bk18"', ""))
    _, out_pl, _ = _run(capsys, ["score", str(cfg), "--json"])
    assert data["low_ell"]["statistic"] == pytest.approx(
        json.loads(out_pl)["low_ell"]["statistic"], rel=1e-4)


def test_shipped_table_example(capsys):
    code, out, _ = _run(capsys, ["score", str(ROOT / "examples" / "table_spectra.toml")])
    assert code == 0 and "large-scale temperature" in out


K = np.geomspace(1e-5, 1.0, 50)
GOOD = _csv(K, 2e-9 * np.ones_like(K), np.zeros_like(K))
BAD_TABLES = {
    "missing file": (None, "does not exist"),
    "bad header": (GOOD.replace("k,P_s,P_t", "k,Ps,P_t"), "header must name the columns"),
    "not a number": (GOOD.replace("2.0000000000e-09", "abc", 1), "is not a number"),
    "short row": (GOOD.replace(",0.0000000000e+00\n", "\n", 1), "expected 3 values"),
    "k not increasing": (_csv(K[::-1], 2e-9 * np.ones_like(K), np.zeros_like(K)),
                         "strictly increasing"),
    "negative power": (_csv(K, -2e-9 * np.ones_like(K), np.zeros_like(K)), "'scalar' must be"),
    "too short a range": (_csv(np.geomspace(1e-4, 1.0, 50), 2e-9 * np.ones(50), np.zeros(50)),
                          "needs the primordial spectra on 1e-05-0.2 Mpc^-1"),
}


@pytest.mark.parametrize("case", sorted(BAD_TABLES))
def test_bad_table_one_line_exit_2_nothing_written(case, tmp_path, monkeypatch, capsys):
    text, needle = BAD_TABLES[case]
    cfg = tmp_path / "run.toml"
    cfg.write_text(TABLE)
    if text is not None:
        (tmp_path / "spectra.csv").write_text(text)
    before = sorted(p.name for p in tmp_path.iterdir())
    monkeypatch.chdir(tmp_path)
    code, out, err = _run(capsys, ["score", str(cfg)])
    assert code == 2 and out == ""
    assert needle in err and err.count("\n") == 1, err
    assert sorted(p.name for p in tmp_path.iterdir()) == before


USER_SET = (ROOT / "bouncelike" / "likelihood" / "data" / "low_ell"
            / "planck2018_lowell_tt.toml").read_text()
BAD_CONFIGS = {
    "range outside the data": (
        POWER_LAW.replace("[likelihood]", "[likelihood]\nlow_ell_range = [2, 35]"),
        "asks for ell = 30"),
    "range not a pair": (
        POWER_LAW.replace("[likelihood]", "[likelihood]\nlow_ell_range = [2]"),
        "likelihood.low_ell_range"),
    "range without the set": (
        POWER_LAW.replace(', "planck2018_lowell_tt"', "").replace(
            "[likelihood]", "[likelihood]\nlow_ell_range = [2, 10]"), "applies only with"),
    "user file ell 35": (
        POWER_LAW.replace('"planck2018_lowell_tt"]', ']\nfiles = ["mine.toml"]'),
        "ell = 35 is outside"),
    "two low-ell sets": (
        POWER_LAW.replace('"planck2018_lowell_tt"]', '"planck2018_lowell_tt"]\n'
                          'files = ["ok.toml"]'), "only one large-scale temperature set"),
}


@pytest.mark.parametrize("case", sorted(BAD_CONFIGS))
def test_bad_low_ell_input_exit_2(case, tmp_path, capsys):
    text, needle = BAD_CONFIGS[case]
    cfg = tmp_path / "run.toml"
    cfg.write_text(text)
    (tmp_path / "mine.toml").write_text(USER_SET.replace("  [29, ", "  [35, "))
    (tmp_path / "ok.toml").write_text(USER_SET.replace('"planck2018_lowell_tt"', '"mine"'))
    code, out, err = _run(capsys, ["score", str(cfg)])
    assert code == 2 and out == ""
    assert needle in err and err.count("\n") == 1, err


def test_constraints_lists_the_new_set(capsys):
    code, out, _ = _run(capsys, ["constraints", "planck2018_lowell_tt"])
    assert code == 0
    for text in ("planck2018_lowell_tt", "arXiv:1907.12875", "1807.06209", "Hamimeche",
                 "highest-density", "multipoles 2-29"):
        assert text in out


def _likelihood(sets):
    return likelihood_from_config(Table({"likelihood": {"sets": sets}}, "", ("likelihood",)))


def test_featured_spectra_are_scored_or_not_evaluable():
    lk = _likelihood(["planck2018_base", "bk18", "planck2018_lowell_tt"])
    assert isinstance(lk, CombinedLikelihood)
    model = BounceSpectraModel()
    # r = 0: the quadratic cache's tensor phase is calibrated for n_t = -r/8 in -0.027..-0.0073
    # only (r = 0.058-0.21); featured spectra with r = 0.01 are not evaluable (transfer_model)
    base = {"ln_1e10_As": 3.044, "n_s": 0.9649, "r": 0.0, "log10_conformal_duration": 3.7}
    # features at 1e-4 Mpc^-1: allowed; at 10^-2.5: excluded by the low-ell term
    far = lk.score(model.spectra({**base, "log10_k_lqc": -4.0}))
    near = lk.score(model.spectra({**base, "log10_k_lqc": -2.5}))
    assert far.verdict == "allowed" and near.verdict == "excluded"
    assert near.low_ell.total > far.low_ell.total + 100
    # features on the pivot window: the pivot numbers cannot be taken -- not evaluable
    on_pivot = model.spectra({**base, "log10_k_lqc": -1.3})
    with pytest.raises(NotEvaluable, match="features reach this pivot's window"):
        lk.score(on_pivot)
    with pytest.raises(NumericalFailure):
        lk.log_likelihood(on_pivot)
    assert np.isfinite(lk.log_likelihood(model.spectra({**base, "log10_k_lqc": -4.0})))


def test_featured_example_excluded_and_example_not_evaluable(tmp_path, capsys):
    code, out, _ = _run(capsys, ["score", str(ROOT / "examples" / "bounce_features_lowell.toml"),
                                 "--json"])
    assert code == 0
    data = json.loads(out)
    assert data["verdict"] == "excluded"
    # the infrared enhancement raises D_2 far above the measured value
    d2 = next(t for t in data["terms"] if t["quantity"] == "D_2")
    assert d2["predicted"] > 2 * d2["interval_68"][1] and d2["pull"] > 2
    assert data["low_ell"]["difference_to_reference"] > 5
    # the forward model carries its period mean (models/bounce_features.py): the projection
    # reads it instead of smoothing an aliased table, so there is no sampling spread
    assert data["low_ell"]["sampling_spread"] is None
    # the shipped example has its bounce scale near the pivot: not evaluable with the term
    cfg = tmp_path / "feat.toml"
    shutil.copy(ROOT / "examples" / "bounce_features_quadratic.toml", cfg)
    cfg.write_text(cfg.read_text().replace('"planck2018_r"]', '"planck2018_r", '
                                           '"planck2018_lowell_tt"]'))
    code, out, err = _run(capsys, ["score", str(cfg), "--json"])
    assert code == 1 and json.loads(out)["verdict"] == "not evaluable"
    assert "not evaluable" in err


def test_sampler_posterior_scores_featured_points():
    # the driver refuses points whose pivot summaries do not represent the spectra; with the
    # term on, featured points with smooth period means pass and are scored
    from bouncelike.sampling.posterior import ModelPosterior

    lk = _likelihood(["planck2018_base", "planck2018_r", "planck2018_lowell_tt"])
    model = BounceSpectraModel()
    params = {"ln_1e10_As": 3.044, "n_s": 0.9649, "r": 0.0, "log10_k_lqc": -3.0,
              "log10_conformal_duration": 3.7}  # r = 0: see the test above
    summaries = lk.summaries(model.spectra(params))
    assert all(s.fit_ok for s in summaries)
    post = ModelPosterior(SimpleNamespace(derived_names=()), model, lk)
    # the posterior wraps the spectra with their summaries: the projection still sees the
    # period mean (not the aliased pointwise table)
    assert post._log_likelihood(params) == pytest.approx(lk.log_likelihood(model.spectra(params)),
                                                         rel=1e-12)
    with pytest.raises(NotEvaluable):
        post._log_likelihood({**params, "log10_k_lqc": -1.3})
