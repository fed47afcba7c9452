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
order-one error of H once theta ~ 1e-10). The compiled system is
:mod:`bouncelike.background.loop_system`. Without the extra term (q = 0) the dynamics *is* the
isotropic one with rho_c -> rho_c' and runs as the isotropic system (``canonical = True`` keeps
the loop system, in its own variables, e.g. for the closed-form checks).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from ..config import Parameter, names_of
from ..errors import InputError
from . import canonical as cn
from . import engine
from .initial import BounceStart, ContractingStart, IntegrationSettings
from .isotropic import IsotropicDynamics
from .limits import check_critical_density, check_potential_fraction
from .result import BackgroundTrajectory, RunSummary
from .systems import SYS_LOOP

#: the keys of [background.condensate], declared once
RESCALE = Parameter("rescale", "critical density of the condensate bounce in units of rho_c",
                    "", 0.0, None, lower_open=True, default=1.0,
                    why="a positive density; the product with rho_c is checked too")
CONDENSATE_TERM = Parameter("condensate_term", "the condensate term q of the effective "
                            "Friedmann equation (module docstring)", "", 0.0, None, default=0.0,
                            why="q >= 0 in the condensate cosmology")


def bounce_field(potential: Any, density: float, fraction: float, sign: int,
                 field_side: float | None = None) -> tuple[float, float]:
    """(phi, phidot) at a bounce of density ``density`` with V / rho = ``fraction``; the field
    sits on the side ``field_side`` (default: the side it is thrown up, sign(phi) =
    sign(phidot))."""
    check_potential_fraction(fraction)
    phase = math.asin(math.sqrt(fraction))
    side = (1.0 if sign >= 0 else -1.0) if field_side is None else field_side
    phi, phidot = cn.field_from_phase(potential, density, phase if side >= 0 else -phase)
    return phi, abs(phidot) * (1.0 if sign >= 0 else -1.0)


@dataclass(frozen=True)
class CondensateDynamics(cn.CanonicalDynamics):
    """Isotropic effective dynamics with critical density ``rescale`` x rho_c and an optional
    condensate term (module docstring)."""

    critical_density: float
    rescale: float = 1.0
    condensate_term: float = 0.0
    canonical: bool = False  # the loop system in its own variables even without the extra term

    NAME = "condensate"
    DESCRIBED = ("rescale", "condensate_term")
    TEXTS = {
        "equations": "H^2 = (8 pi/3) rho (1 - rho/rho_c' + q/v), rho_c' = rescale * rho_c, "
        "v = (a/a_0)^3 (a_0 on the initial surface)",
        "contracting_start": "energy angle at density rho_0 as for the isotropic dynamics: "
        "sqrt(V) = sqrt(rho_0) sin(phase), phidot/sqrt(2) = sqrt(rho_0) cos(phase)",
        "reference": "Oriti, Sindoni & Wilson-Ewing, arXiv:1602.05881",
    }
    CONFIG_PARAMETERS = (RESCALE, CONDENSATE_TERM)
    CONFIG_KEYS = names_of(CONFIG_PARAMETERS)

    def __post_init__(self) -> None:
        check_critical_density(self.critical_density)
        RESCALE.check(self.rescale, "background.condensate.rescale")
        check_critical_density(self.rescale * self.critical_density,
                               "background.condensate.rescale x background.critical_density")
        CONDENSATE_TERM.check(self.condensate_term, "background.condensate.condensate_term")

    @property
    def effective_critical_density(self) -> float:
        return self.rescale * self.critical_density

    @property
    def result_density(self) -> float:
        return self.effective_critical_density

    @property
    def uses_isotropic_engine(self) -> bool:
        """Without the extra term the dynamics is the isotropic one with rho_c -> rho_c'."""
        return self.condensate_term == 0.0 and not self.canonical

    def _isotropic(self) -> IsotropicDynamics:
        return IsotropicDynamics(self.effective_critical_density)

    @property
    def system(self) -> engine.System:
        rho_c = self.effective_critical_density
        return engine.System(SYS_LOOP, (rho_c, self.condensate_term,
                                        math.sqrt(3.0 / (8.0 * math.pi * rho_c)), 0.0))

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
                potential, rho_c, initial.potential_fraction, initial.phidot_sign,
                initial.field_side
            )
            return np.array([math.log(0.5 * math.pi), 0.0, phi, phidot]), cn.POST
        raise cn.unavailable_start(self.NAME, initial, "bounce, contracting")

    def engine_name(self, potential: Any) -> str:
        """Which system runs this dynamics."""
        return "isotropic" if self.uses_isotropic_engine else "canonical (loop variables)"

    def run(self, potential: Any, initial: Any, settings: IntegrationSettings | None = None,
            store: bool = False) -> engine.EngineRun:
        if self.uses_isotropic_engine:
            return self._isotropic().run(potential, initial, settings, store)
        return super().run(potential, initial, settings, store)

    def evolve_summaries(self, potential: Any, initials: list,
                         settings: IntegrationSettings | None = None) -> list[RunSummary]:
        if self.uses_isotropic_engine:
            return self._isotropic().evolve_summaries(potential, initials, settings)
        return super().evolve_summaries(potential, initials, settings)

    def evolve(
        self, potential: Any, initial: Any, settings: IntegrationSettings | None = None
    ) -> BackgroundTrajectory:
        if self.uses_isotropic_engine:
            tr = self._isotropic().evolve(potential, initial, settings)
            return replace(tr, dynamics=self.NAME, settings={**tr.settings, **self.describe()})
        tr = super().evolve(potential, initial, settings)
        return replace(tr, extras={**tr.extras, "system": self.engine_name(potential)})

    def described_values(self) -> dict[str, Any]:
        return {"critical_density": self.effective_critical_density,
                "base_critical_density": self.critical_density,
                "system": "isotropic" if self.uses_isotropic_engine
                else "canonical loop variables"}
