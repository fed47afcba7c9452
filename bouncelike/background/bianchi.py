"""Anisotropic (Bianchi I) effective dynamics with a scalar field, from the effective Hamiltonian.

Variables and constraint (Ashtekar & Wilson-Ewing, Phys. Rev. D 79 (2009) 083535,
arXiv:0903.3397; Corichi & Singh, arXiv:0905.4949): triads p_i and connections c_i with
{c_i, p_j} = 8 pi gamma delta_ij (G = 1), v = sqrt(p1 p2 p3), mu_1 = sqrt(Delta p1 / (p2 p3))
(cyclic), x_i = mu_i c_i, lambda = sqrt(Delta); with lapse 1

    C = -(v / (8 pi gamma^2 Delta)) (sin x1 sin x2 + sin x2 sin x3 + sin x3 sin x1) + v rho,
    rho = p_phi^2 / (2 v^2) + V(phi).

Hamilton's equations (derived here; K = 1 / (8 pi gamma^2 Delta), S = sum_{i<j} sin x_i sin x_j):

* pdot_1 = -8 pi gamma dC/dc_1 = (p_1 / (gamma lambda)) cos x1 (sin x2 + sin x3), so
  H_2 + H_3 = pdot_1 / p_1 (|p_1| = a_2 a_3) and
  H_1 = [cos x2 (s1 + s3) + cos x3 (s1 + s2) - cos x1 (s2 + s3)] / (2 gamma lambda)
      = [sin(x1 - x2) + sin(x1 - x3) + sin(x2 + x3)] / (2 gamma lambda);
* cdot_1 = 8 pi gamma dC/dp_1 with dv/dp_1 = v/(2 p_1), dx_1/dp_1 = x_1/(2 p_1),
  dx_{2,3}/dp_1 = -x_{2,3}/(2 p_1); with mudot_1/mu_1 = -H_1 this gives
  xdot_1 = -[S + (x1 - x2) cos x2 (s1 + s3) + (x1 - x3) cos x3 (s1 + s2)] / (2 gamma lambda)
           - 4 pi gamma lambda P,
  P = phidot^2/2 - V (cyclic for x_2, x_3);
* phidot = p_phi / v, pdot_phi = -v V'(phi), i.e. phiddot = -3 H phidot - V'(phi).

On shell S = 8 pi gamma^2 Delta rho = 3 rho / rho_c; equal x_i give xdot = -4 pi gamma lambda
(rho + P), H = sin(2x) / (2 gamma lambda), sin^2 x = rho / rho_c: the isotropic equations.
Classical limit (x_i -> 0): H_i = x_i / (gamma lambda) and S = 3 rho / rho_c becomes
H_1 H_2 + H_2 H_3 + H_3 H_1 = 8 pi rho, i.e. H^2 = (8 pi / 3) rho + sigma^2 / 6 with
sigma^2 = sum_i (H_i - H)^2. Since c_i p_i = x_i v / lambda, the differences
c_i p_i - c_j p_j = (x_i - x_j) v / lambda are constants of motion, so x_i - x_j ~ a^-3 and
classically sigma^2 ~ a^-6.

State used for integration: [u, k12, k23, ln a, phi, phidot] with
k12 = (x1 - x2) v, k23 = (x2 - x3) v (v = a^3, a the mean scale factor, a = 1 on the initial
surface) and u = ln(pi - xbar) before the bounce, ln(xbar) after it (xbar the mean of x_i; see
:mod:`bouncelike.background.canonical` for why logarithms and why, far after the bounce, xbar
is solved from the constraint). k12 and k23 are integrated: in xdot_i - xdot_j the S and P
terms cancel identically, leaving d/dt[(x_i - x_j) v] = (x_i - x_j) v (3 H - sum_k cos x_k
(s_l + s_m) / (2 gamma lambda)), whose bracket is zero because 3 H is the same sum; the code
evaluates both sides independently and reports the drift. The full Hamilton's equations in
(c_i, p_i) are checked against the constraint by finite differences in the tests.

Initial data in the contracting branch: the density rho_0 and energy angle of a
:class:`~bouncelike.background.initial.ContractingStart`, plus the shear and its direction.
The shear enters the classical Friedmann equation as a density rho_sigma = sigma^2 / (16 pi)
(H^2 = (8 pi/3)(rho + rho_sigma)). ``shear_ratio`` is rho_sigma / rho on the surface of
density ``reference_density`` (default 1e-16); on another initial surface rho_0 the ratio is
carried there by the classical law of the oscillating (dust-like, rho ~ a^-3) field,
rho_sigma / rho ~ rho: rho_sigma / rho_0 = shear_ratio rho_0 / reference_density. The same
physical shear is then described by one number when rho_0 is smeared. (Once H > m before the
bounce the field is kinetic, rho ~ a^-6 like the shear, and the ratio stops growing.)
The direction angle ``direction`` (degrees) splits it:
H_i - H = sqrt(2/3) sigma cos(direction - 120 (i - 1) degrees).

Physical range: the initial surface must be classical, rho_0 + rho_sigma below 1% of rho_c
(so ``shear_ratio`` < 0.01 rho_c reference_density / rho_0^2 - reference_density / rho_0); a
larger shear is refused with a one-line error rather than integrated.

Integration: the engine (:mod:`bouncelike.background.engine`) with the compiled system of
:mod:`bouncelike.background.bianchi_system` (right-hand side, observables, the directional
rates and the shear); ``evolve_summary`` returns only the run's summary (distributions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..config import Parameter, names_of
from ..errors import InputError
from ..units import critical_density as lqc_critical_density
from . import canonical as cn
from . import engine
from .bianchi_system import solve_mean_angle
from .initial import ClassicalStart, IntegrationSettings
from .limits import check_critical_density
from .systems import SYS_BIANCHI

#: the initial surface is classical: rho_0 + rho_sigma below this fraction of rho_c
CLASSICAL_FRACTION = 1e-2

#: the keys of [background.bianchi_i], declared once (their upper bounds depend on rho_c)
SHEAR_RATIO = Parameter("shear_ratio", "rho_sigma / rho on the reference surface", "", 0.0,
                        None, default=0.0, why="a shear energy density is not negative")
DIRECTION = Parameter("direction", "direction of the shear in the (beta_+, beta_-) plane",
                      "degrees", default=0.0)
REFERENCE_DENSITY = Parameter("reference_density", "density of the surface where shear_ratio "
                              "is given", "Planck density", 0.0, None, lower_open=True,
                              default=1e-16, why="a classical contracting branch")


@dataclass(frozen=True)
class BianchiIDynamics(cn.CanonicalDynamics):
    """Bianchi I effective dynamics; parameters ``shear_ratio`` and ``direction`` (degrees)."""

    critical_density: float = lqc_critical_density()
    shear_ratio: float = 0.0
    direction: float = 0.0
    reference_density: float = 1e-16

    NAME = "bianchi_i"
    DESCRIBED = ("critical_density", "shear_ratio", "reference_density")
    TEXTS = {
        "equations": "Hamilton's equations of the Bianchi I effective constraint "
        "(Ashtekar & Wilson-Ewing, arXiv:0903.3397)",
        "contracting_start": "energy angle at density rho_0 as for the isotropic dynamics, "
        "plus shear rho_sigma = sigma^2/(16 pi) with rho_sigma/rho_0 = shear_ratio * "
        "rho_0/reference_density (dust law rho_sigma/rho ~ rho), split as "
        "H_i - H = sqrt(2/3) sigma cos(direction - 120 (i-1) deg)",
        "bounce_trigger": "shear if sigma^2/(16 pi) > rho at the bounce, else matter",
    }
    CONFIG_PARAMETERS = (SHEAR_RATIO, DIRECTION, REFERENCE_DENSITY)
    CONFIG_KEYS = names_of(CONFIG_PARAMETERS)

    def __post_init__(self) -> None:
        check_critical_density(self.critical_density)
        ceiling = CLASSICAL_FRACTION * self.critical_density
        REFERENCE_DENSITY.check(self.reference_density, "background.bianchi_i.reference_density",
                                upper=ceiling, reason="1% of rho_c: a classical surface")
        SHEAR_RATIO.check(self.shear_ratio, "background.bianchi_i.shear_ratio",
                          upper=ceiling / self.reference_density,
                          reason="the shear density rho_sigma = shear_ratio x reference_density "
                          "on the reference surface must stay below 1% of rho_c: a classical "
                          "contracting branch")
        DIRECTION.check(self.direction, "background.bianchi_i.direction")

    @property
    def gamma_lambda(self) -> float:
        """gamma sqrt(Delta) = sqrt(3 / (8 pi rho_c))."""
        return math.sqrt(3.0 / (8.0 * math.pi * self.critical_density))

    @property
    def result_density(self) -> float:
        return self.critical_density

    @property
    def system(self) -> engine.System:
        return engine.System(SYS_BIANCHI, (self.critical_density, self.gamma_lambda, 0.0, 0.0))

    def initial_state(self, potential: Any, initial: Any) -> np.ndarray:
        rho_c = self.critical_density
        if isinstance(initial, ClassicalStart):  # isotropic, expanding, no bounce
            phi, phidot = cn.classical_field(initial)
            rho = 0.5 * phidot**2 + float(potential.V(phi))
            if not 0.0 < rho < cn.LATE_FRACTION * rho_c:
                raise InputError(
                    f"classical start density {rho:g} is out of range; allowed: > 0 and < "
                    f"{cn.LATE_FRACTION * rho_c:g}"
                )
            xbar = solve_mean_angle(3.0 * rho / rho_c, 0.0, 0.0, 0.0)
            return np.array([math.log(xbar), 0.0, 0.0, 0.0, phi, phidot])
        start = cn.require_contracting(self.NAME, initial)
        if not 0.0 < start.density < CLASSICAL_FRACTION * rho_c:
            raise InputError(
                f"'background.contracting.density' = {start.density:g} is out of range; "
                f"allowed: > 0 and < {CLASSICAL_FRACTION * rho_c:g} (1% of the critical density)"
            )
        phi, phidot = cn.field_from_phase(potential, start.density, start.phase)
        rho = 0.5 * phidot**2 + float(potential.V(phi))
        # rho_sigma / rho_0 = shear_ratio * rho_0 / reference_density (module docstring)
        ratio = self.shear_ratio * rho / self.reference_density
        if not rho * (1.0 + ratio) < CLASSICAL_FRACTION * rho_c:
            top = (CLASSICAL_FRACTION * rho_c / rho - 1.0) * self.reference_density / rho
            raise InputError(
                f"'background.bianchi_i.shear_ratio' = {self.shear_ratio:g} is out of range for "
                f"the initial density {rho:g}; allowed: < {max(top, 0.0):.3g} there (rho_0 + "
                "rho_sigma below 1% of rho_c: a classical contracting branch)"
            )
        sigma = math.sqrt(16.0 * math.pi * ratio * rho)
        alpha = math.radians(self.direction)
        split = np.array([math.cos(alpha - 2.0 * math.pi * i / 3.0) for i in range(3)])
        # classically x_i - xbar = gamma lambda (H_i - H) (x_i = gamma lambda H_i)
        dx = self.gamma_lambda * math.sqrt(2.0 / 3.0) * sigma * split
        dx -= dx.mean()
        # z_i = pi - x_i = zbar - dx_i; same equation as xbar with -dx
        zbar = solve_mean_angle(3.0 * rho / rho_c, -dx[0], -dx[1], -dx[2])
        return np.array([math.log(zbar), dx[0] - dx[1], dx[1] - dx[2], 0.0, phi, phidot])

    def start(self, potential: Any, initial: Any, settings: IntegrationSettings) -> tuple:
        y0 = self.initial_state(potential, initial)
        atol = cn.tolerances(settings, y0)
        for k in (1, 2):  # conserved differences: relative accuracy
            atol[:, k] = settings.rtol * (abs(y0[k]) if y0[k] != 0.0 else 1.0)
        classical = isinstance(initial, ClassicalStart)
        return (self.system, y0, cn.LATE if classical else cn.PRE, atol, classical, False)

    def trajectory_extras(self, result: engine.EngineRun, t: np.ndarray) -> dict[str, Any]:
        dense = result.dense
        states, _ = dense.states(t)
        aniso = dense.anisotropy(t)
        rho = dense.observables(t)["rho"]
        sigma2 = aniso[:, 3]
        drift = {}
        for k, name in ((1, "k12"), (2, "k23")):
            ref = abs(states[0, k])
            dev = float(np.max(np.abs(states[:, k] - states[0, k])))
            drift[name] = dev / ref if ref > 0 else dev
        out: dict[str, Any] = {
            "H1": aniso[:, 0], "H2": aniso[:, 1], "H3": aniso[:, 2], "sigma2": sigma2,
            "initial_shear_to_density": float(sigma2[0] / (16.0 * math.pi) / rho[0]),
            "conserved_difference_drift": max(drift.values()),
            "conserved_differences": {"k12": float(states[0, 1]), "k23": float(states[0, 2])},
        }
        t_b = result.summary.events.t_bounce
        if math.isfinite(t_b):
            i = min(int(np.searchsorted(t, t_b)), len(t) - 1)
            shear_density = float(sigma2[i] / (16.0 * math.pi))
            out["bounce_density_ratio"] = float(rho[i] / self.critical_density)
            out["bounce_shear_density_ratio"] = shear_density / self.critical_density
            out["bounce_trigger"] = "shear" if shear_density > rho[i] else "matter"
        else:
            out["bounce_trigger"] = "none"
        return out

    def described_values(self) -> dict[str, Any]:
        return {"direction_degrees": self.direction}
