"""The background engine at the Python boundary: one call integrates one background.

:func:`run` integrates a system of :mod:`.systems` from a state with the solver of
:mod:`.solver` and returns an :class:`EngineRun`: a typed :class:`~.result.RunSummary` (status,
reason, message, events, counts) and, with ``store``, the :class:`DenseSolution` (the
integrator's 7th-order continuous extension, evaluable anywhere). Every dynamics, the e-fold
distributions and the background tables of the perturbations go through it.

Budgets. The compiled solver runs in chunks of :data:`CHUNK_STEPS` accepted steps and returns
to Python between chunks: Ctrl-C interrupts a long integration within a fraction of a second,
and a wall-clock budget (``settings.max_seconds``) ends it with status ``"failed"`` and a
message giving the physical state reached. A run never hangs.

Potentials without a compiled kernel (registered from Python) run through the *same* solver and
systems uncompiled (:func:`bouncelike.background.jit.python_copy`), about a hundred times slower;
their results say so (``engine = "python"``).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from . import potential_kernels, problem, solver, systems
from .initial import IntegrationSettings
from .jit import drop_stale_caches, python_copy
from .potentials import KERNEL_PYTHON
from .result import STATUSES, BackgroundEvents, BackgroundTrajectory, RunSummary

drop_stale_caches(Path(__file__).with_name(name) for name in (
    "jit.py", "potential_kernels.py", "isotropic_system.py", "bianchi_system.py",
    "asymmetric_system.py", "loop_system.py", "systems.py", "problem.py", "solver.py"))

#: accepted steps per compiled call (a few tens of milliseconds)
CHUNK_STEPS = 20_000
REASONS = {solver.R_TIME_CAP: "time_cap", solver.R_STEP_BUDGET: "step_budget",
           solver.R_STEP_UNDERFLOW: "step_underflow", solver.R_NONFINITE: "nonfinite",
           solver.R_WALL_BUDGET: "wall_budget"}
STOPS = {problem.STOP_END: "end", problem.STOP_EFOLD_CAP: "efold_cap",
         problem.STOP_DENSITY: "density", problem.STOP_NONE: "end"}


@dataclass(frozen=True)
class System:
    """What to integrate: a system code of :mod:`.systems` and its 4 parameters."""

    code: int
    parameters: tuple[float, float, float, float]

    def __post_init__(self) -> None:
        p = tuple(float(x) for x in self.parameters)
        object.__setattr__(self, "code", int(self.code))
        object.__setattr__(self, "parameters", p + (0.0,) * (4 - len(p)))


_KERNELS: dict[int, tuple[Any, tuple]] = {}


def _kernel(potential: Any) -> tuple[int, tuple[float, ...], bool]:
    """(kernel code, 4 parameters, compiled?) of a potential (potentials are immutable: the
    answer is kept per object)."""
    known = _KERNELS.get(id(potential))
    if known is not None and known[0] is potential:
        return known[1]
    kernel = getattr(potential, "kernel", None)
    if kernel is None or int(kernel[0]) == KERNEL_PYTHON:
        out = (KERNEL_PYTHON, (0.0, 0.0, 0.0, 0.0), False)
    else:
        p = [float(x) for x in np.asarray(kernel[1], dtype=float)][:4]
        out = (int(kernel[0]), tuple(p + [0.0] * (4 - len(p))), True)
    if len(_KERNELS) > 256:
        _KERNELS.clear()
    _KERNELS[id(potential)] = (potential, out)
    return out


class _Functions:
    """The entry points of the engine: compiled, or their uncompiled copies for a potential."""

    def __init__(self, potential: Any | None):
        entries = {"advance": solver.advance, "advance_many": solver.advance_many,
                   "stop": solver.stop,
                   "observe_many": systems.observe_many, "residual_many": systems.residual_many,
                   "anisotropy_many": systems.anisotropy_many}
        if potential is None:
            for name, fn in entries.items():
                setattr(self, name, fn)
            return

        def terms(kind: int, p: Any, phi: float) -> tuple[float, float, float]:
            return (float(potential.V(phi)), float(potential.dV(phi)),
                    float(potential.d2V(phi)))

        overrides = {potential_kernels.potential_terms: terms}
        for name, fn in entries.items():
            setattr(self, name, python_copy(fn, overrides))


_COMPILED = _Functions(None)


def functions(potential: Any) -> _Functions:
    return _COMPILED if _kernel(potential)[2] else _Functions(potential)


@dataclass(frozen=True)
class DenseSolution:
    """The continuous extension of a run: states and observables at any time in its span."""

    system: System
    potential: Any
    steps: np.ndarray          # rows [t0, t1, h, mode, y0 (6), F (7 x 6)] (solver.ROW)
    t_final: float
    y_final: np.ndarray
    mode_final: int

    @property
    def n(self) -> int:
        return len(self.y_final)

    @property
    def step_starts(self) -> np.ndarray:
        return self.steps[:, 0]

    @property
    def t_start(self) -> float:
        return float(self.steps[0, 0]) if len(self.steps) else self.t_final

    def states(self, t: Any) -> tuple[np.ndarray, np.ndarray]:
        """(states (m, n), modes (m,)) at times ``t`` inside [t_start, t_final]."""
        t = np.atleast_1d(np.asarray(t, dtype=float))
        out = np.empty((len(t), self.n))
        modes = np.full(len(t), self.mode_final, dtype=np.int64)
        final = t >= self.t_final
        out[final] = self.y_final
        inner = ~final
        if inner.any() and len(self.steps):
            tq = np.ascontiguousarray(t[inner])
            idx = np.clip(np.searchsorted(self.steps[:, 0], tq, side="right") - 1, 0,
                          len(self.steps) - 1)
            buf = np.empty((len(tq), self.n))
            solver.interpolate_states(self.steps, idx.astype(np.int64), tq, buf)
            out[inner] = buf
            modes[inner] = self.steps[idx, 3].astype(np.int64)
        elif inner.any():
            out[inner] = self.y_final
        return out, modes

    def observables(self, t: Any) -> dict[str, np.ndarray]:
        """ln a, H, Hdot, phi, phidot, phiddot, rho, V at times ``t`` (arrays)."""
        states, modes = self.states(t)
        obs = np.empty((len(states), systems.N_OBS))
        kind, pp, _ = _kernel(self.potential)
        functions(self.potential).observe_many(self.system.code, self.system.parameters, kind,
                                               pp, states, modes, obs)
        names = ("ln_a", "H", "Hdot", "phi", "phidot", "phiddot", "rho", "V")
        return {name: obs[:, i] for i, name in enumerate(names)}

    def residuals(self, t: Any) -> np.ndarray:
        states, modes = self.states(t)
        out = np.empty(len(states))
        kind, pp, _ = _kernel(self.potential)
        functions(self.potential).residual_many(self.system.code, self.system.parameters,
                                                kind, pp, states, modes, out)
        return out

    def anisotropy(self, t: Any) -> np.ndarray:
        """(H_1, H_2, H_3, sigma^2) per time (Bianchi I runs)."""
        states, modes = self.states(t)
        out = np.empty((len(states), 4))
        kind, pp, _ = _kernel(self.potential)
        functions(self.potential).anisotropy_many(self.system.parameters, kind, pp, states,
                                                  modes, out)
        return out


_ATOLS: dict[float, np.ndarray] = {}


def _scalar_atol(atol: float) -> np.ndarray:
    """The (3, 6) tolerance array of a scalar ``atol`` (kept per value; never written)."""
    arr = _ATOLS.get(atol)
    if arr is None:
        arr = np.full((3, solver.N), atol)
        if len(_ATOLS) > 64:
            _ATOLS.clear()
        _ATOLS[atol] = arr
    return arr


@dataclass(frozen=True)
class EngineRun:
    """One integration: its summary and (with ``store``) its continuous extension."""

    summary: RunSummary
    dense: DenseSolution | None


def _message(b: dict, s: dict, reason: str, obs: Any, settings: IntegrationSettings,
             target_density: float) -> str:
    status = STATUSES[int(b["status"])]

    def where() -> str:
        o = obs()
        return (f"t = {float(s['t']):.6g}, rho = {o['rho']:.4g}, H = {o['H']:.4g}, "
                f"ln a = {o['ln_a']:.6g} (Planck units)")

    if reason == "step_budget":
        return (f"integration failed: the budget of {settings.max_steps} accepted steps was "
                f"used up at {where()}")
    if reason == "wall_budget":
        return (f"integration failed: the wall-clock budget of {settings.max_seconds:g} s was "
                f"used up at {where()} after {int(s['n_steps'])} steps")
    if reason == "step_underflow":
        return (f"integration failed: the step size fell below 1e-15 of the time at {where()}; "
                "the solution changes faster than double precision can follow there")
    if reason == "nonfinite":
        return (f"integration failed: the equations gave non-finite values after {where()}; "
                "the state left the range where this dynamics is defined")
    if reason == "density":
        return f"density fell to {target_density:g} at {where()}"
    end = b["lna_final"] if status == "efold_cap" else b["lna_inf_end"]
    n_inf = float(end - b["lna_inf_start"])
    if status == "inflated":
        return f"inflated: {n_inf:.4f} inflationary e-folds"
    if status == "efold_cap":
        why = ("e-fold cap reached during inflation" if reason == "efold_cap" else
               f"time cap max_time = {settings.max_time:g} reached during inflation")
        return f"inflation did not end: more than {n_inf:.4g} e-folds ({why})"
    if status == "no_bounce":
        return f"no bounce within max_time = {settings.max_time:g} ({where()})"
    return ("no inflation within the integration limits ("
            + ("end of the accelerated phases" if reason == "end" else
               f"time cap max_time = {settings.max_time:g} reached") + ")")


def run(system: System, potential: Any, y0: Any, mode: int, settings: IntegrationSettings, *,
        bounced: bool, has_bounce: bool, atol: Any = None, goal: int = problem.GOAL_INFLATION,
        extra_efolds: float = 0.0, target_density: float = 0.0,
        store: bool = False) -> EngineRun:
    """Integrate ``system`` from ``y0`` (at t = 0, in ``mode``) until the goal or a budget.

    ``bounced``: the start is at or after a bounce (or classical: no bounce expected);
    ``has_bounce``: the start is the bounce itself. ``atol``: absolute tolerances, a scalar or
    an array (3 modes x n components); default ``settings.atol``. Goals: see :mod:`.problem`.
    """
    n = len(y0)
    y = np.zeros(solver.N)
    y[:n] = y0
    if atol is None:
        atol = settings.atol
    if np.ndim(atol) == 0:
        atol_full = _scalar_atol(float(atol))
    else:
        atol_full = np.ones((3, solver.N))
        atol_full[:, :n] = np.broadcast_to(np.asarray(atol, dtype=float), (3, n))
    kind, pp, compiled = _kernel(potential)
    fn = _COMPILED if compiled else _Functions(potential)
    code, prm = system.code, system.parameters
    state = np.zeros(1, dtype=solver.STATE)
    state["mode"] = int(mode)
    book = problem.new_book(bool(bounced), bool(has_bounce))
    cfg = problem.new_config(float(settings.max_inflation_efolds), int(goal),
                             float(extra_efolds), float(target_density))
    if not compiled:  # the uncompiled code reads records by attribute
        state, book, cfg = (a.view(np.recarray) for a in (state, book, cfg))
    k = np.zeros((16, solver.N))
    g_cur = np.empty(problem.N_EVENTS)
    rec = np.empty((256 if store else 1, solver.ROW))
    deadline = time.monotonic() + float(settings.max_seconds)
    done = False
    try:
        while not done:
            rec, done = fn.advance(code, prm, kind, pp, float(settings.rtol), atol_full,
                                   float(settings.max_time), int(settings.max_steps), CHUNK_STEPS,
                                   bool(store), y, k, g_cur, state, book, cfg, rec)
            if not done and time.monotonic() > deadline:
                fn.stop(code, prm, kind, pp, solver.R_WALL_BUDGET, y, state, book)
                done = True
    except (ZeroDivisionError, OverflowError, ValueError):
        # the uncompiled path raises where the compiled one gives inf or NaN: the same failure
        state["done"], state["reason"] = True, solver.R_NONFINITE
        book["status"] = problem.ST_FAILED
        book["t_final"] = state["t"][0]
    dense = None
    if store:
        dense = DenseSolution(system, potential, rec[:int(state["n_store"][0])].copy(),
                              float(state["t"][0]), y.copy(), int(state["mode"][0]))
    return EngineRun(_summary(state[0], book[0], y, system, fn, kind, pp, compiled, settings,
                              target_density), dense)


_S = {name: i for i, name in enumerate(solver.STATE.names)}
_B = {name: i for i, name in enumerate(problem.BOOK.names)}
_EVENT_FIELDS = tuple(_B[k] for k in ("t_bounce", "t_si_end", "t_inf_start", "t_inf_end",
                                      "lna_bounce", "lna_si_end", "lna_inf_start",
                                      "lna_inf_end"))


def _summary(state: Any, book: Any, y: np.ndarray, system: System, fn: Any, kind: int,
             pp: tuple, compiled: bool, settings: IntegrationSettings,
             target_density: float) -> RunSummary:
    """The typed summary of a finished run from its solver state and bookkeeping records
    (records or their ``tolist()`` tuples)."""
    sv = state if isinstance(state, tuple) else state.tolist()
    bv = book if isinstance(book, tuple) else book.tolist()
    s = {"t": sv[_S["t"]], "n_steps": sv[_S["n_steps"]], "mode": sv[_S["mode"]]}
    b = {k: bv[_B[k]] for k in ("status", "lna_final", "lna_inf_end", "lna_inf_start")}
    reason = REASONS.get(sv[_S["reason"]]) or STOPS[bv[_B["stop"]]]
    cache: dict = {}

    def obs() -> dict:
        if not cache:
            cache.update(_final_observables(system, np.array(y, dtype=float), int(s["mode"]),
                                            fn, kind, pp))
        return cache

    message = _message(b, s, reason, obs, settings, target_density)
    if not compiled:
        message += "; slow pure-Python integration (the potential is not compiled)"
    lna_final = b["lna_final"] if math.isfinite(b["lna_final"]) else obs()["ln_a"]
    return RunSummary(
        STATUSES[b["status"]], reason, message,
        BackgroundEvents(*[bv[i] for i in _EVENT_FIELDS]),
        bv[_B["phi_bounce"]], bv[_B["phidot_bounce"]], bv[_B["vfrac_bounce"]],
        bv[_B["rho_bounce"]], bv[_B["max_residual"]],
        bv[_B["n_phases"]] + (1 if bv[_B["started"]] else 0), sv[_S["n_steps"]],
        sv[_S["n_rej"]], sv[_S["n_rhs"]], float(sv[_S["t"]]), float(lna_final),
        "compiled" if compiled else "python",
    )


@dataclass(frozen=True)
class Start:
    """One initial state for :func:`run_many`: ``y0`` in ``mode``, the flags of :func:`run`,
    absolute tolerances (scalar or 3 modes x n) or None for ``settings.atol``."""

    y0: Any
    mode: int
    bounced: bool
    has_bounce: bool
    atol: Any = None


def run_many(system: System, potential: Any, starts: list[Start],
             settings: IntegrationSettings) -> list[RunSummary]:
    """Summaries of many runs of one system (goal: the end of inflation), integrated in one
    compiled loop: what e-fold distributions need. The same solver, budgets and chunks as
    :func:`run` (Ctrl-C between chunks; ``settings.max_seconds`` per run)."""
    m = len(starts)
    if m == 0:
        return []
    kind, pp, compiled = _kernel(potential)
    fn = _COMPILED if compiled else _Functions(potential)
    code, prm = system.code, system.parameters
    Y = np.zeros((m, solver.N))
    atol = np.empty((m, 3, solver.N))
    scalar = all(st.atol is None or np.ndim(st.atol) == 0 for st in starts)
    for j, st in enumerate(starts):
        Y[j, :len(st.y0)] = st.y0
        if scalar:
            atol[j] = settings.atol if st.atol is None else float(st.atol)
        else:
            n = len(st.y0)
            atol[j] = 1.0
            atol[j, :, :n] = np.broadcast_to(np.asarray(
                settings.atol if st.atol is None else st.atol, dtype=float), (3, n))
    states = np.zeros(m, dtype=solver.STATE)
    states["mode"] = [st.mode for st in starts]
    books = problem.new_books([st.bounced for st in starts], [st.has_bounce for st in starts])
    cfg = problem.new_config(float(settings.max_inflation_efolds))
    if not compiled:
        states, books, cfg = (a.view(np.recarray) for a in (states, books, cfg))
    K = np.zeros((m, 16, solver.N))
    G = np.empty((m, problem.N_EVENTS))
    j = 0
    current, started_at = -1, time.monotonic()
    while j < m:
        try:
            j_next = fn.advance_many(code, prm, kind, pp, float(settings.rtol), atol,
                                     float(settings.max_time), int(settings.max_steps),
                                     CHUNK_STEPS, Y, K, G, states, books, cfg, j)
        except (ZeroDivisionError, OverflowError, ValueError):
            # the uncompiled path raises where the compiled one gives inf or NaN
            states[j]["done"], states[j]["reason"] = True, solver.R_NONFINITE
            books[j]["status"] = problem.ST_FAILED
            books[j]["t_final"] = states[j]["t"]
            j_next = j + 1
        if j_next != current:
            current, started_at = j_next, time.monotonic()
        elif time.monotonic() - started_at > float(settings.max_seconds):
            fn.stop(code, prm, kind, pp, solver.R_WALL_BUDGET, Y[j_next], states[j_next:j_next + 1],
                    books[j_next:j_next + 1])
            j_next += 1
        j = j_next
    return [_summary(sv, bv, Y[i], system, fn, kind, pp, compiled, settings, 0.0)
            for i, (sv, bv) in enumerate(zip(states.tolist(), books.tolist(), strict=True))]


def _final_observables(system: System, y: np.ndarray, mode: int, fn: Any, kind: int,
                       pp: tuple) -> dict[str, float]:
    out = np.full((1, systems.N_OBS), np.nan)
    try:
        fn.observe_many(system.code, system.parameters, kind, pp, y[None, :],
                        np.array([mode], dtype=np.int64), out)
    except (ZeroDivisionError, OverflowError, ValueError):
        pass
    names = ("ln_a", "H", "Hdot", "phi", "phidot", "phiddot", "rho", "V")
    return {name: float(out[0, i]) for i, name in enumerate(names)}


def sample_times(dense: DenseSolution, summary: RunSummary, dense_points: int) -> np.ndarray:
    """The step starts, the end, the events and (for ``dense_points``) points inside steps."""
    starts = dense.steps[:, 0]
    ends = dense.steps[:, 1]
    parts = [starts, [dense.t_final]]
    e = summary.events
    events = np.array([e.t_bounce, e.t_superinflation_end, e.t_inflation_start,
                       e.t_inflation_end], dtype=float)
    parts.append(events[np.isfinite(events) & (events >= dense.t_start)
                        & (events <= dense.t_final)])
    if dense_points > 0 and len(starts):
        inner = int(min(50, max(0, math.ceil(dense_points / len(starts)) - 1)))
        if inner:
            frac = np.arange(1, inner + 1) / (inner + 1.0)
            parts.append((starts[:, None] + (ends - starts)[:, None] * frac).ravel())
    return np.unique(np.concatenate(parts))


def trajectory(name: str, result: EngineRun, critical_density: float,
               settings: IntegrationSettings, *, status: str | None = None,
               message: str | None = None, extras: dict | None = None,
               provenance: dict | None = None) -> BackgroundTrajectory:
    """The :class:`~.result.BackgroundTrajectory` of a stored run."""
    s = result.summary
    dense = result.dense
    t = sample_times(dense, s, int(settings.dense_points))
    obs = dense.observables(t)
    kinetic = 0.5 * obs["phidot"] ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        w = (kinetic - obs["V"]) / obs["rho"]
    return BackgroundTrajectory(
        dynamics=name, t=t, ln_a=obs["ln_a"], H=obs["H"], Hdot=obs["Hdot"], phi=obs["phi"],
        phidot=obs["phidot"], phiddot=obs["phiddot"], rho=obs["rho"], w=w,
        critical_density=critical_density, events=s.events, efolds=s.efolds,
        potential_fraction_at_bounce=s.potential_fraction_at_bounce,
        max_constraint_residual=s.max_constraint_residual,
        status=status or s.status, message=message or s.message,
        extras={"engine": s.engine, "steps": s.steps, "rejected_steps": s.rejected_steps,
                "rhs_evaluations": s.rhs_evaluations, "stop_reason": s.reason,
                "accelerated_phases": s.accelerated_phases, "phi_bounce": s.phi_bounce,
                "phidot_bounce": s.phidot_bounce, **(extras or {})},
        settings={**settings.as_dict(), **(provenance or {})},
        dense=dense,
    )
