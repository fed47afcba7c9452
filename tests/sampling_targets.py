"""Known log-probability targets for the sampling tests (importable by subprocesses)."""

from __future__ import annotations

import time

import numpy as np

from bouncelike.errors import NumericalFailure
from bouncelike.sampling.driver import SamplerSettings, run_sampler
from bouncelike.sampling.posterior import Posterior
from bouncelike.sampling.priors import ParameterPrior, Prior

MEAN = np.array([1.0, -2.0])
COV = np.array([[1.0, 0.6], [0.6, 2.0]])


class GaussianLogLike:
    """ln N(theta; MEAN, COV) up to a constant; optional delay and a failing region."""

    def __init__(self, delay: float = 0.0, fail_above: float | None = None):
        self.icov = np.linalg.inv(COV)
        self.delay = delay
        self.fail_above = fail_above

    def __call__(self, p: dict) -> float:
        if self.delay:
            time.sleep(self.delay)
        if self.fail_above is not None and p["a"] > self.fail_above:
            raise NumericalFailure(f"integration did not converge at a = {p['a']:.3f}")
        d = np.array([p["a"], p["b"]]) - MEAN
        return float(-0.5 * d @ self.icov @ d)


def sum_and_difference(p: dict) -> dict:
    return {"s": p["a"] + p["b"], "d": p["a"] - p["b"]}


def gaussian_prior(derived: bool = False) -> Prior:
    params = [ParameterPrior("a", "sampled", "a", "uniform", -20.0, 20.0),
              ParameterPrior("b", "sampled", "b", "uniform", -20.0, 20.0)]
    if derived:
        params += [ParameterPrior("s", "derived", "a+b"), ParameterPrior("d", "derived", "a-b")]
    return Prior("gaussian", "test Gaussian", tuple(params))


def gaussian_posterior(delay: float = 0.0, fail_above: float | None = None) -> Posterior:
    return Posterior(gaussian_prior(derived=True), GaussianLogLike(delay, fail_above),
                     sum_and_difference)


SETTINGS = SamplerSettings(walkers=12, max_steps=600, min_steps=100, tau_multiple=10,
                           tau_tolerance=0.2, checkpoint_every=50, seed=11,
                           prior_survey_draws=50)


def run(folder: str, delay: float = 0.0, resume: bool = False,
        fail_above: float | None = None) -> None:
    run_sampler(gaussian_posterior(delay, fail_above), SETTINGS, folder, resume=resume,
                show_progress=False)
