"""The sampling loop: start or resume a posterior run, advance emcee, checkpoint, stop.

The loop only loops. It places walkers inside the prior support, advances emcee's ensemble
sampler in chunks of ``checkpoint_every`` steps into a :class:`~bouncelike.sampling.storage.
RunBackend` (which appends to the run folder's files at each checkpoint), and checks
convergence (:mod:`bouncelike.sampling.convergence`) every ``checkpoint_every`` steps.

Reproducibility: walkers start from a ``numpy.random.Generator`` seeded with ``seed``; emcee's
own ``RandomState`` is seeded from it and stored with every checkpoint, so a resumed run
(after any interruption, SIGKILL included) ends bit-identical to an uninterrupted one.

Before placing the walkers a new run evaluates ``prior_survey_draws`` draws from the prior
(their own random stream, so the chain does not depend on them): the failures among them give
the prior fraction each failure reason covers (:mod:`bouncelike.sampling.failures`).

Ctrl-C (SIGINT) during the loop finishes the current step, writes a checkpoint and stops with
:class:`~bouncelike.errors.RunInterrupted` (resume with ``--resume``); a second Ctrl-C stops
at once (the last checkpoint stays valid). The likelihood runs through any pool with an ordered
``map`` (:func:`bouncelike.parallel.make_pool`); results do not depend on the pool.
"""

from __future__ import annotations

import contextlib
import math
import signal
import threading
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError, RunInterrupted
from ..io import clean_orphans
from ..progress import progress
from . import chains
from .convergence import (
    RunResult,
    autocorrelation_time,
    burn_in_and_thinning,
    converged,
    result_summary,
)
from .failures import NOT_REPRESENTED, FailureTally, RecordingPool, load_failures
from .lock import RunLock
from .posterior import Posterior, pool_target
from .storage import RunBackend, has_checkpoint

#: Upper bounds of the sampler's sizes (the memory of the chain held while running and the
#: size of chain.csv grow with walkers x steps).
MAX_WALKERS = 4096
MAX_STEPS = 1_000_000
MAX_CHAIN_ROWS = 50_000_000
MAX_SURVEY_DRAWS = 100_000
_META = ("tau_history", "tau_steps", "fingerprint", "finished", "evaluations", "survey_draws")


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
    prior_survey_draws: int = 200

    def __post_init__(self) -> None:
        for key, value, lo, hi in (("walkers", self.walkers, 2, MAX_WALKERS),
                                   ("max_steps", self.max_steps, 1, MAX_STEPS),
                                   ("checkpoint_every", self.checkpoint_every, 1, MAX_STEPS),
                                   ("prior_survey_draws", self.prior_survey_draws, 0,
                                    MAX_SURVEY_DRAWS)):
            if not lo <= value <= hi:
                raise InputError(f"'sampling.{key}' = {value} is out of range; allowed: "
                                 f">= {lo} and <= {hi}")
        if self.walkers * self.max_steps > MAX_CHAIN_ROWS:
            raise InputError(
                f"'sampling.walkers' x 'sampling.max_steps' = {self.walkers} x "
                f"{self.max_steps} is out of range; allowed: at most {MAX_CHAIN_ROWS:.0e} "
                "chain rows (the chain is held in memory while running)")

    def fingerprint_items(self) -> dict[str, Any]:
        """Settings that change the chain (max_steps is excluded: a run may be extended)."""
        return {"walkers": self.walkers, "min_steps": self.min_steps,
                "tau_multiple": self.tau_multiple, "tau_tolerance": self.tau_tolerance,
                "checkpoint_every": self.checkpoint_every, "seed": self.seed}


class InterruptRequest:
    """Ctrl-C as a request: the loop finishes its step and checkpoints; twice stops at once."""

    def __init__(self) -> None:
        self.requested = False
        self._previous: Any = None

    def _handle(self, signum: int, frame: Any) -> None:
        if self.requested:
            raise KeyboardInterrupt
        self.requested = True

    def __enter__(self) -> InterruptRequest:
        if threading.current_thread() is threading.main_thread():
            self._previous = signal.signal(signal.SIGINT, self._handle)
        return self

    def __exit__(self, *exc: object) -> None:
        if self._previous is not None:
            signal.signal(signal.SIGINT, self._previous)


def run_sampler(posterior: Posterior, settings: SamplerSettings, folder: str | Path, *,
                pool: Any = None, resume: bool = False, manifest: dict[str, Any] | None = None,
                fingerprint: str = "", show_progress: bool = True,
                stop_after: int | None = None, elsewhere: str = "choose another run folder"
                ) -> RunResult:
    """Run (or resume) a posterior run writing into ``folder``.

    ``stop_after``: stop (as if interrupted) once this many steps exist in the chain; for
    tests of resumption. ``elsewhere`` ends refusals with the way to run somewhere else.
    Raises :class:`InputError` when the folder is locked by a live run, holds a chain and
    ``resume`` is False, or holds a chain of another configuration; a refused run leaves no
    folder behind.
    """
    folder = Path(folder)
    if settings.walkers < 2 * posterior.prior.ndim:
        raise InputError(f"'sampling.walkers' = {settings.walkers} is too small; allowed: >= "
                         f"2 x (number of sampled parameters) = {2 * posterior.prior.ndim}")
    created = [p for p in (folder, *folder.parents) if not p.exists()]
    try:
        with RunLock(folder, elsewhere), InterruptRequest() as interrupt:
            return _run_locked(posterior, settings, folder, pool, resume, dict(manifest or {}),
                               fingerprint, show_progress, stop_after, elsewhere, interrupt)
    except BaseException:
        for p in created:  # deepest first; only folders left empty (a refused start)
            with contextlib.suppress(OSError):
                p.rmdir()
        raise


def _run_locked(posterior: Posterior, settings: SamplerSettings, folder: Path, pool: Any,
                resume: bool, manifest: dict[str, Any], fingerprint: str, show_progress: bool,
                stop_after: int | None, elsewhere: str, interrupt: InterruptRequest
                ) -> RunResult:
    import emcee

    t0 = time.perf_counter()
    names, bnames = posterior.prior.sampled_names, posterior.blob_names
    clean_orphans(folder)  # temporary files of a writer killed mid-write
    tally = FailureTally()
    if has_checkpoint(folder):
        if not resume:
            raise InputError(f"run folder '{folder}' already holds a chain; pass --resume to "
                             f"continue it, or {elsewhere}")
        backend = RunBackend.open(folder, names, bnames, _META, elsewhere)
        if fingerprint and str(backend.meta["fingerprint"]) != fingerprint:
            raise InputError(f"run folder '{folder}' holds a chain of a different "
                             "configuration; --resume needs the same prior, model, likelihood "
                             f"and sampling settings (max_steps and workers may change), or "
                             f"{elsewhere}")
        tally.add_frame(load_failures(folder))
        recorder = RecordingPool(pool, int(backend.meta["evaluations"]))
    else:
        left = [n for n in (chains.STATE, chains.CHAIN, chains.SAMPLES, chains.MANIFEST)
                if (folder / n).exists()]
        if left:  # a run whose checkpoint was lost: never overwrite its chain
            raise InputError(f"run folder '{folder}' holds {', '.join(left)} but no readable "
                             f"checkpoint '{chains.STATE}' (deleted or damaged), so it can be "
                             f"neither resumed nor overwritten; move it away, or {elsewhere}")
        recorder = RecordingPool(pool)
        backend = _fresh_start(posterior, settings, folder, recorder, pool, fingerprint, tally)
    target = pool_target(pool, posterior)
    meta = backend.meta
    tau_hist = [np.asarray(t) for t in meta["tau_history"]]
    tau_steps = [int(s) for s in meta["tau_steps"]]
    steps = backend.iteration
    done = bool(tau_hist) and converged(steps, tau_hist, settings.min_steps,
                                        settings.tau_multiple, settings.tau_tolerance)
    limit = settings.max_steps if stop_after is None else min(settings.max_steps, stop_after)
    sampler = emcee.EnsembleSampler(settings.walkers, posterior.prior.ndim, target,
                                    pool=recorder, backend=backend)
    bar = progress(total=settings.max_steps, desc=f"sampling {folder}", enabled=show_progress)
    bar.update(steps)
    wrote = False
    try:
        while steps < limit and not done and not interrupt.requested:
            wrote = True
            n = min(settings.checkpoint_every - steps % settings.checkpoint_every,
                    limit - steps)
            recorder.stage, recorder.step = "sampling", steps + 1
            for _ in sampler.sample(backend.initial_state(), iterations=n,
                                    skip_initial_state_check=True):
                steps += 1
                recorder.step = steps + 1
                bar.update(1)
                if interrupt.requested:
                    break
            if steps % settings.checkpoint_every == 0 or steps == settings.max_steps:
                tau_hist.append(autocorrelation_time(backend.get_chain()))
                tau_steps.append(steps)
                done = converged(steps, tau_hist, settings.min_steps, settings.tau_multiple,
                                 settings.tau_tolerance)
            rows = recorder.take()
            tally.add(rows)
            meta = _meta(tau_hist, tau_steps, fingerprint, done or steps >= settings.max_steps,
                         recorder.evaluations, int(meta["survey_draws"]), posterior.prior.ndim)
            backend.checkpoint(rows, meta)
            result = _result(folder, backend, posterior, settings, done, t0, recorder, tally)
            _write_outputs(folder, backend, result, manifest, bool(meta["finished"]))
    finally:
        bar.close()
    result = _result(folder, backend, posterior, settings, done, t0, recorder, tally)
    if not wrote:  # nothing to add: refresh the manifest (e.g. a new [report] section)
        _write_outputs(folder, backend, result, manifest, bool(meta["finished"]))
    if interrupt.requested and not bool(meta["finished"]):
        raise RunInterrupted(f"stopped after step {steps} with a checkpoint in '{folder}'; "
                             "continue the run with --resume")
    return result


def _meta(tau_hist: list, tau_steps: list, fingerprint: str, finished: bool, evaluations: int,
          survey_draws: int, ndim: int) -> dict[str, Any]:
    return {"tau_history": np.array(tau_hist, dtype=float).reshape(-1, ndim),
            "tau_steps": np.array(tau_steps, dtype=np.int64),
            "fingerprint": np.array(fingerprint), "finished": np.array(finished),
            "evaluations": np.array(evaluations, dtype=np.int64),
            "survey_draws": np.array(survey_draws, dtype=np.int64)}


def _fresh_start(posterior: Posterior, settings: SamplerSettings, folder: Path,
                 recorder: RecordingPool, pool: Any, fingerprint: str,
                 tally: FailureTally) -> RunBackend:
    """Survey the prior, place the walkers where the posterior is non-zero, first checkpoint."""
    prior = posterior.prior
    target = pool_target(pool, posterior)
    n_survey = settings.prior_survey_draws
    if n_survey:
        recorder.stage, recorder.step = "prior_survey", 0
        recorder.map(target, list(prior.draw(np.random.default_rng([settings.seed, 1]),
                                             n_survey)))
    recorder.stage = "placement"
    rng = np.random.default_rng(settings.seed)
    p0 = prior.initial_walkers(rng, settings.walkers)
    lp, blobs = _evaluate(recorder, target, p0)
    for _ in range(50):
        bad = ~np.isfinite(lp)
        if not bad.any():
            break
        p0[bad] = prior.draw(rng, int(bad.sum()))
        lp[bad], blobs[bad] = _evaluate(recorder, target, p0[bad])
    if not np.all(np.isfinite(lp)):
        reasons = sorted({f"{r.failure.reason} ({r.failure.kind})" for r in recorder.pending()
                          if r.stage == "placement"})
        text = "; ".join(reasons) or "zero posterior density"
        hint = (" or set sampling.require_summary_fit = false to score featured spectra by "
                "their pivot summary anyway" if NOT_REPRESENTED in text else "")
        raise InputError(f"could not place {int((~np.isfinite(lp)).sum())} walkers where the "
                         f"posterior is non-zero after 50 draws from the prior ({text}); "
                         f"check the prior ranges{hint}")
    seed32 = int(rng.integers(0, 2**32 - 1))
    rows = recorder.take()
    tally.add(rows)
    meta = _meta([], [], fingerprint, False, recorder.evaluations, n_survey, prior.ndim)
    return RunBackend.create(folder, prior.sampled_names, posterior.blob_names, p0, lp, blobs,
                             np.random.RandomState(seed32).get_state(), rows, meta)


def _evaluate(recorder: RecordingPool, target: Any, points: np.ndarray
              ) -> tuple[np.ndarray, np.ndarray]:
    results = recorder.map(target, [np.array(p) for p in points])
    return (np.array([r[0] for r in results], dtype=float),
            np.array([r[1:] for r in results], dtype=float))


def _result(folder: Path, backend: RunBackend, posterior: Posterior, s: SamplerSettings,
            done: bool, t0: float, recorder: RecordingPool, tally: FailureTally) -> RunResult:
    steps = backend.iteration
    hist = backend.meta["tau_history"]
    tau = np.asarray(hist[-1]) if len(hist) else np.full(posterior.prior.ndim, np.nan)
    burn, thin, ess = burn_in_and_thinning(tau, steps, s.walkers)
    acceptance = float(np.mean(backend.accepted) / steps) if steps else math.nan
    status = "converged" if done else (
        "max_steps_reached" if steps >= s.max_steps else "running")
    return RunResult(folder=folder, status=status, steps=steps, walkers=s.walkers,
                     converged=done, tau=tau, burn_in=burn, thin=thin, ess=ess,
                     acceptance=acceptance, failures=tally.by_reason(),
                     names=posterior.prior.sampled_names, blob_names=posterior.blob_names,
                     wall_time=time.perf_counter() - t0, evaluations=recorder.evaluations,
                     tau_multiple=s.tau_multiple,
                     failure_summary=tally.summary(int(backend.meta["survey_draws"])))


def _write_outputs(folder: Path, backend: RunBackend, result: RunResult,
                   manifest: dict[str, Any], final: bool) -> None:
    """The manifest (and, when the run is over, samples.csv) after a checkpoint."""
    from ..io import write_text_atomic

    header = chains.csv_header(backend.names, backend.blob_names)
    m = dict(manifest)
    m["sampled_parameters"] = list(backend.names)
    m["blob_columns"] = list(backend.blob_names)
    m["columns"] = header.strip().split(",")
    m["run"] = result_summary(result)
    m["run"]["likelihood_evaluations"] = result.evaluations
    if final:
        b, t = result.burn_in, result.thin
        coords, lp, blobs = backend.arrays()
        steps = np.arange(b + 1, backend.iteration + 1)[::t]
        rows = chains.csv_rows(coords[b::t], lp[b::t], blobs[b::t], steps)
        write_text_atomic(folder / chains.SAMPLES, header + rows)
        m["samples_file"] = chains.SAMPLES
    m["chain_file"] = chains.CHAIN
    m["failures_file"] = chains.FAILURES
    chains.write_manifest(folder, m)
