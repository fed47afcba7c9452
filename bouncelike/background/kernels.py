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

Integrator: Dormand-Prince 5(4) with the 4th-order continuous extension (coefficients as in
Dormand & Prince 1980 and Shampine 1986, identical to those of scipy's RK45), error control on
scaled components, events found by bisection on the continuous extension.
"""

from __future__ import annotations

import math

import numpy as np

_PURE_PYTHON = globals().get("_PURE_PYTHON", False)

if _PURE_PYTHON:  # pragma: no cover - exercised through the custom-potential path

    def _jit(func):
        return func

else:
    from numba import njit

    def _jit(func):
        return njit(cache=True, fastmath=False)(func)


EIGHT_PI_3 = 8.0 * math.pi / 3.0
EIGHT_PI = 8.0 * math.pi
SWITCH_FRACTION = 0.01

# summary vector layout ---------------------------------------------------------------------
S_STATUS, S_REASON = 0, 1
S_T_BOUNCE, S_LNA_BOUNCE, S_T_SI_END, S_LNA_SI_END = 2, 3, 4, 5
S_T_INF_START, S_LNA_INF_START, S_T_INF_END, S_LNA_INF_END = 6, 7, 8, 9
S_PHI_BOUNCE, S_PHIDOT_BOUNCE, S_VFRAC_BOUNCE = 10, 11, 12
S_MAX_RESIDUAL, S_STEPS, S_RHS, S_REJECTED = 13, 14, 15, 16
S_T_FINAL, S_LNA_FINAL, S_RHO_BOUNCE = 17, 18, 19
SUMMARY_SIZE = 20

# statuses and stop reasons
ST_INFLATED, ST_NO_INFLATION, ST_EFOLD_CAP, ST_FAILED = 0, 1, 2, 4
R_END, R_EFOLD_CAP, R_TIME_CAP, R_STEP_CAP, R_STEP_UNDERFLOW, R_NONFINITE = 0, 1, 2, 3, 4, 5

# Dormand-Prince 5(4) tableau
_C = np.array([0.0, 1 / 5, 3 / 10, 4 / 5, 8 / 9, 1.0])
_A = np.array([
    [0.0, 0.0, 0.0, 0.0, 0.0],
    [1 / 5, 0.0, 0.0, 0.0, 0.0],
    [3 / 40, 9 / 40, 0.0, 0.0, 0.0],
    [44 / 45, -56 / 15, 32 / 9, 0.0, 0.0],
    [19372 / 6561, -25360 / 2187, 64448 / 6561, -212 / 729, 0.0],
    [9017 / 3168, -355 / 33, 46732 / 5247, 49 / 176, -5103 / 18656],
])
_B = np.array([35 / 384, 0.0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84])
_E = np.array([-71 / 57600, 0.0, 71 / 16695, -71 / 1920, 17253 / 339200, -22 / 525, 1 / 40])
_P = np.array([
    [1.0, -8048581381 / 2820520608, 8663915743 / 2820520608, -12715105075 / 11282082432],
    [0.0, 0.0, 0.0, 0.0],
    [0.0, 131558114200 / 32700410799, -68118460800 / 10900136933, 87487479700 / 32700410799],
    [0.0, -1754552775 / 470086768, 14199869525 / 1410260304, -10690763975 / 1880347072],
    [0.0, 127303824393 / 49829197408, -318862633887 / 49829197408,
     701980252875 / 199316789632],
    [0.0, -282668133 / 205662961, 2019193451 / 616988883, -1453857185 / 822651844],
    [0.0, 40617522 / 29380423, -110615467 / 29380423, 69997945 / 29380423],
])


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
def rates(kind, p, y, mode, s, inv_rho_c, out):
    """Fill ``out`` with dy/dt; return (rho, V, K, H) where H is the rate actually used."""
    V, dV, _ = potential_terms(kind, p, y[1])
    K = 0.5 * y[2] * y[2]
    rho = K + V
    if mode == 0:
        F = hubble_squared(rho, inv_rho_c)
        H = s * math.sqrt(F) if F > 0.0 else 0.0
    else:
        H = y[3]
    out[0] = H
    out[1] = y[2]
    out[2] = -3.0 * H * y[2] - dV
    out[3] = hubble_rate_derivative(y[2], rho, inv_rho_c)
    return rho, V, K, H


@_jit
def event_values(kind, p, y, mode, s, inv_rho_c, lna_cap, work, g):
    """Event functions at state y (see :func:`integrate` for their meaning)."""
    rho, V, K, H = rates(kind, p, y, mode, s, inv_rho_c, work)
    acc = (H * H + work[3]) / (EIGHT_PI_3 * rho)
    g[0] = rho * inv_rho_c - SWITCH_FRACTION
    g[1] = H
    g[2] = rho * inv_rho_c - 0.5
    g[3] = min(acc, (V - K) / rho)
    g[4] = acc
    g[5] = y[0] - lna_cap


@_jit
def _interp(y0, k, h, theta, out):
    """Dormand-Prince continuous extension at theta in [0, 1] of the step (y0, k, h)."""
    t2 = theta * theta
    t3 = t2 * theta
    t4 = t3 * theta
    for i in range(4):
        acc = 0.0
        for j in range(7):
            acc += k[j, i] * (_P[j, 0] * theta + _P[j, 1] * t2 + _P[j, 2] * t3 + _P[j, 3] * t4)
        out[i] = y0[i] + h * acc


@_jit
def _event_active(i, mode, s, inv_rho_c, bounced, si_ended, started, ended):
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
        return -1 if (started and not ended) else 0
    return 1 if started else 0


@_jit
def _locate(kind, p, yold, k, h, mode, s, inv_rho_c, lna_cap, idx, th_lo, g_lo, th_hi,
            work, ytmp, gtmp):
    """Bisection on the continuous extension for the root of event ``idx`` in (th_lo, th_hi]."""
    lo, hi = th_lo, th_hi
    sign_lo = g_lo > 0.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        _interp(yold, k, h, mid, ytmp)
        event_values(kind, p, ytmp, mode, s, inv_rho_c, lna_cap, work, gtmp)
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
              max_steps, store):
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
    rtol, atol : tolerances; the error of phi and phidot is measured against
        atol sqrt(rho/rho_c) + rtol |y|, of ln a against atol + rtol max(1, |ln a|), of H (mode 1)
        against atol + rtol max(|H|, sqrt(8 pi rho / 3))
    max_efolds : cap on inflationary e-folds; max_time : cap on t; max_steps : cap on steps
    store : record the accepted steps (t, ln a, H, Hdot, phi, phidot, phiddot)

    Events (index: function, direction, when active):
    0 mode switch: rho/rho_c - 1/100, up in the contracting branch, down after the bounce;
    1 bounce: H, up, mode 1 before the bounce;
    2 end of super-inflation: rho/rho_c - 1/2, down, after the bounce;
    3 start of inflation: min(addot/(a (8 pi/3) rho), (V - K)/rho), up, after the bounce;
    4 end of inflation (epsilon_H = 1): addot/(a (8 pi/3) rho), down, after the start;
    5 e-fold cap: ln a - ln a_start - max_efolds, up, after the start.

    Returns (summary vector, records array, number of records).
    """
    summary = np.full(SUMMARY_SIZE, np.nan)
    y = y0.copy()
    ynew = np.empty(4)
    ytmp = np.empty(4)
    k = np.zeros((7, 4))
    work = np.empty(4)
    g_lo = np.empty(6)
    g_hi = np.empty(6)
    g_tmp = np.empty(6)
    rec = np.empty((1024 if store else 1, 7))
    n_rec = 0
    t = 0.0
    lna_cap = np.inf
    si_ended = False
    started = False
    ended = False
    max_res = 0.0
    n_steps = 0
    n_rhs = 0
    n_rej = 0
    status = ST_NO_INFLATION
    reason = R_END

    rho, V, K, H = rates(kind, p, y, mode, s, inv_rho_c, k[0])
    n_rhs += 1
    if mode == 1 and not bounced:
        F = hubble_squared(rho, inv_rho_c)
        y[3] = s * math.sqrt(F) if F > 0.0 else 0.0
        rho, V, K, H = rates(kind, p, y, mode, s, inv_rho_c, k[0])
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
        event_values(kind, p, y, mode, s, inv_rho_c, lna_cap, work, g_lo)
        if g_lo[3] > 0.0:
            started = True
            summary[S_T_INF_START] = 0.0
            summary[S_LNA_INF_START] = y[0]
            lna_cap = y[0] + max_efolds
    # initial step: a small fraction of the fastest time scale
    _, _, d2v = potential_terms(kind, p, y[1])
    rate = math.sqrt(EIGHT_PI_3 * rho) + math.sqrt(abs(d2v)) + abs(y[2]) / (abs(y[1]) + 1e-300)
    h = 1e-3 / rate

    while True:
        if n_steps >= max_steps:
            reason = R_STEP_CAP
            break
        if t >= max_time:
            reason = R_TIME_CAP
            break
        if t + h > max_time:
            h = max_time - t
        # Dormand-Prince stages
        for st in range(1, 6):
            for i in range(4):
                acc = 0.0
                for j in range(st):
                    acc += _A[st, j] * k[j, i]
                ytmp[i] = y[i] + h * acc
            rates(kind, p, ytmp, mode, s, inv_rho_c, k[st])
        for i in range(4):
            acc = 0.0
            for j in range(6):
                acc += _B[j] * k[j, i]
            ynew[i] = y[i] + h * acc
        rho_new, _, _, _ = rates(kind, p, ynew, mode, s, inv_rho_c, k[6])
        n_rhs += 6
        # error norm
        rho_scale = math.sqrt(max(rho, rho_new) * (inv_rho_c if inv_rho_c > 0.0 else 1.0))
        err = 0.0
        ncomp = 3 if mode == 0 else 4
        for i in range(ncomp):
            e = 0.0
            for j in range(7):
                e += _E[j] * k[j, i]
            e *= h
            big = max(abs(y[i]), abs(ynew[i]))
            if i == 0:
                sc = atol + rtol * max(1.0, big)
            elif i == 3:
                sc = atol + rtol * max(big, math.sqrt(EIGHT_PI_3 * max(rho, rho_new)))
            else:
                sc = atol * rho_scale + rtol * big
            err += (e / sc) ** 2
        err = math.sqrt(err / ncomp)
        if not math.isfinite(err):
            h *= 0.1
            n_rej += 1
            if abs(h) < 1e-300:
                reason = R_NONFINITE
                break
            continue
        if err > 1.0:
            h *= max(0.2, 0.9 * err ** -0.2)
            n_rej += 1
            if h <= 1e-15 * (abs(t) + 1e-300):
                reason = R_STEP_UNDERFLOW
                break
            continue
        # accepted: look for events inside the step, in time order
        n_steps += 1
        event_values(kind, p, y, mode, s, inv_rho_c, lna_cap, work, g_lo)
        event_values(kind, p, ynew, mode, s, inv_rho_c, lna_cap, work, g_hi)
        th_lo = 0.0
        stop_theta = -1.0
        stop_kind = -1
        for _pass in range(8):
            best = 2.0
            best_i = -1
            for i in range(6):
                d = _event_active(i, mode, s, inv_rho_c, bounced, si_ended, started, ended)
                if d == 0:
                    continue
                if (d > 0 and g_lo[i] <= 0.0 < g_hi[i]) or (d < 0 and g_lo[i] >= 0.0 > g_hi[i]):
                    th = _locate(kind, p, y, k, h, mode, s, inv_rho_c, lna_cap, i, th_lo,
                                 g_lo[i], 1.0, work, ytmp, g_tmp)
                    if th < best:
                        best = th
                        best_i = i
            if best_i < 0:
                break
            _interp(y, k, h, best, ytmp)
            te = t + best * h
            if best_i == 0 or best_i == 4 or best_i == 5:
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
            else:
                started = True
                summary[S_T_INF_START] = te
                summary[S_LNA_INF_START] = ytmp[0]
                lna_cap = ytmp[0] + max_efolds
            if store:
                rec, n_rec = _record(rec, n_rec, te, ytmp, work)
            # re-evaluate at the event so newly active events start from here
            th_lo = best
            event_values(kind, p, ytmp, mode, s, inv_rho_c, lna_cap, work, g_lo)
            event_values(kind, p, ynew, mode, s, inv_rho_c, lna_cap, g_tmp[:4], g_hi)
            if best_i == 1 and g_lo[3] > 0.0:
                # a potential-dominated bounce: accelerated expansion starts right away
                started = True
                summary[S_T_INF_START] = te
                summary[S_LNA_INF_START] = ytmp[0]
                lna_cap = ytmp[0] + max_efolds
                event_values(kind, p, ytmp, mode, s, inv_rho_c, lna_cap, work, g_lo)
                event_values(kind, p, ynew, mode, s, inv_rho_c, lna_cap, g_tmp[:4], g_hi)
        if mode == 1:
            rho_a, _, _, H_a = rates(kind, p, ynew, mode, s, inv_rho_c, work)
            res = abs(H_a * H_a - hubble_squared(rho_a, inv_rho_c)) / (EIGHT_PI_3 * rho_a)
            if stop_kind < 0 and res > max_res:
                max_res = res
        if stop_kind >= 0:
            _interp(y, k, h, stop_theta, ytmp)
            t = t + stop_theta * h
            for i in range(4):
                y[i] = ytmp[i]
            rho, V, K, H = rates(kind, p, y, mode, s, inv_rho_c, k[0])
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
                rho, V, K, H = rates(kind, p, y, mode, s, inv_rho_c, k[0])
                n_rhs += 1
                if store:
                    rec, n_rec = _record(rec, n_rec, t, y, k[0])
                continue
            if store:
                rec, n_rec = _record(rec, n_rec, t, y, k[0])
            if stop_kind == 4:
                ended = True
                summary[S_T_INF_END] = t
                summary[S_LNA_INF_END] = y[0]
                reason = R_END
            else:
                reason = R_EFOLD_CAP
            break
        # advance
        t = t + h
        for i in range(4):
            y[i] = ynew[i]
            k[0, i] = k[6, i]
        rho = rho_new
        if store:
            rec, n_rec = _record(rec, n_rec, t, y, k[0])
        fac = 10.0 if err == 0.0 else min(10.0, max(0.2, 0.9 * err ** -0.2))
        h *= fac

    if ended:
        status = ST_INFLATED
    elif reason == R_STEP_UNDERFLOW or reason == R_NONFINITE:
        status = ST_FAILED
    elif started:
        status = ST_EFOLD_CAP
    else:
        status = ST_NO_INFLATION
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
