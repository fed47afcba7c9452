"""Condensate-type dynamics: the effective isotropic equations with a rescaled critical density.

The condensate cosmology of group field theory (Oriti, Sindoni & Wilson-Ewing, Class. Quantum
Grav. 33 (2016) 224001, arXiv:1602.05881) reproduces, in its simplest single-spin case, the
effective Friedmann equation of loop quantum cosmology with its own critical density, plus a
term that decays with the volume:

    H^2 = (8 pi / 3) rho (1 - rho / rho_c' + q / v),   v = a^3 / a_0^3,

with rho_c' = ``rescale`` x rho_c (``rescale`` the one required parameter) and q the optional
condensate term (``condensate_term``, dimensionless, its value relative to the general-relativity
term on the initial surface, where a = a_0; default 0). The volume shrinks by about 1e9 between
rho_0 = 1e-16 and the bounce (m = 1.21e-6), so q ~ 1e-12 already moves the bounce by 1e-3;
q ~ 1e-3 would push it far above the Planck density and the run reports "failed". Written as
H^2 = (8 pi/3) rho A (1 - rho / (rho_c' A)) with A = 1 + q / v it keeps the loop form, so the
state is the angle theta with sin^2(theta) = rho / (rho_c' A):

    H = A sin(2 theta) / (2 l),   l = sqrt(3 / (8 pi rho_c')),
    thetadot = -4 pi l [rho + P - rho q / (v + q)],

obtained by differentiating the constraint, which is therefore an invariant of the flow (its
residual |rho_c' A sin^2 theta - rho| / rho is reported). With q = 0 these are exactly the
canonical loop equations (physics notes, section 1) with rho_c -> rho_c': the bounce is at
rho = rho_c' and the massless solution is a(t) = a_B (1 + 24 pi rho_c' t^2)^(1/6). With q > 0 the
bounce moves to rho = rho_c' A(v_B).

Before the bounce the state holds ln(zeta), zeta = pi - theta (small in the contracting branch),
after it ln(theta) (see :mod:`bouncelike.background.canonical`): the angle decays by many orders
of magnitude on either side of the bounce, and only its logarithm keeps a relative accuracy set
by the tolerance (an absolute error of 1e-10 left near the bounce would otherwise become an
order-one error of H once theta ~ 1e-10).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from ..errors import InputError
from . import canonical as cn
from .initial import BounceStart, ContractingStart, IntegrationSettings
from .result import BackgroundTrajectory


def bounce_field(potential: Any, density: float, fraction: float, sign: int) -> tuple[float, float]:
    """(phi, phidot) at a bounce of density ``density`` with V / rho = ``fraction``; the field
    sits on the side it is thrown up (sign(phi) = sign(phidot))."""
    if not 0.0 <= fraction <= 1.0:
        raise InputError(
            f"'background.bounce.potential_fraction' = {fraction:g} is out of range; "
            "allowed: >= 0 and <= 1"
        )
    phase = math.asin(math.sqrt(fraction))
    phi, phidot = cn.field_from_phase(potential, density, phase if sign >= 0 else -phase)
    return phi, abs(phidot) * (1.0 if sign >= 0 else -1.0)


@dataclass(frozen=True)
class LoopSystem:
    """Canonical loop equations with critical density ``rho_c`` and condensate term ``q``.

    State: [ln w, ln a, phi, phidot] with w = pi - theta before the bounce, theta after it.
    """

    rho_c: float
    q: float
    potential: Any

    @property
    def ell(self) -> float:
        return math.sqrt(3.0 / (8.0 * math.pi * self.rho_c))

    def _a_factor(self, ln_a: float) -> tuple[float, float]:
        if self.q == 0.0:
            return 1.0, 0.0
        qv = self.q * math.exp(-3.0 * ln_a)
        return 1.0 + qv, qv

    def _angle(self, y: np.ndarray, phase: int) -> float:
        if phase == cn.LATE:  # solved from the constraint, post-bounce branch theta < pi/2
            big_a, _ = self._a_factor(y[1])
            rho = 0.5 * y[3] ** 2 + float(self.potential.V(y[2]))
            return math.asin(math.sqrt(min(rho / (self.rho_c * big_a), 1.0)))
        return math.exp(y[0])

    def rhs(self, y: np.ndarray, phase: int) -> np.ndarray:
        ln_w, ln_a, phi, phidot = y
        w = self._angle(y, phase)
        ell = self.ell
        big_a, qv = self._a_factor(ln_a)
        s2 = math.sin(2.0 * w)
        hub = big_a * (-s2 if phase == cn.PRE else s2) / (2.0 * ell)
        v = float(self.potential.V(phi))
        kin = 0.5 * phidot * phidot
        rho_plus_p = 2.0 * kin
        drive = 4.0 * math.pi * ell * (rho_plus_p - (kin + v) * qv / big_a)
        wdot = drive if phase == cn.PRE else -drive
        phiddot = -3.0 * hub * phidot - float(self.potential.dV(phi))
        return np.array([0.0 if phase == cn.LATE else wdot / w, hub, phidot, phiddot])

    def observe(self, y: np.ndarray, phase: int) -> np.ndarray:
        ln_w, ln_a, phi, phidot = y
        w = self._angle(y, phase)
        ell = self.ell
        big_a, qv = self._a_factor(ln_a)
        sgn = -1.0 if phase == cn.PRE else 1.0
        s2, c2 = math.sin(2.0 * w), math.cos(2.0 * w)
        hub = sgn * big_a * s2 / (2.0 * ell)
        v = float(self.potential.V(phi))
        kin = 0.5 * phidot * phidot
        rho = kin + v
        thetadot = -4.0 * math.pi * ell * (2.0 * kin - rho * qv / big_a)
        # d/dt [A sin(2 theta) / (2 l)], with dA/dt = -3 H (A - 1); c2 is cos(2 theta) either way
        hdot = -3.0 * hub * hub * qv / big_a + big_a * c2 * thetadot / ell
        phiddot = -3.0 * hub * phidot - float(self.potential.dV(phi))
        return np.array([ln_a, hub, hdot, phi, phidot, phiddot, rho, v])

    def to_post(self, y: np.ndarray) -> np.ndarray:
        out = np.array(y, float)
        out[0] = math.log(math.pi - math.exp(out[0]))
        return out

    def to_late(self, y: np.ndarray) -> np.ndarray:
        out = np.array(y, float)
        out[0] = math.log(self._angle(out, cn.LATE))
        return out

    def constraint_residual(self, y: np.ndarray, phase: int) -> float:
        ln_w, ln_a, phi, phidot = y
        w = self._angle(y, phase)
        big_a, _ = self._a_factor(ln_a)
        rho = 0.5 * phidot * phidot + float(self.potential.V(phi))
        return abs(self.rho_c * big_a * math.sin(w) ** 2 - rho) / rho


@dataclass(frozen=True)
class CondensateDynamics:
    """Isotropic effective dynamics with critical density ``rescale`` x rho_c and an optional
    condensate term (module docstring)."""

    critical_density: float
    rescale: float = 1.0
    condensate_term: float = 0.0
    canonical: bool = False  # force the canonical integrator even without the extra term
    canonical_engine: str = "compiled"  # "scipy": the scipy-stepped reference driver

    NAME = "condensate"
    CONFIG_KEYS = ("rescale", "condensate_term")

    def __post_init__(self) -> None:
        if self.canonical_engine not in ("compiled", "scipy"):
            raise InputError(f"condensate canonical_engine = {self.canonical_engine!r}; "
                             "allowed: compiled, scipy")
        if not (self.critical_density > 0 and math.isfinite(self.critical_density)):
            raise InputError(
                f"'background.critical_density' = {self.critical_density!r} must be > 0"
            )
        if not (self.rescale > 0 and math.isfinite(self.rescale)):
            raise InputError(f"'background.condensate.rescale' = {self.rescale!r}; allowed: > 0")
        if not (self.condensate_term >= 0 and math.isfinite(self.condensate_term)):
            raise InputError(
                f"'background.condensate.condensate_term' = {self.condensate_term!r}; "
                "allowed: >= 0"
            )

    @classmethod
    def from_config(cls, table: Any, critical_density: float) -> CondensateDynamics:
        return cls(
            critical_density=critical_density,
            rescale=table.positive("rescale", 1.0),
            condensate_term=table.number("condensate_term", 0.0, minimum=0.0),
        )

    @property
    def effective_critical_density(self) -> float:
        return self.rescale * self.critical_density

    def system(self, potential: Any) -> LoopSystem:
        return LoopSystem(self.effective_critical_density, self.condensate_term, potential)

    def initial_state(self, potential: Any, initial: Any) -> tuple[np.ndarray, int]:
        rho_c = self.effective_critical_density
        if isinstance(initial, ContractingStart):
            if not 0.0 < initial.density < rho_c:
                raise InputError(
                    f"'background.contracting.density' = {initial.density:g} is out of range; "
                    f"allowed: > 0 and < {rho_c:g} (the critical density of this dynamics)"
                )
            phi, phidot = cn.field_from_phase(potential, initial.density, initial.phase)
            rho = 0.5 * phidot**2 + float(potential.V(phi))
            # zeta = pi - theta with sin^2(zeta) = rho / (rho_c A), A = 1 + q at a = a_0
            zeta = math.asin(math.sqrt(rho / (rho_c * (1.0 + self.condensate_term))))
            return np.array([math.log(zeta), 0.0, phi, phidot]), cn.PRE
        if isinstance(initial, BounceStart):
            if self.condensate_term != 0.0:
                raise InputError(
                    "'background.start' = 'bounce' is not available with "
                    "'background.condensate.condensate_term' > 0; allowed: contracting"
                )
            phi, phidot = bounce_field(
                potential, rho_c, initial.potential_fraction, initial.phidot_sign
            )
            return np.array([math.log(0.5 * math.pi), 0.0, phi, phidot]), cn.POST
        raise InputError(
            f"'background.start' = '{type(initial).__name__}' is not available for dynamics "
            "'condensate'; allowed: bounce, contracting"
        )

    @property
    def uses_isotropic_engine(self) -> bool:
        """Without the extra term the dynamics *is* the isotropic one with rho_c -> rho_c':
        the compiled isotropic engine is used (``canonical = True`` forces this module's
        canonical integrator, e.g. to cross-check the two)."""
        return self.condensate_term == 0.0 and not self.canonical

    def _isotropic(self) -> Any:
        from .isotropic import IsotropicDynamics

        return IsotropicDynamics(self.effective_critical_density)

    @property
    def evolve_summary(self) -> Any:
        """Summary vector only: the isotropic engine's without the extra term, else the
        canonical driver's (same layout for the fields distributions read)."""
        if self.uses_isotropic_engine:
            return self._isotropic().evolve_summary
        return self._canonical_summary

    def _run_compiled(self, potential: Any, initial: Any, settings: IntegrationSettings,
                      store: bool) -> tuple[np.ndarray, cn.RawRun | None]:
        from .canonical_kernels import SYS_LOOP

        y0, phase = self.initial_state(potential, initial)
        atol, atol_post = cn.tolerances(settings, y0)
        system = self.system(potential)
        return cn.integrate_compiled(
            SYS_LOOP, np.array([system.rho_c, system.q, system.ell]), potential, y0, phase,
            settings, atol, atol_post,
            late_density=cn.LATE_FRACTION * self.effective_critical_density, store=store,
        )

    def _canonical_compiled(self, potential: Any) -> bool:
        return self.engine_name(potential) == "canonical (compiled)"

    def engine_name(self, potential: Any) -> str:
        """Which integrator runs this dynamics for ``potential``."""
        if self.uses_isotropic_engine:
            return "isotropic (compiled)"
        if self.canonical_engine == "compiled" and cn.compiled_potential(potential) is not None:
            return "canonical (compiled)"
        return "canonical (scipy)"

    def _canonical_summary(self, potential: Any, initial: Any,
                           settings: IntegrationSettings | None = None) -> np.ndarray:
        settings = settings or IntegrationSettings()
        if self._canonical_compiled(potential):
            return self._run_compiled(potential, initial, settings, store=False)[0]
        return cn.summary_from_trajectory(self.evolve(potential, initial, settings))

    def evolve(
        self, potential: Any, initial: Any, settings: IntegrationSettings | None = None
    ) -> BackgroundTrajectory:
        settings = settings or IntegrationSettings()
        if self.uses_isotropic_engine:
            tr = self._isotropic().evolve(potential, initial, settings)
            return replace(tr, dynamics=self.NAME, settings={**tr.settings, **self.describe()})
        y0, phase = self.initial_state(potential, initial)
        system = self.system(potential)
        atol, atol_post = cn.tolerances(settings, y0)
        if self._canonical_compiled(potential):
            run = self._run_compiled(potential, initial, settings, store=True)[1]
        else:
            run = cn.integrate(
                system, y0, phase, settings, atol=atol, atol_post=atol_post,
                late_density=cn.LATE_FRACTION * self.effective_critical_density,
            )
        return cn.assemble(
            self.NAME,
            run,
            self.effective_critical_density,
            cn.residuals(system, run),
            extras={"steps": run.steps, "engine": self.engine_name(potential)},
            settings={**settings.as_dict(), "initial": repr(initial), **self.describe()},
        )

    def describe(self) -> dict[str, Any]:
        return {
            "dynamics": self.NAME,
            "critical_density": self.effective_critical_density,
            "rescale": self.rescale,
            "base_critical_density": self.critical_density,
            "condensate_term": self.condensate_term,
            "engine": "isotropic (compiled)" if self.uses_isotropic_engine else (
                "canonical (compiled unless the potential is Python-only)"
                if self.canonical_engine == "compiled" else "canonical (scipy)"),
            "equations": "H^2 = (8 pi/3) rho (1 - rho/rho_c' + q/v), rho_c' = rescale * rho_c, "
            "v = (a/a_0)^3 (a_0 on the initial surface)",
            "contracting_start": "energy angle at density rho_0 as for the isotropic dynamics: "
            "sqrt(V) = sqrt(rho_0) sin(phase), phidot/sqrt(2) = sqrt(rho_0) cos(phase)",
            "reference": "Oriti, Sindoni & Wilson-Ewing, arXiv:1602.05881",
        }
