"""What the dynamics integrated in canonical variables share (Bianchi I, asymmetric bounce,
loop / condensate with its extra term).

They evolve a state whose first entry is a connection-like angle (``lambda b`` or the mean of
``mu_i c_i``), followed by log scale factors and the field (phi, phidot), through the one engine
(:mod:`bouncelike.background.engine`) with their system of :mod:`bouncelike.background.systems`.

Three modes and two changes of variable
----------------------------------------
Far before the bounce the angles sit close to a finite value (pi for loop quantum cosmology,
arctan(1/gamma) for the asymmetric bounce), and a relative tolerance on the angle itself would
destroy its small distance to that value. Each system therefore evolves the logarithm of the
*distance* to that value before the bounce (mode PRE) and the logarithm of the angle after the
bounce (POST), where it decays to zero; the map happens at the bounce event. The Hamiltonian
constraint C is conserved exactly by the flow, so an absolute error eps made near the bounce
(about rtol x rho_c) stays: far after the bounce it would act as a spurious cosmological
constant once rho has fallen to eps. Once rho has dropped below ``LATE_FRACTION`` x the bounce
density (mode LATE), the angle is therefore solved from the constraint at every evaluation
(the physics notes' "use the constraint away from the bounce"); the residual reported is that
of the canonical modes (in the last one it is zero by construction).

Events and the definition of inflation are those of every background
(:mod:`bouncelike.background.problem`).
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

import numpy as np
from scipy.optimize import brentq

from ..config import read_parameters
from ..errors import InputError
from . import engine
from .dynamics_runs import EngineDynamics
from .initial import BounceStart, ContractingStart, IntegrationSettings
from .result import BackgroundTrajectory

PRE, POST, LATE = 0, 1, 2

#: Fraction of the bounce density below which the constraint fixes the angle (mode LATE).
LATE_FRACTION = 1e-2

__all__ = ["ContractingStart", "CanonicalDynamics", "field_from_phase", "tolerances"]


def field_from_phase(potential: Any, density: float, phase: float) -> tuple[float, float]:
    """(phi, phidot) on the energy angle: sqrt(V) = sqrt(rho) sin(phase),
    phidot / sqrt(2) = sqrt(rho) cos(phase), with sign(phi) = sign(sin(phase)).

    For V = m^2 phi^2 / 2 this is the oscillation phase of Linsefors & Barrau, Phys. Rev. D 87
    (2013) 123509 (x = m phi / sqrt(2 rho_c) = sqrt(rho/rho_c) sin(delta)). For a general
    potential V(phi) = rho sin^2(phase) is solved on the branch of the sign of sin(phase).
    """
    s, c = math.sin(phase), math.cos(phase)
    target = density * s * s
    phidot = math.sqrt(2.0 * density) * c
    if target <= 0.0:
        return 0.0, phidot
    sign = 1.0 if s > 0 else -1.0

    def g(x: float) -> float:
        return float(potential.V(sign * x)) - target

    v0 = float(potential.V(0.0))
    if v0 > target:
        raise InputError(
            f"potential '{getattr(potential, 'name', '?')}' has V(0) = {v0:g} above the initial "
            f"density budget {target:g}; allowed: potentials with V(0) <= V(phi) on the branch"
        )
    hi = 1.0
    while g(hi) < 0.0:
        hi *= 2.0
        if hi > 1e8:
            raise InputError(
                f"cannot place the field: V(phi) never reaches {target:g} on the branch "
                f"sign(phi) = {sign:+g}; allowed: potentials growing away from phi = 0"
            )
    phi = brentq(g, 0.0, hi, xtol=1e-300, rtol=1e-15, maxiter=500)
    return sign * phi, phidot


def unavailable_start(name: str, initial: Any, allowed: str) -> InputError:
    """The one-line refusal of a start a dynamics does not offer."""
    return InputError(f"'background.start' = '{type(initial).__name__}' is not available for "
                      f"dynamics '{name}'; allowed: {allowed}")


def require_contracting(name: str, initial: Any) -> ContractingStart:
    """The anisotropic dynamics start only in the contracting branch (or classically)."""
    if not isinstance(initial, ContractingStart):
        raise unavailable_start(name, initial, "contracting")
    return initial


def tolerances(settings: IntegrationSettings, y0: np.ndarray) -> np.ndarray:
    """Absolute tolerances per mode (rows PRE, POST, LATE) for a state [log-angles..., ln a,
    phi, phidot]: ``settings.atol`` for logarithms and phi; for phidot, ``rtol`` times its
    initial scale before the bounce (it only grows towards the bounce) and 1e-3 ``atol`` after
    it."""
    scale = max(abs(float(y0[-1])), 1e-300)
    atol = np.full((3, len(y0)), settings.atol)
    atol[PRE, -1] = min(settings.atol, settings.rtol * scale)
    atol[POST:, -1] = 1e-3 * settings.atol
    return atol


def classical_field(initial: Any) -> tuple[float, float]:
    """(phi, phidot) of a :class:`~bouncelike.background.initial.ClassicalStart`."""
    return float(initial.phi), float(initial.phidot)


class CanonicalDynamics(EngineDynamics):
    """Engine runs, summaries and trajectories of a canonical dynamics.

    A subclass provides ``NAME``, ``describe()``, the density that plays rho_c in its results
    (``result_density``) and ``start(potential, initial, settings)`` returning
    (system, y0, mode, atol rows, started at/after the bounce, started at it); optionally
    ``trajectory_extras(result, t)``.
    """

    NAME = ""
    CLASSICAL_NOTE = "classical start in the expanding branch: no bounce by construction"
    result_density: float = math.nan

    #: attributes describe() reports under their own names
    DESCRIBED: tuple[str, ...] = ("critical_density",)
    #: fixed texts describe() reports: equations, starting data, references
    TEXTS: dict[str, str] = {}

    #: the declarations of the keys of its [background.<name>] table
    CONFIG_PARAMETERS: tuple = ()

    @classmethod
    def from_config(cls, table: Any, critical_density: float) -> Any:
        return cls(critical_density=critical_density,
                   **read_parameters(table, cls.CONFIG_PARAMETERS))

    def initial_state(self, potential: Any, initial: Any) -> tuple[np.ndarray, int]:
        """(y0, mode) of ``initial``."""
        raise NotImplementedError

    def start(self, potential: Any, initial: Any, settings: IntegrationSettings) -> tuple:
        """Engine start from :meth:`initial_state`: tolerances per mode, started at/after the
        bounce unless in mode PRE, at the bounce for a bounce start."""
        y0, mode = self.initial_state(potential, initial)
        return (self.system, y0, mode, tolerances(settings, y0), mode != PRE,
                isinstance(initial, BounceStart))

    def described_values(self) -> dict[str, Any]:
        """Values describe() reports besides ``DESCRIBED`` (derived or renamed ones)."""
        return {}

    def describe(self) -> dict[str, Any]:
        """The dynamics, its parameters and derived scales, and the texts saying what it
        solves (written into every trajectory's provenance)."""
        return {"dynamics": self.NAME, **{a: getattr(self, a) for a in self.DESCRIBED},
                **self.described_values(), **self.TEXTS}

    def trajectory_extras(self, result: engine.EngineRun, t: np.ndarray) -> dict[str, Any]:
        return {}

    def evolve(self, potential: Any, initial: Any,
               settings: IntegrationSettings | None = None) -> BackgroundTrajectory:
        settings = settings or IntegrationSettings()
        result = self.run(potential, initial, settings, store=True)
        tr = engine.trajectory(self.NAME, result, self.result_density, settings,
                               provenance={"initial": repr(initial), **self.describe()})
        extras = self.trajectory_extras(result, tr.t)
        return replace(tr, extras={**tr.extras, **extras}) if extras else tr
