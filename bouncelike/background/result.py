"""Result objects shared by every background dynamics.

A :class:`BackgroundTrajectory` is what any effective dynamics (isotropic, anisotropic,
asymmetric, condensate) returns for one initial datum: the dense trajectory in cosmic time, the
events, the e-fold counts, the Friedmann/Hamiltonian constraint residual and a status. It is
immutable; arrays are made read-only.

Conventions
-----------
* Planck units, G = c = hbar = 1 (m_Pl = 1); cosmic time t (lapse 1).
* ``H`` is the mean Hubble rate (for anisotropic dynamics the mean of the directional rates);
  ``Hdot`` its time derivative; ``phi``, ``phidot``, ``phiddot`` the inflaton and its derivatives.
* ``rho`` = phidot^2/2 + V(phi), ``w`` = (phidot^2/2 - V)/(phidot^2/2 + V).
* Events (NaN when they do not happen):
  - ``bounce``: H = 0 with Hdot > 0 (for the isotropic dynamics rho = rho_c there);
  - ``superinflation_end``: first time after the bounce that Hdot = 0 (rho = rho_c/2 isotropic);
  - ``inflation_start``: first time after the bounce that addot > 0 (epsilon_H < 1) in a
    potential-dominated phase (V > phidot^2/2);
  - ``inflation_end``: first time after ``inflation_start`` that epsilon_H = -Hdot/H^2 = 1
    (start and end of the longest such phase).
* E-fold counts are differences of ln a between events.
* The inflationary phase is the longest accelerated, potential-dominated phase after the bounce
  (the one definition, :mod:`bouncelike.background.problem`).

Statuses: ``"inflated"`` (all events found), ``"no_inflation"`` (no inflationary phase within
the integration limits), ``"efold_cap"`` (inflation did not end before the e-fold cap),
``"no_bounce"`` (a classical start, or no bounce found), ``"failed"`` (integration failed; the
message says why).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

STATUSES = ("inflated", "no_inflation", "efold_cap", "no_bounce", "failed")


@dataclass(frozen=True)
class BackgroundEvents:
    """Times (cosmic time) and ln a of the characteristic events; NaN if absent."""

    t_bounce: float = np.nan
    t_superinflation_end: float = np.nan
    t_inflation_start: float = np.nan
    t_inflation_end: float = np.nan
    ln_a_bounce: float = np.nan
    ln_a_superinflation_end: float = np.nan
    ln_a_inflation_start: float = np.nan
    ln_a_inflation_end: float = np.nan

    def as_dict(self) -> dict[str, float]:
        return {k: float(getattr(self, k)) for k in self.__dataclass_fields__}


@dataclass(frozen=True)
class EfoldCounts:
    """E-fold counts: bounce -> start of inflation, inflationary, bounce -> end of inflation."""

    bounce_to_inflation_start: float = np.nan
    inflation: float = np.nan
    bounce_to_inflation_end: float = np.nan

    def as_dict(self) -> dict[str, float]:
        return {k: float(getattr(self, k)) for k in self.__dataclass_fields__}


def _frozen(a: Any) -> np.ndarray:
    arr = np.array(a, dtype=float, copy=True)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True)
class RunSummary:
    """Scalars of one engine run (no trajectory): what e-fold distributions read.

    ``status`` is one of :data:`STATUSES`; ``reason`` why the run ended (``"end"``,
    ``"efold_cap"``, ``"density"``, ``"time_cap"``, ``"step_budget"``, ``"step_underflow"``,
    ``"nonfinite"``, ``"wall_budget"``); ``message`` says it in one line with the physical
    state where a failure happened. Events and e-folds as in :class:`BackgroundEvents` and
    :class:`EfoldCounts`; at the e-fold cap the inflationary e-folds are a lower bound (ln a at
    the stop minus ln a at the start of the running phase) and the end of inflation is NaN.
    """

    status: str
    reason: str
    message: str
    events: BackgroundEvents
    phi_bounce: float
    phidot_bounce: float
    potential_fraction_at_bounce: float
    density_at_bounce: float
    max_constraint_residual: float
    accelerated_phases: int
    steps: int
    rejected_steps: int
    rhs_evaluations: int
    t_final: float
    ln_a_final: float
    engine: str

    @property
    def success(self) -> bool:
        return self.status == "inflated"

    @property
    def status_index(self) -> int:
        return STATUSES.index(self.status)

    @property
    def inflationary_efolds(self) -> float:
        e = self.events
        end = self.ln_a_final if self.status == "efold_cap" else e.ln_a_inflation_end
        return float(end - e.ln_a_inflation_start)

    @property
    def efolds(self) -> EfoldCounts:
        e = self.events
        return EfoldCounts(
            bounce_to_inflation_start=float(e.ln_a_inflation_start - e.ln_a_bounce),
            inflation=self.inflationary_efolds,
            bounce_to_inflation_end=float(e.ln_a_inflation_end - e.ln_a_bounce),
        )

    @property
    def efolds_bounce_to_stop(self) -> float:
        """Bounce -> end of inflation, or -> the stop (a lower bound) at the e-fold cap."""
        end = self.ln_a_final if self.status == "efold_cap" else self.events.ln_a_inflation_end
        return float(end - self.events.ln_a_bounce)


@dataclass(frozen=True)
class FieldHistory:
    """Samples of the homogeneous background at increasing cosmic times ``t`` (Planck units):
    ln a, H, dH/dt, the inflaton phi and its first two time derivatives. The arrays every
    trajectory and every table of the background carry."""

    t: np.ndarray
    ln_a: np.ndarray
    H: np.ndarray
    Hdot: np.ndarray
    phi: np.ndarray
    phidot: np.ndarray
    phiddot: np.ndarray


@dataclass(frozen=True)
class BackgroundTrajectory(FieldHistory):
    """One evolved background: dense trajectory, events, e-folds, constraint residual, status.

    Attributes
    ----------
    dynamics : str
        Registry name of the dynamics that produced it (``"isotropic"``, ...).
    t, ln_a, H, Hdot, phi, phidot, phiddot, rho, w : ndarray
        Dense samples along the trajectory, increasing t (Planck units).
    critical_density : float
        rho_c of the dynamics (Planck units); NaN for a purely classical run.
    events : BackgroundEvents
    efolds : EfoldCounts
    potential_fraction_at_bounce : float
        V(phi_B) / rho at the bounce (NaN without a bounce).
    max_constraint_residual : float
        max over the trajectory of |H^2 - F(rho)| / ((8 pi/3) rho) for the dynamics' own
        constraint (Hamiltonian constraint for canonical dynamics, normalised likewise).
    status : str
        One of :data:`STATUSES`.
    message : str
        Human-readable explanation of the status.
    extras : dict
        Dynamics-specific arrays or numbers (e.g. directional Hubble rates, shear); read-only
        by convention.
    settings : dict
        Numerical tolerances and initial data used (provenance).
    """

    dynamics: str
    rho: np.ndarray
    w: np.ndarray
    critical_density: float
    events: BackgroundEvents
    efolds: EfoldCounts
    potential_fraction_at_bounce: float
    max_constraint_residual: float
    status: str
    message: str
    extras: dict = field(default_factory=dict)
    settings: dict = field(default_factory=dict)
    #: the engine's continuous extension (:class:`bouncelike.background.engine.DenseSolution`)
    dense: Any = None

    def __post_init__(self) -> None:
        for name in ("t", "ln_a", "H", "Hdot", "phi", "phidot", "phiddot", "rho", "w"):
            object.__setattr__(self, name, _frozen(getattr(self, name)))
        if self.status not in STATUSES:
            raise ValueError(f"status must be one of {STATUSES}, got {self.status!r}")

    @property
    def success(self) -> bool:
        return self.status == "inflated"

    def state_at(self, t: Any) -> dict[str, np.ndarray]:
        """ln a, H, phi, phidot at arbitrary times: the engine's 7th-order continuous extension
        when the trajectory carries it, else cubic Hermite interpolation of the samples (with
        the stored derivatives: C^1, error fourth order in the sampling step).
        """
        t = np.asarray(t, dtype=float)
        if self.dense is not None:
            obs = self.dense.observables(t)
            return {key: obs[key] for key in ("ln_a", "H", "phi", "phidot")}
        return {
            "ln_a": hermite(self.t, self.ln_a, self.H, t),
            "H": hermite(self.t, self.H, self.Hdot, t),
            "phi": hermite(self.t, self.phi, self.phidot, t),
            "phidot": hermite(self.t, self.phidot, self.phiddot, t),
        }

    def summary(self) -> dict[str, Any]:
        """Scalars only: status, events, e-folds, bounce potential fraction, residual."""
        scalars = ("critical_density", "potential_fraction_at_bounce", "max_constraint_residual")
        return {
            "dynamics": self.dynamics, "status": self.status, "message": self.message,
            **{name: float(getattr(self, name)) for name in scalars},
            **{f"efolds_{k}": v for k, v in self.efolds.as_dict().items()},
            **self.events.as_dict(),
        }


def hermite(x: np.ndarray, y: np.ndarray, dydx: np.ndarray, xq: np.ndarray) -> np.ndarray:
    """Cubic Hermite interpolation of samples (x, y, dy/dx) at points xq (x increasing)."""
    xq = np.asarray(xq, dtype=float)
    i = np.clip(np.searchsorted(x, xq, side="right") - 1, 0, len(x) - 2)
    h = x[i + 1] - x[i]
    s = (xq - x[i]) / h
    h00 = (1 + 2 * s) * (1 - s) ** 2
    h10 = s * (1 - s) ** 2
    h01 = s**2 * (3 - 2 * s)
    h11 = s**2 * (s - 1)
    return h00 * y[i] + h10 * h * dydx[i] + h01 * y[i + 1] + h11 * h * dydx[i + 1]
