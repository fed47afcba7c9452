"""Effective isotropic bounce: flat FLRW with one scalar field and the modified Friedmann equation.

Equations (Planck units, G = 1; physics notes section 1; Ashtekar & Singh, Class. Quantum Grav.
28 (2011) 213001):

    H^2   = (8 pi / 3) rho (1 - rho / rho_c)
    Hdot  = -4 pi (rho + P) (1 - 2 rho / rho_c)
    phiddot + 3 H phidot + V'(phi) = 0

The bounce is where rho = rho_c (H = 0, Hdot > 0); super-inflation (Hdot > 0) lasts until
rho = rho_c / 2. The critical density is one parameter (from the Barbero-Immirzi parameter via
:func:`bouncelike.units.critical_density`, or given directly), so a rescaled critical density,
as in the condensate cosmology of group field theory, needs no new code.

Numerics. The engine (:mod:`bouncelike.background.engine`) integrates the system of
:mod:`bouncelike.background.isotropic_system`, which keeps the Friedmann constraint: away from
the bounce (rho < rho_c / 100) H is set by the constraint with the branch sign fixed (-1
contracting, +1 expanding), and only near the bounce is H evolved with the Raychaudhuri
equation. The maximum relative residual |H^2 - F(rho)| / ((8 pi / 3) rho) over the evolved
stretch is reported with every result (below 1e-6 with the default tolerances).

Initial data (:mod:`bouncelike.background.initial`):

* ``BounceStart(x, sign)``: rho = rho_c, H = 0, V(phi_B) = x rho_c, phidot = sign sqrt(2 (rho_c -
  V)), and the field on the side it is thrown up: sign(phi_B) = sign(phidot).
* ``ContractingStart(rho_0, delta)``: the energy angle, sqrt(V(phi)) = sqrt(rho_0) sin(delta),
  phidot = sqrt(2 rho_0) cos(delta), sign(phi) = sign(sin(delta)), H = -sqrt(F(rho_0)). For
  V = m^2 phi^2 / 2 this is exactly the oscillation phase of Linsefors & Barrau, Phys. Rev. D 87
  (2013) 123509 (x = m phi / sqrt(2 rho_c) = sqrt(rho/rho_c) sin(delta)).
* ``ClassicalStart(phi, phidot)``: general relativity (1/rho_c = 0), expanding, no bounce.

Inflation is the longest accelerated (addot > 0), potential-dominated phase after the bounce:
the run continues after an end of inflation until the field has passed twice through the
minimum phi = 0 (the one definition, :mod:`bouncelike.background.problem`), so a brief
acceleration while the field turns on a steep wall does not hide the plateau inflation that
follows.

ln a = 0 and t = 0 at the start. Custom (Python) potentials are integrated by the same solver
run uncompiled, about a hundred times slower; the result message says so. :meth:`table` gives
the read-only table view the perturbations read (:mod:`bouncelike.background.table`).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import InputError, NumericalFailure
from ..units import critical_density as critical_density_from_gamma
from . import engine
from .dynamics_runs import EngineDynamics
from .initial import BounceStart, ClassicalStart, ContractingStart, IntegrationSettings
from .isotropic_system import SWITCH_FRACTION
from .limits import check_critical_density, check_potential_fraction
from .result import BackgroundTrajectory
from .systems import SYS_ISOTROPIC
from .table import BackgroundTable, table_from_state


# -- pure array-level physics (usable by other dynamics and by baselines) ------------------------
def hubble_squared(rho: Any, critical_density: float) -> np.ndarray:
    """F(rho) = (8 pi / 3) rho (1 - rho / rho_c); rho_c = inf gives general relativity."""
    rho = np.asarray(rho, dtype=float)
    return 8.0 * math.pi / 3.0 * rho * (1.0 - rho / critical_density)


def raychaudhuri(phidot: Any, rho: Any, critical_density: float) -> np.ndarray:
    """Hdot = -4 pi (rho + P)(1 - 2 rho / rho_c) with rho + P = phidot^2."""
    phidot = np.asarray(phidot, dtype=float)
    return -4.0 * math.pi * phidot**2 * (1.0 - 2.0 * np.asarray(rho) / critical_density)


def constraint_residual(H: Any, rho: Any, critical_density: float) -> np.ndarray:
    """|H^2 - F(rho)| / ((8 pi / 3) rho), the relative Friedmann-constraint residual."""
    H = np.asarray(H, dtype=float)
    rho = np.asarray(rho, dtype=float)
    return np.abs(H**2 - hubble_squared(rho, critical_density)) / (8.0 * math.pi / 3.0 * rho)


def friedmann_rhs(y: Any, potential: Any, critical_density: float) -> np.ndarray:
    """d/dt of y = (ln a, phi, phidot, H) with H evolved by the Raychaudhuri equation.

    Vectorised over trailing axes of ``y``: the equations written out in numpy, for checks and
    simple baselines (the engine integrates :mod:`.isotropic_system`).
    """
    lna, phi, phidot, H = np.asarray(y, dtype=float)
    rho = 0.5 * phidot**2 + potential.V(phi)
    return np.array([
        H,
        phidot,
        -3.0 * H * phidot - potential.dV(phi),
        raychaudhuri(phidot, rho, critical_density),
    ])


class IsotropicDynamics(EngineDynamics):
    """The effective isotropic bounce with critical density ``critical_density`` (Planck units).

    ``evolve(potential, initial, settings)`` returns a
    :class:`~bouncelike.background.result.BackgroundTrajectory`; ``evolve_summary`` a
    :class:`~bouncelike.background.result.RunSummary` (what distributions need, no stored
    trajectory); ``table`` the :class:`~bouncelike.background.table.BackgroundTable` view.
    """

    NAME = "isotropic"
    CLASSICAL_NOTE = "classical start (general relativity, no bounce)"
    CONFIG_PARAMETERS: tuple = ()
    CONFIG_KEYS: tuple[str, ...] = ()

    def __init__(self, critical_density: float | None = None):
        if critical_density is None:
            critical_density = critical_density_from_gamma()
        self.critical_density = check_critical_density(critical_density)
        self._system = engine.System(SYS_ISOTROPIC, (1.0 / self.critical_density, 0.0, 0.0, 0.0))

    @classmethod
    def from_config(cls, table: Any, critical_density: float) -> IsotropicDynamics:
        table.finish()
        return cls(critical_density)

    def __repr__(self) -> str:
        return f"IsotropicDynamics(critical_density={self.critical_density!r})"

    def __eq__(self, other: object) -> bool:
        return isinstance(other, IsotropicDynamics) and (
            other.critical_density == self.critical_density
        )

    def __hash__(self) -> int:
        return hash((self.NAME, self.critical_density))

    def describe(self) -> dict[str, Any]:
        return {
            "name": self.NAME,
            "critical_density": self.critical_density,
            "equations": "H^2 = (8 pi/3) rho (1 - rho/rho_c); "
            "Hdot = -4 pi (rho + P)(1 - 2 rho/rho_c); phiddot + 3 H phidot + V' = 0",
            "constraint": "H from the Friedmann constraint while rho < rho_c/100, "
            "Raychaudhuri equation near the bounce",
            "contracting_start": "energy angle: sqrt(V) = sqrt(rho_0) sin(delta), "
            "phidot = sqrt(2 rho_0) cos(delta), sign(phi) = sign(sin(delta)), H < 0",
            "bounce_start": "rho = rho_c, H = 0, V = x rho_c, sign(phi_B) = sign(phidot)",
            "units": "Planck units, G = c = hbar = 1 (m_Pl = 1)",
        }

    # -- initial data -----------------------------------------------------------------------
    def bounce_state(self, potential: Any, initial: BounceStart) -> tuple[float, float]:
        """(phi_B, phidot_B) of a bounce start: V(phi_B) = x rho_c, sign(phi_B) =
        ``initial.field_side`` (by default sign(phidot))."""
        rho_c = self.critical_density
        x = check_potential_fraction(float(initial.potential_fraction))
        sign = 1.0 if initial.phidot_sign >= 0 else -1.0
        phi = potential.field_at(x * rho_c, initial.field_side)
        kinetic = max(rho_c - float(potential.V(phi)), 0.0)
        return phi, sign * math.sqrt(2.0 * kinetic)

    def start(self, potential: Any, initial: Any, settings: IntegrationSettings | None = None
              ) -> tuple[engine.System, np.ndarray, int, None, bool, bool]:
        """(system, y0, mode, None: ``settings.atol``, at/after the bounce, at the bounce)."""
        rho_c = self.critical_density
        system = self._system
        if isinstance(initial, BounceStart):
            phi, phidot = self.bounce_state(potential, initial)
            return system, np.array([0.0, phi, phidot, 0.0]), 1, None, True, True
        if isinstance(initial, ContractingStart):
            rho0 = float(initial.density)
            if not (0.0 < rho0 < rho_c):
                raise InputError(
                    f"'background.contracting.density' = {rho0!r} is out of range; allowed: "
                    f"> 0 and < rho_c = {rho_c:.6g}"
                )
            delta = float(initial.phase)
            sd, cd = math.sin(delta), math.cos(delta)
            phi = potential.field_at(rho0 * sd * sd, 1.0 if sd >= 0 else -1.0)
            phidot = math.sqrt(2.0 * rho0) * cd
            mode = 0 if rho0 < SWITCH_FRACTION * rho_c else 1
            return system, np.array([0.0, phi, phidot, 0.0]), mode, None, False, False
        if isinstance(initial, ClassicalStart):
            y0 = np.array([0.0, float(initial.phi), float(initial.phidot), 0.0])
            if not 0.5 * y0[2] ** 2 + float(potential.V(y0[1])) > 0:
                raise InputError(
                    "'background.classical.phi' and 'background.classical.phidot' give zero "
                    "energy density; allowed: a state with rho > 0"
                )
            return engine.System(SYS_ISOTROPIC, (0.0, 0.0, 0.0, 0.0)), y0, 2, None, True, False
        raise InputError(f"unknown initial data {type(initial).__name__}")

    # -- running ----------------------------------------------------------------------------
    def evolve(self, potential: Any, initial: Any,
               settings: IntegrationSettings | None = None) -> BackgroundTrajectory:
        """Evolve one initial datum; physical outcomes are statuses, never exceptions."""
        settings = settings or IntegrationSettings()
        result = self.run(potential, initial, settings, store=True)
        classical = isinstance(initial, ClassicalStart)
        s = result.summary
        message = s.message
        if not classical and math.isfinite(s.potential_fraction_at_bounce):
            message += f"; V/rho at the bounce {s.potential_fraction_at_bounce:.4g}"
        message += f"; max constraint residual {s.max_constraint_residual:.2g}"
        rho_c = math.inf if classical else self.critical_density
        return engine.trajectory(
            self.NAME, result, math.nan if classical else rho_c, settings, message=message,
            provenance={"initial": {"type": type(initial).__name__, **initial.__dict__},
                        "potential": {"name": potential.name, **potential.parameters},
                        "critical_density": rho_c})

    def table(self, potential: Any, initial: Any, *, past_density: float | None = None,
              extra_efolds: float = 2.0, settings: IntegrationSettings | None = None,
              points_per_unit: float = 60.0, dense_efolds: float = 60.0) -> BackgroundTable:
        """The :class:`~bouncelike.background.table.BackgroundTable` through the bounce of
        ``initial`` (a bounce start, or the bounce reached from a contracting start), with the
        contracting branch back to ``past_density`` and ``extra_efolds`` after the end of
        inflation."""
        settings = settings or IntegrationSettings()
        if isinstance(initial, BounceStart):
            phi_b, phidot_b = self.bounce_state(potential, initial)
        elif isinstance(initial, ContractingStart):
            s = self.evolve_summary(potential, initial, settings)
            if not math.isfinite(s.events.t_bounce):
                raise NumericalFailure(f"the background has no bounce ({s.message})")
            phi_b = s.phi_bounce
            rc = self.critical_density
            phidot_b = math.copysign(math.sqrt(max(2 * (rc - float(potential.V(phi_b))), 0.0)),
                                     s.phidot_bounce)
        else:
            raise InputError("a background table needs a bounce: 'background.start' = "
                             "'bounce' or 'contracting'")
        return table_from_state(potential, self.critical_density, phi_b, phidot_b,
                                past_density=past_density, extra_efolds=extra_efolds,
                                rtol=settings.rtol, max_time=settings.max_time,
                                max_efolds=settings.max_inflation_efolds,
                                points_per_unit=points_per_unit, dense_efolds=dense_efolds,
                                settings=settings)
