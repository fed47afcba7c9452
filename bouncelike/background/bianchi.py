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

Integration: the compiled canonical driver (:mod:`bouncelike.background.canonical_kernels`,
which repeats the right-hand side below in numba) for built-in potentials; the scipy-stepped
reference driver of :mod:`bouncelike.background.canonical` for Python-only potentials or with
``engine = "scipy"``. ``evolve_summary`` returns only the summary vector (distributions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import InputError
from ..units import critical_density as lqc_critical_density
from . import canonical as cn
from .initial import ClassicalStart, IntegrationSettings
from .result import BackgroundTrajectory


def directional_rates(sx: np.ndarray, cx: np.ndarray, two_gl: float) -> np.ndarray:
    """H_i from sin x_i and cos x_i (cyclic formula of the module docstring)."""
    s1, s2, s3 = sx
    c1, c2, c3 = cx
    return np.array(
        [
            c2 * (s1 + s3) + c3 * (s1 + s2) - c1 * (s2 + s3),
            c3 * (s2 + s1) + c1 * (s2 + s3) - c2 * (s3 + s1),
            c1 * (s3 + s2) + c2 * (s3 + s1) - c3 * (s1 + s2),
        ]
    ) / two_gl


def angle_rates(sx: np.ndarray, cx: np.ndarray, dx: np.ndarray, gl: float, p: float) -> np.ndarray:
    """xdot_i from Hamilton's equations; dx = x_i - xbar (so x_i - x_j = dx_i - dx_j)."""
    s1, s2, s3 = sx
    c1, c2, c3 = cx
    d1, d2, d3 = dx
    big_s = s1 * s2 + s2 * s3 + s3 * s1
    two_gl = 2.0 * gl
    matter = 4.0 * math.pi * gl * p
    return np.array(
        [
            -(big_s + (d1 - d2) * c2 * (s1 + s3) + (d1 - d3) * c3 * (s1 + s2)) / two_gl - matter,
            -(big_s + (d2 - d3) * c3 * (s2 + s1) + (d2 - d1) * c1 * (s2 + s3)) / two_gl - matter,
            -(big_s + (d3 - d1) * c1 * (s3 + s2) + (d3 - d2) * c2 * (s3 + s1)) / two_gl - matter,
        ]
    )


def rate_jacobian(sx: np.ndarray, cx: np.ndarray, two_gl: float) -> np.ndarray:
    """J[i, j] = dH_i / dx_j."""
    jac = np.empty((3, 3))
    for i in range(3):
        j, k = (i + 1) % 3, (i + 2) % 3
        si, sj, sk = sx[i], sx[j], sx[k]
        ci, cj, ck = cx[i], cx[j], cx[k]
        # 2 gamma lambda H_i = cos x_j (s_i + s_k) + cos x_k (s_i + s_j) - cos x_i (s_j + s_k)
        jac[i, i] = ci * (cj + ck) + si * (sj + sk)
        jac[i, j] = -sj * (si + sk) + cj * ck - ci * cj
        jac[i, k] = cj * ck - sk * (si + sj) - ci * ck
    return jac / two_gl


def _offsets(k12: float, k23: float, ln_a: float) -> np.ndarray:
    inv_v = math.exp(-3.0 * ln_a)
    return np.array([2.0 * k12 + k23, -k12 + k23, -k12 - 2.0 * k23]) * (inv_v / 3.0)


def solve_mean_angle(target: float, dx: np.ndarray) -> float:
    """xbar > 0 with sum_{i<j} sin(xbar + dx_i) sin(xbar + dx_j) = target (Newton iteration
    from the small-angle solution 3 xbar^2 - sum dx^2 / 2 = target)."""
    xb = math.sqrt(max(target + 0.5 * float(dx @ dx), 0.0) / 3.0)
    for _ in range(60):
        x = xb + dx
        s = np.sin(x)
        f = s[0] * s[1] + s[1] * s[2] + s[2] * s[0] - target
        fp = math.sin(x[0] + x[1]) + math.sin(x[1] + x[2]) + math.sin(x[2] + x[0])
        step = f / fp
        xb -= step
        if abs(step) <= 1e-15 * abs(xb):
            break
    return xb


@dataclass(frozen=True)
class BianchiSystem:
    """Hamilton's equations of the Bianchi I effective constraint (module docstring)."""

    rho_c: float
    gl: float  # gamma * lambda = sqrt(3 / (8 pi rho_c))
    potential: Any

    def shear_squared(self, y: np.ndarray, phase: int) -> float:
        """sigma^2 = sum_i (H_i - H)^2 = (1/3) sum_{i<j} (H_i - H_j)^2 without cancellation:
        gamma lambda (H_i - H_j) = sin(x_i - x_j) + 2 sin x_k sin((x_i + x_j)/2)
        sin((x_i - x_j)/2) (from the cyclic formula; x_i - x_j = dx_i - dx_j exactly)."""
        sx, _, dx = self.angles(y, phase)
        w = self._raw_angles(y, phase, dx)  # pi - x_i before the bounce, x_i after it
        total = 0.0
        for i, j, k in ((0, 1, 2), (1, 2, 0), (2, 0, 1)):
            d = dx[i] - dx[j]
            diff = math.sin(d) + 2.0 * sx[k] * math.sin(0.5 * (w[i] + w[j])) * math.sin(0.5 * d)
            total += (diff / self.gl) ** 2
        return total / 3.0

    def _raw_angles(self, y: np.ndarray, phase: int, dx: np.ndarray) -> np.ndarray:
        if phase == cn.PRE:
            return math.exp(y[0]) - dx
        if phase == cn.LATE:
            rho = 0.5 * y[5] ** 2 + float(self.potential.V(y[4]))
            return solve_mean_angle(3.0 * rho / self.rho_c, dx) + dx
        return math.exp(y[0]) + dx

    def angles(self, y: np.ndarray, phase: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(sin x_i, cos x_i, x_i - xbar)."""
        dx = _offsets(y[1], y[2], y[3])
        if phase == cn.PRE:
            z = math.exp(y[0]) - dx  # z_i = pi - x_i
            return np.sin(z), -np.cos(z), dx
        if phase == cn.LATE:
            rho = 0.5 * y[5] ** 2 + float(self.potential.V(y[4]))
            xb = solve_mean_angle(3.0 * rho / self.rho_c, dx)
        else:
            xb = math.exp(y[0])
        x = xb + dx
        return np.sin(x), np.cos(x), dx

    def rhs(self, y: np.ndarray, phase: int) -> np.ndarray:
        """Right-hand side in plain floats (the same formulas as :func:`angle_rates` and
        :func:`directional_rates`, unrolled: this is the inner loop)."""
        k12, k23, ln_a, phi, phidot = y[1], y[2], y[3], y[4], y[5]
        f = math.exp(-3.0 * ln_a) / 3.0
        d1, d2, d3 = (2.0 * k12 + k23) * f, (k23 - k12) * f, -(k12 + 2.0 * k23) * f
        v = float(self.potential.V(phi))
        if phase == cn.PRE:
            zb = math.exp(y[0])
            s1, s2, s3 = math.sin(zb - d1), math.sin(zb - d2), math.sin(zb - d3)
            c1, c2, c3 = -math.cos(zb - d1), -math.cos(zb - d2), -math.cos(zb - d3)
        else:
            if phase == cn.LATE:
                rho = 0.5 * phidot * phidot + v
                xb = solve_mean_angle(3.0 * rho / self.rho_c, np.array([d1, d2, d3]))
            else:
                xb = math.exp(y[0])
            s1, s2, s3 = math.sin(xb + d1), math.sin(xb + d2), math.sin(xb + d3)
            c1, c2, c3 = math.cos(xb + d1), math.cos(xb + d2), math.cos(xb + d3)
        gl = self.gl
        two_gl = 2.0 * gl
        a1, a2, a3 = s2 + s3, s1 + s3, s1 + s2
        big_s = s1 * s2 + s2 * s3 + s3 * s1
        matter = 4.0 * math.pi * gl * (0.5 * phidot * phidot - v)
        xd1 = -(big_s + (d1 - d2) * c2 * a2 + (d1 - d3) * c3 * a3) / two_gl - matter
        xd2 = -(big_s + (d2 - d3) * c3 * a3 + (d2 - d1) * c1 * a1) / two_gl - matter
        xd3 = -(big_s + (d3 - d1) * c1 * a1 + (d3 - d2) * c2 * a2) / two_gl - matter
        sym = (c1 * a1 + c2 * a2 + c3 * a3) / two_gl
        h1 = (c2 * a2 + c3 * a3 - c1 * a1) / two_gl
        h2 = (c3 * a3 + c1 * a1 - c2 * a2) / two_gl
        h3 = (c1 * a1 + c2 * a2 - c3 * a3) / two_gl
        three_h = h1 + h2 + h3
        xbar_dot = (xd1 + xd2 + xd3) / 3.0
        if phase == cn.PRE:
            udot = -xbar_dot / zb
        elif phase == cn.POST:
            udot = xbar_dot / xb
        else:
            udot = 0.0
        phiddot = -three_h * phidot - float(self.potential.dV(phi))
        return np.array([udot, k12 * (three_h - sym), k23 * (three_h - sym), three_h / 3.0,
                         phidot, phiddot])

    def rhs_reference(self, y: np.ndarray, phase: int) -> np.ndarray:
        """The right-hand side through the array helpers (kept to cross-check :meth:`rhs`)."""
        sx, cx, dx = self.angles(y, phase)
        phi, phidot = y[4], y[5]
        v = float(self.potential.V(phi))
        pressure = 0.5 * phidot * phidot - v
        xdot = angle_rates(sx, cx, dx, self.gl, pressure)
        rates = directional_rates(sx, cx, 2.0 * self.gl)
        hub = rates.mean()
        three_h = 3.0 * hub
        # d/dt[(x_i - x_j) v] = v (x_i - x_j) [3 H - sum_k cos x_k (s_l + s_m) / (2 gamma lambda)]
        # (the S and P terms of xdot_i - xdot_j cancel identically; computing them and
        # subtracting would leave round-off ~1e-16 xdot, far above a small shear's k). The bracket
        # vanishes analytically (3 H is the same sum); it is evaluated, not assumed.
        sx_, cx_ = sx, cx
        sym = (
            cx_[0] * (sx_[1] + sx_[2]) + cx_[1] * (sx_[0] + sx_[2]) + cx_[2] * (sx_[0] + sx_[1])
        ) / (2.0 * self.gl)
        k12dot = y[1] * (three_h - sym)
        k23dot = y[2] * (three_h - sym)
        xbar_dot = xdot.mean()
        if phase == cn.PRE:
            udot = -xbar_dot / math.exp(y[0])
        elif phase == cn.POST:
            udot = xbar_dot / math.exp(y[0])
        else:
            udot = 0.0
        phiddot = -three_h * phidot - float(self.potential.dV(phi))
        return np.array([udot, k12dot, k23dot, hub, phidot, phiddot])

    def observe(self, y: np.ndarray, phase: int) -> np.ndarray:
        sx, cx, dx = self.angles(y, phase)
        phi, phidot = y[4], y[5]
        v = float(self.potential.V(phi))
        kin = 0.5 * phidot * phidot
        xdot = angle_rates(sx, cx, dx, self.gl, kin - v)
        two_gl = 2.0 * self.gl
        rates = directional_rates(sx, cx, two_gl)
        hub = rates.mean()
        hdot = float((rate_jacobian(sx, cx, two_gl) @ xdot).mean())
        phiddot = -3.0 * hub * phidot - float(self.potential.dV(phi))
        return np.array([y[3], hub, hdot, phi, phidot, phiddot, kin + v, v])

    def rates(self, y: np.ndarray, phase: int) -> np.ndarray:
        sx, cx, _ = self.angles(y, phase)
        return directional_rates(sx, cx, 2.0 * self.gl)

    def to_post(self, y: np.ndarray) -> np.ndarray:
        out = np.array(y, float)
        out[0] = math.log(math.pi - math.exp(out[0]))
        return out

    def to_late(self, y: np.ndarray) -> np.ndarray:
        out = np.array(y, float)
        dx = _offsets(y[1], y[2], y[3])
        rho = 0.5 * y[5] ** 2 + float(self.potential.V(y[4]))
        out[0] = math.log(solve_mean_angle(3.0 * rho / self.rho_c, dx))
        return out

    def constraint_residual(self, y: np.ndarray, phase: int) -> float:
        """|rho_c S / 3 - rho| / scale, with S = sum of sin x_i sin x_j.

        ``scale`` = max(rho, (rho_c/3) sum |sin x_i sin x_j|), the size of the constraint's
        terms. In the isotropic limit it is rho, the normalisation of the isotropic engine;
        at a shear-dominated bounce S is a near-cancellation of O(1) products and dividing by
        the small matter density alone would report round-off as a violation.
        """
        sx, _, _ = self.angles(y, phase)
        products = (sx[0] * sx[1], sx[1] * sx[2], sx[2] * sx[0])
        big_s = sum(products)
        rho = 0.5 * y[5] ** 2 + float(self.potential.V(y[4]))
        scale = max(rho, self.rho_c / 3.0 * sum(abs(p) for p in products))
        return abs(self.rho_c * big_s / 3.0 - rho) / scale


@dataclass(frozen=True)
class BianchiIDynamics(cn.CompiledCanonicalDynamics):
    """Bianchi I effective dynamics; parameters ``shear_ratio`` and ``direction`` (degrees)."""

    critical_density: float = lqc_critical_density()
    shear_ratio: float = 0.0
    direction: float = 0.0
    reference_density: float = 1e-16
    engine: str = "compiled"  # "scipy": the scipy-stepped reference driver

    NAME = "bianchi_i"
    CONFIG_KEYS = ("shear_ratio", "direction", "reference_density")

    def __post_init__(self) -> None:
        if not (self.critical_density > 0 and math.isfinite(self.critical_density)):
            raise InputError(
                f"'background.critical_density' = {self.critical_density!r}; allowed: > 0"
            )
        if not (self.shear_ratio >= 0 and math.isfinite(self.shear_ratio)):
            raise InputError(
                f"'background.bianchi_i.shear_ratio' = {self.shear_ratio!r}; allowed: >= 0"
            )
        if not (0 < self.reference_density < self.critical_density):
            raise InputError(
                f"'background.bianchi_i.reference_density' = {self.reference_density!r}; "
                f"allowed: > 0 and < {self.critical_density:g}"
            )
        if self.engine not in ("compiled", "scipy"):
            raise InputError(f"Bianchi I engine = {self.engine!r}; allowed: compiled, scipy")
        if not math.isfinite(self.direction):
            raise InputError(
                f"'background.bianchi_i.direction' = {self.direction!r}; allowed: finite degrees"
            )

    @classmethod
    def from_config(cls, table: Any, critical_density: float) -> BianchiIDynamics:
        return cls(
            critical_density=critical_density,
            shear_ratio=table.number("shear_ratio", 0.0, minimum=0.0),
            direction=table.number("direction", 0.0),
            reference_density=table.positive("reference_density", 1e-16),
        )

    @property
    def gamma_lambda(self) -> float:
        """gamma sqrt(Delta) = sqrt(3 / (8 pi rho_c))."""
        return math.sqrt(3.0 / (8.0 * math.pi * self.critical_density))

    def system(self, potential: Any) -> BianchiSystem:
        return BianchiSystem(self.critical_density, self.gamma_lambda, potential)

    def initial_state(self, potential: Any, initial: Any) -> np.ndarray:
        if isinstance(initial, ClassicalStart):  # isotropic, expanding, no bounce
            phi, phidot = cn.classical_field(initial)
            rho = 0.5 * phidot**2 + float(potential.V(phi))
            if not 0.0 < rho < cn.LATE_FRACTION * self.critical_density:
                raise InputError(
                    f"classical start density {rho:g} is out of range; allowed: > 0 and < "
                    f"{cn.LATE_FRACTION * self.critical_density:g}"
                )
            xbar = solve_mean_angle(3.0 * rho / self.critical_density, np.zeros(3))
            return np.array([math.log(xbar), 0.0, 0.0, 0.0, phi, phidot])
        start = cn.require_contracting(self.NAME, initial)
        rho_c = self.critical_density
        if not 0.0 < start.density < 1e-2 * rho_c:
            raise InputError(
                f"'background.contracting.density' = {start.density:g} is out of range; "
                f"allowed: > 0 and < {1e-2 * rho_c:g} (1% of the critical density)"
            )
        phi, phidot = cn.field_from_phase(potential, start.density, start.phase)
        rho = 0.5 * phidot**2 + float(potential.V(phi))
        # rho_sigma / rho_0 = shear_ratio * rho_0 / reference_density (module docstring)
        ratio = self.shear_ratio * rho / self.reference_density
        sigma = math.sqrt(16.0 * math.pi * ratio * rho)
        alpha = math.radians(self.direction)
        split = np.array([math.cos(alpha - 2.0 * math.pi * i / 3.0) for i in range(3)])
        # classically x_i - xbar = gamma lambda (H_i - H) (x_i = gamma lambda H_i)
        dx = self.gamma_lambda * math.sqrt(2.0 / 3.0) * sigma * split
        dx -= dx.mean()
        # z_i = pi - x_i = zbar - dx_i; same equation as xbar with -dx
        zbar = solve_mean_angle(3.0 * rho / rho_c, -dx)
        return np.array([math.log(zbar), dx[0] - dx[1], dx[1] - dx[2], 0.0, phi, phidot])

    def _prepare(self, potential: Any, initial: Any, settings: IntegrationSettings) -> tuple:
        y0 = self.initial_state(potential, initial)
        atol, atol_post = cn.tolerances(settings, y0)
        for k in (1, 2):  # conserved differences: relative accuracy
            scale = abs(y0[k]) if y0[k] != 0.0 else 1.0
            atol[k] = atol_post[k] = settings.rtol * scale
        classical = isinstance(initial, ClassicalStart)
        return y0, atol, atol_post, classical


    def _run_compiled(self, potential: Any, initial: Any, settings: IntegrationSettings,
                      store: bool) -> tuple[np.ndarray, cn.RawRun | None]:
        from .canonical_kernels import SYS_BIANCHI

        y0, atol, atol_post, classical = self._prepare(potential, initial, settings)
        return cn.integrate_compiled(
            SYS_BIANCHI, np.array([self.critical_density, self.gamma_lambda]), potential, y0,
            cn.LATE if classical else cn.PRE, settings, atol, atol_post,
            late_density=cn.LATE_FRACTION * self.critical_density, classical=classical,
            store=store,
        )


    def evolve(
        self, potential: Any, initial: Any, settings: IntegrationSettings | None = None
    ) -> BackgroundTrajectory:
        settings = settings or IntegrationSettings()
        y0, atol, atol_post, classical = self._prepare(potential, initial, settings)
        system = self.system(potential)
        if self._compiled(potential):
            run = self._run_compiled(potential, initial, settings, store=True)[1]
        else:
            run = cn.integrate(
                system, y0, cn.LATE if classical else cn.PRE, settings, atol=atol,
                atol_post=atol_post, late_density=cn.LATE_FRACTION * self.critical_density,
                classical=classical,
            )
        extras = self._extras(system, run, y0)
        extras["engine"] = "compiled" if self._compiled(potential) else "scipy"
        tr = cn.assemble(
            self.NAME,
            run,
            self.critical_density,
            cn.residuals(system, run),
            extras=extras,
            settings={**settings.as_dict(), "initial": repr(initial), **self.describe()},
        )
        return cn.as_classical(tr) if classical else tr

    def _extras(self, system: BianchiSystem, run: cn.RawRun, y0: np.ndarray) -> dict[str, Any]:
        pairs = list(zip(run.y, run.phase, strict=True))
        rates = np.array([system.rates(y, p) for y, p in pairs])
        sigma2 = np.array([system.shear_squared(y, p) for y, p in pairs])
        ys = np.array(run.y)
        drift = {}
        for k, name in ((1, "k12"), (2, "k23")):
            ref = abs(y0[k])
            dev = float(np.max(np.abs(ys[:, k] - y0[k])))
            drift[name] = dev / ref if ref > 0 else dev
        rho = np.array([o[cn.RHO] for o in run.obs])
        out: dict[str, Any] = {
            "H1": rates[:, 0],
            "H2": rates[:, 1],
            "H3": rates[:, 2],
            "sigma2": sigma2,
            "initial_shear_to_density": float(sigma2[0] / (16.0 * math.pi) / rho[0]),
            "conserved_difference_drift": max(drift.values()),
            "conserved_differences": {"k12": float(y0[1]), "k23": float(y0[2])},
            "steps": run.steps,
        }
        ev = run.events
        if "t_bounce" in ev:
            i = int(np.searchsorted(np.array(run.t), ev["t_bounce"]))
            i = min(i, len(run.t) - 1)
            shear_density = float(sigma2[i] / (16.0 * math.pi))
            out["bounce_density_ratio"] = float(rho[i] / self.critical_density)
            out["bounce_shear_density_ratio"] = shear_density / self.critical_density
            out["bounce_trigger"] = "shear" if shear_density > rho[i] else "matter"
        else:
            out["bounce_trigger"] = "none"
        return out

    def describe(self) -> dict[str, Any]:
        return {
            "dynamics": self.NAME,
            "critical_density": self.critical_density,
            "shear_ratio": self.shear_ratio,
            "reference_density": self.reference_density,
            "direction_degrees": self.direction,
            "equations": "Hamilton's equations of the Bianchi I effective constraint "
            "(Ashtekar & Wilson-Ewing, arXiv:0903.3397)",
            "contracting_start": "energy angle at density rho_0 as for the isotropic dynamics, "
            "plus shear rho_sigma = sigma^2/(16 pi) with rho_sigma/rho_0 = shear_ratio * "
            "rho_0/reference_density (dust law rho_sigma/rho ~ rho), split as "
            "H_i - H = sqrt(2/3) sigma cos(direction - 120 (i-1) deg)",
            "bounce_trigger": "shear if sigma^2/(16 pi) > rho at the bounce, else matter",
        }
