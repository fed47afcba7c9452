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

Numerics. The compiled integrator (:mod:`bouncelike.background.kernels`) keeps the Friedmann
constraint: away from the bounce (rho < rho_c / 100) H is set by the constraint with the branch
sign fixed (-1 contracting, +1 expanding), and only near the bounce is H evolved with the
Raychaudhuri equation. The maximum relative residual |H^2 - F(rho)| / ((8 pi / 3) rho) over the
evolved stretch is reported with every result (below 1e-6 with the default tolerances).

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
minimum phi = 0 (see :func:`bouncelike.background.kernels.integrate`), so a brief acceleration
while the field turns on a steep wall does not hide the plateau inflation that follows.

ln a = 0 and t = 0 at the start. Custom (Python) potentials are integrated by the same algorithm
run as plain Python, about a hundred times slower; the result message says so.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import InputError
from ..units import critical_density as critical_density_from_gamma
from . import kernels as K
from .initial import BounceStart, ClassicalStart, ContractingStart, IntegrationSettings
from .potentials import KERNEL_PYTHON
from .result import BackgroundEvents, BackgroundTrajectory, EfoldCounts

#: internal cap on accepted steps (a run never hangs); far above what any scenario needs
MAX_STEPS = 3_000_000

STATUS_NAMES = {
    K.ST_INFLATED: "inflated",
    K.ST_NO_INFLATION: "no_inflation",
    K.ST_EFOLD_CAP: "efold_cap",
    K.ST_FAILED: "failed",
}
REASONS = {
    K.R_END: "end of inflation reached",
    K.R_EFOLD_CAP: "e-fold cap reached during inflation",
    K.R_TIME_CAP: "time cap reached",
    K.R_STEP_CAP: "step cap reached",
    K.R_STEP_UNDERFLOW: "step size underflow",
    K.R_NONFINITE: "non-finite values in the integration",
}


# -- pure array-level physics (usable by other dynamics) ------------------------------------------
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

    Vectorised over trailing axes of ``y``. For long stretches use the constraint instead
    (module notes); this form is what the bounce neighbourhood and simple baselines need.
    """
    lna, phi, phidot, H = np.asarray(y, dtype=float)
    rho = 0.5 * phidot**2 + potential.V(phi)
    return np.array([
        H,
        phidot,
        -3.0 * H * phidot - potential.dV(phi),
        raychaudhuri(phidot, rho, critical_density),
    ])


# -- the engine -----------------------------------------------------------------------------------
_PYTHON_KERNELS: Any = None


def _python_kernels(potential: Any) -> Any:
    global _PYTHON_KERNELS
    if _PYTHON_KERNELS is None:
        _PYTHON_KERNELS = K.pure_python_copy(None)

    def terms(kind: int, p: Any, phi: float) -> tuple[float, float, float]:
        return float(potential.V(phi)), float(potential.dV(phi)), float(potential.d2V(phi))

    _PYTHON_KERNELS.potential_terms = terms
    return _PYTHON_KERNELS


class IsotropicDynamics:
    """The effective isotropic bounce with critical density ``critical_density`` (Planck units).

    ``evolve(potential, initial, settings)`` returns a
    :class:`~bouncelike.background.result.BackgroundTrajectory`; ``evolve_summary`` returns the
    kernel's summary vector only (what distributions need, no stored trajectory).
    """

    NAME = "isotropic"
    CONFIG_KEYS: tuple[str, ...] = ()

    def __init__(self, critical_density: float | None = None):
        if critical_density is None:
            critical_density = critical_density_from_gamma()
        critical_density = float(critical_density)
        if not (math.isfinite(critical_density) and critical_density > 0):
            raise InputError(
                f"'background.critical_density' = {critical_density!r} is out of range; "
                "allowed: > 0"
            )
        self.critical_density = critical_density

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
    def initial_state(self, potential: Any, initial: Any) -> tuple[np.ndarray, int, float, float,
                                                                  bool]:
        """(y0, mode, branch sign, 1/rho_c, started at/after the bounce) for the kernel."""
        rho_c = self.critical_density
        inv = 1.0 / rho_c
        if isinstance(initial, BounceStart):
            x = float(initial.potential_fraction)
            if not (0.0 <= x <= 1.0):
                raise InputError(
                    f"'background.bounce.potential_fraction' = {x!r} is out of range; "
                    "allowed: >= 0 and <= 1"
                )
            sign = 1.0 if initial.phidot_sign >= 0 else -1.0
            phi = potential.field_at(x * rho_c, sign)
            kinetic = max(rho_c - float(potential.V(phi)), 0.0)
            y0 = np.array([0.0, phi, sign * math.sqrt(2.0 * kinetic), 0.0])
            return y0, 1, 1.0, inv, True
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
            mode = 0 if rho0 < K.SWITCH_FRACTION * rho_c else 1
            y0 = np.array([0.0, phi, phidot, 0.0])
            return y0, mode, -1.0, inv, False
        if isinstance(initial, ClassicalStart):
            y0 = np.array([0.0, float(initial.phi), float(initial.phidot), 0.0])
            if not 0.5 * y0[2] ** 2 + float(potential.V(y0[1])) > 0:
                raise InputError(
                    "'background.classical.phi' and 'background.classical.phidot' give zero "
                    "energy density; allowed: a state with rho > 0"
                )
            return y0, 0, 1.0, 0.0, True
        raise InputError(f"unknown initial data {type(initial).__name__}")

    # -- running ----------------------------------------------------------------------------
    def _run(self, potential: Any, initial: Any, settings: IntegrationSettings,
             store: bool, substeps: int = 0) -> tuple[np.ndarray, np.ndarray, int, str]:
        y0, mode, s, inv, bounced = self.initial_state(potential, initial)
        kind, params = potential.kernel
        module, engine = K, "compiled"
        if kind == KERNEL_PYTHON:
            module, engine = _python_kernels(potential), "python"
        summary, rec, n = module.integrate(
            int(kind), np.asarray(params, dtype=float), y0, int(mode), float(s), float(inv),
            bool(bounced), float(settings.rtol), float(settings.atol),
            float(settings.max_inflation_efolds), float(settings.max_time), int(MAX_STEPS),
            bool(store), int(substeps),
        )
        return summary, rec, int(n), engine

    def evolve_summary(self, potential: Any, initial: Any,
                       settings: IntegrationSettings | None = None) -> np.ndarray:
        """The kernel summary vector (layout in :mod:`bouncelike.background.kernels`)."""
        settings = settings or IntegrationSettings()
        return self._run(potential, initial, settings, store=False)[0]

    def evolve(self, potential: Any, initial: Any,
               settings: IntegrationSettings | None = None) -> BackgroundTrajectory:
        """Evolve one initial datum; physical outcomes are statuses, never exceptions."""
        settings = settings or IntegrationSettings()
        substeps = 0
        if settings.dense_points > 0:
            # a first pass counts the steps; the second records points inside each step from
            # the integrator's 7th-order continuous extension to reach ``dense_points``
            steps = int(self._run(potential, initial, settings, store=False)[0][K.S_STEPS])
            substeps = int(min(50, max(0, math.ceil(settings.dense_points / max(steps, 1)) - 1)))
        summary, rec, n, engine = self._run(potential, initial, settings, store=True,
                                            substeps=substeps)
        classical = isinstance(initial, ClassicalStart)
        rho_c = math.inf if classical else self.critical_density
        arrays = _dense(rec[:n], potential)
        events, efolds = events_and_efolds(summary)
        status = "no_bounce" if classical else STATUS_NAMES[int(summary[K.S_STATUS])]
        message = describe_outcome(summary, classical, engine)
        return BackgroundTrajectory(
            dynamics=self.NAME,
            critical_density=math.nan if classical else rho_c,
            events=events,
            efolds=efolds,
            potential_fraction_at_bounce=float(summary[K.S_VFRAC_BOUNCE]),
            max_constraint_residual=float(summary[K.S_MAX_RESIDUAL]),
            status=status,
            message=message,
            extras={
                "engine": engine,
                "steps": int(summary[K.S_STEPS]),
                "rejected_steps": int(summary[K.S_REJECTED]),
                "rhs_evaluations": int(summary[K.S_RHS]),
                "stop_reason": REASONS[int(summary[K.S_REASON])],
                "accelerated_phases": int(summary[K.S_N_PHASES]),
                "phi_bounce": float(summary[K.S_PHI_BOUNCE]),
                "phidot_bounce": float(summary[K.S_PHIDOT_BOUNCE]),
            },
            settings={
                **settings.as_dict(),
                "initial": {"type": type(initial).__name__, **initial.__dict__},
                "potential": {"name": potential.name, **potential.parameters},
                "critical_density": rho_c,
            },
            **arrays,
        )


def events_and_efolds(summary: np.ndarray) -> tuple[BackgroundEvents, EfoldCounts]:
    """Events and e-fold counts from a kernel summary vector."""
    s = summary
    events = BackgroundEvents(
        t_bounce=float(s[K.S_T_BOUNCE]),
        t_superinflation_end=float(s[K.S_T_SI_END]),
        t_inflation_start=float(s[K.S_T_INF_START]),
        t_inflation_end=float(s[K.S_T_INF_END]),
        ln_a_bounce=float(s[K.S_LNA_BOUNCE]),
        ln_a_superinflation_end=float(s[K.S_LNA_SI_END]),
        ln_a_inflation_start=float(s[K.S_LNA_INF_START]),
        ln_a_inflation_end=float(s[K.S_LNA_INF_END]),
    )
    return events, EfoldCounts(
        bounce_to_inflation_start=float(s[K.S_LNA_INF_START] - s[K.S_LNA_BOUNCE]),
        inflation=float(inflationary_efolds(s)),
        bounce_to_inflation_end=float(s[K.S_LNA_INF_END] - s[K.S_LNA_BOUNCE]),
    )


def inflationary_efolds(summary: np.ndarray) -> np.ndarray:
    """Inflationary e-folds from summary vector(s) (last axis); a lower bound at the e-fold cap."""
    s = np.asarray(summary)
    status = s[..., K.S_STATUS]
    end = np.where(status == K.ST_EFOLD_CAP, s[..., K.S_LNA_FINAL], s[..., K.S_LNA_INF_END])
    return end - s[..., K.S_LNA_INF_START]


def describe_outcome(summary: np.ndarray, classical: bool, engine: str) -> str:
    """One-line human-readable description of a run."""
    status = int(summary[K.S_STATUS])
    reason = REASONS[int(summary[K.S_REASON])]
    n_inf = float(inflationary_efolds(summary))
    parts = []
    if classical:
        parts.append("classical start (general relativity, no bounce)")
    if status == K.ST_INFLATED:
        parts.append(f"inflated: {n_inf:.4f} inflationary e-folds")
    elif status == K.ST_EFOLD_CAP:
        parts.append(f"inflation did not end: more than {n_inf:.4g} e-folds ({reason})")
    elif status == K.ST_NO_INFLATION:
        parts.append(f"no inflation within the integration limits ({reason})")
    else:
        parts.append(f"integration failed ({reason})")
    if not classical and not math.isnan(summary[K.S_VFRAC_BOUNCE]):
        parts.append(f"V/rho at the bounce {summary[K.S_VFRAC_BOUNCE]:.4g}")
    parts.append(f"max constraint residual {summary[K.S_MAX_RESIDUAL]:.2g}")
    if engine == "python":
        parts.append("slow pure-Python integration (custom potential is not compiled)")
    return "; ".join(parts)


def _dense(rec: np.ndarray, potential: Any) -> dict:
    """Trajectory arrays from the recorded points, in time order, one record per time."""
    rec = rec[np.argsort(rec[:, 0], kind="stable")]
    # keep the last record of repeated times (a mode switch records the state twice)
    t = rec[:, 0]
    keep = np.ones(len(t), dtype=bool)
    keep[:-1] = t[1:] > t[:-1]
    t, lna, H, Hdot, phi, phidot, phiddot = rec[keep].T
    V = potential.V(phi)
    kinetic = 0.5 * phidot**2
    rho = kinetic + V
    with np.errstate(invalid="ignore", divide="ignore"):
        w = (kinetic - V) / rho
    return {"t": t, "ln_a": lna, "H": H, "Hdot": Hdot, "phi": phi, "phidot": phidot,
            "phiddot": phiddot, "rho": rho, "w": w}
