"""The one integrator of the background engine: adaptive DOP853 with dense output and events.

The explicit Runge-Kutta pair DOP853 of Dormand & Prince (8th order, 5th and 3rd order
embedded error estimators, 7th-order continuous extension; Hairer, Norsett & Wanner, Solving
Ordinary Differential Equations I, 2nd ed. 1993; its coefficients are read from scipy's own
table, scipy/integrate/_ivp/dop853_coefficients.py, one copy for both), compiled
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

States are arrays of :data:`N` = 6 components (systems with fewer carry zeros, whose
derivatives are zero and which the error norm leaves out). Arrays never cross into the
problem's hooks: they get tuples and numba records (numba reference-counts arrays passed between
compiled functions, which on this hot path would cost more than the right-hand sides).

With ``store`` every accepted step is kept for dense output: a row
[t0, t1, h, mode, y0 (6), F (7 x 6)] (t1 < t0 + h for a step cut at a stopping or switching
event); :func:`interpolate_states` evaluates the continuous extension anywhere.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate._ivp import dop853_coefficients as _T

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
from .systems import SIZES, error_scale, memory_update, rates

#: solver state of one run (numba record)
STATE = np.dtype([("t", "f8"), ("h", "f8"), ("mode", "i8"), ("aux", "f8"), ("memory", "f8"),
                  ("n_steps", "i8"), ("n_rhs", "i8"), ("n_rej", "i8"), ("n_store", "i8"),
                  ("started", "b1"), ("done", "b1"), ("reason", "i8")], align=True)
#: why a run ended (``STATE.reason``); R_PROBLEM: the problem's stop (see problem.STOP_*)
(R_RUNNING, R_PROBLEM, R_TIME_CAP, R_STEP_BUDGET, R_STEP_UNDERFLOW, R_NONFINITE,
 R_WALL_BUDGET) = range(7)
SAFETY, MIN_FACTOR, MAX_FACTOR, EXPONENT = 0.9, 0.2, 10.0, -0.125
#: initial step as a fraction of the fastest time scale
FIRST_STEP = 1e-3
#: components of every state array
N = 6
ROW = 4 + 8 * N

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
    """The 7 coefficient rows F of the continuous extension from stages 0-15 (first n
    components; the others stay zero)."""
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
    """Continuous extension at theta in [0, 1] of the step from y0 (coefficients F), first n
    components."""
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
def tup(a):
    """A state array as a 6-tuple."""
    return (a[0], a[1], a[2], a[3], a[4], a[5])


@jit
def _put(r, k, row):
    for i in range(N):
        k[row, i] = r[i]


@jit
def _dense(code, prm, kind, pp, y, ynew, k, h, mode, ytmp, F, n):
    """Extra stages 13-15 and the coefficient rows of the continuous extension."""
    for st in range(13, 16):
        stage_point(y, k, h, st, ytmp, n)
        r, _, _ = rates(code, prm, kind, pp, tup(ytmp), mode, False)
        _put(r, k, st)
    dense_rows(y, ynew, k, h, F, n)


@jit
def _locate(code, prm, kind, pp, y, F, h, mode, b, c, idx, th_lo, g_lo, ytmp, n):
    """Bisection on the continuous extension for the root of event ``idx`` in (th_lo, 1]."""
    lo, hi = th_lo, 1.0
    sign_lo = g_lo > 0.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        dense_interpolate(y, F, mid, ytmp, n)
        g = event_values(code, prm, kind, pp, tup(ytmp), mode, b, c)
        if (g[idx] > 0.0) == sign_lo:
            lo = mid
        else:
            hi = mid
        if (hi - lo) * abs(h) <= 4e-16 * (abs(h) + 1e-300):
            break
    return hi


@jit
def _store(rec, n_rec, t0, t1, h, mode, y, F):
    if n_rec >= rec.shape[0]:
        bigger = np.empty((2 * rec.shape[0] + 16, ROW))
        bigger[:n_rec] = rec[:n_rec]
        rec = bigger
    rec[n_rec, 0] = t0
    rec[n_rec, 1] = t1
    rec[n_rec, 2] = h
    rec[n_rec, 3] = mode
    for i in range(N):
        rec[n_rec, 4 + i] = y[i]
        for r in range(7):
            rec[n_rec, 4 + N + r * N + i] = F[r, i]
    return rec, n_rec + 1


@jit
def _atol_row(atol, mode):
    return (atol[mode, 0], atol[mode, 1], atol[mode, 2], atol[mode, 3], atol[mode, 4],
            atol[mode, 5])


@jit
def start(code, prm, kind, pp, y, k, g_arr, state, book, cfg):
    """Initialise a run at t = 0 from ``y`` in ``state.mode``: derivatives, events, first step."""
    s = state[0]
    b = book[0]
    c = cfg[0]
    yt = on_start(code, prm, kind, pp, tup(y), s.mode, b, c)
    for i in range(N):
        y[i] = yt[i]
    r, rho, _ = rates(code, prm, kind, pp, yt, s.mode, False)
    _put(r, k, 0)
    s.aux = rho
    s.n_rhs += 1
    g = event_values(code, prm, kind, pp, yt, s.mode, b, c)
    for i in range(N_EVENTS):
        g_arr[i] = g[i]
    s.memory = memory_update(code, yt, 0.0, True)
    rate = time_rate(code, prm, kind, pp, yt, s.mode)
    s.h = FIRST_STEP / rate if (rate > 0.0 and math.isfinite(rate)) else FIRST_STEP
    s.t = 0.0
    s.started = True


@jit
def advance(code, prm, kind, pp, rtol, atol, max_time, max_steps, chunk, store, y, k, g_arr,
            state, book, cfg, rec):
    """Take up to ``chunk`` accepted steps; returns the (possibly grown) step store ``rec`` and
    whether the run has ended.

    The first call starts the run (:func:`start`). ``atol[mode, i]``: absolute tolerances per
    mode (read by the system's error scale); ``g_arr``: the event values at ``y`` (kept between
    calls).
    """
    if not state[0].started:
        start(code, prm, kind, pp, y, k, g_arr, state, book, cfg)
    s = state[0]
    b = book[0]
    c = cfg[0]
    n = SIZES[code]
    ynew = np.zeros(N)
    ytmp = np.zeros(N)
    F = np.zeros((7, N))
    t = s.t
    h = s.h
    mode = s.mode
    rho = s.aux
    memory = s.memory
    n_steps = s.n_steps
    n_rhs = s.n_rhs
    n_rej = s.n_rej
    n_store = s.n_store
    atol_row = _atol_row(atol, mode)
    g_cur = (g_arr[0], g_arr[1], g_arr[2], g_arr[3], g_arr[4], g_arr[5], g_arr[6], g_arr[7],
             g_arr[8])
    # active events and their directions: they change only when an event is handled
    d = event_directions(code, prm, mode, b, c)
    taken = 0
    reason = R_RUNNING
    while True:
        if taken >= chunk:
            break
        if n_steps >= max_steps:
            reason = R_STEP_BUDGET
            break
        if t >= max_time:
            reason = R_TIME_CAP
            break
        if t + h > max_time:
            h = max_time - t
        for st in range(1, 12):
            stage_point(y, k, h, st, ytmp, n)
            r, _, _ = rates(code, prm, kind, pp, tup(ytmp), mode, False)
            _put(r, k, st)
        for i in range(n):
            acc = 0.0
            for j in range(12):
                acc += _B[j] * k[j, i]
            ynew[i] = y[i] + h * acc
        yn = tup(ynew)
        r, rho_new, _ = rates(code, prm, kind, pp, yn, mode, False)
        _put(r, k, 12)
        n_rhs += 12
        # error norm (Hairer's combination of the 5th- and 3rd-order estimators)
        scale, nc = error_scale(code, prm, tup(y), yn, rho, rho_new, mode, rtol, atol_row,
                                memory)
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
            err = 0.0
        else:
            err = abs(h) * e5sq / math.sqrt((e5sq + 0.01 * e3sq) * nc)
        if not math.isfinite(err):
            h *= 0.1
            n_rej += 1
            if abs(h) < 1e-300:
                reason = R_NONFINITE
                break
            continue
        if err > 1.0:
            h *= max(MIN_FACTOR, SAFETY * err ** EXPONENT)
            n_rej += 1
            if h <= 1e-15 * (abs(t) + 1e-300):
                reason = R_STEP_UNDERFLOW
                break
            continue
        # accepted: events inside the step, in time order
        n_steps += 1
        taken += 1
        g_lo = g_cur
        g_hi = event_values(code, prm, kind, pp, yn, mode, b, c)
        th_lo = 0.0
        stop_theta = -1.0
        action = CONTINUE
        stop_event = -1
        have_dense = False
        for _pass in range(16):
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
                        _dense(code, prm, kind, pp, y, ynew, k, h, mode, ytmp, F, n)
                        n_rhs += 3
                        have_dense = True
                    th = _locate(code, prm, kind, pp, y, F, h, mode, b, c, i, th_lo, g_lo[i],
                                 ytmp, n)
                    if th < best:
                        best = th
                        best_i = i
            if best_i < 0:
                break
            dense_interpolate(y, F, best, ytmp, n)
            ye = tup(ytmp)
            act = handle_event(code, prm, kind, pp, best_i, t + best * h, ye, mode, b, c)
            d = event_directions(code, prm, mode, b, c)  # the bookkeeping has changed
            if act != CONTINUE:
                stop_theta = best
                action = act
                stop_event = best_i
                break
            # re-evaluate at the event so newly active events start from here
            th_lo = best
            g_lo = event_values(code, prm, kind, pp, ye, mode, b, c)
            g_hi = event_values(code, prm, kind, pp, yn, mode, b, c)
        if store and not have_dense:
            _dense(code, prm, kind, pp, y, ynew, k, h, mode, ytmp, F, n)
            n_rhs += 3
            have_dense = True
        if action != CONTINUE:
            # the step ends at the event: stop there, or change variables and go on
            dense_interpolate(y, F, stop_theta, ytmp, n)
            t_event = t + stop_theta * h
            if store:
                rec, n_store = _store(rec, n_store, t, t_event, h, mode, y, F)
            t = t_event
            ye = tup(ytmp)
            r, rho, _ = rates(code, prm, kind, pp, ye, mode, False)
            track(code, prm, kind, pp, ye, mode, b)
            if action == SWITCH:
                ye, mode = switch_state(code, prm, kind, pp, stop_event, ye, mode)
                atol_row = _atol_row(atol, mode)
                d = event_directions(code, prm, mode, b, c)
                r, rho, _ = rates(code, prm, kind, pp, ye, mode, False)
                n_rhs += 1
            for i in range(N):
                y[i] = ye[i]
            _put(r, k, 0)
            g_cur = event_values(code, prm, kind, pp, ye, mode, b, c)
            if action == SWITCH:
                continue
            reason = R_PROBLEM
            break
        track(code, prm, kind, pp, yn, mode, b)
        if store:
            rec, n_store = _store(rec, n_store, t, t + h, h, mode, y, F)
        t = t + h
        for i in range(N):
            y[i] = ynew[i]
            k[0, i] = k[12, i]
        rho = rho_new
        memory = memory_update(code, yn, memory, False)
        g_cur = g_hi
        fac = MAX_FACTOR if err == 0.0 else min(MAX_FACTOR, max(MIN_FACTOR,
                                                                SAFETY * err ** EXPONENT))
        h *= fac
    for i in range(N_EVENTS):
        g_arr[i] = g_cur[i]
    s.n_steps = n_steps
    s.n_rhs = n_rhs
    s.n_rej = n_rej
    s.n_store = n_store
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
        finish(code, prm, kind, pp, t, tup(y), mode, b, failed)
    return rec, reason != R_RUNNING


@jit
def advance_many(code, prm, kind, pp, rtol, atol, max_time, max_steps, chunk, Y, K, G, states,
                 books, cfg, j):
    """Runs ``j``, ``j + 1``, ... (rows of ``Y``, ``K``, ``G``, ``atol``, ``states``,
    ``books``; summaries only) until about ``chunk`` steps are taken in this call; returns the
    first run not finished (a run cut by the budget resumes in the next call)."""
    rec = np.empty((1, ROW))
    budget = chunk
    m = Y.shape[0]
    while j < m and budget > 0:
        before = states[j].n_steps
        rec, done = advance(code, prm, kind, pp, rtol, atol[j], max_time, max_steps, budget,
                            False, Y[j], K[j], G[j], states[j:j + 1], books[j:j + 1], cfg, rec)
        budget -= max(states[j].n_steps - before, 1)
        if done:
            j += 1
    return j


@jit
def stop(code, prm, kind, pp, reason, y, state, book):
    """End a run from outside the loop (the wall-clock budget)."""
    s = state[0]
    s.done = True
    s.reason = reason
    finish(code, prm, kind, pp, s.t, tup(y), s.mode, book[0], True)


@jit
def interpolate_states(rec, index, tq, out):
    """States at times ``tq`` on the continuous extension of the stored steps ``index``."""
    y0 = np.empty(N)
    F = np.empty((7, N))
    buf = np.empty(N)
    for q in range(tq.shape[0]):
        j = index[q]
        for i in range(N):
            y0[i] = rec[j, 4 + i]
            for r in range(7):
                F[r, i] = rec[j, 4 + N + r * N + i]
        theta = (tq[q] - rec[j, 0]) / rec[j, 2]
        if theta <= 0.0:
            for i in range(N):
                out[q, i] = y0[i]
        else:
            dense_interpolate(y0, F, theta, buf, N)
            for i in range(N):
                out[q, i] = buf[i]
