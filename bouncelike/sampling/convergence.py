"""Convergence of a posterior run by the integrated autocorrelation time tau.

* converged when the chain is longer than ``tau_multiple`` x tau for every parameter and tau
  changed by less than ``tau_tolerance`` (relative) since the previous check (the criterion of
  the emcee documentation, "Autocorrelation analysis & convergence"; common practice);
* burn-in = 2 max(tau) steps, thinning = max(1, min(tau) / 2) (common practice, same source);
* effective sample size per parameter = walkers x (steps - burn-in) / tau.

The checks run every ``checkpoint_every`` steps (and at ``max_steps``), at the same steps in an
uninterrupted and in a resumed run, so both stop at the same step.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np


def autocorrelation_time(coords: np.ndarray) -> np.ndarray:
    """Integrated autocorrelation time per parameter of a (steps, walkers, ndim) chain
    (emcee's estimator, window constant c = 5)."""
    import emcee

    return np.asarray(emcee.autocorr.integrated_time(coords, c=5, tol=0, quiet=True))


def converged(steps: int, tau_history: list[np.ndarray] | np.ndarray, min_steps: int,
              tau_multiple: float, tau_tolerance: float) -> bool:
    """The convergence criterion of the module docstring on the last two tau estimates."""
    if steps < min_steps or len(tau_history) < 2:
        return False
    tau, prev = np.asarray(tau_history[-1]), np.asarray(tau_history[-2])
    if not np.all(np.isfinite(tau)):
        return False
    return bool(np.all(steps > tau_multiple * tau)
                and np.all(np.abs(tau - prev) / tau < tau_tolerance))


def burn_in_and_thinning(tau: np.ndarray, steps: int, walkers: int
                         ) -> tuple[int, int, np.ndarray]:
    """Burn-in (steps), thinning and effective sample sizes (module docstring); without a
    finite tau: half the chain, no thinning, ESS unknown."""
    if tau.size and np.all(np.isfinite(tau)):
        burn = int(min(math.ceil(2 * np.max(tau)), steps // 2))
        thin = max(1, int(0.5 * np.min(tau)))
        return burn, thin, walkers * (steps - burn) / tau
    return steps // 2, 1, np.full_like(tau, np.nan)


@dataclass
class RunResult:
    """Where a run stands: status, convergence figures, failures (reason -> count)."""

    folder: Path
    status: str
    steps: int
    walkers: int
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
    tau_multiple: float = 50.0
    failure_summary: dict[str, Any] = field(default_factory=dict)


def result_summary(r: RunResult) -> dict[str, Any]:
    """The convergence figures stored in the manifest and printed by the commands."""
    reliable = bool(r.tau.size and np.all(np.isfinite(r.tau))
                    and r.steps > r.tau_multiple * np.max(r.tau))
    return {
        "status": r.status, "steps": r.steps, "walkers": r.walkers,
        "converged": r.converged, "burn_in": r.burn_in, "thin": r.thin,
        "tau": dict(zip(r.names, map(float, r.tau), strict=False)),
        "tau_reliable": reliable,
        "effective_sample_size": dict(zip(r.names, map(float, r.ess), strict=False)),
        "acceptance_fraction": r.acceptance,
        "failures": r.failures,
        "failed_evaluations": int(sum(r.failures.values())),
        "failure_summary": r.failure_summary,
    }
