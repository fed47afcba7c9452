"""Evaluations without a log-likelihood: kinds, physical reasons, failures.csv, capped values."""

from __future__ import annotations

import math

import numpy as np
import pytest
from sampling_targets import gaussian_prior

from bouncelike.errors import InputError, NotEvaluable, NumericalFailure
from bouncelike.likelihood.gaussian import GaussianLikelihood
from bouncelike.models.registry import forward_model
from bouncelike.sampling import chains
from bouncelike.sampling.driver import SamplerSettings, run_sampler
from bouncelike.sampling.failures import (
    CAPPED,
    MODEL_ERROR,
    NOT_EVALUABLE,
    NUMERICAL_FAILURE,
    load_failures,
)
from bouncelike.sampling.posterior import ModelPosterior, Posterior
from bouncelike.sampling.priors import SHIPPED_PRIORS, ParameterPrior, Prior, load_prior


class Failing:
    """A log-likelihood that fails in a chosen way where a > 1 (a Gaussian elsewhere)."""

    def __init__(self, how: str):
        self.how = how

    def __call__(self, p: dict) -> float:
        if p["a"] > 1.0:
            if self.how == "zero_division":
                return 1.0 / (p["a"] - p["a"])
            if self.how == "not_evaluable":
                raise NotEvaluable(f"inflation does not end before the cap at a = {p['a']}")
            if self.how == "input":
                raise InputError(f"'a' = {p['a']} lies outside the model's domain")
            if self.how == "numerical":
                raise NumericalFailure(f"integration did not converge at a = {p['a']}")
            if self.how == "nan":
                return math.nan
        return -0.5 * (p["a"] ** 2 + p["b"] ** 2)


@pytest.mark.parametrize("how, kind, reason", [
    ("zero_division", MODEL_ERROR, "model error while computing the log-likelihood: division "
                                   "by zero"),
    ("not_evaluable", NOT_EVALUABLE, "inflation does not end before the cap at a = #"),
    ("input", NOT_EVALUABLE, "'a' = # lies outside the model's domain"),
    ("numerical", NUMERICAL_FAILURE, "integration did not converge at a = #"),
    ("nan", NUMERICAL_FAILURE, "the log-likelihood is not a number (NaN)"),
])
def test_kinds_and_reasons_of_failed_evaluations(how, kind, reason):
    post = Posterior(gaussian_prior(), Failing(how))
    ok = post(np.array([0.5, 0.0]))
    assert ok[0] == pytest.approx(-0.125 - math.log(40.0) * 2) and ok[-1] is None
    out = post(np.array([1.5, 0.0]))
    assert out[0] == -math.inf and math.isnan(out[1])
    assert (out[-1].kind, out[-1].reason) == (kind, reason)
    assert "float division by zero" not in out[-1].reason


def test_model_error_from_inside_the_package_names_what_and_where():
    # exp(1000) overflows in the power law's derived amplitude A_s = 1e-10 exp(ln(1e10 A_s))
    model = forward_model("power_law")
    prior = Prior("power_law", "wide", (
        ParameterPrior("ln_1e10_As", "sampled", "ln", "uniform", 2.0, 2000.0),
        ParameterPrior("n_s", "sampled", "n_s", "uniform", 0.9, 1.0),
        ParameterPrior("r", "fixed", "r", value=0.0),
        ParameterPrior("running", "fixed", "a", value=0.0),
        ParameterPrior("running_of_running", "fixed", "b", value=0.0),
        ParameterPrior("A_s", "derived", "A_s")))
    post = ModelPosterior(prior, model, GaussianLikelihood.from_names(["planck2018_base"]))
    failure = post(np.array([1000.0, 0.96]))[-1]
    assert failure.kind == MODEL_ERROR
    assert failure.reason == ("model error while computing the derived parameters: "
                              "floating-point overflow in bouncelike/models/powerlaw.py:"
                              "derived")
    assert "OverflowError" in failure.message  # the raw text is kept for diagnosis only
    assert post(np.array([3.0, 0.96]))[-1] is None


def test_failed_proposals_listed_with_parameters_and_counted(tmp_path):
    post = Posterior(gaussian_prior(), Failing("zero_division"))
    settings = SamplerSettings(walkers=8, max_steps=60, min_steps=60, checkpoint_every=30,
                               seed=2, prior_survey_draws=100)
    result = run_sampler(post, settings, tmp_path / "run", show_progress=False)
    rows = load_failures(tmp_path / "run")
    run_rows = rows[rows["stage"] == "sampling"]
    assert len(run_rows) > 0 and (run_rows["a"] > 1.0).all()
    assert (run_rows["kind"] == MODEL_ERROR).all()
    assert set(run_rows["step"]) <= set(range(1, 61))
    reason = "model error while computing the log-likelihood: division by zero"
    assert result.failures == {reason: int((rows["stage"] != "prior_survey").sum())}
    # the failing region a > 1 is 19/40 of the uniform prior on [-20, 20] (measure of an
    # interval); 100 survey draws, binomial error
    (entry,) = chains.read_manifest(tmp_path / "run")["run"]["failure_summary"]["by_reason"]
    assert abs(entry["prior_fraction"] - 19 / 40) < 4 * math.sqrt(19 / 40 * 21 / 40 / 100)


def test_fit_quality_check_runs_once_per_evaluation(monkeypatch):
    import bouncelike.spectra.summary as summary

    model = forward_model("bounce_dressed_metric")
    prior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric.toml", model)
    lk = GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    theta = np.array([3.044, 0.965, 0.01, -6.0])  # bounce far below the window: smooth
    expected = lk.log_likelihood(model.spectra(prior.full_parameters(theta)))
    calls = []
    fit = summary.fit_summary
    monkeypatch.setattr(summary, "fit_summary", lambda *a, **k: calls.append(1) or fit(*a, **k))
    out = ModelPosterior(prior, model, lk)(theta)
    assert len(calls) == len(lk.pivots)  # one fit per pivot, checked and scored
    assert out[1] == expected and out[-1] is None


@pytest.mark.filterwarnings("ignore:invalid value encountered in divide")  # 4-step chain
def test_capped_spectra_are_bounds_not_values(tmp_path):
    # deformed algebra: above k_LQC the Euclidean growth is capped at e^600 (physics notes,
    # section 4); with the bounce scale far below the window the whole window is capped
    model = forward_model("bounce_deformed_algebra")
    prior = load_prior(SHIPPED_PRIORS / "bounce_deformed_algebra.toml", model)
    lk = GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    post = ModelPosterior(prior, model, lk, require_summary_fit=False)
    capped = post(np.array([3.044, 0.965, 0.01, -4.0]))
    f = capped[-1]
    assert capped[0] == -math.inf and f.kind == CAPPED
    assert "e^600" in f.reason and f.bound < -1e8  # the capped value, kept as a bound
    assert post(np.array([3.044, 0.965, 0.01, -1.0]))[-1] is None
    settings = SamplerSettings(walkers=8, max_steps=4, min_steps=4, checkpoint_every=4,
                               seed=1, prior_survey_draws=60)
    run_sampler(post, settings, tmp_path / "run", show_progress=False)
    rows = load_failures(tmp_path / "run")
    caps = rows[rows["kind"] == CAPPED]
    assert len(caps) > 0 and (caps["log_likelihood_bound"] < -1e6).all()
    assert (caps["log10_k_lqc"] < -2.0).all()
    by_kind = chains.read_manifest(tmp_path / "run")["run"]["failure_summary"]["by_kind"]
    assert 0 < by_kind[CAPPED]["prior_fraction"] < 1
