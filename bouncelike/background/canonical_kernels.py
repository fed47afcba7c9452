"""Compiled driver of the canonical-variable dynamics (Bianchi I, asymmetric bounce, loop /
condensate with its extra term).

The same algorithm as the scipy-stepped reference :func:`bouncelike.background.canonical.integrate`
(kept as the reference and for potentials numba cannot compile), compiled with numba
(``cache=True``):

* the state, the phases PRE / POST / LATE and the maps between them are those of the systems in
  :mod:`bouncelike.background.bianchi`, :mod:`bouncelike.background.asymmetric` and
  :mod:`bouncelike.background.condensate` (system codes SYS_*; every formula below repeats the
  formula of that module, and the tests compare the two paths);
* the integrator is the explicit Runge-Kutta pair DOP853 of Dormand & Prince (Hairer, Norsett &
  Wanner, Solving ODEs I, 1993; tableau in :mod:`bouncelike.background.dop853_tableau`) with the
  step-size control, error norm and initial-step selection of ``scipy.integrate.DOP853``, so
  that the two paths take essentially the same steps;
* events are located on the 7th-order continuous extension of the step, by bisection in the
  step fraction to 1e-15 (the reference uses Brent's method in time to 1e-14 (|t| + 1));
* speed: the systems' functions take and return tuples of floats (numba passes arrays between
  compiled functions with reference counting, which cost more than the Bianchi I right-hand
  side itself), and sin/cos of the small angles are Taylor polynomials.

:func:`integrate` returns a summary vector whose first entries follow the layout of the
isotropic kernel (:mod:`bouncelike.background.kernels`, S_*), with the status as an index into
:data:`bouncelike.background.result.STATUSES`, so the e-fold distribution reads both alike; with
``store`` it also returns the records (t, phase, state, observables) of every accepted step and
event, which :mod:`bouncelike.background.canonical` turns into a BackgroundTrajectory.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from . import dop853_tableau as _T
from .kernels import (
    S_LNA_BOUNCE,
    S_LNA_FINAL,
    S_LNA_INF_END,
    S_LNA_INF_START,
    S_LNA_SI_END,
    S_MAX_RESIDUAL,
    S_REASON,
    S_REJECTED,
    S_RHO_BOUNCE,
    S_RHS,
    S_STATUS,
    S_STEPS,
    S_T_BOUNCE,
    S_T_FINAL,
    S_T_INF_END,
    S_T_INF_START,
    S_T_SI_END,
    S_VFRAC_BOUNCE,
    SUMMARY_SIZE,
    dense_interpolate,
    dense_rows,
    potential_terms,
    stage_point,
)

SYS_BIANCHI, SYS_ASYMMETRIC, SYS_LOOP = 0, 1, 2
PRE, POST, LATE = 0, 1, 2
LN_A, HUB, HDOT, PHI, PHIDOT, PHIDDOT, RHO, POT = range(8)
N_OBS = 8

# statuses: indices into result.STATUSES
ST_INFLATED, ST_NO_INFLATION, ST_EFOLD_CAP, ST_NO_BOUNCE, ST_FAILED = 0, 1, 2, 3, 4
# stop reasons
(R_END, R_EFOLD_CAP, R_TIME_NO_BOUNCE, R_TIME_STARTED, R_TIME_NO_INFLATION, R_STEP_CAP,
 R_STEP_SMALL, R_NONFINITE) = range(8)
#: extra summary entries after the isotropic layout
S_BOUNCE_RECORD = SUMMARY_SIZE  # index of the (post-bounce) bounce record, -1 if none
CANONICAL_SUMMARY_SIZE = SUMMARY_SIZE + 1

_A = _T.A
_B = _T.B
_E3 = _T.E3
_E5 = _T.E5
_D = _T.D
_C = _T.C

SAFETY, MIN_FACTOR, MAX_FACTOR = 0.9, 0.2, 10.0
ERROR_EXPONENT = -1.0 / 8.0

_jit = njit(cache=True, error_model="numpy")
_inline = njit(cache=True, error_model="numpy", inline="always")


# Calling conventions. Inside the driver the system functions take tuples: ``prm`` (4 floats,
# the system's parameters), ``pp`` (4 floats, the potential's kernel parameters, read by
# kernels.potential_terms), ``y`` (6 floats, the state padded with zeros) and return tuples;
# numba passes arrays between compiled functions with reference counting, which costs more than
# the whole Bianchi I right-hand side. ``want_obs`` also computes the observables
# (ln a, H, Hdot, phi, phidot, phiddot, rho, V).
_ZERO8 = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)
_I2, _I6, _I12, _I20, _I30, _I42, _I56 = 1 / 2, 1 / 6, 1 / 12, 1 / 20, 1 / 30, 1 / 42, 1 / 56
_THIRD = 1.0 / 3.0


@_inline
def _sincos(d):
    """(sin d, cos d); Taylor polynomials for |d| < 0.02 (truncation below 1e-19 relative),
    where the offsets x_i - xbar and, away from the bounce, the angles almost always are;
    else the library functions."""
    if abs(d) < 0.02:
        q = d * d
        return (d * (1.0 - q * _I6 * (1.0 - q * _I20 * (1.0 - q * _I42))),
                1.0 - q * _I2 * (1.0 - q * _I12 * (1.0 - q * _I30 * (1.0 - q * _I56))))
    return math.sin(d), math.cos(d)


# -- Bianchi I (state [u, k12, k23, ln a, phi, phidot]; prm = [rho_c, gamma lambda]) -------------
@_jit
def _mean_angle(target, d1, d2, d3, sd1, cd1, sd2, cd2, sd3, cd3):
    """xbar > 0 with sum_{i<j} sin(xbar + d_i) sin(xbar + d_j) = target: the Newton iteration of
    bianchi.solve_mean_angle, with sin/cos of the offsets d_i given."""
    xb = math.sqrt(max(target + 0.5 * (d1 * d1 + d2 * d2 + d3 * d3), 0.0) * _THIRD)
    for _ in range(60):
        sb, cb = _sincos(xb)
        s1, s2, s3 = sb * cd1 + cb * sd1, sb * cd2 + cb * sd2, sb * cd3 + cb * sd3
        c1, c2, c3 = cb * cd1 - sb * sd1, cb * cd2 - sb * sd2, cb * cd3 - sb * sd3
        f = s1 * s2 + s2 * s3 + s3 * s1 - target
        fp = (s1 * c2 + c1 * s2) + (s2 * c3 + c2 * s3) + (s3 * c1 + c3 * s1)
        step = f / fp
        xb -= step
        if abs(step) <= 1e-15 * abs(xb):
            break
    return xb


@_jit
def solve_mean_angle(target, d1, d2, d3):
    """xbar > 0 with sum_{i<j} sin(xbar + d_i) sin(xbar + d_j) = target (bianchi.py)."""
    sd1, cd1 = _sincos(d1)
    sd2, cd2 = _sincos(d2)
    sd3, cd3 = _sincos(d3)
    return _mean_angle(target, d1, d2, d3, sd1, cd1, sd2, cd2, sd3, cd3)


@_jit
def _bianchi_angles(prm, kind, pp, y, phase):
    """(s1, s2, s3, c1, c2, c3, d1, d2, d3, base): sin/cos x_i, x_i - xbar, and
    zbar = pi - xbar before the bounce or xbar after it; sin/cos of zbar -+ d_i by the
    addition formulas."""
    f = math.exp(-3.0 * y[3]) * _THIRD
    d1 = (2.0 * y[1] + y[2]) * f
    d2 = (y[2] - y[1]) * f
    d3 = -(y[1] + 2.0 * y[2]) * f
    sd1, cd1 = _sincos(d1)
    sd2, cd2 = _sincos(d2)
    sd3, cd3 = _sincos(d3)
    if phase == PRE:
        zb = math.exp(y[0])
        sb, cb = _sincos(zb)
        # z_i = zbar - d_i; s_i = sin z_i, c_i = -cos z_i
        return (sb * cd1 - cb * sd1, sb * cd2 - cb * sd2, sb * cd3 - cb * sd3,
                -(cb * cd1 + sb * sd1), -(cb * cd2 + sb * sd2), -(cb * cd3 + sb * sd3),
                d1, d2, d3, zb)
    if phase == LATE:
        rho = 0.5 * y[5] * y[5] + potential_terms(kind, pp, y[4])[0]
        xb = _mean_angle(3.0 * rho / prm[0], d1, d2, d3, sd1, cd1, sd2, cd2, sd3, cd3)
    else:
        xb = math.exp(y[0])
    sb, cb = _sincos(xb)
    return (sb * cd1 + cb * sd1, sb * cd2 + cb * sd2, sb * cd3 + cb * sd3,
            cb * cd1 - sb * sd1, cb * cd2 - sb * sd2, cb * cd3 - sb * sd3, d1, d2, d3, xb)


@_jit
def _bianchi(prm, kind, pp, y, phase, want_obs):
    s1, s2, s3, c1, c2, c3, d1, d2, d3, base = _bianchi_angles(prm, kind, pp, y, phase)
    phi, phidot = y[4], y[5]
    V, dV, _ = potential_terms(kind, pp, phi)
    gl = prm[1]
    inv = 0.5 / gl  # 1 / (2 gamma lambda)
    a1, a2, a3 = s2 + s3, s1 + s3, s1 + s2
    big_s = s1 * s2 + s2 * s3 + s3 * s1
    kin = 0.5 * phidot * phidot
    matter = 4.0 * math.pi * gl * (kin - V)
    xd1 = -(big_s + (d1 - d2) * c2 * a2 + (d1 - d3) * c3 * a3) * inv - matter
    xd2 = -(big_s + (d2 - d3) * c3 * a3 + (d2 - d1) * c1 * a1) * inv - matter
    xd3 = -(big_s + (d3 - d1) * c1 * a1 + (d3 - d2) * c2 * a2) * inv - matter
    e1, e2, e3 = c1 * a1, c2 * a2, c3 * a3
    sym = (e1 + e2 + e3) * inv
    # 3 H = H_1 + H_2 + H_3 evaluated apart from ``sym`` (equal analytically; bianchi.py)
    three_h = ((e2 + e3 - e1) + (e3 + e1 - e2) + (e1 + e2 - e3)) * inv
    phiddot = -three_h * phidot - dV
    xbar_dot = (xd1 + xd2 + xd3) * _THIRD
    if phase == PRE:
        u = -xbar_dot / base
    elif phase == POST:
        u = xbar_dot / base
    else:
        u = 0.0
    rhs = (u, y[1] * (three_h - sym), y[2] * (three_h - sym), three_h * _THIRD, phidot,
           phiddot)
    if not want_obs:
        return rhs, _ZERO8
    # Hdot = mean_i sum_j (dH_i/dx_j) xdot_j (bianchi.rate_jacobian); the column sums of
    # 2 gamma lambda J are d(c1 a1 + c2 a2 + c3 a3)/dx_j = c_j (c_k + c_l) - s_j a_j
    col1 = c1 * (c2 + c3) - s1 * a1
    col2 = c2 * (c1 + c3) - s2 * a2
    col3 = c3 * (c1 + c2) - s3 * a3
    hdot = (col1 * xd1 + col2 * xd2 + col3 * xd3) * inv * _THIRD
    return rhs, (y[3], three_h * _THIRD, hdot, phi, phidot, phiddot, kin + V, V)


@_jit
def _bianchi_residual(prm, kind, pp, y, phase):
    s1, s2, s3, _, _, _, _, _, _, _ = _bianchi_angles(prm, kind, pp, y, phase)
    rho = 0.5 * y[5] * y[5] + potential_terms(kind, pp, y[4])[0]
    # normalised by the size of the constraint's terms: where shear dominates, the gravitational
    # sum is a near-cancellation of O(rho_c) products and rho alone would measure round-off
    scale = max(rho, prm[0] * _THIRD * (abs(s1 * s2) + abs(s2 * s3) + abs(s3 * s1)))
    return abs(prm[0] * (s1 * s2 + s2 * s3 + s3 * s1) * _THIRD - rho) / scale


# -- asymmetric (state [u, ln a, phi, phidot]; prm = [rho_c, gamma, gamma lambda, beta_0]) -------
@_jit
def _asym_theta(prm, kind, pp, y, phase):
    if phase == PRE:
        return prm[3] - math.exp(y[0])
    if phase == LATE:
        rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
        x = rho / prm[0]
        g2 = 1.0 + prm[1] * prm[1]
        s2 = 2.0 * x / (1.0 + math.sqrt(max(1.0 - 4.0 * g2 * x, 0.0)))
        return math.asin(math.sqrt(s2))
    return math.exp(y[0])


@_jit
def _asymmetric(prm, kind, pp, y, phase, want_obs):
    theta = _asym_theta(prm, kind, pp, y, phase)
    g2 = prm[1] * prm[1]
    two_gl = 2.0 * prm[2]
    s2t, c2t = math.sin(2 * theta), math.cos(2 * theta)
    hub = s2t * ((1 + g2) * c2t - g2) / two_gl
    phi, phidot = y[2], y[3]
    V, dV, _ = potential_terms(kind, pp, phi)
    thetadot = -4.0 * math.pi * prm[2] * phidot * phidot
    phiddot = -3.0 * hub * phidot - dV
    if phase == PRE:
        u = -thetadot / math.exp(y[0])
    elif phase == POST:
        u = thetadot / theta
    else:
        u = 0.0
    rhs = (u, hub, phidot, phiddot, 0.0, 0.0)
    if not want_obs:
        return rhs, _ZERO8
    dh = 2.0 * ((1 + g2) * math.cos(4 * theta) - g2 * c2t) / two_gl
    return rhs, (y[1], hub, dh * thetadot, phi, phidot, phiddot, 0.5 * phidot * phidot + V, V)


@_jit
def _asym_residual(prm, kind, pp, y, phase):
    g2 = 1.0 + prm[1] * prm[1]
    rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
    if phase == PRE:
        d = math.exp(y[0])
        b0 = prm[3]
        grav = (prm[0] * math.sin(b0 - d) ** 2 * g2 * math.sin(2 * b0 - d) * math.sin(d))
    else:
        s2 = math.sin(_asym_theta(prm, kind, pp, y, phase)) ** 2
        grav = prm[0] * s2 * (1.0 - g2 * s2)
    return abs(grav - rho) / rho


# -- loop / condensate (state [ln w, ln a, phi, phidot]; prm = [rho_c', q, ell]) ----------------
@_jit
def _loop_factor(prm, ln_a):
    if prm[1] == 0.0:
        return 1.0, 0.0
    qv = prm[1] * math.exp(-3.0 * ln_a)
    return 1.0 + qv, qv


@_jit
def _loop_angle(prm, kind, pp, y, phase):
    if phase == LATE:
        big_a, _ = _loop_factor(prm, y[1])
        rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
        return math.asin(math.sqrt(min(rho / (prm[0] * big_a), 1.0)))
    return math.exp(y[0])


@_jit
def _loop(prm, kind, pp, y, phase, want_obs):
    w = _loop_angle(prm, kind, pp, y, phase)
    ell = prm[2]
    big_a, qv = _loop_factor(prm, y[1])
    sgn = -1.0 if phase == PRE else 1.0
    hub = sgn * big_a * math.sin(2.0 * w) / (2.0 * ell)
    phi, phidot = y[2], y[3]
    V, dV, _ = potential_terms(kind, pp, phi)
    kin = 0.5 * phidot * phidot
    rho = kin + V
    phiddot = -3.0 * hub * phidot - dV
    drive = 4.0 * math.pi * ell * (2.0 * kin - rho * qv / big_a)
    wdot = drive if phase == PRE else -drive
    rhs = (0.0 if phase == LATE else wdot / w, hub, phidot, phiddot, 0.0, 0.0)
    if not want_obs:
        return rhs, _ZERO8
    thetadot = -drive
    hdot = -3.0 * hub * hub * qv / big_a + big_a * math.cos(2.0 * w) * thetadot / ell
    return rhs, (y[1], hub, hdot, phi, phidot, phiddot, rho, V)


@_jit
def _loop_residual(prm, kind, pp, y, phase):
    w = _loop_angle(prm, kind, pp, y, phase)
    big_a, _ = _loop_factor(prm, y[1])
    rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
    return abs(prm[0] * big_a * math.sin(w) ** 2 - rho) / rho


# -- dispatch --------------------------------------------------------------------------------------
@_jit
def _system(code, prm, kind, pp, y, phase, want_obs):
    if code == SYS_BIANCHI:
        return _bianchi(prm, kind, pp, y, phase, want_obs)
    if code == SYS_ASYMMETRIC:
        return _asymmetric(prm, kind, pp, y, phase, want_obs)
    return _loop(prm, kind, pp, y, phase, want_obs)


@_jit
def _residual(code, prm, kind, pp, y, phase):
    if code == SYS_BIANCHI:
        return _bianchi_residual(prm, kind, pp, y, phase)
    if code == SYS_ASYMMETRIC:
        return _asym_residual(prm, kind, pp, y, phase)
    return _loop_residual(prm, kind, pp, y, phase)


@_inline
def _tup(a):
    """A state array (length 4 or 6) as a 6-tuple padded with zeros."""
    if a.shape[0] == 6:
        return (a[0], a[1], a[2], a[3], a[4], a[5])
    return (a[0], a[1], a[2], a[3], 0.0, 0.0)


@_inline
def _tup4(a):
    """Up to four parameters as a 4-tuple padded with zeros."""
    n = a.shape[0]
    return (a[0] if n > 0 else 0.0, a[1] if n > 1 else 0.0, a[2] if n > 2 else 0.0,
            a[3] if n > 3 else 0.0)


@_inline
def _rhs_into(code, prm, kind, pp, y, phase, k, row):
    """dy/dt at the state array ``y`` into k[row]."""
    r, _ = _system(code, prm, kind, pp, _tup(y), phase, False)
    for i in range(y.shape[0]):
        k[row, i] = r[i]


@_inline
def _obs_into(code, prm, kind, pp, y, phase, o):
    """Observables at the state array ``y`` into ``o``."""
    _, ob = _system(code, prm, kind, pp, _tup(y), phase, True)
    for i in range(N_OBS):
        o[i] = ob[i]


@_inline
def _both_into(code, prm, kind, pp, y, phase, k, row, o):
    r, ob = _system(code, prm, kind, pp, _tup(y), phase, True)
    for i in range(y.shape[0]):
        k[row, i] = r[i]
    for i in range(N_OBS):
        o[i] = ob[i]


@_jit
def evaluate(code, prm, kind, pp, y, phase, out, obs):
    """dy/dt into ``out`` and observables into ``obs`` (arrays; ``prm`` and ``pp`` of length
    4): the entry point for tests and tools."""
    r, ob = _system(code, _tup4(prm), kind, _tup4(pp), _tup(y), phase, True)
    for i in range(y.shape[0]):
        out[i] = r[i]
    for i in range(N_OBS):
        obs[i] = ob[i]


@_jit
def residual(code, prm, kind, pp, y, phase):
    """Relative constraint residual of the state array ``y``."""
    return _residual(code, _tup4(prm), kind, _tup4(pp), _tup(y), phase)


@_jit
def _to_post(code, prm, y):
    """Map the state at the bounce from the PRE to the POST variable (in place)."""
    if code == SYS_ASYMMETRIC:
        y[0] = math.log(prm[3] - math.exp(y[0]))
    else:
        y[0] = math.log(math.pi - math.exp(y[0]))


@_jit
def _to_late(code, prm, kind, pp, y):
    """Map a POST state to the LATE one (angle from the constraint; in place)."""
    yt = _tup(y)
    if code == SYS_BIANCHI:
        f = math.exp(-3.0 * y[3]) / 3.0
        d1 = (2.0 * y[1] + y[2]) * f
        d2 = (y[2] - y[1]) * f
        d3 = -(y[1] + 2.0 * y[2]) * f
        rho = 0.5 * y[5] * y[5] + potential_terms(kind, pp, y[4])[0]
        y[0] = math.log(solve_mean_angle(3.0 * rho / prm[0], d1, d2, d3))
    elif code == SYS_ASYMMETRIC:
        y[0] = math.log(_asym_theta(prm, kind, pp, yt, LATE))
    else:
        y[0] = math.log(_loop_angle(prm, kind, pp, yt, LATE))


# -- events --------------------------------------------------------------------------------------
@_jit
def _addot_norm(o):
    h2 = o[HUB] * o[HUB]
    return (o[HDOT] + h2) / (h2 + abs(o[HDOT]) + 1e-300)


@_jit
def _start_indicator(o):
    kin = 0.5 * o[PHIDOT] * o[PHIDOT]
    return min(_addot_norm(o), (o[POT] - kin) / (o[RHO] + 1e-300))


@_jit
def _event_value(which, o):
    if which == 0:
        return o[HUB]
    if which == 1:
        return o[HDOT]
    if which == 2:
        return _start_indicator(o)
    return _addot_norm(o)


# -- DOP853 pieces ---------------------------------------------------------------------------------
@_jit
def _rms_scaled(v, scale):
    acc = 0.0
    for i in range(v.shape[0]):
        q = v[i] / scale[i]
        acc += q * q
    return math.sqrt(acc / v.shape[0])


@_jit
def _initial_step(code, prm, kind, pp, phase, y, f0, interval, rtol, atol, ytmp, f1, empty):
    """scipy.integrate._ivp.common.select_initial_step for order 7 (Hairer et al. II.4)."""
    n = y.shape[0]
    if interval == 0.0:
        return 0.0
    scale = np.empty(n)
    for i in range(n):
        scale[i] = atol[i] + abs(y[i]) * rtol
    d0 = _rms_scaled(y, scale)
    d1 = _rms_scaled(f0, scale)
    h0 = 1e-6 if (d0 < 1e-5 or d1 < 1e-5) else 0.01 * d0 / d1
    h0 = min(h0, interval)
    for i in range(n):
        ytmp[i] = y[i] + h0 * f0[i]
    r, _ = _system(code, prm, kind, pp, _tup(ytmp), phase, False)
    for i in range(n):
        f1[i] = r[i]
    for i in range(n):
        ytmp[i] = f1[i] - f0[i]
    d2 = _rms_scaled(ytmp, scale) / h0
    if d1 <= 1e-15 and d2 <= 1e-15:
        h1 = max(1e-6, h0 * 1e-3)
    else:
        h1 = (0.01 / max(d1, d2)) ** (1.0 / 8.0)
    return min(100.0 * h0, h1, interval)


@_jit
def _dense(code, prm, kind, pp, phase, y, ynew, k, h, ytmp, F, empty):
    """Stages 13-15 and the coefficient rows of the continuous extension (scipy's layout)."""
    n = y.shape[0]
    for st in range(13, 16):
        stage_point(y, k, h, st, ytmp, n)
        _rhs_into(code, prm, kind, pp, ytmp, phase, k, st)
    dense_rows(y, ynew, k, h, F, n)


@_jit
def _interp(y0, F, theta, out):
    dense_interpolate(y0, F, theta, out, y0.shape[0])


@_jit
def _root(code, prm, kind, pp, phase, which, yold, F, t_old, h, ta, tb, yout, obs, empty):
    """Zero of event ``which`` between times ta < tb inside the step [t_old, t_old + h], by
    bisection in the step fraction on the continuous extension down to 1e-15 of the step
    (finer than the time itself resolves far from t = 0); the state there into ``yout``."""
    lo, hi = (ta - t_old) / h, (tb - t_old) / h
    _interp(yold, F, lo, yout)
    _obs_into(code, prm, kind, pp, yout, phase, obs)
    lo_pos = _event_value(which, obs) > 0.0
    for _ in range(80):
        if hi - lo <= 1e-15:
            break
        mid = 0.5 * (lo + hi)
        _interp(yold, F, mid, yout)
        _obs_into(code, prm, kind, pp, yout, phase, obs)
        if (_event_value(which, obs) > 0.0) == lo_pos:
            lo = mid
        else:
            hi = mid
    th = 0.5 * (lo + hi)
    _interp(yold, F, th, yout)
    return t_old + th * h


@_jit
def _record(rec, n, t, phase, y, obs, store):
    if not store:
        return rec, n + 1
    if n >= rec.shape[0]:
        bigger = np.empty((2 * rec.shape[0], rec.shape[1]))
        bigger[:n] = rec[:n]
        rec = bigger
    ny = y.shape[0]
    rec[n, 0] = t
    rec[n, 1] = phase
    for i in range(ny):
        rec[n, 2 + i] = y[i]
    for i in range(N_OBS):
        rec[n, 2 + ny + i] = obs[i]
    return rec, n + 1


@_jit
def integrate(code, prm, kind, pp, y0, phase0, rtol, atol_pre, atol_post, late_density,
              classical, max_time, max_efolds, max_steps, store):
    """Evolve one canonical system from ``y0`` (at t = 0) until the end of inflation or a cap.

    The logic of :func:`bouncelike.background.canonical.integrate`: bounce = upward zero of H
    in phase PRE (then the state is mapped to POST and the integrator restarted), end of
    super-inflation = downward zero of Hdot, start of inflation = upward zero of
    min(addot-norm, (V - K)/rho), end = downward zero of addot-norm after the start; below
    ``late_density`` after the bounce the angle is solved from the constraint (LATE).

    Returns (summary, records, number of records); records rows are
    [t, phase, y..., ln a, H, Hdot, phi, phidot, phiddot, rho, V].
    """
    n = y0.shape[0]
    prm = _tup4(prm)
    pp = _tup4(pp)
    summary = np.full(CANONICAL_SUMMARY_SIZE, np.nan)
    summary[S_BOUNCE_RECORD] = -1.0
    empty = np.empty(0)
    y = y0.copy()
    ynew = np.empty(n)
    ytmp = np.empty(n)
    yev = np.empty(n)
    f1 = np.empty(n)
    k = np.zeros((16, n))
    F = np.zeros((7, n))
    o = np.empty(N_OBS)
    o_old = np.empty(N_OBS)
    o_ev = np.empty(N_OBS)
    rec = np.empty((512 if store else 1, 2 + n + N_OBS))
    n_rec = 0
    phase = phase0
    atol = atol_pre if phase == PRE else atol_post
    t = 0.0
    n_steps = 0
    n_rhs = 0
    n_rej = 0
    max_res = 0.0
    pending = 0.0  # residual of the last record (may still be replaced at a LATE switch)
    started = False
    si_ended = False
    ln_a_start = np.nan
    status = ST_FAILED
    reason = R_NONFINITE

    _both_into(code, prm, kind, pp, y, phase, k, 0, o)
    n_rhs += 1
    rec, n_rec = _record(rec, n_rec, t, phase, y, o, store)
    pending = _residual(code, prm, kind, pp, _tup(y), phase)
    if classical and _start_indicator(o) > 0.0:
        started = True
        ln_a_start = o[LN_A]
        summary[S_T_INF_START] = 0.0
        summary[S_LNA_INF_START] = o[LN_A]
    if phase != PRE and not classical:
        summary[S_T_BOUNCE] = 0.0
        summary[S_LNA_BOUNCE] = o[LN_A]
        summary[S_VFRAC_BOUNCE] = o[POT] / o[RHO]
        summary[S_RHO_BOUNCE] = o[RHO]
        summary[S_BOUNCE_RECORD] = 0.0
        if _start_indicator(o) > 0.0:
            started = True
            ln_a_start = o[LN_A]
            summary[S_T_INF_START] = 0.0
            summary[S_LNA_INF_START] = o[LN_A]
    h_abs = _initial_step(code, prm, kind, pp, phase, y, k[0], max_time - t, rtol, atol, ytmp,
                          f1, empty)
    n_rhs += 1
    scale = np.empty(n)

    while True:
        if n_steps >= max_steps:
            status, reason = ST_FAILED, R_STEP_CAP
            break
        if t >= max_time:
            if phase == PRE:
                status, reason = ST_NO_BOUNCE, R_TIME_NO_BOUNCE
            elif started:
                status, reason = ST_EFOLD_CAP, R_TIME_STARTED
            else:
                status, reason = ST_NO_INFLATION, R_TIME_NO_INFLATION
            break
        # ---- one accepted DOP853 step (scipy's control) ----
        min_step = 10.0 * abs(np.nextafter(t, np.inf) - t)
        if h_abs < min_step:
            h_abs = min_step
        rejected = False
        failed = False
        h = 0.0
        err = 0.0
        while True:
            if h_abs < min_step:
                failed = True
                break
            t_new = t + h_abs
            if t_new > max_time:
                t_new = max_time
            h = t_new - t
            h_abs = abs(h)
            for st in range(1, 12):
                stage_point(y, k, h, st, ytmp, n)
                _rhs_into(code, prm, kind, pp, ytmp, phase, k, st)
            for i in range(n):
                acc = 0.0
                for j in range(12):
                    acc += _B[j] * k[j, i]
                ynew[i] = y[i] + h * acc
            _rhs_into(code, prm, kind, pp, ynew, phase, k, 12)
            n_rhs += 12
            e5sq = 0.0
            e3sq = 0.0
            for i in range(n):
                scale[i] = atol[i] + max(abs(y[i]), abs(ynew[i])) * rtol
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
                err = h_abs * e5sq / math.sqrt((e5sq + 0.01 * e3sq) * n)
            if err < 1.0:
                if err == 0.0:
                    factor = MAX_FACTOR
                else:
                    factor = min(MAX_FACTOR, SAFETY * err**ERROR_EXPONENT)
                if rejected:
                    factor = min(1.0, factor)
                h_abs *= factor
                break
            n_rej += 1
            fac = SAFETY * err**ERROR_EXPONENT
            h_abs *= fac if fac > MIN_FACTOR else MIN_FACTOR  # NaN error: MIN_FACTOR
            rejected = True
        if failed:
            status, reason = ST_FAILED, R_STEP_SMALL
            break
        n_steps += 1
        t_old = t
        t_new = t + h
        for i in range(N_OBS):
            o_old[i] = o[i]
        _obs_into(code, prm, kind, pp, ynew, phase, o)
        finite = True
        for i in range(N_OBS):
            if not math.isfinite(o[i]):
                finite = False
        if not finite:
            status, reason = ST_FAILED, R_NONFINITE
            break
        have_dense = False
        if phase == PRE:
            if o_old[HUB] < 0.0 <= o[HUB]:
                _dense(code, prm, kind, pp, phase, y, ynew, k, h, ytmp, F, empty)
                n_rhs += 3
                tb = _root(code, prm, kind, pp, phase, 0, y, F, t_old, h, t_old, t_new, yev,
                           o_ev, empty)
                _obs_into(code, prm, kind, pp, yev, PRE, o_ev)
                max_res = max(max_res, pending)
                rec, n_rec = _record(rec, n_rec, tb, PRE, yev, o_ev, store)
                pending = _residual(code, prm, kind, pp, _tup(yev), PRE)
                _to_post(code, prm, yev)
                phase = POST
                atol = atol_post
                _both_into(code, prm, kind, pp, yev, phase, k, 0, o)
                n_rhs += 1
                summary[S_T_BOUNCE] = tb
                summary[S_LNA_BOUNCE] = o[LN_A]
                summary[S_VFRAC_BOUNCE] = o_ev[POT] / o_ev[RHO]
                summary[S_RHO_BOUNCE] = o_ev[RHO]
                summary[S_BOUNCE_RECORD] = n_rec
                max_res = max(max_res, pending)
                rec, n_rec = _record(rec, n_rec, tb, POST, yev, o, store)
                pending = _residual(code, prm, kind, pp, _tup(yev), POST)
                if _start_indicator(o) > 0.0:
                    started = True
                    ln_a_start = o[LN_A]
                    summary[S_T_INF_START] = tb
                    summary[S_LNA_INF_START] = o[LN_A]
                t = tb
                for i in range(n):
                    y[i] = yev[i]
                h_abs = _initial_step(code, prm, kind, pp, phase, y, k[0], max_time - t, rtol,
                                      atol, ytmp, f1, empty)
                n_rhs += 1
                continue
            max_res = max(max_res, pending)
            rec, n_rec = _record(rec, n_rec, t_new, phase, ynew, o, store)
            pending = _residual(code, prm, kind, pp, _tup(ynew), phase)
            t = t_new
            for i in range(n):
                y[i] = ynew[i]
                k[0, i] = k[12, i]
            continue
        # ---- expanding branch ----
        if not si_ended and o_old[HDOT] > 0.0 >= o[HDOT]:
            _dense(code, prm, kind, pp, phase, y, ynew, k, h, ytmp, F, empty)
            n_rhs += 3
            have_dense = True
            ts = _root(code, prm, kind, pp, phase, 1, y, F, t_old, h, t_old, t_new, yev, o_ev,
                       empty)
            _obs_into(code, prm, kind, pp, yev, phase, o_ev)
            si_ended = True
            summary[S_T_SI_END] = ts
            summary[S_LNA_SI_END] = o_ev[LN_A]
        if not started and _start_indicator(o_old) <= 0.0 < _start_indicator(o):
            if not have_dense:
                _dense(code, prm, kind, pp, phase, y, ynew, k, h, ytmp, F, empty)
                n_rhs += 3
                have_dense = True
            ts = _root(code, prm, kind, pp, phase, 2, y, F, t_old, h, t_old, t_new, yev, o_ev,
                       empty)
            _obs_into(code, prm, kind, pp, yev, phase, o_ev)
            max_res = max(max_res, pending)
            rec, n_rec = _record(rec, n_rec, ts, phase, yev, o_ev, store)
            pending = _residual(code, prm, kind, pp, _tup(yev), phase)
            started = True
            ln_a_start = o_ev[LN_A]
            summary[S_T_INF_START] = ts
            summary[S_LNA_INF_START] = o_ev[LN_A]
            if _addot_norm(o) >= 0.0:
                max_res = max(max_res, pending)
                rec, n_rec = _record(rec, n_rec, t_new, phase, ynew, o, store)
                pending = _residual(code, prm, kind, pp, _tup(ynew), phase)
                t = t_new
                for i in range(n):
                    y[i] = ynew[i]
                    k[0, i] = k[12, i]
                continue
        if started and _addot_norm(o_old) > 0.0 >= _addot_norm(o):
            if not have_dense:
                _dense(code, prm, kind, pp, phase, y, ynew, k, h, ytmp, F, empty)
                n_rhs += 3
                have_dense = True
            ta = max(t_old, summary[S_T_INF_START])
            te = _root(code, prm, kind, pp, phase, 3, y, F, t_old, h, ta, t_new, yev, o_ev,
                       empty)
            _obs_into(code, prm, kind, pp, yev, phase, o_ev)
            max_res = max(max_res, pending)
            rec, n_rec = _record(rec, n_rec, te, phase, yev, o_ev, store)
            pending = _residual(code, prm, kind, pp, _tup(yev), phase)
            summary[S_T_INF_END] = te
            summary[S_LNA_INF_END] = o_ev[LN_A]
            t = te
            for i in range(n):
                y[i] = yev[i]
            status, reason = ST_INFLATED, R_END
            break
        max_res = max(max_res, pending)
        rec, n_rec = _record(rec, n_rec, t_new, phase, ynew, o, store)
        pending = _residual(code, prm, kind, pp, _tup(ynew), phase)
        t = t_new
        for i in range(n):
            y[i] = ynew[i]
            k[0, i] = k[12, i]
        if phase == POST and o[RHO] < late_density:
            phase = LATE
            _to_late(code, prm, kind, pp, y)
            if store:
                rec[n_rec - 1, 1] = LATE
                for i in range(n):
                    rec[n_rec - 1, 2 + i] = y[i]
            pending = _residual(code, prm, kind, pp, _tup(y), LATE)
            _rhs_into(code, prm, kind, pp, y, phase, k, 0)
            n_rhs += 1
            h_abs = _initial_step(code, prm, kind, pp, phase, y, k[0], max_time - t, rtol, atol,
                                  ytmp, f1, empty)
            n_rhs += 1
        if started and o[LN_A] - ln_a_start > max_efolds:
            status, reason = ST_EFOLD_CAP, R_EFOLD_CAP
            break

    max_res = max(max_res, pending)
    summary[S_STATUS] = status
    summary[S_REASON] = reason
    summary[S_MAX_RESIDUAL] = max_res
    summary[S_STEPS] = n_steps
    summary[S_RHS] = n_rhs
    summary[S_REJECTED] = n_rej
    summary[S_T_FINAL] = t
    summary[S_LNA_FINAL] = o[LN_A] if status != ST_INFLATED else summary[S_LNA_INF_END]
    return summary, rec, n_rec
