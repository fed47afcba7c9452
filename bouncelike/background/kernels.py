"""Compiled core of the effective isotropic background: right-hand side, constraint, integrator.

Everything here is a plain function of floats and arrays, compiled with numba (``cache=True``)
unless the module is loaded as a pure-Python copy (see :func:`pure_python_copy`), which is how
user potentials written in Python are integrated.

State vector ``y = (ln a, phi, phidot, H)``; Planck units, G = 1; ``inv_rho_c`` = 1/rho_c
(0 gives general relativity). Equations (physics notes, section 1):

* modified Friedmann      H^2 = (8 pi / 3) rho (1 - rho / rho_c)
* modified Raychaudhuri   Hdot = -4 pi (rho + P)(1 - 2 rho / rho_c) = -8 pi K (1 - 2 rho / rho_c)
* Klein-Gordon            phiddot = -3 H phidot - V'(phi)

with K = phidot^2 / 2, rho = K + V, P = K - V.

Keeping the constraint. In ``mode`` 0 (used while rho < rho_c / 100) the Hubble rate is *not*
evolved: it is set by the constraint, H = s sqrt(F(rho)) with the branch sign s = -1 before the
bounce and +1 after; the fourth component of ``y`` is carried but ignored. In ``mode`` 1 (near
the bounce, rho >= rho_c / 100, where H passes through 0 and the square root is useless) H is
evolved with the Raychaudhuri equation. The switches are events located on the dense output;
at each switch into mode 1 H is reset to s sqrt(F), and at each switch out of mode 1 the
residual |H^2 - F(rho)| / ((8 pi / 3) rho) accumulated by the Raychaudhuri stretch is recorded.

Integrator: the explicit Runge-Kutta pair DOP853 of Dormand & Prince (8th order, 5th and 3rd
order embedded error estimators, 7th-order continuous extension; Hairer, Norsett & Wanner,
Solving ODEs I, 1993), error control on scaled components, events found by bisection on the
continuous extension.
"""

from __future__ import annotations

import math

import numpy as np

from bouncelike.background import dop853_tableau as _T

_PURE_PYTHON = globals().get("_PURE_PYTHON", False)

if _PURE_PYTHON:  # pragma: no cover - exercised through the custom-potential path

    def _jit(func):
        return func

else:
    from numba import njit

    def _jit(func):
        return njit(cache=True, error_model="numpy")(func)


EIGHT_PI_3 = 8.0 * math.pi / 3.0
EIGHT_PI = 8.0 * math.pi
SWITCH_FRACTION = 0.01
#: per accepted step decay of the envelope of |phi| used as its error scale
ENVELOPE_DECAY = 0.99

# summary vector layout ---------------------------------------------------------------------
S_STATUS, S_REASON = 0, 1
S_T_BOUNCE, S_LNA_BOUNCE, S_T_SI_END, S_LNA_SI_END = 2, 3, 4, 5
S_T_INF_START, S_LNA_INF_START, S_T_INF_END, S_LNA_INF_END = 6, 7, 8, 9
S_PHI_BOUNCE, S_PHIDOT_BOUNCE, S_VFRAC_BOUNCE = 10, 11, 12
S_MAX_RESIDUAL, S_STEPS, S_RHS, S_REJECTED = 13, 14, 15, 16
S_T_FINAL, S_LNA_FINAL, S_RHO_BOUNCE, S_N_PHASES = 17, 18, 19, 20
SUMMARY_SIZE = 21
N_EVENTS = 7

# statuses and stop reasons
ST_INFLATED, ST_NO_INFLATION, ST_EFOLD_CAP, ST_FAILED = 0, 1, 2, 4
R_END, R_EFOLD_CAP, R_TIME_CAP, R_STEP_CAP, R_STEP_UNDERFLOW, R_NONFINITE = 0, 1, 2, 3, 4, 5

# Dormand-Prince 8(5,3) tableau (see dop853_tableau.py)
_A = _T.A
_B = _T.B
_E3 = _T.E3
_E5 = _T.E5
_D = _T.D


@_jit
def potential_terms(kind, p, phi):
    """V, V', V'' of a built-in potential (kernel code ``kind``, parameter vector ``p``)."""
    if kind == 0:
        return 0.5 * p[0] * phi * phi, p[0] * phi, p[0]
    if kind == 1:
        e = math.exp(-p[1] * phi)
        u = 1.0 - e
        d2 = 2.0 * p[0] * p[1] * p[1] * e * (2.0 * e - 1.0)
        return p[0] * u * u, 2.0 * p[0] * p[1] * e * u, d2
    u = phi * phi + p[2] * p[2]
    up = u ** (0.5 * p[1])
    return (
        p[0] * (up - p[3]),
        p[0] * p[1] * phi * up / u,
        p[0] * p[1] * up / (u * u) * ((p[1] - 1.0) * phi * phi + p[2] * p[2]),
    )


@_jit
def hubble_squared(rho, inv_rho_c):
    """F(rho) = (8 pi / 3) rho (1 - rho / rho_c): the modified Friedmann right-hand side."""
    return EIGHT_PI_3 * rho * (1.0 - rho * inv_rho_c)


@_jit
def hubble_rate_derivative(phidot, rho, inv_rho_c):
    """Hdot = -4 pi (rho + P)(1 - 2 rho / rho_c) for one scalar field."""
    return -4.0 * math.pi * phidot * phidot * (1.0 - 2.0 * rho * inv_rho_c)


@_jit
def derivatives(kind, p, phi, phidot, h_state, mode, s, inv_rho_c):
    """(H, phidot, phiddot, Hdot, rho, V, K) at one state; H from the constraint in mode 0."""
    V, dV, _ = potential_terms(kind, p, phi)
    kin = 0.5 * phidot * phidot
    rho = kin + V
    if mode == 0:
        F = hubble_squared(rho, inv_rho_c)
        H = s * math.sqrt(F) if F > 0.0 else 0.0
    else:
        H = h_state
    return (H, phidot, -3.0 * H * phidot - dV, hubble_rate_derivative(phidot, rho, inv_rho_c),
            rho, V, kin)


@_jit
def _rates_row(kind, p, y, mode, s, inv_rho_c, k, row):
    H, d1, d2, d3, rho, V, kin = derivatives(kind, p, y[1], y[2], y[3], mode, s, inv_rho_c)
    k[row, 0] = H
    k[row, 1] = d1
    k[row, 2] = d2
    k[row, 3] = d3
    return rho, V, kin, H


@_jit
def rates(kind, p, y, mode, s, inv_rho_c, out):
    """Fill ``out`` with dy/dt; return (rho, V, K, H) where H is the rate actually used."""
    H, d1, d2, d3, rho, V, kin = derivatives(kind, p, y[1], y[2], y[3], mode, s, inv_rho_c)
    out[0] = H
    out[1] = d1
    out[2] = d2
    out[3] = d3
    return rho, V, kin, H


@_jit
def event_values(kind, p, y, mode, s, inv_rho_c, lna_cap, g):
    """Event functions at state y (see :func:`integrate` for their meaning)."""
    H, _, _, Hdot, rho, V, kin = derivatives(kind, p, y[1], y[2], y[3], mode, s, inv_rho_c)
    acc = (H * H + Hdot) / (EIGHT_PI_3 * rho)
    g[0] = rho * inv_rho_c - SWITCH_FRACTION
    g[1] = H
    g[2] = rho * inv_rho_c - 0.5
    g[3] = min(acc, (V - kin) / rho)
    g[4] = acc
    g[5] = y[0] - lna_cap
    g[6] = y[1]


@_jit
def stage_point(y, k, h, st, ytmp, n):
    """ytmp = y + h sum_j A[st, j] k_j (first n components): the argument of DOP853 stage st."""
    for i in range(n):
        acc = 0.0
        for j in range(st):
            acc += _A[st, j] * k[j, i]
        ytmp[i] = y[i] + h * acc


@_jit
def dense_rows(y, ynew, k, h, F, n):
    """The 7 coefficient rows F of the DOP853 continuous extension from stages 0-15."""
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


@_jit
def dense_interpolate(y0, F, theta, out, n):
    """DOP853 continuous extension at theta in [0, 1] of the step from y0 (coefficients F)."""
    for i in range(n):
        acc = 0.0
        for m in range(7):
            acc += F[6 - m, i]
            if m % 2 == 0:
                acc *= theta
            else:
                acc *= 1.0 - theta
        out[i] = y0[i] + acc


@_jit
def _dense_coefficients(kind, p, y, ynew, k, h, mode, s, inv_rho_c, ytmp, F):
    """Extra stages 13-15 and the 7 coefficient rows F of the continuous extension."""
    for st in range(13, 16):
        stage_point(y, k, h, st, ytmp, 4)
        _rates_row(kind, p, ytmp, mode, s, inv_rho_c, k, st)
    dense_rows(y, ynew, k, h, F, 4)


@_jit
def _interp(y0, F, theta, out):
    """DOP853 continuous extension at theta in [0, 1] of the step from y0 (coefficients F)."""
    dense_interpolate(y0, F, theta, out, 4)


@_jit
def _event_active(i, mode, s, inv_rho_c, bounced, si_ended, started, any_end):
    if i == 0:
        if inv_rho_c <= 0.0:
            return 0
        if mode == 0 and s < 0:
            return 1
        if mode == 1 and bounced:
            return -1
        return 0
    if i == 1:
        return 1 if (mode == 1 and not bounced) else 0
    if i == 2:
        return -1 if (bounced and not si_ended and inv_rho_c > 0.0) else 0
    if i == 3:
        return 1 if (bounced and not started) else 0
    if i == 4:
        return -1 if started else 0
    if i == 5:
        return 1 if started else 0
    return 2 if (any_end and not started) else 0


@_jit
def _locate(kind, p, yold, F, h, mode, s, inv_rho_c, lna_cap, idx, th_lo, g_lo, th_hi,
            ytmp, gtmp):
    """Bisection on the continuous extension for the root of event ``idx`` in (th_lo, th_hi]."""
    lo, hi = th_lo, th_hi
    sign_lo = g_lo > 0.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        _interp(yold, F, mid, ytmp)
        event_values(kind, p, ytmp, mode, s, inv_rho_c, lna_cap, gtmp)
        if (gtmp[idx] > 0.0) == sign_lo:
            lo = mid
        else:
            hi = mid
        if (hi - lo) * abs(h) <= 4e-16 * (abs(h) + 1e-300) * 1.0:
            break
    return hi


@_jit
def _record(rec, n, t, y, f):
    if n >= rec.shape[0]:
        bigger = np.empty((2 * rec.shape[0], 7))
        bigger[:n] = rec[:n]
        rec = bigger
    rec[n, 0] = t
    rec[n, 1] = y[0]
    rec[n, 2] = f[0]
    rec[n, 3] = f[3]
    rec[n, 4] = y[1]
    rec[n, 5] = y[2]
    rec[n, 6] = f[2]
    return rec, n + 1


@_jit
def integrate(kind, p, y0, mode, s, inv_rho_c, bounced, rtol, atol, max_efolds, max_time,
              max_steps, store, substeps):
    """Evolve one background from ``y0`` at t = 0.

    Parameters
    ----------
    kind, p : kernel code and parameters of the potential
    y0 : (ln a, phi, phidot, H); H is used only when ``mode`` = 1
    mode : 0 (H from the constraint with sign ``s``) or 1 (H evolved)
    s : branch sign, -1 contracting, +1 expanding
    inv_rho_c : 1/rho_c (0: general relativity, no bounce)
    bounced : True when starting at or after the bounce (a bounce start records the bounce at
        t = 0; a classical start has no bounce but may inflate)
    rtol, atol : tolerances. Errors are measured against the natural size of each component, so
        that zero crossings of an oscillating field do not force tiny steps: phidot against
        atol sqrt(rho/rho_c) + rtol max(|phidot|, sqrt(2 rho)); phi against
        atol sqrt(rho/rho_c) + rtol max(|phi|, envelope), the envelope being the recent maximum
        of |phi| (decaying by ENVELOPE_DECAY per step); ln a against atol + rtol max(1, |ln a|);
        H (mode 1) against atol + rtol max(|H|, sqrt(8 pi rho / 3)).
    max_efolds : cap on inflationary e-folds; max_time : cap on t; max_steps : cap on steps
    store : record the accepted steps (t, ln a, H, Hdot, phi, phidot, phiddot)
    substeps : with ``store``, also record this many points inside each step from the
        continuous extension (records of event points may come out of time order: sort them)

    Events (index: function, direction, when active):
    0 mode switch: rho/rho_c - 1/100, up in the contracting branch, down after the bounce;
    1 bounce: H, up, mode 1 before the bounce;
    2 end of super-inflation: rho/rho_c - 1/2, down, after the bounce;
    3 start of inflation: min(addot/(a (8 pi/3) rho), (V - K)/rho), up, after the bounce;
    4 end of inflation (epsilon_H = 1): addot/(a (8 pi/3) rho), down, after the start;
    5 e-fold cap: ln a - ln a_start - max_efolds, up, after the start;
    6 field through the minimum: phi, either direction, after an end of inflation.

    Accelerated phases. After an end of inflation the run goes on: a short burst of acceleration
    (e.g. the field turning on a steep wall of the potential) may be followed by the real
    inflationary phase. The run stops when the field has crossed phi = 0 twice after the end
    of the longest phase so far (it oscillates about the minimum; the brief accelerations at
    the turning points of those oscillations are phases too), at the e-fold cap, or at a cap
    on time or steps. The reported inflationary phase is the longest one (the running one at the
    e-fold cap); S_N_PHASES counts the phases.

    Returns (summary vector, records array, number of records).
    """
    summary = np.full(SUMMARY_SIZE, np.nan)
    y = y0.copy()
    ynew = np.empty(4)
    ytmp = np.empty(4)
    k = np.zeros((16, 4))
    dense = np.zeros((7, 4))
    work = np.empty(4)
    g_lo = np.empty(N_EVENTS)
    g_hi = np.empty(N_EVENTS)
    g_tmp = np.empty(N_EVENTS)
    rec = np.empty((1024 if store else 1, 7))
    n_rec = 0
    t = 0.0
    lna_cap = np.inf
    si_ended = False
    started = False
    any_end = False
    crossings = 0
    n_phases = 0
    best_n = -1.0
    cur_ts = np.nan
    cur_lnas = np.nan
    max_res = 0.0
    n_steps = 0
    n_rhs = 0
    n_rej = 0
    status = ST_NO_INFLATION
    reason = R_END

    rho, V, K, H = _rates_row(kind, p, y, mode, s, inv_rho_c, k, 0)
    n_rhs += 1
    if mode == 1 and not bounced:
        F = hubble_squared(rho, inv_rho_c)
        y[3] = s * math.sqrt(F) if F > 0.0 else 0.0
        rho, V, K, H = _rates_row(kind, p, y, mode, s, inv_rho_c, k, 0)
    if bounced and inv_rho_c > 0.0:
        summary[S_T_BOUNCE] = 0.0
        summary[S_LNA_BOUNCE] = y[0]
        summary[S_PHI_BOUNCE] = y[1]
        summary[S_PHIDOT_BOUNCE] = y[2]
        summary[S_VFRAC_BOUNCE] = V / rho
        summary[S_RHO_BOUNCE] = rho
    if store:
        rec, n_rec = _record(rec, n_rec, t, y, k[0])
    if bounced:
        event_values(kind, p, y, mode, s, inv_rho_c, lna_cap, g_lo)
        if g_lo[3] > 0.0:
            started = True
            cur_ts = 0.0
            cur_lnas = y[0]
            lna_cap = y[0] + max_efolds
    phi_env = abs(y[1])
    g_cur = np.empty(N_EVENTS)
    event_values(kind, p, y, mode, s, inv_rho_c, lna_cap, g_cur)
    # initial step: a small fraction of the fastest time scale
    _, _, d2v = potential_terms(kind, p, y[1])
    rate = math.sqrt(EIGHT_PI_3 * rho) + math.sqrt(abs(d2v)) + abs(y[2]) / max(abs(y[1]), 1.0)
    h = 1e-3 / rate if (rate > 0.0 and math.isfinite(rate)) else 1e-3

    while True:
        if n_steps >= max_steps:
            reason = R_STEP_CAP
            break
        if t >= max_time:
            reason = R_TIME_CAP
            break
        if t + h > max_time:
            h = max_time - t
        # DOP853 stages 1-11, the 8th-order solution and the FSAL evaluation (stage 12)
        for st in range(1, 12):
            stage_point(y, k, h, st, ytmp, 4)
            _rates_row(kind, p, ytmp, mode, s, inv_rho_c, k, st)
        for i in range(4):
            acc = 0.0
            for j in range(12):
                acc += _B[j] * k[j, i]
            ynew[i] = y[i] + h * acc
        rho_new, _, _, _ = _rates_row(kind, p, ynew, mode, s, inv_rho_c, k, 12)
        n_rhs += 12
        # error norm (Hairer's combination of the 5th- and 3rd-order estimators)
        rho_scale = math.sqrt(max(rho, rho_new) * (inv_rho_c if inv_rho_c > 0.0 else 1.0))
        e5sq = 0.0
        e3sq = 0.0
        ncomp = 3 if mode == 0 else 4
        for i in range(ncomp):
            e5 = 0.0
            e3 = 0.0
            for j in range(13):
                e5 += _E5[j] * k[j, i]
                e3 += _E3[j] * k[j, i]
            big = max(abs(y[i]), abs(ynew[i]))
            if i == 0:
                sc = atol + rtol * max(1.0, big)
            elif i == 3:
                sc = atol + rtol * max(big, math.sqrt(EIGHT_PI_3 * max(rho, rho_new)))
            elif i == 2:
                sc = atol * rho_scale + rtol * max(big, math.sqrt(2.0 * max(rho, rho_new)))
            else:
                sc = atol * rho_scale + rtol * max(big, phi_env)
            e5sq += (e5 / sc) ** 2
            e3sq += (e3 / sc) ** 2
        if e5sq == 0.0 and e3sq == 0.0:
            err = 0.0
        else:
            err = abs(h) * e5sq / math.sqrt((e5sq + 0.01 * e3sq) * ncomp)
        if not math.isfinite(err):
            h *= 0.1
            n_rej += 1
            if abs(h) < 1e-300:
                reason = R_NONFINITE
                break
            continue
        if err > 1.0:
            h *= max(0.2, 0.9 * err ** -0.125)
            n_rej += 1
            if h <= 1e-15 * (abs(t) + 1e-300):
                reason = R_STEP_UNDERFLOW
                break
            continue
        # accepted: look for events inside the step, in time order
        n_steps += 1
        for i in range(N_EVENTS):
            g_lo[i] = g_cur[i]
        event_values(kind, p, ynew, mode, s, inv_rho_c, lna_cap, g_hi)
        th_lo = 0.0
        stop_theta = -1.0
        stop_kind = -1
        have_dense = False
        for _pass in range(8):
            best = 2.0
            best_i = -1
            for i in range(N_EVENTS):
                d = _event_active(i, mode, s, inv_rho_c, bounced, si_ended, started, any_end)
                if d == 0:
                    continue
                up = g_lo[i] <= 0.0 < g_hi[i]
                down = g_lo[i] >= 0.0 > g_hi[i]
                if (d == 1 and up) or (d == -1 and down) or (d == 2 and (up or down)):
                    if not have_dense:
                        _dense_coefficients(kind, p, y, ynew, k, h, mode, s, inv_rho_c, ytmp,
                                            dense)
                        n_rhs += 3
                        have_dense = True
                    th = _locate(kind, p, y, dense, h, mode, s, inv_rho_c, lna_cap, i, th_lo,
                                 g_lo[i], 1.0, ytmp, g_tmp)
                    if th < best:
                        best = th
                        best_i = i
            if best_i < 0:
                break
            _interp(y, dense, best, ytmp)
            te = t + best * h
            if best_i == 6:
                crossings += 1
            if best_i == 0 or best_i == 5 or (best_i == 6 and crossings >= 2):
                stop_theta = best
                stop_kind = best_i
                break
            rho_e, V_e, K_e, H_e = rates(kind, p, ytmp, mode, s, inv_rho_c, work)
            if best_i == 1:
                bounced = True
                summary[S_T_BOUNCE] = te
                summary[S_LNA_BOUNCE] = ytmp[0]
                summary[S_PHI_BOUNCE] = ytmp[1]
                summary[S_PHIDOT_BOUNCE] = ytmp[2]
                summary[S_VFRAC_BOUNCE] = V_e / rho_e
                summary[S_RHO_BOUNCE] = rho_e
            elif best_i == 2:
                si_ended = True
                summary[S_T_SI_END] = te
                summary[S_LNA_SI_END] = ytmp[0]
            elif best_i == 3:
                started = True
                cur_ts = te
                cur_lnas = ytmp[0]
                lna_cap = ytmp[0] + max_efolds
            elif best_i == 4:
                started = False
                any_end = True
                n_phases += 1
                if ytmp[0] - cur_lnas > best_n:
                    crossings = 0
                    best_n = ytmp[0] - cur_lnas
                    summary[S_T_INF_START] = cur_ts
                    summary[S_LNA_INF_START] = cur_lnas
                    summary[S_T_INF_END] = te
                    summary[S_LNA_INF_END] = ytmp[0]
            if store:
                rec, n_rec = _record(rec, n_rec, te, ytmp, work)
            # re-evaluate at the event so newly active events start from here
            th_lo = best
            event_values(kind, p, ytmp, mode, s, inv_rho_c, lna_cap, g_lo)
            event_values(kind, p, ynew, mode, s, inv_rho_c, lna_cap, g_hi)
            if best_i == 1 and g_lo[3] > 0.0:
                # a potential-dominated bounce: accelerated expansion starts right away
                started = True
                cur_ts = te
                cur_lnas = ytmp[0]
                lna_cap = ytmp[0] + max_efolds
                event_values(kind, p, ytmp, mode, s, inv_rho_c, lna_cap, g_lo)
                event_values(kind, p, ynew, mode, s, inv_rho_c, lna_cap, g_hi)
        if store and substeps > 0:
            limit = stop_theta if stop_kind >= 0 else 1.0
            if not have_dense:
                _dense_coefficients(kind, p, y, ynew, k, h, mode, s, inv_rho_c, ytmp, dense)
                n_rhs += 3
                have_dense = True
            for j in range(1, substeps + 1):
                th = limit * j / (substeps + 1.0)
                _interp(y, dense, th, ytmp)
                rates(kind, p, ytmp, mode, s, inv_rho_c, work)
                rec, n_rec = _record(rec, n_rec, t + th * h, ytmp, work)
        if mode == 1:
            H_a, _, _, _, rho_a, _, _ = derivatives(kind, p, ynew[1], ynew[2], ynew[3], mode, s,
                                                    inv_rho_c)
            res = abs(H_a * H_a - hubble_squared(rho_a, inv_rho_c)) / (EIGHT_PI_3 * rho_a)
            if stop_kind < 0 and res > max_res:
                max_res = res
        if stop_kind >= 0:
            _interp(y, dense, stop_theta, ytmp)
            t = t + stop_theta * h
            for i in range(4):
                y[i] = ytmp[i]
            rho, V, K, H = _rates_row(kind, p, y, mode, s, inv_rho_c, k, 0)
            if mode == 1:
                res = abs(H * H - hubble_squared(rho, inv_rho_c)) / (EIGHT_PI_3 * rho)
                if res > max_res:
                    max_res = res
            if stop_kind == 0:
                if mode == 0:
                    mode = 1
                    F = hubble_squared(rho, inv_rho_c)
                    y[3] = s * math.sqrt(F)
                else:
                    mode = 0
                    s = 1.0
                rho, V, K, H = _rates_row(kind, p, y, mode, s, inv_rho_c, k, 0)
                n_rhs += 1
                event_values(kind, p, y, mode, s, inv_rho_c, lna_cap, g_cur)
                if store:
                    rec, n_rec = _record(rec, n_rec, t, y, k[0])
                continue
            if store:
                rec, n_rec = _record(rec, n_rec, t, y, k[0])
            reason = R_END if stop_kind == 6 else R_EFOLD_CAP
            break
        # advance
        t = t + h
        for i in range(4):
            y[i] = ynew[i]
            k[0, i] = k[12, i]
        rho = rho_new
        phi_env = max(abs(y[1]), ENVELOPE_DECAY * phi_env)
        for i in range(N_EVENTS):
            g_cur[i] = g_hi[i]
        if store:
            rec, n_rec = _record(rec, n_rec, t, y, k[0])
        fac = 10.0 if err == 0.0 else min(10.0, max(0.2, 0.9 * err ** -0.125))
        h *= fac

    if reason == R_STEP_UNDERFLOW or reason == R_NONFINITE:
        status = ST_FAILED
    elif started:
        # inflation still running at a cap: report the running phase (a lower bound)
        status = ST_EFOLD_CAP
        summary[S_T_INF_START] = cur_ts
        summary[S_LNA_INF_START] = cur_lnas
        summary[S_T_INF_END] = np.nan
        summary[S_LNA_INF_END] = np.nan
    elif best_n >= 0.0:
        status = ST_INFLATED
    else:
        status = ST_NO_INFLATION
    summary[S_N_PHASES] = n_phases + (1 if started else 0)
    summary[S_STATUS] = status
    summary[S_REASON] = reason
    summary[S_MAX_RESIDUAL] = max_res
    summary[S_STEPS] = n_steps
    summary[S_RHS] = n_rhs
    summary[S_REJECTED] = n_rej
    summary[S_T_FINAL] = t
    summary[S_LNA_FINAL] = y[0]
    return summary, rec, n_rec


def pure_python_copy(potential_terms_fn):
    """A pure-Python copy of this module whose ``potential_terms`` is ``potential_terms_fn``.

    Used for user potentials that numba cannot compile; about two orders of magnitude slower.
    """
    import importlib.util
    import sys

    name = __name__ + "_python"
    spec = importlib.util.spec_from_file_location(name, __file__)
    module = importlib.util.module_from_spec(spec)
    module._PURE_PYTHON = True
    spec.loader.exec_module(module)
    module.potential_terms = potential_terms_fn
    sys.modules.setdefault(name, module)
    return module
