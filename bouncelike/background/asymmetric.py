"""Asymmetric-bounce dynamics: the modified loop-quantised Hamiltonian (Li, Singh & Wang,
arXiv:1801.07313), integrated in the canonical pair (v, b), {b, v} = 4 pi gamma (G = 1).

Constraint (lapse 1), with theta = lambda b:

    C = (3 v / (8 pi lambda^2)) [sin^2 theta - ((1+gamma^2)/(4 gamma^2)) sin^2(2 theta)] + v rho.

Derived here. On shell, with s^2 = sin^2 theta and rho_c = 3 / (8 pi gamma^2 lambda^2),

    rho = rho_c s^2 [1 - (1 + gamma^2) s^2],

whose maximum, at s^2 = 1 / (2 (1 + gamma^2)), is rho_max = rho_c / (4 (1 + gamma^2)).
Hamilton's equations: vdot = -4 pi gamma dC/db gives

    H = vdot / (3 v) = sin(2 theta) [(1 + gamma^2) cos(2 theta) - gamma^2] / (2 gamma lambda),

and bdot = 4 pi gamma dC/dv = -4 pi gamma (rho + P), i.e. thetadot = -4 pi gamma lambda phidot^2
(as in loop quantum cosmology). Classical limit theta -> 0: C -> -3 v b^2 / (8 pi gamma^2) + v rho
and H -> b / gamma, general relativity; the expanding branch (s^2 < 1/(2(1+gamma^2))) approaches
it after the bounce. The other branch ends, as rho -> 0, at s^2 = 1/(1 + gamma^2), i.e.
theta -> beta_0 = arctan(1/gamma), where

    H -> -1 / (lambda (1 + gamma^2)):   a contracting de Sitter phase with
    Lambda_eff = 3 / (lambda^2 (1 + gamma^2)^2) = 8 pi rho_c gamma^2 / (1 + gamma^2)^2.

Expanding the "-" branch Friedmann equation of the physics notes in x = rho / rho_max gives the
next order, H^2 = Lambda_eff / 3 + (8 pi G_eff / 3) rho + O(rho^2) with
G_eff = G (1 - 5 gamma^2) / (1 + gamma^2) (:func:`pre_bounce_newton_constant`).

Initial data in the de Sitter-like contracting branch (the choice of this package)
------------------------------------------------------------------------------------
In the contracting branch |H| -> 1/(lambda (1+gamma^2)) ~ 0.42 in Planck units, far
above any inflaton mass, so the field does not oscillate there: the oscillation phase of the
isotropic case, whose flat prior is justified by the oscillation, has no counterpart. What the
de Sitter contraction does instead is freeze the field and blow up its kinetic energy, as
a^-6 ~ exp(6 |H| t): followed back in time the kinetic energy dies away and only the frozen
value phi_0 remembers anything. Initial data are therefore set, as for the other dynamics, on
the surface rho = rho_0 of the contracting branch by the energy angle of a
:class:`~bouncelike.background.initial.ContractingStart` (sqrt(V) = sqrt(rho_0) sin(phase),
phidot / sqrt(2) = sqrt(rho_0) cos(phase)); but here the flat phase prior is a flat prior on
the energy split on that surface, and it amounts to a prior on the frozen field,
V(phi_0) = rho_0 sin^2(phase). The bounce is then kinetic-dominated with V_B ~ V(phi_0) <= rho_0,
so rho_0 acts as the scale of the potential at the bounce and the e-fold distribution depends
on it (not only through a convergence window). Every ``describe()`` says so. Starting at the
bounce (:class:`~bouncelike.background.initial.BounceStart`, fraction of rho_max) is offered too.

State for integration: [u, ln a, phi, phidot], u = ln(beta_0 - theta) before the bounce (small
there), ln(theta) after it; far after the bounce theta is solved from the constraint on the
general-relativity branch (see :mod:`bouncelike.background.canonical`). The compiled system is
:mod:`bouncelike.background.asymmetric_system`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.optimize import brentq

from ..config import names_of
from ..errors import InputError
from ..quantities import BARBERO_IMMIRZI
from ..units import IMMIRZI_DEFAULT
from ..units import critical_density as lqc_critical_density
from . import canonical as cn
from . import engine
from .condensate import bounce_field
from .initial import BounceStart, ClassicalStart, ContractingStart
from .limits import check_critical_density
from .systems import SYS_ASYMMETRIC


def maximum_density(critical_density: float, gamma: float) -> float:
    """rho_max = rho_c / (4 (1 + gamma^2)) (Li, Singh & Wang, arXiv:1801.07313)."""
    return critical_density / (4.0 * (1.0 + gamma**2))


def emergent_hubble_rate(critical_density: float, gamma: float) -> float:
    """|H| of the contracting de Sitter limit, 1 / (lambda (1 + gamma^2)) with
    lambda = sqrt(3 / (8 pi gamma^2 rho_c)) (derived in the module docstring)."""
    lam = math.sqrt(3.0 / (8.0 * math.pi * critical_density)) / gamma
    return 1.0 / (lam * (1.0 + gamma**2))


def emergent_cosmological_constant(critical_density: float, gamma: float) -> float:
    """Lambda_eff = 3 H_Lambda^2 = 8 pi rho_c gamma^2 / (1 + gamma^2)^2."""
    return 3.0 * emergent_hubble_rate(critical_density, gamma) ** 2


def pre_bounce_newton_constant(gamma: float) -> float:
    """G_eff / G = (1 - 5 gamma^2) / (1 + gamma^2) of the contracting branch (derived)."""
    return (1.0 - 5.0 * gamma**2) / (1.0 + gamma**2)


def branch_hubble_squared(rho: Any, critical_density: float, gamma: float, branch: int) -> Any:
    """Branch Friedmann equation of the physics notes, x = rho / rho_max,
    H^2 = (8 pi rho / 3)(1 - x)[1 + (gamma^2/(1+gamma^2)) (sqrt(x)/(1 +- sqrt(1-x)))^2];
    ``branch`` +1 after the bounce, -1 before it."""
    rho = np.asarray(rho, dtype=float)
    x = rho / maximum_density(critical_density, gamma)
    root = np.sqrt(np.clip(1.0 - x, 0.0, None))
    ratio = np.sqrt(x) / (1.0 + branch * root)
    return (8.0 * math.pi * rho / 3.0) * (1.0 - x) * (1.0 + gamma**2 / (1.0 + gamma**2) * ratio**2)


@dataclass(frozen=True)
class AsymmetricDynamics(cn.CanonicalDynamics):
    """Modified loop-quantised dynamics with an asymmetric bounce (module docstring)."""

    critical_density: float = lqc_critical_density()
    gamma: float = IMMIRZI_DEFAULT

    NAME = "asymmetric"
    DESCRIBED = ("critical_density", "gamma", "maximum_density")
    TEXTS = {
        "equations": "Hamilton's equations in (v, b) of the modified loop-quantised "
        "constraint (Li, Singh & Wang, arXiv:1801.07313)",
        "contracting_start": (
            "contracting branch is de Sitter-like (|H| -> 1/(lambda (1+gamma^2)), far above "
            "the inflaton mass): no field oscillation, so the phase is the energy angle on "
            "the surface rho = rho_0 (sqrt(V) = sqrt(rho_0) sin(phase)), i.e. a prior on the "
            "frozen field V(phi_0) = rho_0 sin^2(phase); the bounce is then kinetic-dominated "
            "with V_B ~ V(phi_0) <= rho_0, so rho_0 sets the scale of V_B and the results "
            "depend on it"
        ),
    }
    CONFIG_PARAMETERS = (BARBERO_IMMIRZI,)
    CONFIG_KEYS = names_of(CONFIG_PARAMETERS)
    #: |H| ~ 0.42 before the bounce, far above the inflaton mass: no oscillation (docstring)
    FIELD_OSCILLATES_BEFORE_BOUNCE = False

    def __post_init__(self) -> None:
        check_critical_density(self.critical_density)
        BARBERO_IMMIRZI.check(self.gamma, "background.asymmetric.gamma")

    @property
    def maximum_density(self) -> float:
        return maximum_density(self.critical_density, self.gamma)

    @property
    def result_density(self) -> float:
        return self.critical_density

    @property
    def gamma_lambda(self) -> float:
        return math.sqrt(3.0 / (8.0 * math.pi * self.critical_density))

    @property
    def beta0(self) -> float:
        """theta of the contracting de Sitter limit, arctan(1/gamma)."""
        return math.atan(1.0 / self.gamma)

    @property
    def system(self) -> engine.System:
        return engine.System(SYS_ASYMMETRIC, (self.critical_density, self.gamma,
                                              self.gamma_lambda, self.beta0))

    def _late_angle(self, rho: float) -> float:
        """theta on the expanding branch from the constraint rho = rho_c s^2 (1 - (1+g^2) s^2)."""
        x = rho / self.critical_density
        s2 = 2.0 * x / (1.0 + math.sqrt(max(1.0 - 4.0 * (1.0 + self.gamma**2) * x, 0.0)))
        return math.asin(math.sqrt(s2))

    def initial_state(self, potential: Any, initial: Any) -> tuple[np.ndarray, int]:
        if isinstance(initial, ContractingStart):
            if not 0.0 < initial.density < 1e-2 * self.maximum_density:
                raise InputError(
                    f"'background.contracting.density' = {initial.density:g} is out of range; "
                    f"allowed: > 0 and < {1e-2 * self.maximum_density:g} (1% of the maximum "
                    "density rho_c / (4 (1 + gamma^2)))"
                )
            phi, phidot = cn.field_from_phase(potential, initial.density, initial.phase)
            rho = 0.5 * phidot**2 + float(potential.V(phi))
            g2 = 1.0 + self.gamma**2
            b0 = self.beta0

            def f(ln_d: float) -> float:
                d = math.exp(ln_d)
                grav = (self.critical_density * math.sin(b0 - d) ** 2 * g2
                        * math.sin(2 * b0 - d) * math.sin(d))
                return math.log(grav / rho)

            theta_b = math.asin(math.sqrt(1.0 / (2.0 * g2)))
            ln_d = brentq(f, math.log(1e-300), math.log(b0 - theta_b), xtol=1e-15)
            return np.array([ln_d, 0.0, phi, phidot]), cn.PRE
        if isinstance(initial, BounceStart):
            rho_b = self.maximum_density
            phi, phidot = bounce_field(potential, rho_b, initial.potential_fraction,
                                       initial.phidot_sign, initial.field_side)
            theta_b = math.asin(math.sqrt(1.0 / (2.0 * (1.0 + self.gamma**2))))
            return np.array([math.log(theta_b), 0.0, phi, phidot]), cn.POST
        if isinstance(initial, ClassicalStart):  # expanding, general-relativity branch
            phi, phidot = cn.classical_field(initial)
            rho = 0.5 * phidot**2 + float(potential.V(phi))
            if not 0.0 < rho < cn.LATE_FRACTION * self.maximum_density:
                raise InputError(
                    f"classical start density {rho:g} is out of range; allowed: > 0 and < "
                    f"{cn.LATE_FRACTION * self.maximum_density:g}"
                )
            return np.array([math.log(self._late_angle(rho)), 0.0, phi, phidot]), cn.LATE
        raise cn.unavailable_start(self.NAME, initial, "bounce, classical, contracting")

    def trajectory_extras(self, result: engine.EngineRun, t: np.ndarray) -> dict[str, Any]:
        return {"maximum_density": self.maximum_density,
                "emergent_hubble_rate": emergent_hubble_rate(self.critical_density,
                                                             self.gamma)}

    def described_values(self) -> dict[str, Any]:
        return {"emergent_cosmological_constant": emergent_cosmological_constant(
                    self.critical_density, self.gamma),
                "pre_bounce_newton_constant_ratio": pre_bounce_newton_constant(self.gamma)}
