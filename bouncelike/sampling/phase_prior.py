"""The ``efolds_from_phase`` prior: the duration of inflation a flat oscillation-phase prior of
the contracting branch induces through the bounce (physics notes, section 2; Linsefors &
Barrau, Phys. Rev. D 87 (2013) 123509).

The e-fold samples come from :func:`bouncelike.background.efolds.efolds_distribution` with the
``[parameters.<name>.phase]`` sub-table of a prior file (``potential``, ``mass``, ``dynamics``,
``critical_density``, ``start_density`` and ``start_density_decades`` of the contracting-branch
window where the phase is flat, ``n_samples``, ``seed``). The prior density is a Gaussian kernel
density estimate of those samples (Scott's rule bandwidth, the scipy.stats.gaussian_kde
default) restricted to [min, max] and normalised there.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..config import Table
from ..errors import InputError
from ..quantities import START_DENSITY, START_DENSITY_DECADES

#: keys of the phase sub-table
PHASE_KEYS = ("potential", "mass", "dynamics", "critical_density", "start_density",
              "start_density_decades", "n_samples", "seed")
#: the earlier spellings of two of them (read from prior texts stored by earlier runs)
RENAMED_PHASE_KEYS = {"density": "start_density", "density_decades": "start_density_decades"}


def kde_density(x: np.ndarray, points: np.ndarray, bandwidth: float) -> np.ndarray:
    """Gaussian kernel density estimate of ``points`` at ``x`` (not normalised to a range)."""
    z = (np.asarray(x, dtype=float)[:, None] - np.asarray(points)[None, :]) / bandwidth
    return np.exp(-0.5 * z * z).sum(axis=1) / (len(points) * bandwidth * math.sqrt(2 * math.pi))


def efolds_kde(t: Table, lower: float, upper: float) -> dict[str, Any]:
    """``kde_points``, ``kde_bandwidth`` and ``kde_norm`` (the estimate's mass in
    [lower, upper]) of the e-folds over the phase prior of ``t``."""
    samples = _efolds(t)
    samples = samples[np.isfinite(samples)]
    if samples.size < 10:
        raise InputError(f"'{t.where}': fewer than 10 finite e-fold samples were produced")
    h = float(np.std(samples) * samples.size ** (-1 / 5)) or 1e-3  # Scott's rule
    grid = np.linspace(lower, upper, 2001)
    mass = float(np.trapezoid(kde_density(grid, samples, h), grid))
    if not mass > 0:
        raise InputError(f"'{t.where}': the computed e-folds (median {np.median(samples):.4g}) "
                         f"fall outside [min, max] = [{lower:g}, {upper:g}]")
    return {"kde_points": tuple(float(x) for x in samples), "kde_bandwidth": h,
            "kde_norm": mass}


#: keys of the configuration tables _efolds builds -> the phase-table key the user wrote
_PHASE_KEYS = {"potential.name": "potential", "potential.mass": "mass",
               "background.dynamics": "dynamics",
               "background.critical_density": "critical_density"}


def _efolds(t: Table) -> np.ndarray:
    """E-folds of inflation over a flat phase prior, by the background package."""
    # the background engine compiles on first use: imported only when this prior is used
    from ..background.efolds import PhasePrior, efolds_distribution, start_density_ceiling
    from ..background.setup import background_from_config

    background: dict[str, Any] = {"dynamics": t.string("dynamics", "isotropic")}
    if "critical_density" in t:
        background["critical_density"] = t.positive("critical_density")
    config = Table({"potential": {"name": t.string("potential", "quadratic"),
                                  "mass": t.positive("mass", 1.21e-6)},
                    "background": background}, "", ("potential", "background"))
    try:
        setup = background_from_config(config)
    except InputError as exc:  # the keys of the tables above are the phase table's keys
        message = str(exc)
        for built, key in _PHASE_KEYS.items():
            message = message.replace(f"'{built}'", f"'{t.key(key)}'")
        raise InputError(message) from None
    ceiling = start_density_ceiling(setup.dynamics)
    phase = PhasePrior(
        START_DENSITY.read(t, upper=ceiling, reason="the contracting branch starts below the "
                           f"critical density rho_c = {ceiling:.5g}"),
        START_DENSITY_DECADES.read(t))
    # at most 1e5 backgrounds (~1 ms each on the compiled engine): a kernel density estimate
    # of the e-folds converges long before
    result = efolds_distribution(setup.dynamics, setup.potential, phase,
                                 t.integer("n_samples", 200, minimum=10, maximum=10**5),
                                 t.integer("seed", 0, minimum=0), settings=setup.settings,
                                 convergence_samples=0)
    return np.asarray(result.usable(), dtype=float)
