"""The posterior of a run: log prior + log likelihood of a point, with derived numbers.

Calling a :class:`Posterior` with a point ``theta`` of the sampled parameters returns
``(log_posterior, log_likelihood, *derived, failure)``: floats, then ``None`` for a good
evaluation or a :class:`~bouncelike.sampling.failures.Failure` saying why the point has no
log-likelihood (not evaluable, numerical failure, model error, capped; log-posterior -inf).
The sampling loop hands the failure records to ``failures.csv`` and gives emcee the floats.

Worker processes and MPI ranks get the posterior once, from the pool's initializer
:func:`install_posterior` (``make_pool(..., initializer=install_posterior,
initargs=(posterior,))``); each task then carries only its point (:func:`pool_target`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError, NotEvaluable, NumericalFailure
from ..likelihood.bounds import spectra_cap
from .failures import (
    NOT_REPRESENTED,
    ModelError,
    capped_failure,
    computing,
    failure_of,
    nonfinite_failure,
)
from .priors import Prior


class CappedEvaluation(Exception):
    """The spectra at this point are capped: the log-likelihood is only an upper bound."""

    def __init__(self, cap: str, log_likelihood: float):
        super().__init__(cap)
        self.cap = cap
        self.log_likelihood = log_likelihood


class Posterior:
    """log posterior = log prior + log likelihood of a parameter dict, with derived numbers.

    Parameters
    ----------
    prior : :class:`~bouncelike.sampling.priors.Prior`
    log_likelihood : callable(params: dict) -> float (picklable: module-level or an object)
    derived : callable(params: dict) -> dict, optional; the entries named by the prior's
        derived parameters are stored with the samples.
    """

    def __init__(self, prior: Prior, log_likelihood: Callable[[dict], float],
                 derived: Callable[[dict], dict] | None = None):
        self.prior = prior
        self.log_likelihood = log_likelihood
        self.derived = derived
        self.derived_names = prior.derived_names

    @property
    def blob_names(self) -> tuple[str, ...]:
        """The numbers stored with each sample besides the sampled parameters."""
        return ("log_likelihood", *self.derived_names)

    def evaluate(self, params: dict[str, float]) -> tuple[float, dict[str, float]]:
        """Log-likelihood and derived numbers of a full parameter dict (raises on failure)."""
        ll = float(computing("likelihood", self.log_likelihood, params))
        der = (computing("derived", self.derived, params)
               if (self.derived and self.derived_names) else {})
        return ll, der

    def __call__(self, theta: np.ndarray) -> tuple[Any, ...]:
        nan_derived = (math.nan,) * len(self.derived_names)
        lp = self.prior.log_prior(theta)
        if not math.isfinite(lp):
            return (-math.inf, math.nan, *nan_derived, None)
        try:
            ll, der = self.evaluate(self.prior.full_parameters(theta))
        except CappedEvaluation as cap:
            return (-math.inf, math.nan, *nan_derived,
                    capped_failure(cap.cap, cap.log_likelihood))
        except (NumericalFailure, InputError, ModelError) as exc:
            return (-math.inf, math.nan, *nan_derived, failure_of(exc))
        if not math.isfinite(ll):
            return (-math.inf, math.nan, *nan_derived, nonfinite_failure(ll))
        return (lp + ll, ll, *(float(der.get(n, math.nan)) for n in self.derived_names), None)


@dataclass(frozen=True)
class SummarisedSpectra:
    """Spectra together with their pivot summaries, computed once.

    The likelihood reads the summaries through ``summary_at`` (the hook of
    :func:`~bouncelike.spectra.summary.summarize`) instead of fitting them again."""

    spectra: Any
    summaries: dict[float, Any]

    def scalar(self, k: Any) -> Any:
        return self.spectra.scalar(k)

    def tensor(self, k: Any) -> Any:
        return self.spectra.tensor(k)

    @property
    def notes(self) -> Any:
        return getattr(self.spectra, "notes", ())

    def summary_at(self, pivot: float) -> Any:
        return self.summaries[pivot]

    @property
    def unrepresented_below(self) -> Any:
        """Where the wrapped spectra stop being a prediction (TabulatedSpectra), if known."""
        return getattr(self.spectra, "unrepresented_below", None)

    def averaged_power(self, k: Any, resolution: float | None) -> Any:
        """Period-mean protocol of the wrapped spectra (bouncelike.spectra.oscillations)."""
        from ..spectra.oscillations import averaged_power

        return averaged_power(self.spectra, k, resolution)


class ModelPosterior(Posterior):
    """Posterior of a forward model (:mod:`bouncelike.models`) scored by a
    likelihood object with ``.summaries(spectra)``, ``.pivots`` and
    ``.log_likelihood(spectra)`` (:mod:`bouncelike.likelihood`).

    * Capped spectra (:func:`spectra_cap`) give a capped evaluation: their log-likelihood is
      an upper bound, recorded as such, and the point gets no posterior weight.
    * ``require_summary_fit``: the Gaussian likelihood scores the amplitude, tilt, running and
      r of a cubic in ln k fitted around each pivot. A featured spectrum that this cubic does
      not represent within the likelihood's tolerance cannot be scored faithfully; with this
      flag such a point is not evaluable ("not represented by the pivot summary") instead of
      getting a verdict from numbers that do not describe it. Spectra with an exact
      re-expansion (power laws) always pass. The fit is computed once and scored as is.
    """

    def __init__(self, prior: Prior, model: Any, likelihood: Any,
                 require_summary_fit: bool = True):
        self.model = model
        self.likelihood = likelihood
        self.require_summary_fit = require_summary_fit
        super().__init__(prior, self._log_likelihood, model.derived)

    def _log_likelihood(self, params: dict[str, float]) -> float:
        spectra = computing("spectra", self.model.spectra, params)
        cap = spectra_cap(spectra)
        if cap:
            raise CappedEvaluation(cap, computing("likelihood", self.likelihood.log_likelihood,
                                                  spectra))
        if self.require_summary_fit and not hasattr(spectra, "summary_at"):
            summaries = computing("summary", self.likelihood.summaries, spectra)
            if not all(s.fit_ok for s in summaries):
                raise NotEvaluable(NOT_REPRESENTED)
            spectra = SummarisedSpectra(spectra, dict(zip(self.likelihood.pivots, summaries,
                                                          strict=True)))
        return self.likelihood.log_likelihood(spectra)


# -- the posterior in worker processes ------------------------------------------------------

_INSTALLED: list[Posterior] = []


def install_posterior(posterior: Posterior) -> None:
    """Pool initializer: make ``posterior`` the one this worker process evaluates.

    Pass it to the pool (``make_pool(workers, initializer=install_posterior,
    initargs=(posterior,))``): each worker (forked process or MPI rank) then holds the
    posterior, and each task sends only the point, not the pickled posterior -- what makes a
    pool pay off for millisecond likelihoods."""
    _INSTALLED[:] = [posterior]


def evaluate_installed(theta: np.ndarray) -> tuple[Any, ...]:
    """The task a pool built with :func:`install_posterior` runs."""
    if not _INSTALLED:
        raise RuntimeError("no posterior in this worker: build the pool with "
                           "initializer=install_posterior, initargs=(posterior,)")
    return _INSTALLED[0](theta)


def pool_target(pool: Any, posterior: Posterior) -> Callable[[np.ndarray], tuple]:
    """The function to map over points: the installed posterior when ``pool`` was built with
    it, else the posterior itself (pickled with each task by a process pool)."""
    args = tuple(getattr(pool, "initargs", ()))
    if getattr(pool, "initializer", None) is install_posterior and args and args[0] is posterior:
        return evaluate_installed
    return posterior
