"""Gaussian likelihood: chi-square, p-values, limits and combination rules against scipy.stats."""

import math

import numpy as np
import pytest
from scipy.stats import chi2, halfnorm, multivariate_normal, norm

from bouncelike.config import Table
from bouncelike.errors import InputError, NumericalFailure
from bouncelike.likelihood import GaussianLikelihood, likelihood_from_config
from bouncelike.likelihood.score import verdict_from_p
from bouncelike.spectra import PowerLawSpectra


class _Fitted:
    """Wrapper hiding summary_at, forcing the polynomial-fit summary."""

    def __init__(self, spectra):
        self._s = spectra

    def scalar(self, k):
        return self._s.scalar(k)

    def tensor(self, k):
        return self._s.tensor(k)


def _base(n_s=0.9649, ln_as=3.044, r=0.0, **kw):
    return PowerLawSpectra(ln_as, n_s, r=r, **kw)


def test_chi2_and_pulls_of_gaussian_terms():
    like = GaussianLikelihood.from_names(["planck2018_base"])
    s = like.score(_base(n_s=0.9649 + 2 * 0.0042, ln_as=3.044 - 0.014))
    pulls = {t.quantity: t.pull for t in s.terms}
    assert pulls["n_s"] == pytest.approx(2.0) and pulls["ln_1e10_As"] == pytest.approx(-1.0)
    assert s.chi2 == pytest.approx(5.0)
    assert s.dof == 2
    # p-value of chi2 = 5 with 2 degrees of freedom: exp(-5/2) (scipy.stats.chi2.sf).
    assert s.p_value == pytest.approx(chi2.sf(5.0, 2), rel=1e-12)
    assert s.p_value == pytest.approx(math.exp(-2.5), rel=1e-12)
    assert s.log_likelihood == pytest.approx(-2.5)


@pytest.mark.parametrize("level,p", [(0.95, 0.05), (0.997, 0.003)])
def test_verdict_thresholds_at_chi2_quantiles(level, p):
    # Place n_s so that chi2 sits just beyond / just inside the chi2(dof = 2) quantile
    # (scipy.stats.chi2.ppf); the verdict must flip exactly there.
    like = GaussianLikelihood.from_names(["planck2018_base"])
    q = chi2.ppf(1 - p, 2)
    outside = like.score(_base(n_s=0.9649 + math.sqrt(q * 1.0001) * 0.0042))
    inside = like.score(_base(n_s=0.9649 + math.sqrt(q * 0.9999) * 0.0042))
    assert outside.p_value < p < inside.p_value
    assert outside.verdict == "excluded" and outside.excluded_at == level
    if level == 0.95:
        assert inside.verdict == "allowed" and inside.excluded_at is None
    else:
        assert inside.excluded_at == 0.95


def test_verdict_rule():
    assert verdict_from_p(0.5) == ("allowed", None)
    assert verdict_from_p(0.04) == ("excluded", 0.95)
    assert verdict_from_p(0.001) == ("excluded", 0.997)


def test_upper_limit_as_half_gaussian():
    # At r equal to the published 95 % limit, the half-Gaussian tail beyond r is 5 %
    # (scipy.stats.halfnorm.sf) and the chi-square contribution is Phi^-1(0.975)^2, the 95 %
    # quantile of chi2(1) (scipy.stats.chi2.ppf).
    like = GaussianLikelihood.from_names(["bk18"])
    s = like.score(_base(r=0.036))
    (term,) = s.terms
    assert term.kind == "upper_limit" and term.published == 0.036
    assert halfnorm.sf(0.036, scale=term.sigma) == pytest.approx(0.05, rel=1e-10)
    assert term.chi2 == pytest.approx(norm.ppf(0.975) ** 2, rel=1e-10)
    assert term.chi2 == pytest.approx(chi2.ppf(0.95, 1), rel=1e-10)
    assert s.p_value == pytest.approx(0.05, rel=1e-9)
    # log-likelihood differences follow the half-normal density (scipy.stats.halfnorm.logpdf).
    a = like.log_likelihood(_base(r=0.01))
    b = like.log_likelihood(_base(r=0.02))
    expected = halfnorm.logpdf(0.01, scale=term.sigma) - halfnorm.logpdf(0.02, scale=term.sigma)
    assert a - b == pytest.approx(expected, rel=1e-10)
    assert any("half-Gaussian" in n for n in s.notes)


def test_fast_path_equals_fitted_summary_path():
    like = GaussianLikelihood.from_names(
        ["planck2018_running_of_running", "planck2018_bk15", "louis2025_ns"],
        allow_overlap=True,
    )
    p = PowerLawSpectra(3.05, 0.968, running=-0.004, running_of_running=0.003, r=0.02)
    fast = like.log_likelihood(p)
    slow = like.log_likelihood(_Fitted(p))
    assert fast == pytest.approx(slow, abs=1e-5)
    assert fast == pytest.approx(like.score(p).log_likelihood, rel=1e-12)


def test_r_moved_to_the_sets_pivot():
    # r at 0.002 Mpc^-1 for a pure power law: r(k1) = r(k0) (k1/k0)^(n_t - n_s + 1).
    like = GaussianLikelihood.from_names(["planck2018_bk15"])
    s = like.score(_base(r=0.05))
    expected = 0.05 * (0.002 / 0.05) ** (-0.05 / 8 - 0.9649 + 1)
    assert s.terms[0].predicted == pytest.approx(expected, rel=1e-12)
    assert s.terms[0].pivot == 0.002


def test_overlap_refused_unless_allowed():
    with pytest.raises(InputError, match="overlapping data") as exc:
        GaussianLikelihood.from_names(["planck2018_base", "planck2018_base_bao"])
    assert "allow_overlap" in str(exc.value)
    with pytest.raises(InputError):
        GaussianLikelihood.from_names(["bk18", "pr4_bk18"])
    with pytest.raises(InputError):
        GaussianLikelihood.from_names(["planck2018_base", "louis2025_ns"])
    like = GaussianLikelihood.from_names(["bk18", "pr4_bk18"], allow_overlap=True)
    assert any("counted twice" in n for n in like.score(_base(r=0.01)).notes)
    # different quantities from the same data are fine
    GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    with pytest.raises(InputError, match="listed twice"):
        GaussianLikelihood.from_names(["bk18", "bk18"], allow_overlap=True)


CORRELATED = """
name = "corr"
title = "correlated test set"
citation = "made up"
arxiv = "0000.00000"
table = "none"
data_combination = "invented for a test"
pivot = 0.05
forecast = false
overlap = ["test"]

[[term]]
quantity = "n_s"
kind = "gaussian"
mean = 0.965
sigma = 0.004

[[term]]
quantity = "running"
kind = "gaussian"
mean = -0.005
sigma = 0.007

[[correlation]]
quantities = ["n_s", "running"]
rho = -0.4
"""


def test_correlated_terms_against_multivariate_normal(tmp_path):
    f = tmp_path / "corr.toml"
    f.write_text(CORRELATED)
    like = GaussianLikelihood.from_names([str(f)])
    p = PowerLawSpectra(3.0, 0.97, running=0.004)
    mean = np.array([0.965, -0.005])
    cov = np.array([[0.004**2, -0.4 * 0.004 * 0.007], [-0.4 * 0.004 * 0.007, 0.007**2]])
    mvn = multivariate_normal(mean, cov)
    # chi2 = -2 [ln N(x) - ln N(mean)] (scipy.stats.multivariate_normal)
    expected = -2 * (mvn.logpdf([0.97, 0.004]) - mvn.logpdf(mean))
    s = like.score(p)
    assert s.chi2 == pytest.approx(expected, rel=1e-10)
    assert sum(t.chi2 for t in s.terms) == pytest.approx(expected, rel=1e-10)
    assert like.log_likelihood(p) == pytest.approx(-expected / 2, rel=1e-10)


def test_likelihood_from_config_defaults_and_keys():
    like = likelihood_from_config(Table({}, "", ("likelihood",)))
    assert [s.name for s in like.sets] == ["planck2018_base", "bk18"]
    with pytest.raises(InputError, match="unknown key 'likelihood.set'"):
        likelihood_from_config(Table({"likelihood": {"set": ["bk18"]}}, "", ("likelihood",)))
    with pytest.raises(InputError, match="no constraint sets"):
        likelihood_from_config(Table({"likelihood": {"sets": []}}, "", ("likelihood",)))


def test_non_finite_spectra_raise_numerical_failure():
    like = GaussianLikelihood.from_names(["planck2018_base"])

    class Broken(_Fitted):
        def scalar(self, k):
            return np.full(np.shape(k), np.nan)

    with pytest.raises(NumericalFailure, match="not positive and finite"):
        like.log_likelihood(Broken(_base()))
