"""Posterior sampling with emcee: start, checkpoint, resume, converge, report.

The driver only loops: it places walkers inside the prior support, advances emcee's ensemble
sampler in chunks of ``checkpoint_every`` steps, and after each chunk writes a checkpoint
(:mod:`bouncelike.sampling.chains`) and checks convergence by the integrated autocorrelation
time tau:

* converged when the chain is longer than ``tau_multiple`` x tau for every parameter and tau
  changed by less than ``tau_tolerance`` (relative) since the previous check (the criterion of
  the emcee documentation, "Autocorrelation analysis & convergence"; common practice);
* burn-in = 2 max(tau) steps, thinning = max(1, min(tau) / 2) (common practice, same source);
* effective sample size per parameter = walkers x (steps - burn-in) / tau.

Reproducibility: walkers start from a ``numpy.random.Generator`` seeded with ``seed``; emcee's
own ``RandomState`` is seeded from it and its full state is stored at every checkpoint together
with the walkers' positions, log-probabilities and blobs. A resumed run (after any
interruption, SIGKILL included) therefore continues with exactly the numbers an uninterrupted
run would have drawn, and ends bit-identical to it. The convergence test runs at the same
steps in both, so they stop at the same step.

The likelihood is evaluated through any pool with an ordered ``map``
(:func:`bouncelike.parallel.make_pool`): serial, local processes or MPI ranks; results do not
depend on the pool. A forward model that fails numerically gives log-likelihood -inf; the
reason is counted (every evaluation, accepted or not) and reported.
"""

from __future__ import annotations

import math
import re
import time
import zlib
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError, NumericalFailure
from ..io import write_text_atomic
from ..progress import progress
from . import chains
from .priors import Prior

#: Exceptions of a forward model that count as a failed evaluation (log-likelihood -inf).
FAILURES = (NumericalFailure, ArithmeticError, ValueError)
_NUMBER = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?")


def failure_text(exc: BaseException) -> str:
    """A reason that groups failures of one kind: the message with numbers replaced by #."""
    return _NUMBER.sub("#", f"{type(exc).__name__}: {exc}")[:200]


def failure_code(text: str) -> float:
    """A stable non-zero integer (exact in a float64 blob) identifying a failure reason."""
    return float((zlib.crc32(text.encode()) & 0x7FFFFFFF) or 1)


NONFINITE = "non-finite log-likelihood"
NOT_REPRESENTED = ("spectrum not represented by the pivot summary (the cubic in ln k fitted "
                   "around a pivot misses ln P by more than the likelihood's tolerance): not "
                   "scored")


class Posterior:
    """log posterior = log prior + log likelihood of a parameter dict, with derived numbers.

    Parameters
    ----------
    prior : :class:`~bouncelike.sampling.priors.Prior`
    log_likelihood : callable(params: dict) -> float (picklable: module-level or an object)
    derived : callable(params: dict) -> dict, optional; the entries named by the prior's
        derived parameters are stored with the samples.

    Calling it with a point ``theta`` of the sampled parameters returns the tuple emcee wants:
    ``(log_posterior, log_likelihood, *derived, failure_code)``; the blobs are floats.
    """

    def __init__(self, prior: Prior, log_likelihood: Callable[[dict], float],
                 derived: Callable[[dict], dict] | None = None):
        self.prior = prior
        self.log_likelihood = log_likelihood
        self.derived = derived
        self.derived_names = prior.derived_names

    @property
    def blob_names(self) -> tuple[str, ...]:
        return ("log_likelihood", *self.derived_names, "failure")

    def evaluate(self, params: dict[str, float]) -> tuple[float, dict[str, float]]:
        ll = float(self.log_likelihood(params))
        der = self.derived(params) if (self.derived and self.derived_names) else {}
        return ll, der

    def __call__(self, theta: np.ndarray) -> tuple[float, ...]:
        nan_derived = (math.nan,) * len(self.derived_names)
        lp = self.prior.log_prior(theta)
        if not math.isfinite(lp):
            return (-math.inf, math.nan, *nan_derived, 0.0)
        try:
            ll, der = self.evaluate(self.prior.full_parameters(theta))
        except FAILURES as exc:
            return (-math.inf, math.nan, *nan_derived, failure_code(failure_text(exc)))
        if not math.isfinite(ll):
            if ll == -math.inf:
                return (-math.inf, ll, *nan_derived, failure_code(NONFINITE))
            return (-math.inf, math.nan, *nan_derived, failure_code(NONFINITE))
        return (lp + ll, ll, *(float(der.get(n, math.nan)) for n in self.derived_names), 0.0)

    def failure_reason(self, theta: np.ndarray) -> str:
        """Re-evaluate a failed point to recover the text of its failure."""
        try:
            ll, _ = self.evaluate(self.prior.full_parameters(theta))
        except FAILURES as exc:
            return failure_text(exc)
        return NONFINITE if not math.isfinite(ll) else "failure not reproduced"


class ModelPosterior(Posterior):
    """Posterior of a forward model (:mod:`bouncelike.models`) scored by a
    likelihood object with ``.log_likelihood(spectra)`` (:mod:`bouncelike.likelihood`).

    ``require_summary_fit``: the Gaussian likelihood scores the amplitude, tilt, running and r
    of a cubic in ln k fitted around each pivot. A featured spectrum (bounce features in the
    window) that this cubic does not represent within the likelihood's tolerance cannot be
    scored faithfully; with this flag such a point gets log-likelihood -inf and its reason is
    counted ("not represented by the pivot summary"), instead of a verdict computed from
    numbers that do not describe it. Spectra with an exact re-expansion (power laws) always
    pass.
    """

    def __init__(self, prior: Prior, model: Any, likelihood: Any,
                 require_summary_fit: bool = True):
        self.model = model
        self.likelihood = likelihood
        self.require_summary_fit = require_summary_fit
        super().__init__(prior, self._log_likelihood, model.derived)

    def _log_likelihood(self, params: dict[str, float]) -> float:
        spectra = self.model.spectra(params)
        if self.require_summary_fit and not hasattr(spectra, "summary_at"):
            for s in self.likelihood.summaries(spectra):
                if not s.fit_ok:
                    raise NumericalFailure(NOT_REPRESENTED)
        return self.likelihood.log_likelihood(spectra)


@dataclass(frozen=True)
class SamplerSettings:
    """Numerical settings of a run (the ``[sampling]`` section of a configuration)."""

    walkers: int = 32
    max_steps: int = 5000
    min_steps: int = 200
    tau_multiple: float = 50.0
    tau_tolerance: float = 0.05
    checkpoint_every: int = 100
    seed: int = 0

    def fingerprint_items(self) -> dict[str, Any]:
        """Settings that change the chain (max_steps is excluded: a run may be extended)."""
        return {"walkers": self.walkers, "min_steps": self.min_steps,
                "tau_multiple": self.tau_multiple, "tau_tolerance": self.tau_tolerance,
                "checkpoint_every": self.checkpoint_every, "seed": self.seed}


@dataclass
class RunResult:
    folder: Path
    status: str
    steps: int
    converged: bool
    tau: np.ndarray
    burn_in: int
    thin: int
    ess: np.ndarray
    acceptance: float
    failures: dict[str, int]
    names: tuple[str, ...]
    blob_names: tuple[str, ...]
    wall_time: float
    evaluations: int = 0
    summary: dict[str, Any] = field(default_factory=dict)


_INSTALLED: list[Posterior] = []


def install_posterior(posterior: Posterior) -> None:
    """Make ``posterior`` the process-wide target before worker processes or MPI ranks start.

    Forked workers (and MPI ranks, which run the same program) then hold it already, and each
    task sends only the point, not the pickled posterior: this is what makes a process pool
    pay off for millisecond likelihoods. Call it before :func:`bouncelike.parallel.make_pool`.
    """
    _INSTALLED[:] = [posterior]


def _installed_log_posterior(theta: np.ndarray) -> tuple[float, ...]:
    if not _INSTALLED:
        raise RuntimeError("install_posterior() must run before the worker pool is created")
    return _INSTALLED[0](theta)


class CountingPool:
    """Wraps a pool's ``map`` to count failure reasons of every evaluation (accepted or not)."""

    def __init__(self, pool: Any, posterior: Posterior, codes: dict[float, int],
                 texts: dict[float, str]):
        self.pool = pool
        self.posterior = posterior
        self.codes = codes
        self.texts = texts
        self.evaluations = 0

    def map(self, func: Callable, tasks: Any) -> list:
        tasks = list(tasks)
        results = list(self.pool.map(func, tasks)) if self.pool is not None else [
            func(t) for t in tasks]
        self.evaluations += len(tasks)
        for theta, res in zip(tasks, results, strict=False):
            code = float(res[-1])
            if code != 0.0:
                self.codes[code] = self.codes.get(code, 0) + 1
                if code not in self.texts:
                    self.texts[code] = self.posterior.failure_reason(np.asarray(theta))
        return results


def _target(posterior: Posterior) -> Any:
    """The function handed to the pool: the installed one when ``posterior`` is installed."""
    return _installed_log_posterior if _INSTALLED and _INSTALLED[0] is posterior else posterior


def _evaluate(pool: CountingPool, posterior: Posterior, points: np.ndarray
              ) -> tuple[np.ndarray, np.ndarray]:
    results = pool.map(_target(posterior), [np.array(p) for p in points])
    lp = np.array([r[0] for r in results], dtype=float)
    blobs = np.array([r[1:] for r in results], dtype=float)
    return lp, blobs


def autocorrelation_time(coords: np.ndarray) -> np.ndarray:
    """Integrated autocorrelation time per parameter of a (steps, walkers, ndim) chain
    (emcee's estimator, window constant c = 5)."""
    import emcee

    return np.asarray(emcee.autocorr.integrated_time(coords, c=5, tol=0, quiet=True))


def run_sampler(posterior: Posterior, settings: SamplerSettings, folder: str | Path, *,
                pool: Any = None, resume: bool = False, manifest: dict[str, Any] | None = None,
                fingerprint: str = "", show_progress: bool = True,
                stop_after: int | None = None) -> RunResult:
    """Run (or resume) a posterior run writing into ``folder``.

    ``stop_after``: stop (as if interrupted) once this many steps exist in the chain; for
    tests of resumption. Raises :class:`InputError` when the folder is locked by a live run,
    holds a chain and ``resume`` is False, or holds a chain of another configuration.
    """
    import emcee

    folder = Path(folder)
    prior = posterior.prior
    ndim = prior.ndim
    if settings.walkers < 2 * ndim:
        raise InputError(f"'sampling.walkers' = {settings.walkers} is too small; allowed: >= "
                         f"2 x (number of sampled parameters) = {2 * ndim}")
    manifest = dict(manifest or {})
    t0 = time.perf_counter()
    with chains.RunLock(folder):
        codes: dict[float, int] = {}
        texts: dict[float, str] = {}
        ckpt = chains.Checkpoint.load(folder) if chains.has_checkpoint(folder) else None
        if ckpt is not None and not resume:
            raise InputError(f"run folder '{folder}' already holds a chain; pass --resume to "
                             "continue it or choose another sampling.run_name")
        if ckpt is not None and fingerprint and ckpt.fingerprint != fingerprint:
            raise InputError(f"run folder '{folder}' holds a chain of a different "
                             "configuration; --resume needs the same prior, model, likelihood "
                             "and sampling settings (max_steps and workers may change)")
        if ckpt is not None:
            for c, n, t in zip(ckpt.failure_codes, ckpt.failure_counts, ckpt.failure_texts,
                               strict=True):
                codes[float(c)] = int(n)
                texts[float(c)] = str(t)
        cpool = CountingPool(pool, posterior, codes, texts)
        sampler = emcee.EnsembleSampler(settings.walkers, ndim, _target(posterior), pool=cpool)
        if ckpt is None:
            ckpt = _fresh_start(posterior, settings, cpool, sampler, fingerprint)
        state = emcee.State(ckpt.state_coords.copy(), log_prob=ckpt.state_log_prob.copy(),
                            blobs=ckpt.state_blobs.copy(), random_state=ckpt.random_state)
        coords_parts = [ckpt.coords]
        lp_parts = [ckpt.log_prob]
        blob_parts = [ckpt.blobs]
        steps = ckpt.steps
        accepted = ckpt.accepted.copy()
        tau_hist = list(ckpt.tau_history)
        tau_steps = list(ckpt.tau_steps)
        converged = _converged(steps, tau_hist, settings) if tau_hist else False
        limit = settings.max_steps if stop_after is None else min(settings.max_steps, stop_after)
        bar = progress(total=settings.max_steps, desc=f"sampling {folder}",
                       enabled=show_progress)
        bar.update(steps)
        text = _ChainText(prior.sampled_names, posterior.blob_names)
        wrote = False
        try:
            while steps < limit and not converged:
                wrote = True
                n = min(settings.checkpoint_every - steps % settings.checkpoint_every,
                        limit - steps)
                c_new = np.empty((n, settings.walkers, ndim))
                lp_new = np.empty((n, settings.walkers))
                b_new = np.empty((n, settings.walkers, len(posterior.blob_names)))
                prev = state.coords.copy()
                for i, st in enumerate(sampler.sample(state, iterations=n, store=False,
                                                      skip_initial_state_check=True)):
                    c_new[i], lp_new[i], b_new[i] = st.coords, st.log_prob, st.blobs
                    accepted += np.any(st.coords != prev, axis=1)
                    prev = st.coords.copy()
                    bar.update(1)
                state = st
                coords_parts.append(c_new)
                lp_parts.append(lp_new)
                blob_parts.append(b_new)
                steps += n
                if steps % settings.checkpoint_every == 0 or steps == settings.max_steps:
                    coords_all = np.concatenate(coords_parts)
                    coords_parts = [coords_all]
                    tau_hist.append(autocorrelation_time(coords_all))
                    tau_steps.append(steps)
                    converged = _converged(steps, tau_hist, settings)
                lp_all, b_all = np.concatenate(lp_parts), np.concatenate(blob_parts)
                coords_all = np.concatenate(coords_parts)
                coords_parts, lp_parts, blob_parts = [coords_all], [lp_all], [b_all]
                finished = converged or steps >= settings.max_steps
                ckpt = chains.Checkpoint(
                    coords=coords_all, log_prob=lp_all, blobs=b_all,
                    state_coords=state.coords, state_log_prob=state.log_prob,
                    state_blobs=np.asarray(state.blobs, dtype=float),
                    random_state=sampler.random_state, accepted=accepted,
                    failure_codes=np.array(list(codes), dtype=np.int64),
                    failure_counts=np.array(list(codes.values()), dtype=np.int64),
                    failure_texts=np.array([texts[c] for c in codes], dtype=str),
                    tau_history=np.array(tau_hist).reshape(-1, ndim),
                    tau_steps=np.array(tau_steps, dtype=np.int64),
                    fingerprint=fingerprint, finished=finished)
                result = _result(folder, ckpt, posterior, settings, converged, t0,
                                 cpool.evaluations)
                _write(folder, ckpt, posterior, result, settings, manifest, final=finished,
                       text=text)
        finally:
            bar.close()
        if ckpt.steps == 0:
            raise InputError("'sampling.max_steps' must be > 0")
        result = _result(folder, ckpt, posterior, settings, converged, t0, cpool.evaluations)
        if not wrote:  # nothing to add: refresh the manifest (e.g. a new [report] section)
            _write(folder, ckpt, posterior, result, settings, manifest,
                   final=converged or steps >= settings.max_steps, text=text)
        return result


def _fresh_start(posterior: Posterior, settings: SamplerSettings, cpool: CountingPool,
                 sampler: Any, fingerprint: str) -> chains.Checkpoint:
    prior = posterior.prior
    rng = np.random.default_rng(settings.seed)
    p0 = prior.initial_walkers(rng, settings.walkers)
    lp, blobs = _evaluate(cpool, posterior, p0)
    for _ in range(50):
        bad = ~np.isfinite(lp)
        if not bad.any():
            break
        p0[bad] = prior.draw(rng, int(bad.sum()))
        lp[bad], blobs[bad] = _evaluate(cpool, posterior, p0[bad])
    if not np.all(np.isfinite(lp)):
        reasons = "; ".join(sorted(set(cpool.texts.values()))) or "zero posterior density"
        hint = (" or set sampling.require_summary_fit = false to score featured spectra by "
                "their pivot summary anyway" if NOT_REPRESENTED in reasons else "")
        raise InputError(f"could not place {int((~np.isfinite(lp)).sum())} walkers where the "
                         f"posterior is non-zero after 50 draws from the prior ({reasons}); "
                         f"check the prior ranges{hint}")
    seed32 = int(rng.integers(0, 2**32 - 1))
    ndim, nb = prior.ndim, len(posterior.blob_names)
    return chains.Checkpoint(
        coords=np.empty((0, settings.walkers, ndim)), log_prob=np.empty((0, settings.walkers)),
        blobs=np.empty((0, settings.walkers, nb)), state_coords=p0, state_log_prob=lp,
        state_blobs=blobs, random_state=np.random.RandomState(seed32).get_state(),
        accepted=np.zeros(settings.walkers, dtype=np.int64),
        failure_codes=np.zeros(0, np.int64), failure_counts=np.zeros(0, np.int64),
        failure_texts=np.zeros(0, str), tau_history=np.empty((0, ndim)),
        tau_steps=np.zeros(0, np.int64), fingerprint=fingerprint)


def _converged(steps: int, tau_hist: list, s: SamplerSettings) -> bool:
    if steps < s.min_steps or len(tau_hist) < 2:
        return False
    tau, prev = np.asarray(tau_hist[-1]), np.asarray(tau_hist[-2])
    if not np.all(np.isfinite(tau)):
        return False
    return bool(np.all(steps > s.tau_multiple * tau)
                and np.all(np.abs(tau - prev) / tau < s.tau_tolerance))


def _result(folder: Path, ckpt: chains.Checkpoint, posterior: Posterior, s: SamplerSettings,
            converged: bool, t0: float, evaluations: int) -> RunResult:
    steps = ckpt.steps
    tau = ckpt.tau_history[-1] if len(ckpt.tau_history) else np.full(posterior.prior.ndim,
                                                                       np.nan)
    if np.all(np.isfinite(tau)) and tau.size:
        burn = int(min(math.ceil(2 * np.max(tau)), steps // 2))
        thin = max(1, int(0.5 * np.min(tau)))
        ess = s.walkers * (steps - burn) / tau
    else:
        burn, thin, ess = steps // 2, 1, np.full_like(tau, np.nan)
    acceptance = float(np.mean(ckpt.accepted) / steps) if steps else math.nan
    status = "converged" if converged else (
        "max_steps_reached" if steps >= s.max_steps else "running")
    failures = {str(t): int(n)
                for t, n in zip(ckpt.failure_texts, ckpt.failure_counts, strict=True)}
    return RunResult(folder=folder, status=status, steps=steps, converged=converged, tau=tau,
                     burn_in=burn, thin=thin, ess=ess, acceptance=acceptance,
                     failures=failures, names=posterior.prior.sampled_names,
                     blob_names=posterior.blob_names, wall_time=time.perf_counter() - t0,
                     evaluations=evaluations)


def result_summary(r: RunResult, s: SamplerSettings) -> dict[str, Any]:
    """The convergence figures stored in the manifest and printed by the commands."""
    reliable = bool(np.all(np.isfinite(r.tau)) and r.steps > s.tau_multiple * np.max(r.tau))
    return {
        "status": r.status, "steps": r.steps, "walkers": s.walkers,
        "converged": r.converged, "burn_in": r.burn_in, "thin": r.thin,
        "tau": dict(zip(r.names, map(float, r.tau), strict=False)),
        "tau_reliable": reliable,
        "effective_sample_size": dict(zip(r.names, map(float, r.ess), strict=False)),
        "acceptance_fraction": r.acceptance,
        "failures": r.failures,
        "failed_evaluations": int(sum(r.failures.values())),
    }


class _ChainText:
    """chain.csv text kept in memory: each checkpoint formats only its new rows."""

    def __init__(self, names: tuple[str, ...], blob_names: tuple[str, ...]):
        self.header = chains.csv_header(names, blob_names)
        self.parts: list[str] = []
        self.steps = 0

    def update(self, ckpt: chains.Checkpoint) -> str:
        n = ckpt.steps
        if n > self.steps:
            s = slice(self.steps, n)
            self.parts.append(chains.csv_rows(ckpt.coords[s], ckpt.log_prob[s], ckpt.blobs[s],
                                              np.arange(self.steps + 1, n + 1)))
            self.steps = n
        return self.header + "".join(self.parts)


def _write(folder: Path, ckpt: chains.Checkpoint, posterior: Posterior, result: RunResult,
           settings: SamplerSettings, manifest: dict[str, Any], final: bool,
           text: _ChainText) -> None:
    names, bnames = posterior.prior.sampled_names, posterior.blob_names
    ckpt.save(folder)
    write_text_atomic(folder / chains.CHAIN, text.update(ckpt))
    m = dict(manifest)
    m["sampled_parameters"] = list(names)
    m["blob_columns"] = list(bnames)
    m["columns"] = text.header.strip().split(",")
    m["run"] = result_summary(result, settings)
    m["failure_codes"] = {str(int(c)): str(t) for c, t in zip(ckpt.failure_codes,
                                                               ckpt.failure_texts, strict=True)}
    if final:
        b, t = result.burn_in, result.thin
        steps = np.arange(b + 1, ckpt.steps + 1)[::t]
        rows = chains.csv_rows(ckpt.coords[b::t], ckpt.log_prob[b::t], ckpt.blobs[b::t], steps)
        write_text_atomic(folder / chains.SAMPLES, text.header + rows)
        m["samples_file"] = chains.SAMPLES
    m["chain_file"] = chains.CHAIN
    chains.write_manifest(folder, m)
