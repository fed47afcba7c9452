"""One posterior evaluation of a bounce model with the fit-quality check: fit once vs twice.

The Gaussian likelihood scores spectra without an exact re-expansion through a cubic fitted
around each pivot; the posterior first checks that fit (require_summary_fit). The posterior
hands the checked summaries on to the likelihood (one fit per pivot); the baseline, in the
same run, checks the fit and then scores the raw spectra, which fits them again.

    python3 benchmarks/posterior_fit_gate.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bouncelike.errors import NotEvaluable  # noqa: E402
from bouncelike.likelihood.gaussian import GaussianLikelihood  # noqa: E402
from bouncelike.models.registry import forward_model  # noqa: E402
from bouncelike.sampling.posterior import ModelPosterior, Posterior  # noqa: E402
from bouncelike.sampling.priors import SHIPPED_PRIORS, load_prior  # noqa: E402


class FitTwice:
    """The straightforward gate: check the fit, then score the spectra from scratch."""

    def __init__(self, model, likelihood):
        self.model, self.likelihood = model, likelihood

    def __call__(self, params):
        spectra = self.model.spectra(params)
        if not all(s.fit_ok for s in self.likelihood.summaries(spectra)):
            raise NotEvaluable("not represented")
        return self.likelihood.log_likelihood(spectra)


def best_time(post, points, rounds=5):
    best = np.inf
    for _ in range(rounds):
        t0 = time.perf_counter()
        for p in points:
            post(p)
        best = min(best, (time.perf_counter() - t0) / len(points))
    return best


def main() -> None:
    model = forward_model("bounce_dressed_metric")
    prior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric.toml", model)
    lk = GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    once = ModelPosterior(prior, model, lk)
    twice = Posterior(prior, FitTwice(model, lk), model.derived)
    points = prior.initial_walkers(np.random.default_rng(0), 100)
    a, b = [once(p) for p in points], [twice(p) for p in points]
    same = all(x[0] == y[0] and (x[1] == y[1] or x[0] == -np.inf)
               for x, y in zip(a, b, strict=True))
    t_once, t_twice = best_time(once, points), best_time(twice, points)
    print(f"posterior evaluation, fit checked and scored once: {t_once * 1e3:.2f} ms")
    print(f"baseline, fit checked then fitted again:          {t_twice * 1e3:.2f} ms")
    print(f"ratio baseline / posterior: {t_twice / t_once:.2f}x; same values: {same}")


if __name__ == "__main__":
    main()
