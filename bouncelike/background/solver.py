"""The one integrator of the background engine: adaptive DOP853 with dense output and events.

The explicit Runge-Kutta pair DOP853 of Dormand & Prince (8th order, 5th and 3rd order
embedded error estimators, 7th-order continuous extension; Hairer, Norsett & Wanner, Solving
Ordinary Differential Equations I, 2nd ed. 1993; tableau in :mod:`.dop853_tableau`), compiled
with numba. Written once here: the stages, the error norm (Hairer's combination of the two
estimators on scaled components), the step-size controller (safety 0.9, factor in [0.2, 10],
exponent -1/8), the initial step (1e-3 of the fastest time scale the problem reports), the
dense output, and event location (bisection on the continuous extension, in time order within
a step). Nothing here knows the physics: the right-hand side, the error scales, the event
functions and what an event does come from :mod:`.problem` (a system of :mod:`.systems` with
the cosmological events), addressed by the system code.

A run is resumable: :func:`start` fills the solver state (a numba record, :data:`STATE`) and
:func:`advance` takes at most ``chunk`` accepted steps per call, so the Python side can honour
Ctrl-C and a wall-clock budget between calls (:mod:`.engine`). Budgets end a run with a reason,
never a hang: ``max_steps`` accepted steps, ``max_time`` of integration time, a step size below
1e-15 of the time (the solution varies faster than double precision can follow), non-finite
right-hand sides (the state left the domain of the equations).

With ``store`` every accepted step is kept for dense output: a row
[t0, t1, h, mode, y0 (n), F (7 x n)] (t1 < t0 + h for a step cut at a stopping or switching
event); :func:`interpolate_states` evaluates the continuous extension anywhere.
"""

from __future__ import annotations

import math

import numpy as np

from . import dop853_tableau as _T
from .jit import jit
from .problem import (
    CONTINUE,
    N_EVENTS,
    SWITCH,
    event_directions,
    event_values,
    finish,
    handle_event,
    on_start,
    switch_state,
    time_rate,
    track,
)
from .systems import error_scale, memory_update, rhs_into

#: solver state of one run (numba record)
STATE = np.dtype([("t", "f8"), ("h", "f8"), ("mode", "i8"), ("aux", "f8"), ("memory", "f8"),
                  ("n_steps", "i8"), ("n_rhs", "i8"), ("n_rej", "i8"), ("n_store", "i8"),
                  ("done", "b1"), ("reason", "i8")])
#: why a run ended (``STATE.reason``); R_PROBLEM: the problem's stop (see problem.STOP_*)
(R_RUNNING, R_PROBLEM, R_TIME_CAP, R_STEP_BUDGET, R_STEP_UNDERFLOW, R_NONFINITE,
 R_WALL_BUDGET) = range(7)
FAILURES = (R_STEP_BUDGET, R_STEP_UNDERFLOW, R_NONFINITE, R_WALL_BUDGET)
SAFETY, MIN_FACTOR, MAX_FACTOR, EXPONENT = 0.9, 0.2, 10.0, -0.125
#: initial step as a fraction of the fastest time scale
FIRST_STEP = 1e-3

_A = _T.A
_B = _T.B
_E3 = _T.E3
_E5 = _T.E5
_D = _T.D


@jit
def stage_point(y, k, h, st, ytmp, n):
    """ytmp = y + h sum_j A[st, j] k_j (first n components): the argument of stage st."""
    for i in range(n):
        acc = 0.0
        for j in range(st):
            acc += _A[st, j] * k[j, i]
        ytmp[i] = y[i] + h * acc


@jit
def dense_rows(y, ynew, k, h, F, n):
    """The 7 coefficient rows F of the continuous extension from stages 0-15."""
    for i in range(n):
        dy = ynew[i] - y[i]
        F[0, i] = dy
        F[1, i] = h * k[0, i] - dy
        F[2, i] = 2.0 * dy - h * (k[12, i] + k[0, i])
        for r in range(4):
            acc = 0.0
            for j in range(16):
                acc += _D[r, j] * k[j, i]
            F[3 + r, i] = h * acc


@jit
def dense_interpolate(y0, F, theta, out, n):
    """Continuous extension at theta in [0, 1] of the step from y0 (coefficients F)."""
    for i in range(n):
        acc = 0.0
        for m in range(7):
            acc += F[6 - m, i]
            if m % 2 == 0:
                acc *= theta
            else:
                acc *= 1.0 - theta
        out[i] = y0[i] + acc


@jit
def _dense(code, prm, kind, pp, y, ynew, k, h, mode, ytmp, F):
    """Extra stages 13-15 and the coefficient rows of the continuous extension."""
    n = y.shape[0]
    for st in range(13, 16):
        stage_point(y, k, h, st, ytmp, n)
        rhs_into(code, prm, kind, pp, ytmp, mode, k, st)
    dense_rows(y, ynew, k, h, F, n)


@jit
def _error_norm(k, h, scale, nc):
    e5sq = 0.0
    e3sq = 0.0
    for i in range(nc):
        e5 = 0.0
        e3 = 0.0
        for j in range(13):
            e5 += _E5[j] * k[j, i]
            e3 += _E3[j] * k[j, i]
        e5sq += (e5 / scale[i]) ** 2
        e3sq += (e3 / scale[i]) ** 2
    if e5sq == 0.0 and e3sq == 0.0:
        return 0.0
    return abs(h) * e5sq / math.sqrt((e5sq + 0.01 * e3sq) * nc)


@jit
def _locate(code, prm, kind, pp, y, F, h, mode, book, cfg, idx, th_lo, g_lo, ytmp, gtmp):
    """Bisection on the continuous extension for the root of event ``idx`` in (th_lo, 1]."""
    lo, hi = th_lo, 1.0
    sign_lo = g_lo > 0.0
    n = y.shape[0]
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        dense_interpolate(y, F, mid, ytmp, n)
        event_values(code, prm, kind, pp, ytmp, mode, book, cfg, gtmp)
        if (gtmp[idx] > 0.0) == sign_lo:
            lo = mid
        else:
            hi = mid
        if (hi - lo) * abs(h) <= 4e-16 * (abs(h) + 1e-300):
            break
    return hi


@jit
def _store(rec, n_rec, t0, t1, h, mode, y, F):
    n = y.shape[0]
    if n_rec >= rec.shape[0]:
        bigger = np.empty((2 * rec.shape[0] + 16, rec.shape[1]))
        bigger[:n_rec] = rec[:n_rec]
        rec = bigger
    rec[n_rec, 0] = t0
    rec[n_rec, 1] = t1
    rec[n_rec, 2] = h
    rec[n_rec, 3] = mode
    for i in range(n):
        rec[n_rec, 4 + i] = y[i]
        for r in range(7):
            rec[n_rec, 4 + n + r * n + i] = F[r, i]
    return rec, n_rec + 1


@jit
def start(code, prm, kind, pp, y, k, g_cur, state, book, cfg):
    """Initialise a run at t = 0 from ``y`` in ``state.mode``: derivatives, events, first step."""
    s = state[0]
    on_start(code, prm, kind, pp, y, s.mode, book, cfg)
    s.aux = rhs_into(code, prm, kind, pp, y, s.mode, k, 0)
    s.n_rhs += 1
    event_values(code, prm, kind, pp, y, s.mode, book, cfg, g_cur)
    s.memory = memory_update(code, y, 0.0, True)
    rate = time_rate(code, prm, kind, pp, y, s.mode)
    s.h = FIRST_STEP / rate if (rate > 0.0 and math.isfinite(rate)) else FIRST_STEP
    s.t = 0.0


@jit
def advance(code, prm, kind, pp, rtol, atol, max_time, max_steps, chunk, store, y, k, g_cur,
            state, book, cfg, rec):
    """Take up to ``chunk`` accepted steps; returns the (possibly grown) step store ``rec``.

    ``atol[mode, i]``: absolute tolerances per mode (read by the system's error scale).
    """
    n = y.shape[0]
    s = state[0]
    ynew = np.empty(n)
    ytmp = np.empty(n)
    scale = np.empty(n)
    F = np.zeros((7, n))
    g_lo = np.empty(N_EVENTS)
    g_hi = np.empty(N_EVENTS)
    g_tmp = np.empty(N_EVENTS)
    d = np.zeros(N_EVENTS, np.int64)
    t = s.t
    h = s.h
    mode = s.mode
    rho = s.aux
    memory = s.memory
    taken = 0
    reason = R_RUNNING
    while True:
        if taken >= chunk:
            break
        if s.n_steps >= max_steps:
            reason = R_STEP_BUDGET
            break
        if t >= max_time:
            reason = R_TIME_CAP
            break
        if t + h > max_time:
            h = max_time - t
        for st in range(1, 12):
            stage_point(y, k, h, st, ytmp, n)
            rhs_into(code, prm, kind, pp, ytmp, mode, k, st)
        for i in range(n):
            acc = 0.0
            for j in range(12):
                acc += _B[j] * k[j, i]
            ynew[i] = y[i] + h * acc
        rho_new = rhs_into(code, prm, kind, pp, ynew, mode, k, 12)
        s.n_rhs += 12
        nc = error_scale(code, prm, y, ynew, rho, rho_new, mode, rtol, atol, memory, scale)
        err = _error_norm(k, h, scale, nc)
        if not math.isfinite(err):
            h *= 0.1
            s.n_rej += 1
            if abs(h) < 1e-300:
                reason = R_NONFINITE
                break
            continue
        if err > 1.0:
            h *= max(MIN_FACTOR, SAFETY * err ** EXPONENT)
            s.n_rej += 1
            if h <= 1e-15 * (abs(t) + 1e-300):
                reason = R_STEP_UNDERFLOW
                break
            continue
        # accepted: events inside the step, in time order
        s.n_steps += 1
        taken += 1
        for i in range(N_EVENTS):
            g_lo[i] = g_cur[i]
        event_values(code, prm, kind, pp, ynew, mode, book, cfg, g_hi)
        th_lo = 0.0
        stop_theta = -1.0
        action = CONTINUE
        stop_event = -1
        have_dense = False
        for _pass in range(16):
            event_directions(code, prm, mode, book, cfg, d)
            best = 2.0
            best_i = -1
            for i in range(N_EVENTS):
                di = d[i]
                if di == 0:
                    continue
                up = g_lo[i] <= 0.0 < g_hi[i]
                down = g_lo[i] >= 0.0 > g_hi[i]
                if (di == 1 and up) or (di == -1 and down) or (di == 2 and (up or down)):
                    if not have_dense:
                        _dense(code, prm, kind, pp, y, ynew, k, h, mode, ytmp, F)
                        s.n_rhs += 3
                        have_dense = True
                    th = _locate(code, prm, kind, pp, y, F, h, mode, book, cfg, i, th_lo,
                                 g_lo[i], ytmp, g_tmp)
                    if th < best:
                        best = th
                        best_i = i
            if best_i < 0:
                break
            dense_interpolate(y, F, best, ytmp, n)
            act = handle_event(code, prm, kind, pp, best_i, t + best * h, ytmp, mode, book, cfg)
            if act != CONTINUE:
                stop_theta = best
                action = act
                stop_event = best_i
                break
            # re-evaluate at the event so newly active events start from here
            th_lo = best
            event_values(code, prm, kind, pp, ytmp, mode, book, cfg, g_lo)
            event_values(code, prm, kind, pp, ynew, mode, book, cfg, g_hi)
        if store and not have_dense:
            _dense(code, prm, kind, pp, y, ynew, k, h, mode, ytmp, F)
            s.n_rhs += 3
            have_dense = True
        if action != CONTINUE:
            # the step ends at the event: stop there, or change variables and go on
            dense_interpolate(y, F, stop_theta, ytmp, n)
            t_event = t + stop_theta * h
            if store:
                rec, s.n_store = _store(rec, s.n_store, t, t_event, h, mode, y, F)
            t = t_event
            for i in range(n):
                y[i] = ytmp[i]
            rho = rhs_into(code, prm, kind, pp, y, mode, k, 0)
            track(code, prm, kind, pp, y, mode, book)
            if action == SWITCH:
                mode = switch_state(code, prm, kind, pp, stop_event, y, mode)
                rho = rhs_into(code, prm, kind, pp, y, mode, k, 0)
                s.n_rhs += 1
                event_values(code, prm, kind, pp, y, mode, book, cfg, g_cur)
                continue
            reason = R_PROBLEM
            break
        track(code, prm, kind, pp, ynew, mode, book)
        if store:
            rec, s.n_store = _store(rec, s.n_store, t, t + h, h, mode, y, F)
        t = t + h
        for i in range(n):
            y[i] = ynew[i]
            k[0, i] = k[12, i]
        rho = rho_new
        memory = memory_update(code, y, memory, False)
        for i in range(N_EVENTS):
            g_cur[i] = g_hi[i]
        fac = MAX_FACTOR if err == 0.0 else min(MAX_FACTOR, max(MIN_FACTOR,
                                                                SAFETY * err ** EXPONENT))
        h *= fac
    s.t = t
    s.h = h
    s.mode = mode
    s.aux = rho
    s.memory = memory
    if reason != R_RUNNING:
        s.done = True
        s.reason = reason
        failed = (reason == R_STEP_BUDGET or reason == R_STEP_UNDERFLOW
                  or reason == R_NONFINITE)
        finish(code, prm, kind, pp, t, y, mode, book, failed)
    return rec


@jit
def interpolate_states(rec, index, tq, out):
    """States at times ``tq`` on the continuous extension of the stored steps ``index``."""
    n = out.shape[1]
    y0 = np.empty(n)
    F = np.empty((7, n))
    for q in range(tq.shape[0]):
        j = index[q]
        for i in range(n):
            y0[i] = rec[j, 4 + i]
            for r in range(7):
                F[r, i] = rec[j, 4 + n + r * n + i]
        theta = (tq[q] - rec[j, 0]) / rec[j, 2]
        if theta <= 0.0:
            for i in range(n):
                out[q, i] = y0[i]
        else:
            dense_interpolate(y0, F, theta, out[q], n)
