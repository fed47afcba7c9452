"""Predicted duration of inflation: the distribution of inflationary e-folds over a prior.

Priors
------
:class:`PhasePrior` (default). Initial data are set in the contracting branch at a density rho_0
with the oscillation phase delta drawn flat on [0, 2 pi) (physics notes, section 2; Linsefors &
Barrau, Phys. Rev. D 87 (2013) 123509). The phase is the energy angle of
:class:`~bouncelike.background.initial.ContractingStart`. Two prescriptions for rho_0:

* ``decades = 0``: one fixed surface rho_0 = ``start_density``. Because the density grows in a
  staircase over each oscillation, "flat in delta" on one surface is not flat on another, and the
  distribution is spiky with a position that wanders by several e-folds as rho_0 moves.
* ``decades > 0`` (default, 2): rho_0 log-uniform over ``start_density_decades`` decades below
  ``start_density``
  (default 1e-16, where H/m ~ 0.024 for m = 1.21e-6: the field oscillates many times per Hubble
  time throughout). This smears the staircase and gives a smooth distribution.

Dynamics whose field does not oscillate before the bounce (``FIELD_OSCILLATES_BEFORE_BOUNCE =
False``, the asymmetric bounce's de Sitter-like contracting branch) use the same draws as an
energy split on the surface rho_0; the H/omega figure and the oscillation guard below do not
apply to them. Every result carries ``dynamics.describe()`` (its conventions).

The number of field oscillations before the bounce is about omega / (3 pi H) at rho_0 (omega
the oscillation frequency at that density, :func:`hubble_to_frequency`); windows needing more
than MAX_OSCILLATIONS are refused with an InputError. For V = m^2 phi^2 / 2 omega = m at every
density, but for the flattened monomials (p < 2) omega grows as the density falls, so their
windows must sit at much higher densities (e.g. p = 2/3, lambda = 1e-11: H/omega ~ 0.02 near
rho_0 ~ 3e-13).

Convergence in rho_0: the first ``convergence_samples`` draws are re-run with the whole window
moved two decades lower (same phases and relative positions in the window); the change of their
median is reported in :attr:`EfoldDistribution.convergence`.

:class:`BounceFractionPrior`. A user prior directly over the potential fraction at the bounce,
x = V(phi_B)/rho_c, uniform or log-uniform in [minimum, maximum], with the sign of phidot drawn
with equal probability.

Statistics
----------
Inflationary e-folds per sample (:mod:`bouncelike.background.result` defines start and end). A
run with no inflation counts as 0 e-folds; a run stopped at the e-fold cap counts as the cap (a
lower bound: the statistics then say so through ``n_efold_cap``); failed runs are excluded and
counted. Percentiles are those of numpy (linear interpolation); the mode is the maximum of a
Gaussian kernel density estimate (scipy.stats.gaussian_kde, Scott's rule) of the same values.
When many runs reach the cap, the median, mode and upper percentiles are lower bounds.

Reproducibility: every random number is drawn up front from one ``numpy.random.default_rng(seed)``
and each sample is evolved independently, so the result is bit-identical for a seed whatever the
pool (serial, processes, MPI ranks) and its number of workers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError
from ..progress import progress as progress_bar
from ..quantities import POTENTIAL_FRACTION, START_DENSITY, START_DENSITY_DECADES
from ..units import critical_density as default_critical_density
from .initial import BounceStart, ContractingStart, IntegrationSettings
from .result import STATUSES

PERCENTILES = (5, 16, 50, 84, 95)
#: refuse phase-prior windows in which the field would oscillate more often than this before
#: the bounce (the cost grows in proportion; flattened monomials oscillate fast at low density)
MAX_OSCILLATIONS = 1.0e5
CHUNK = 25

# per-sample record columns
C_STATUS, C_EFOLDS, C_TO_START, C_TO_END, C_VFRAC, C_RESIDUAL, C_RHS = range(7)
N_COLUMNS = 7


@dataclass(frozen=True)
class PhasePrior:
    """Flat phase on [0, 2 pi) at rho_0 log-uniform in [density 10^-decades, density]."""

    density: float = 1e-16
    decades: float = 2.0
    name: str = field(default="phase", init=False)

    def __post_init__(self) -> None:
        if not (math.isfinite(self.density) and 0 < self.density):
            raise InputError(f"'efolds.start_density' = {self.density!r} is out of range; "
                             "allowed: > 0")
        if not (math.isfinite(self.decades) and 0 <= self.decades <= 10):
            raise InputError(
                f"'efolds.start_density_decades' = {self.decades!r} is out of range; "
                "allowed: >= 0 and <= 10"
            )

    def draw(self, rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
        phase = rng.uniform(0.0, 2.0 * math.pi, n)
        position = rng.uniform(0.0, 1.0, n)
        return {"phase": phase, "position": position,
                "start_density": self.density * 10.0 ** (-self.decades * position)}

    def initial(self, draws: dict[str, np.ndarray], i: int, shift: float = 0.0) -> Any:
        return ContractingStart(float(draws["start_density"][i] * 10.0**-shift),
                                float(draws["phase"][i]))

    def describe(self) -> dict[str, Any]:
        return {"name": self.name, "start_density": self.density,
                "start_density_decades": self.decades,
                "window": [self.density * 10.0**-self.decades, self.density],
                "prescription": "fixed surface" if self.decades == 0 else "log-uniform smearing"}


@dataclass(frozen=True)
class BounceFractionPrior:
    """x = V(phi_B)/rho_c uniform (``scale`` = "linear") or log-uniform in [minimum, maximum]."""

    minimum: float = 1e-13
    maximum: float = 1e-9
    scale: str = "log"
    name: str = field(default="bounce_fraction", init=False)

    def __post_init__(self) -> None:
        if self.scale not in ("log", "linear"):
            raise InputError(f"'efolds.fraction_scale' = '{self.scale}' is not known; "
                             "allowed: linear, log")
        low = 0.0 if self.scale == "linear" else 1e-300
        if not (low <= self.minimum < self.maximum <= 1.0):
            raise InputError(
                f"'efolds.fraction_min' = {self.minimum!r} and 'efolds.fraction_max' = "
                f"{self.maximum!r} must satisfy {'0' if low == 0 else '0 <'} "
                f"{'<=' if low == 0 else ''} min < max <= 1"
            )

    def draw(self, rng: np.random.Generator, n: int) -> dict[str, np.ndarray]:
        u = rng.uniform(0.0, 1.0, n)
        sign = np.where(rng.uniform(0.0, 1.0, n) < 0.5, -1, 1)
        if self.scale == "log":
            lo, hi = math.log(self.minimum), math.log(self.maximum)
            x = np.exp(lo + (hi - lo) * u)
        else:
            x = self.minimum + (self.maximum - self.minimum) * u
        return {"potential_fraction": x, "phidot_sign": sign}

    def initial(self, draws: dict[str, np.ndarray], i: int, shift: float = 0.0) -> Any:
        return BounceStart(float(draws["potential_fraction"][i]), int(draws["phidot_sign"][i]))

    def describe(self) -> dict[str, Any]:
        return {"name": self.name, "fraction_min": self.minimum, "fraction_max": self.maximum,
                "fraction_scale": self.scale}


@dataclass(frozen=True)
class EfoldDistribution:
    """Distribution of inflationary e-folds over a prior (see module notes).

    ``samples`` (n,) inflationary e-folds (NaN for failed runs), ``statuses`` (n,) strings,
    ``potential_fractions`` (n,) V_B/rho at the bounce, ``bounce_to_end`` (n,) e-folds from the
    bounce to the end of inflation (to the stop, a lower bound, for runs at the e-fold cap),
    ``draws`` the prior's random inputs per sample.
    """

    samples: np.ndarray
    statuses: np.ndarray
    potential_fractions: np.ndarray
    bounce_to_end: np.ndarray
    draws: dict
    median: float
    mode: float
    percentiles: dict
    threshold: float
    histogram: tuple
    status_counts: dict
    max_constraint_residual: float
    convergence: dict
    prior: dict
    n_samples: int
    seed: int
    settings: dict
    hubble_to_frequency: float
    mean_rhs_evaluations: float
    #: ``dynamics.describe()``: parameters and conventions (initial data, shear, ...)
    dynamics: dict = field(default_factory=dict)
    #: False when the field does not oscillate before the bounce in this dynamics (the phase
    #: is then an energy split, not an oscillation phase, and H/omega does not apply)
    field_oscillates: bool = True

    def usable(self) -> np.ndarray:
        """E-folds of the non-failed samples (no inflation = 0, capped = the cap)."""
        return self.samples[self.statuses != "failed"]

    def fraction_above(self, threshold: float) -> float:
        """Fraction of the non-failed samples with more than ``threshold`` inflationary e-folds."""
        values = self.usable()
        return float(np.mean(values > threshold)) if len(values) else math.nan

    @property
    def fraction_above_threshold(self) -> float:
        return self.fraction_above(self.threshold)

    def sqrt_potential_fraction_percentiles(self) -> dict[str, float]:
        x = np.sqrt(self.potential_fractions[np.isfinite(self.potential_fractions)])
        if not len(x):
            return {str(q): math.nan for q in PERCENTILES}
        values = np.percentile(x, PERCENTILES)
        return {str(q): float(v) for q, v in zip(PERCENTILES, values, strict=True)}

    def as_dict(self) -> dict[str, Any]:
        """Scalars and small tables for reports and JSON (no per-sample arrays)."""
        counts, edges = self.histogram
        return {
            "n_samples": self.n_samples,
            "seed": self.seed,
            "median": self.median,
            "mode": self.mode,
            "percentiles": dict(self.percentiles),
            "threshold": self.threshold,
            "fraction_above": self.fraction_above_threshold,
            "max_constraint_residual": self.max_constraint_residual,
            "status_counts": dict(self.status_counts),
            "sqrt_potential_fraction_at_bounce": self.sqrt_potential_fraction_percentiles(),
            "median_bounce_to_end": nanmedian(self.bounce_to_end),
            "convergence": dict(self.convergence),
            "prior": dict(self.prior),
            "hubble_to_frequency_at_start": self.hubble_to_frequency,
            "mean_rhs_evaluations": self.mean_rhs_evaluations,
            "dynamics": dict(self.dynamics),
            "field_oscillates_before_bounce": self.field_oscillates,
            "histogram": {"counts": np.asarray(counts).tolist(),
                          "edges": np.asarray(edges).tolist()},
            "settings": dict(self.settings),
        }


def nanmedian(x: np.ndarray) -> float:
    x = np.asarray(x)[np.isfinite(x)]
    return float(np.median(x)) if len(x) else math.nan


# -- workers ---------------------------------------------------------------------------------
def evolve_records(task: tuple) -> np.ndarray:
    """Evolve a chunk of initial data; one record row per datum (module-level: picklable)."""
    dynamics, potential, settings, initials = task
    out = np.full((len(initials), N_COLUMNS), np.nan)
    for row, s in enumerate(dynamics.evolve_summaries(potential, initials, settings)):
        e = s.events
        out[row] = (s.status_index, s.inflationary_efolds,
                    e.ln_a_inflation_start - e.ln_a_bounce, s.efolds_bounce_to_stop,
                    s.potential_fraction_at_bounce, s.max_constraint_residual,
                    s.rhs_evaluations)
    return out


def _run(dynamics: Any, potential: Any, settings: IntegrationSettings, initials: list,
         pool: Any, show: bool, desc: str) -> np.ndarray:
    tasks = [(dynamics, potential, settings, initials[i:i + CHUNK])
             for i in range(0, len(initials), CHUNK)]
    workers = max(1, int(getattr(pool, "workers", 1)))
    batch = max(1, 4 * workers)
    results: list[np.ndarray] = []
    bar = progress_bar(total=len(initials), desc=desc, enabled=show)
    try:
        for b in range(0, len(tasks), batch):
            chunk = tasks[b:b + batch]
            out = pool.map(evolve_records, chunk) if pool is not None else [
                evolve_records(t) for t in chunk]
            results.extend(out)
            bar.update(sum(len(t[3]) for t in chunk))
    finally:
        bar.close()
    return np.concatenate(results) if results else np.zeros((0, N_COLUMNS))


def hubble_to_frequency(potential: Any, density: float) -> float:
    """H / omega at density rho: H = sqrt(8 pi rho / 3), omega^2 = V'(A)/A with V(A) = rho.

    For V = m^2 phi^2 / 2, omega = m. Values << 1 mean the field oscillates many times per
    Hubble time (the regime where the phase prior is meaningful).
    """
    try:
        amplitude = float(potential.field_at(density, 1.0))
        omega2 = float(potential.dV(amplitude)) / amplitude
    except (InputError, ZeroDivisionError, ValueError):
        return math.nan
    if not omega2 > 0:
        return math.nan
    return math.sqrt(8.0 * math.pi * density / 3.0) / math.sqrt(omega2)


def _mode(values: np.ndarray, bins: int) -> float:
    values = values[np.isfinite(values)]
    if len(values) == 0:
        return math.nan
    if len(values) >= 5 and np.ptp(values) > 0:
        try:
            from scipy.stats import gaussian_kde

            kde = gaussian_kde(values)
            grid = np.linspace(values.min(), values.max(), 4001)
            return float(grid[np.argmax(kde(grid))])
        except (np.linalg.LinAlgError, ValueError):
            pass
    counts, edges = np.histogram(values, bins=bins)
    i = int(np.argmax(counts))
    return float(0.5 * (edges[i] + edges[i + 1]))


def efolds_distribution(
    dynamics: Any,
    potential: Any,
    prior: Any,
    n_samples: int,
    seed: int,
    pool: Any = None,
    settings: IntegrationSettings | None = None,
    *,
    threshold: float = 60.0,
    bins: int = 60,
    convergence_samples: int = 100,
    shift_decades: float = 2.0,
    progress: bool = False,
) -> EfoldDistribution:
    """Evolve ``n_samples`` draws of ``prior`` and summarise the inflationary e-folds.

    Parameters
    ----------
    dynamics : a background dynamics (:mod:`bouncelike.background.dynamics` protocol)
    potential : a potential (:mod:`bouncelike.background.potentials`)
    prior : :class:`PhasePrior` or :class:`BounceFractionPrior`
    n_samples, seed : sample size and seed of the single random generator
    pool : any object with an ordered ``map`` (:func:`bouncelike.parallel.make_pool`); None: serial
    settings : integration settings
    threshold : e-folds for :attr:`EfoldDistribution.fraction_above_threshold`
    bins : histogram bins
    convergence_samples : how many draws to re-run with rho_0 moved ``shift_decades`` lower
        (phase prior only; 0 disables)
    progress : show a progress bar on standard error
    """
    if not isinstance(n_samples, (int, np.integer)) or n_samples < 1:
        raise InputError(f"'efolds.n_samples' = {n_samples!r} is out of range; allowed: >= 1")
    settings = settings or IntegrationSettings()
    oscillates = bool(getattr(dynamics, "FIELD_OSCILLATES_BEFORE_BOUNCE", True))
    if isinstance(prior, PhasePrior) and oscillates:
        lowest = prior.density * 10.0 ** -(prior.decades
                                           + (shift_decades if convergence_samples > 0 else 0))
        ratio = hubble_to_frequency(potential, lowest)
        if math.isfinite(ratio) and ratio > 0 and 1.0 / (3.0 * math.pi * ratio) > MAX_OSCILLATIONS:
            raise InputError(
                f"'efolds.start_density' = {prior.density:g}: at rho_0 = {lowest:.3g} the field "
                f"would oscillate about {1.0 / (3.0 * math.pi * ratio):.2g} times before the "
                f"bounce (H/omega = {ratio:.2g}); raise 'efolds.start_density' (H/omega of "
                "0.01-0.03 at the top of the window is enough) or narrow "
                "'efolds.start_density_decades'"
            )
    rng = np.random.default_rng(seed)
    draws = prior.draw(rng, int(n_samples))
    initials = [prior.initial(draws, i) for i in range(n_samples)]
    records = _run(dynamics, potential, settings, initials, pool, progress, "efolds")

    status_idx = records[:, C_STATUS]
    statuses = np.array([STATUSES[int(i)] if np.isfinite(i) else "failed" for i in status_idx])
    samples = records[:, C_EFOLDS].copy()
    samples[statuses == "no_inflation"] = 0.0
    samples[statuses == "failed"] = np.nan
    usable = samples[statuses != "failed"]
    if len(usable):
        pct = np.percentile(usable, PERCENTILES)
        percentiles = {str(q): float(v) for q, v in zip(PERCENTILES, pct, strict=True)}
        median = float(np.median(usable))
        histogram = np.histogram(usable, bins=bins)
    else:
        percentiles = {str(q): math.nan for q in PERCENTILES}
        median = math.nan
        histogram = (np.zeros(bins, dtype=int), np.linspace(0, 1, bins + 1))
    mode = _mode(usable, bins)
    residuals = records[:, C_RESIDUAL]
    max_residual = float(np.nanmax(residuals)) if np.any(np.isfinite(residuals)) else math.nan

    convergence: dict[str, Any] = {}
    if isinstance(prior, PhasePrior) and convergence_samples > 0:
        m = int(min(convergence_samples, n_samples))
        shifted = [prior.initial(draws, i, shift=shift_decades) for i in range(m)]
        rec2 = _run(dynamics, potential, settings, shifted, pool, progress,
                    f"rho_0 / 1e{shift_decades:g}")
        base = samples[:m]
        moved = rec2[:, C_EFOLDS].copy()
        moved[rec2[:, C_STATUS] == STATUSES.index("no_inflation")] = 0.0
        ok_base, ok_moved = base[np.isfinite(base)], moved[np.isfinite(moved)]
        med_base = float(np.median(ok_base)) if len(ok_base) else math.nan
        med_moved = float(np.median(ok_moved)) if len(ok_moved) else math.nan
        convergence = {
            "n": m,
            "shift_decades": shift_decades,
            "window": prior.describe()["window"],
            "shifted_window": [w * 10.0**-shift_decades for w in prior.describe()["window"]],
            "median": med_base,
            "median_shifted": med_moved,
            "median_change": abs(med_moved - med_base),
            "max_constraint_residual_shifted": float(np.nanmax(rec2[:, C_RESIDUAL])),
        }
        if np.isfinite(convergence["max_constraint_residual_shifted"]):
            max_residual = max(max_residual, convergence["max_constraint_residual_shifted"])

    h_over_w = (hubble_to_frequency(potential, prior.density)
                if isinstance(prior, PhasePrior) and oscillates else math.nan)
    rho_c = getattr(dynamics, "critical_density", default_critical_density())
    return EfoldDistribution(
        samples=samples,
        statuses=statuses,
        potential_fractions=records[:, C_VFRAC],
        bounce_to_end=records[:, C_TO_END],
        draws={k: np.asarray(v) for k, v in draws.items()},
        median=median,
        mode=mode,
        percentiles=percentiles,
        threshold=float(threshold),
        histogram=(histogram[0], histogram[1]),
        status_counts={s: int(np.sum(statuses == s)) for s in STATUSES},
        max_constraint_residual=max_residual,
        convergence=convergence,
        prior=prior.describe(),
        n_samples=int(n_samples),
        seed=int(seed),
        settings={**settings.as_dict(), "dynamics": getattr(dynamics, "NAME", "?"),
                  "critical_density": float(rho_c),
                  "potential": {"name": potential.name, **potential.parameters}},
        hubble_to_frequency=h_over_w,
        mean_rhs_evaluations=float(np.nanmean(records[:, C_RHS])),
        dynamics=dict(dynamics.describe()) if hasattr(dynamics, "describe") else {},
        field_oscillates=oscillates,
    )


def start_density_ceiling(dynamics: Any) -> float | None:
    """The critical density the contracting branch must start below (the effective one of a
    dynamics that rescales it; None when the dynamics has none)."""
    rho_c = getattr(dynamics, "effective_critical_density",
                    getattr(dynamics, "critical_density", None))
    return float(rho_c) if rho_c is not None else None


def prior_from_config(table: Any, critical_density: float | None = None) -> Any:
    """Prior from the ``[efolds]`` table (keys prior, start_density, start_density_decades,
    fraction_*); with ``critical_density``, the start density must lie below it."""
    name = table.string("prior", "phase", choices=("phase", "bounce_fraction"))
    if name == "phase":
        for key in ("fraction_min", "fraction_max", "fraction_scale"):
            if key in table:
                raise InputError(f"'{table.key(key)}' applies only to prior = 'bounce_fraction'")
        return PhasePrior(
            START_DENSITY.read(table, upper=critical_density,
                               reason=f"the contracting branch starts below the critical "
                               f"density rho_c = {critical_density:.5g}"
                               if critical_density is not None else ""),
            START_DENSITY_DECADES.read(table),
        )
    for key in ("start_density", "start_density_decades"):
        if key in table:
            raise InputError(f"'{table.key(key)}' applies only to prior = 'phase'")

    def fraction(key: str, default: float) -> float:
        if key not in table:
            return default
        return POTENTIAL_FRACTION.check(table.raw(key), table.key(key))

    return BounceFractionPrior(
        fraction("fraction_min", 1e-13), fraction("fraction_max", 1e-9),
        table.string("fraction_scale", "log", choices=("log", "linear")),
    )
