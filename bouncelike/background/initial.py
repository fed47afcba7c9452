"""Initial data and integration settings shared by every background dynamics.

Three ways to start (Planck units, m_Pl = 1):

* :class:`BounceStart` -- at the bounce (rho = rho_c, H = 0), by the fraction of the energy
  density in the potential, x_V = V(phi_B)/rho_c, and the sign of phidot (the sign of phi_B is
  chosen so that the field sits on the side of the potential it is thrown up, unless
  ``field_sign`` says otherwise: a Starobinsky bounce whose field climbs from the steep side
  towards the plateau has phi_B < 0 and phidot > 0).
* :class:`ContractingStart` -- in the contracting branch at a density rho_0 << rho_c with the
  oscillation phase delta. For V = m^2 phi^2/2 the phase is the one of
  x = sqrt(rho/rho_c) sin(delta), y = sqrt(rho/rho_c) cos(delta) with x = m phi/sqrt(2 rho_c),
  y = phidot/sqrt(2 rho_c) (Linsefors & Barrau, Phys. Rev. D 87 (2013) 123509). For a general
  potential the phase is the energy angle: sqrt(V) = sqrt(rho_0) sin(delta),
  phidot/sqrt(2) = sqrt(rho_0) cos(delta), with phi on the branch sign(phi) = sign(sin(delta)).
  The duration-of-inflation distribution can smear rho_0 log-uniformly over a few decades
  (``[efolds] density_decades``; physics notes, section 2).
* :class:`ClassicalStart` -- general relativity without a bounce, from (phi, phidot), expanding.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class BounceStart:
    """Start at the bounce with V(phi_B)/rho_c = ``potential_fraction``, sign(phidot) and the
    side of the field, sign(phi_B) = ``field_sign`` (0: the side it is thrown up,
    sign(phi_B) = sign(phidot))."""

    potential_fraction: float
    phidot_sign: int = 1
    field_sign: int = 0

    @property
    def field_side(self) -> float:
        """sign(phi_B) as +-1.0."""
        s = self.field_sign if self.field_sign != 0 else self.phidot_sign
        return 1.0 if s >= 0 else -1.0


@dataclass(frozen=True)
class ContractingStart:
    """Start in the contracting branch at density ``density`` with oscillation phase ``phase``."""

    density: float
    phase: float


@dataclass(frozen=True)
class ClassicalStart:
    """Classical (no bounce) expanding start from phi and phidot."""

    phi: float
    phidot: float = 0.0


InitialData = BounceStart | ContractingStart | ClassicalStart


@dataclass(frozen=True)
class IntegrationSettings:
    """Numerical settings recorded with every result (provenance).

    rtol, atol : tolerances of the adaptive integrator.
    max_inflation_efolds : cap on inflationary e-folds; beyond it the run stops with status
        ``"efold_cap"`` (plateau potentials can inflate almost without end).
    max_time : cap on cosmic time after the start (Planck times); reaching it without the end of
        inflation gives status ``"no_inflation"`` or ``"efold_cap"`` as appropriate.
    dense_points : number of samples of the trajectory, taken from the integrator's
        continuous extension (0: only the accepted integrator steps and the events).
    max_steps : budget of accepted integrator steps; exhausting it is a failure (status
        ``"failed"``, with the physical state in the message), never a hang.
    max_seconds : wall-clock budget of one integration (seconds), the same way.
    """

    rtol: float = 1e-10
    atol: float = 1e-13
    max_inflation_efolds: float = 1.0e4
    max_time: float = 1.0e12
    dense_points: int = 2000
    max_steps: int = 3_000_000
    max_seconds: float = 300.0

    def as_dict(self) -> dict[str, float]:
        return {k: getattr(self, k) for k in self.__dataclass_fields__}
