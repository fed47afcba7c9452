"""Statistics of the reports against reference libraries and textbook results."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import binomtest, chi2, norm

from bouncelike.reporting import evidence as E
from bouncelike.reporting import goodness, proportions
from bouncelike.reporting.marginals import (
    cells,
    interval_text,
    marginal_statistics,
    shown,
    title_math,
)
from bouncelike.sampling.priors import ParameterPrior, Prior


def test_marginals_are_sample_quantiles_and_print_the_same_numbers_everywhere():
    rng = np.random.default_rng(3)
    x = rng.normal(0.9649, 0.0042, 200_000)
    (e,) = marginal_statistics(x[:, None], ["n_s"], [0.8], [1.1])
    # equal-tailed intervals are sample quantiles (numpy reference); for a Gaussian the 68%
    # half-width is the standard deviation (scipy.stats.norm.ppf(0.84) = 0.994)
    assert e["kind"] == "two_sided"
    assert e["median"] == pytest.approx(np.quantile(x, 0.5))
    assert e["upper68"] - e["median"] == pytest.approx(0.0042 * norm.ppf(0.84), rel=0.02)
    assert e["upper95"] - e["median"] == pytest.approx(0.0042 * norm.ppf(0.975), rel=0.02)
    s = shown(e)
    # two significant digits in the smaller half-width, the value at the same decimal place
    assert s.value == f"{e['median']:.4f}" and len(s.plus.split(".")[1]) == 4
    c68, c95 = cells(e, latex=False)
    assert c68 == f"{s.value} +{s.plus} -{s.minus}" and c95 == f"[{s.lo95}, {s.hi95}]"
    title = title_math(e, "n_s")
    assert f"{s.value}^{{+{s.plus}}}_{{-{s.minus}}}" in title
    assert interval_text(e).startswith(c68)


def test_small_numbers_share_a_power_of_ten_and_limits_are_one_sided():
    rng = np.random.default_rng(4)
    m = rng.normal(1.2e-6, 0.02e-6, 50_000)
    r = np.abs(rng.normal(0.0, 0.01, 50_000))
    em, er = marginal_statistics(np.column_stack([m, r]), ["mass", "r"], [1e-6, 0.0],
                                 [2e-6, 0.3])
    s = shown(em)
    assert s.exponent == -6 and s.value.startswith("1.2")
    assert "\\times 10^{-6}" in cells(em, latex=True)[0]
    assert er["kind"] == "upper_limit"
    assert cells(er, latex=False) == ("--", f"< {shown(er).value} (95%)")
    assert title_math(er, "r").startswith("$r < ")


@pytest.mark.parametrize("k,n", [(1, 10), (27, 400), (200, 400), (399, 400), (5, 120)])
def test_clopper_pearson_interval_against_scipy(k, n):
    # Clopper & Pearson, Biometrika 26 (1934) 404; scipy.stats.binomtest(...).proportion_ci
    # with method="exact" is the same interval
    b = proportions.binomial_fraction(k, n)
    ref = binomtest(k, n).proportion_ci(confidence_level=0.95, method="exact")
    assert b["kind"] == "interval" and b["fraction"] == k / n
    assert b["lower"] == pytest.approx(ref.low, rel=1e-9)
    assert b["upper"] == pytest.approx(ref.high, rel=1e-9)


def test_none_or_all_of_the_draws_give_a_one_sided_limit():
    # one-sided 95% Clopper-Pearson limit at k = 0: 1 - 0.05^(1/n) (solve (1-p)^n = 0.05)
    b = proportions.binomial_fraction(0, 400)
    assert b["kind"] == "upper_limit" and b["upper"] == pytest.approx(1 - 0.05 ** (1 / 400))
    text = proportions.fraction_text(b, "prior draws")
    assert text.startswith("below 0.0075") and "0 of 400 prior draws" in text
    a = proportions.binomial_fraction(120, 120)
    assert a["kind"] == "lower_limit" and a["lower"] == pytest.approx(0.05 ** (1 / 120))


def test_best_fit_dof_is_terms_minus_fitted_parameters():
    # scipy.stats.chi2.sf with dof = 3 terms - 2 fitted parameters
    g = goodness.best_fit_goodness(4.0, 3, 2.1, ["a", "b", "c"], ["a", "b"])
    assert g["fitted_parameters"] == 2 and g["dof"] == 1
    assert g["p_value"] == pytest.approx(chi2.sf(4.0, 1))
    assert g["p_value_one_configuration"] == pytest.approx(chi2.sf(4.0, 3))
    assert g["p_value_rule"] == "best_fit" and "dof = 1" in goodness.goodness_text(g)
    # a parameter the data do not constrain is not counted even if d says otherwise
    g = goodness.best_fit_goodness(4.0, 3, 3.0, ["a", "b", "c"], ["a", "b"])
    assert g["fitted_parameters"] == 2
    # no degree of freedom left: only the one-configuration p-value, and it says so
    g = goodness.best_fit_goodness(4.0, 2, 2.0, ["a", "b"], ["a", "b"])
    assert g["dof"] is None and g["p_value_rule"] == "one_configuration"
    assert g["p_value"] == pytest.approx(chi2.sf(4.0, 2))
    assert "undefined" in goodness.goodness_text(g)


@pytest.mark.parametrize("k", [1, 2, 4])
def test_model_dimensionality_of_a_gaussian_likelihood(k):
    # for a likelihood Gaussian in k parameters, chi2 - chi2_min over the posterior is
    # chi-square with k dof, whose variance is 2k (scipy.stats.chi2(k).var()), so
    # d = 2 var(ln L) = k (Handley & Lemos, PRD 100 (2019) 023512; from memory)
    rng = np.random.default_rng(k)
    ln_l = -0.5 * rng.chisquare(k, 200_000)
    assert 2 * chi2(k).var() / 4 == pytest.approx(k)
    assert goodness.model_dimensionality(ln_l) == pytest.approx(k, rel=0.03)


def test_constrained_parameters_are_those_narrower_than_their_prior():
    rng = np.random.default_rng(5)
    prior = rng.uniform(0.0, 1.0, (4000, 2))
    post = np.column_stack([rng.normal(0.5, 0.02, 4000), rng.uniform(0.0, 1.0, 4000)])
    assert goodness.constrained_parameters(post, prior, ["tight", "free"]) == ["tight"]


def test_effective_draws_of_importance_weights():
    # Kish's n_eff = (sum w)^2 / sum w^2: n for equal weights, 1 for a single weight
    assert E.effective_draws(np.zeros(500)) == pytest.approx(500)
    assert E.effective_draws(np.array([0.0] + [-800.0] * 99)) == pytest.approx(1.0)
    w = np.random.default_rng(1).exponential(size=1000)
    assert E.effective_draws(np.log(w)) == pytest.approx(w.sum() ** 2 / (w * w).sum())


def test_evidence_is_not_reliable_with_few_effective_draws():
    # Gaussian likelihood exp(-x^2/(2 s^2)) under a flat prior on [-L, L]:
    # Z = sqrt(2 pi) s / (2 L) (analytic)
    s, half = 0.5, 10.0
    prior = Prior("t", "t", (ParameterPrior("x", "sampled", "x", "uniform", -half, half),))
    rng = np.random.default_rng(2)
    good = E.log_evidence(lambda t: -0.5 * (t[0] / s) ** 2, prior,
                          rng.normal(0.0, s, 5000)[:, None], n=4000, seed=2)
    assert good["reliable"] and good["importance_ess"] >= E.MIN_EFFECTIVE_DRAWS
    assert good["ln_Z"] == pytest.approx(math.log(math.sqrt(2 * math.pi) * s / (2 * half)),
                                         abs=max(0.03, 4 * good["ln_Z_error"]))
    assert "effective of 4000 draws" in E.evidence_text(good)
    # samples far from the likelihood peak: the proposal misses it, a handful of prior draws
    # carry all the weight
    narrow = 0.01
    bad = E.log_evidence(lambda t: -0.5 * (t[0] / narrow) ** 2, prior,
                         rng.normal(5.0, 0.1, 2000)[:, None], n=400, seed=3)
    assert not bad["reliable"] and bad["importance_ess"] < E.MIN_EFFECTIVE_DRAWS
    assert E.evidence_text(bad).startswith("ln Z not reliable")
    a = {"run_name": "a", "best_fit": {"chi2": 1.0}, "evidence": good}
    b = {"run_name": "b", "best_fit": {"chi2": 3.0}, "evidence": bad}
    c = E.compare_evidence(a, b)
    assert not c["reliable"] and c["interpretation"] == "not reliable"
    assert "not reliable" in E.comparison_text(c) and "4000" in E.comparison_text(c)


def test_capped_best_fit_that_does_not_exclude_is_undetermined():
    g = goodness.best_fit_goodness(0.5, 3, 1.0, ["a"], ["a"], bound=True)
    assert g["verdict"] == "undetermined" and "chi2 > 0.5" in goodness.goodness_text(g)


def test_sampling_set_up_imports_no_report_machinery():
    # the report reads runs (reporting -> sampling); the sampling set-up only validates the
    # [report] section (reporting.settings), so importing it pulls in neither the report nor
    # matplotlib
    import subprocess
    import sys

    code = ("import sys, bouncelike.sampling.setup; "
            "print('bouncelike.reporting.report' in sys.modules, 'matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.split() == ["False", "False"]
