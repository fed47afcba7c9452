"""Driver for effective dynamics integrated as Hamiltonian systems in canonical variables.

Two implementations of one algorithm: :func:`integrate` (below) steps scipy's DOP853 from
Python and is the reference; :func:`integrate_compiled` runs the numba-compiled copy in
:mod:`bouncelike.background.canonical_kernels` (same tableau, step control, phases and events;
about 25-50 times faster), used by every dynamics whenever the potential has a compiled kernel
(built-in potentials). Each dynamics takes ``engine = "scipy"`` to force the reference.

The anisotropic (Bianchi I), asymmetric-bounce and condensate dynamics all evolve a state
``y`` whose first entries are connection-like angles (``lambda b`` or ``mu_i c_i``), followed by
log scale factors and the field (phi, phidot). Each supplies a :class:`CanonicalSystem`; this
module steps it with scipy's explicit Runge--Kutta method of order 8 (DOP853) one step at a time,
finds the events on each step's dense interpolant, and assembles a
:class:`~bouncelike.background.result.BackgroundTrajectory`.

Two phases and a change of variable at the bounce
-------------------------------------------------
Far before the bounce the angles sit close to a finite value (pi for loop quantum cosmology,
arctan(1/gamma) for the asymmetric bounce), and a relative tolerance on the angle itself would
destroy its small distance to that value. Each system therefore evolves the *distance* to that
value before the bounce (``phase = PRE``) and the angle itself after the bounce (``phase =
POST``), where it decays to zero; ``to_post`` maps the state at the bounce.

Events (definitions of :mod:`bouncelike.background.result`)
-------------------------------------------------------------
* bounce: mean H crosses zero upwards;
* end of super-inflation: first downward zero of Hdot after the bounce;
* start of inflation: first time at or after the bounce with both addot > 0 and V > phidot^2/2,
  i.e. the upward zero of min(addot / (H^2 + |Hdot|), (V - phidot^2/2) / rho);
* end of inflation: next downward zero of addot (epsilon_H = 1).
Each zero is found by Brent's method on the step's dense interpolant.

Third phase: the constraint takes over far after the bounce
------------------------------------------------------------
The Hamiltonian constraint C is conserved exactly by the flow, so any absolute error eps made
near the bounce (about rtol x rho_c) stays: far after the bounce the angle then obeys
rho_grav = rho + eps and eps acts as a spurious cosmological constant once rho has fallen to
eps (rho ~ 1e-11 during inflation for m ~ 1e-6, the same size as rtol x rho_c). Once rho has
dropped below ``late_fraction`` x the bounce density (``phase = LATE``), the angle is therefore
solved from the constraint at every evaluation (the physics notes' "use the constraint away from
the bounce"); the residual reported is that of the canonical phases (in the last phase it is
zero by construction).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Protocol

import numpy as np
from scipy.integrate import DOP853
from scipy.optimize import brentq

from ..errors import InputError
from .initial import ClassicalStart, ContractingStart, IntegrationSettings
from .result import BackgroundEvents, BackgroundTrajectory, EfoldCounts

PRE, POST, LATE = 0, 1, 2

#: Index of each observable in the array returned by ``CanonicalSystem.observe``.
OBSERVABLES = ("ln_a", "H", "Hdot", "phi", "phidot", "phiddot", "rho", "V")
LN_A, HUB, HDOT, PHI, PHIDOT, PHIDDOT, RHO, POT = range(len(OBSERVABLES))

#: Hard cap on accepted steps per trajectory (guards against a stalled integration).
MAX_STEPS = 2_000_000

#: Fraction of the bounce density below which the constraint fixes the angle (phase LATE).
LATE_FRACTION = 1e-2


class CanonicalSystem(Protocol):
    """What the driver needs from a dynamics (all in Planck units, cosmic time)."""

    def rhs(self, y: np.ndarray, phase: int) -> np.ndarray: ...

    def observe(self, y: np.ndarray, phase: int) -> np.ndarray: ...

    def to_post(self, y: np.ndarray) -> np.ndarray: ...

    def to_late(self, y: np.ndarray) -> np.ndarray: ...

    def constraint_residual(self, y: np.ndarray, phase: int) -> float: ...


@dataclass
class RawRun:
    """Accepted steps of one run: times, states, phases, observables, events, status."""

    t: list = field(default_factory=list)
    y: list = field(default_factory=list)
    phase: list = field(default_factory=list)
    obs: list = field(default_factory=list)
    events: dict = field(default_factory=dict)
    status: str = "failed"
    message: str = ""
    steps: int = 0
    rhs_evaluations: int = 0


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


def _addot_norm(o: np.ndarray) -> float:
    h2 = o[HUB] ** 2
    return (o[HDOT] + h2) / (h2 + abs(o[HDOT]) + 1e-300)


def _start_indicator(o: np.ndarray) -> float:
    kin = 0.5 * o[PHIDOT] ** 2
    return min(_addot_norm(o), (o[POT] - kin) / (o[RHO] + 1e-300))


def integrate(
    system: CanonicalSystem,
    y0: np.ndarray,
    phase0: int,
    settings: IntegrationSettings,
    atol: np.ndarray | float | None = None,
    atol_post: np.ndarray | float | None = None,
    late_density: float = 0.0,
    classical: bool = False,
) -> RawRun:
    """Step the system from ``y0`` (at t = 0) until the end of inflation or a cap.

    ``atol``/``atol_post``: absolute tolerances before/after the bounce (defaults
    ``settings.atol``); ``settings.rtol`` throughout. ``late_density``: below this density after
    the bounce the constraint fixes the angle (phase LATE); 0 never switches.
    """
    run = RawRun()
    rtol = settings.rtol
    atol = settings.atol if atol is None else atol
    atol_post = settings.atol if atol_post is None else atol_post
    phase = phase0
    t_bound = settings.max_time

    def make_solver(t0: float, y: np.ndarray, ph: int, tol: Any) -> DOP853:
        def fun(_t: float, yy: np.ndarray) -> np.ndarray:
            run.rhs_evaluations += 1
            return system.rhs(yy, ph)

        return DOP853(fun, t0, y, t_bound, rtol=rtol, atol=tol)

    solver = make_solver(0.0, np.asarray(y0, float), phase, atol if phase == PRE else atol_post)
    o = system.observe(solver.y, phase)
    run.t.append(0.0)
    run.y.append(solver.y.copy())
    run.phase.append(phase)
    run.obs.append(o)
    ev = run.events
    started = False
    ln_a_start = math.nan
    if classical and _start_indicator(o) > 0.0:
        started, ln_a_start = True, o[LN_A]
        ev["t_inflation_start"], ev["ln_a_inflation_start"] = 0.0, o[LN_A]

    if phase != PRE and not classical:  # started at the bounce
        ev["t_bounce"], ev["ln_a_bounce"] = 0.0, o[LN_A]
        ev["bounce_state"] = solver.y.copy()
        if _start_indicator(o) > 0.0:
            started, ln_a_start = True, o[LN_A]
            ev["t_inflation_start"], ev["ln_a_inflation_start"] = 0.0, o[LN_A]

    def root(fun: Any, dense: Any, ph: int, ta: float, tb: float) -> tuple[float, np.ndarray]:
        tr = brentq(lambda tt: fun(system.observe(dense(tt), ph)), ta, tb, xtol=1e-14 * (
            abs(tb) + 1.0), rtol=1e-14, maxiter=200)
        yr = dense(tr)
        return tr, yr

    def append(tt: float, yy: np.ndarray, ph: int) -> np.ndarray:
        oo = system.observe(yy, ph)
        run.t.append(tt)
        run.y.append(np.array(yy, float))
        run.phase.append(ph)
        run.obs.append(oo)
        return oo

    while True:
        if run.steps >= MAX_STEPS:
            run.status, run.message = "failed", f"more than {MAX_STEPS} integration steps"
            return run
        if solver.status != "running":
            if phase == PRE:
                run.status = "no_bounce"
                run.message = f"no bounce within max_time = {settings.max_time:g}"
            elif started:
                run.status = "efold_cap"
                run.message = "inflation had not ended at max_time"
            else:
                run.status = "no_inflation"
                run.message = f"no inflation within max_time = {settings.max_time:g}"
            return run
        t_old, o_old = solver.t, o
        msg = solver.step()
        run.steps += 1
        if solver.status == "failed":
            run.status, run.message = "failed", f"integrator failed: {msg}"
            return run
        y_new = solver.y
        o = system.observe(y_new, phase)
        if not np.all(np.isfinite(o)):
            run.status, run.message = "failed", "non-finite state during integration"
            return run
        if phase == PRE:
            if o_old[HUB] < 0.0 <= o[HUB]:
                dense = solver.dense_output()
                tb, yb = root(lambda q: q[HUB], dense, PRE, t_old, solver.t)
                append(tb, yb, PRE)
                ypost = system.to_post(yb)
                phase = POST
                o = system.observe(ypost, POST)
                ev["t_bounce"], ev["ln_a_bounce"] = tb, o[LN_A]
                ev["bounce_state"] = ypost.copy()
                run.t.append(tb)
                run.y.append(ypost)
                run.phase.append(POST)
                run.obs.append(o)
                if _start_indicator(o) > 0.0:
                    started, ln_a_start = True, o[LN_A]
                    ev["t_inflation_start"], ev["ln_a_inflation_start"] = tb, o[LN_A]
                solver = make_solver(tb, ypost, POST, atol_post)
                continue
            append(solver.t, y_new, PRE)
            continue
        # ---- expanding branch ----
        dense = None
        if "t_superinflation_end" not in ev and o_old[HDOT] > 0.0 >= o[HDOT]:
            dense = solver.dense_output()
            ts, ys = root(lambda q: q[HDOT], dense, phase, t_old, solver.t)
            ev["t_superinflation_end"] = ts
            ev["ln_a_superinflation_end"] = system.observe(ys, phase)[LN_A]
        if not started and _start_indicator(o_old) <= 0.0 < _start_indicator(o):
            dense = dense or solver.dense_output()
            ts, ys = root(_start_indicator, dense, phase, t_old, solver.t)
            os_ = append(ts, ys, phase)
            started, ln_a_start = True, os_[LN_A]
            ev["t_inflation_start"], ev["ln_a_inflation_start"] = ts, os_[LN_A]
            # the end of inflation cannot lie in the same step before the start
            if _addot_norm(o) >= 0.0:
                append(solver.t, y_new, phase)
                continue
        if started and _addot_norm(o_old) > 0.0 >= _addot_norm(o):
            dense = dense or solver.dense_output()
            te, ye = root(_addot_norm, dense, phase, max(t_old, ev["t_inflation_start"]), solver.t)
            oe = append(te, ye, phase)
            ev["t_inflation_end"], ev["ln_a_inflation_end"] = te, oe[LN_A]
            run.status, run.message = "inflated", "inflation started and ended after the bounce"
            return run
        append(solver.t, y_new, phase)
        if phase == POST and o[RHO] < late_density:
            phase = LATE
            ylate = system.to_late(y_new)
            run.y[-1], run.phase[-1] = ylate, LATE
            solver = make_solver(solver.t, ylate, LATE, atol_post)
        if started and o[LN_A] - ln_a_start > settings.max_inflation_efolds:
            run.status = "efold_cap"
            run.message = (
                f"more than max_inflation_efolds = {settings.max_inflation_efolds:g} "
                "inflationary e-folds; inflation not followed to its end"
            )
            return run


def assemble(
    name: str,
    run: RawRun,
    critical_density: float,
    residual: Any,
    extras: dict[str, Any],
    settings: dict[str, Any],
) -> BackgroundTrajectory:
    """Build the :class:`BackgroundTrajectory` from a :class:`RawRun`."""
    obs = np.array(run.obs, dtype=float).reshape(-1, len(OBSERVABLES))
    t = np.array(run.t, dtype=float)
    ev = run.events
    rho = obs[:, RHO]
    kin = 0.5 * obs[:, PHIDOT] ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        w = (kin - obs[:, POT]) / (kin + obs[:, POT])
    events = BackgroundEvents(
        **{k: float(ev[k]) for k in BackgroundEvents.__dataclass_fields__ if k in ev}
    )
    lb = events.ln_a_bounce
    efolds = EfoldCounts(
        bounce_to_inflation_start=events.ln_a_inflation_start - lb,
        inflation=events.ln_a_inflation_end - events.ln_a_inflation_start,
        bounce_to_inflation_end=events.ln_a_inflation_end - lb,
    )
    if "bounce_state" in ev:
        ib = int(np.searchsorted(t, events.t_bounce))
        ib = min(ib, len(t) - 1)
        frac = float(obs[ib, POT] / obs[ib, RHO])
    else:
        frac = math.nan
    extras = {**extras, "rhs_evaluations": run.rhs_evaluations}
    return BackgroundTrajectory(
        dynamics=name,
        t=t,
        ln_a=obs[:, LN_A],
        H=obs[:, HUB],
        Hdot=obs[:, HDOT],
        phi=obs[:, PHI],
        phidot=obs[:, PHIDOT],
        phiddot=obs[:, PHIDDOT],
        rho=rho,
        w=w,
        critical_density=critical_density,
        events=events,
        efolds=efolds,
        potential_fraction_at_bounce=frac,
        max_constraint_residual=float(np.max(residual)) if len(residual) else math.nan,
        status=run.status,
        message=run.message,
        extras=extras,
        settings=settings,
    )


def require_contracting(name: str, initial: Any) -> ContractingStart:
    """The anisotropic dynamics start only in the contracting branch."""
    if not isinstance(initial, ContractingStart):
        raise InputError(
            f"'background.start' = '{type(initial).__name__}' is not available for dynamics "
            f"'{name}'; allowed: contracting"
        )
    return initial


def tolerances(settings: IntegrationSettings, y0: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Absolute tolerances before and after the bounce for a state [log-angles..., ln a, phi,
    phidot]: ``settings.atol`` for logarithms and phi; for phidot, ``rtol`` times its initial
    scale before the bounce (it only grows towards the bounce) and 1e-3 ``atol`` after it."""
    scale = max(abs(float(y0[-1])), 1e-300)
    pre = np.full(len(y0), settings.atol)
    pre[-1] = min(settings.atol, settings.rtol * scale)
    post = np.full(len(y0), settings.atol)
    post[-1] = 1e-3 * settings.atol
    return pre, post


def residuals(system: CanonicalSystem, run: RawRun) -> np.ndarray:
    """Constraint residual at every stored sample of a run."""
    return np.array(
        [system.constraint_residual(y, p) for y, p in zip(run.y, run.phase, strict=True)]
    )


def classical_field(initial: Any) -> tuple[float, float]:
    """(phi, phidot) of a :class:`~bouncelike.background.initial.ClassicalStart`."""
    return float(initial.phi), float(initial.phidot)


def as_classical(trajectory: BackgroundTrajectory) -> BackgroundTrajectory:
    """Mark a run started without a bounce as ``no_bounce`` (result conventions)."""
    from dataclasses import replace

    return replace(trajectory, status="no_bounce",
                   message="classical start in the expanding branch: no bounce by construction; "
                   + trajectory.message)


# -- the compiled driver (bouncelike.background.canonical_kernels) --------------------------------
_STOP_MESSAGES = (
    "inflation started and ended after the bounce",
    "more than max_inflation_efolds = {cap:g} inflationary e-folds; inflation not followed to "
    "its end",
    "no bounce within max_time = {time:g}",
    "inflation had not ended at max_time",
    "no inflation within max_time = {time:g}",
    f"more than {MAX_STEPS} integration steps",
    "integrator failed: required step size is less than spacing between numbers",
    "non-finite state during integration",
)


def compiled_potential(potential: Any) -> tuple[int, np.ndarray] | None:
    """(kernel code, parameters) of a built-in potential, None for a Python-only one."""
    from .potentials import KERNEL_PYTHON

    kernel = getattr(potential, "kernel", None)
    if kernel is None or int(kernel[0]) == KERNEL_PYTHON:
        return None
    return int(kernel[0]), np.asarray(kernel[1], dtype=float)


def integrate_compiled(
    code: int,
    parameters: np.ndarray,
    potential: Any,
    y0: np.ndarray,
    phase0: int,
    settings: IntegrationSettings,
    atol: np.ndarray,
    atol_post: np.ndarray,
    late_density: float = 0.0,
    classical: bool = False,
    store: bool = True,
) -> tuple[np.ndarray, RawRun | None]:
    """Run :func:`bouncelike.background.canonical_kernels.integrate` (same arguments as
    :func:`integrate`, plus the system ``code`` and its ``parameters``); returns the summary
    vector and, with ``store``, the run as a :class:`RawRun` for :func:`assemble`."""
    from . import canonical_kernels as ck

    kind, pp = compiled_potential(potential)
    n = len(y0)
    full = lambda a: np.broadcast_to(np.asarray(a, dtype=float), (n,)).copy()  # noqa: E731
    summary, rec, n_rec = ck.integrate(
        int(code), np.asarray(parameters, dtype=float), kind, pp, np.asarray(y0, dtype=float),
        int(phase0), float(settings.rtol), full(atol), full(atol_post), float(late_density),
        bool(classical), float(settings.max_time), float(settings.max_inflation_efolds),
        int(MAX_STEPS), bool(store),
    )
    if not store:
        return summary, None
    rec = rec[:n_rec]
    run = RawRun()
    run.t = list(rec[:, 0])
    run.phase = [int(p) for p in rec[:, 1]]
    run.y = [row for row in rec[:, 2:2 + n].copy()]
    run.obs = [row for row in rec[:, 2 + n:].copy()]
    ev = run.events
    s = summary
    pairs = (("t_bounce", ck.S_T_BOUNCE), ("ln_a_bounce", ck.S_LNA_BOUNCE),
             ("t_superinflation_end", ck.S_T_SI_END),
             ("ln_a_superinflation_end", ck.S_LNA_SI_END),
             ("t_inflation_start", ck.S_T_INF_START),
             ("ln_a_inflation_start", ck.S_LNA_INF_START),
             ("t_inflation_end", ck.S_T_INF_END), ("ln_a_inflation_end", ck.S_LNA_INF_END))
    for key, idx in pairs:
        if math.isfinite(s[idx]):
            ev[key] = float(s[idx])
    ib = int(s[ck.S_BOUNCE_RECORD])
    if ib >= 0:
        ev["bounce_state"] = run.y[ib].copy()
    run.status = ("inflated", "no_inflation", "efold_cap", "no_bounce", "failed")[
        int(s[ck.S_STATUS])]
    run.message = _STOP_MESSAGES[int(s[ck.S_REASON])].format(
        cap=settings.max_inflation_efolds, time=settings.max_time)
    run.steps = int(s[ck.S_STEPS])
    run.rhs_evaluations = int(s[ck.S_RHS])
    return summary, run


def summary_from_trajectory(trajectory: BackgroundTrajectory) -> np.ndarray:
    """The compiled summary layout filled from a trajectory of the scipy-stepped driver."""
    from . import canonical_kernels as ck
    from .result import STATUSES

    s = np.full(ck.CANONICAL_SUMMARY_SIZE, np.nan)
    e = trajectory.events
    s[ck.S_STATUS] = STATUSES.index(trajectory.status)
    s[ck.S_T_BOUNCE], s[ck.S_LNA_BOUNCE] = e.t_bounce, e.ln_a_bounce
    s[ck.S_T_SI_END], s[ck.S_LNA_SI_END] = e.t_superinflation_end, e.ln_a_superinflation_end
    s[ck.S_T_INF_START], s[ck.S_LNA_INF_START] = e.t_inflation_start, e.ln_a_inflation_start
    s[ck.S_T_INF_END], s[ck.S_LNA_INF_END] = e.t_inflation_end, e.ln_a_inflation_end
    s[ck.S_VFRAC_BOUNCE] = trajectory.potential_fraction_at_bounce
    s[ck.S_MAX_RESIDUAL] = trajectory.max_constraint_residual
    s[ck.S_STEPS] = trajectory.extras.get("steps", np.nan)
    s[ck.S_RHS] = trajectory.extras.get("rhs_evaluations", np.nan)
    s[ck.S_T_FINAL] = trajectory.t[-1]
    s[ck.S_LNA_FINAL] = trajectory.ln_a[-1]
    return s


class CompiledCanonicalDynamics:
    """Mixin for dynamics integrated in canonical variables with a compiled copy.

    The class provides ``engine`` ("compiled" or "scipy"), ``_run_compiled`` and ``evolve``;
    this mixin adds the engine choice and the summary-only fast path used by e-fold
    distributions.
    """

    def _compiled(self, potential: Any) -> bool:
        return self.engine == "compiled" and compiled_potential(potential) is not None

    def evolve_summary(self, potential: Any, initial: Any,
                       settings: IntegrationSettings | None = None) -> np.ndarray:
        """Summary vector only (layout of :mod:`bouncelike.background.canonical_kernels`):
        what e-fold distributions need, without storing the trajectory."""
        settings = settings or IntegrationSettings()
        if self._compiled(potential):
            summary = self._run_compiled(potential, initial, settings, store=False)[0]
            if isinstance(initial, ClassicalStart):
                summary[0] = 3  # "no_bounce" by construction (as_classical)
            return summary
        return summary_from_trajectory(self.evolve(potential, initial, settings))
