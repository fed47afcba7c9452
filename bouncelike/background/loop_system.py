"""Compiled right-hand side of the canonical loop equations with a condensate term
(derivation in :mod:`bouncelike.background.condensate`; Oriti, Sindoni & Wilson-Ewing,
arXiv:1602.05881).

H^2 = (8 pi / 3) rho A (1 - rho / (rho_c' A)), A = 1 + q / v, in the angle theta with
sin^2 theta = rho / (rho_c' A): H = A sin(2 theta) / (2 l), l = sqrt(3 / (8 pi rho_c')),
thetadot = -4 pi l [rho + P - rho q / (v + q)]. State ``y = [ln w, ln a, phi, phidot]`` with
w = pi - theta before the bounce (PRE), theta after it (POST); far after the bounce (LATE) theta
from the constraint. ``prm = (rho_c', q, l, 0)``.
"""

from __future__ import annotations

import math

from .jit import inline, jit
from .potential_kernels import potential_terms

PRE, POST, LATE = 0, 1, 2
_ZERO8 = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)


@inline
def _factor(prm, ln_a):
    """(A, q / v) with v = a^3 (a = 1 on the initial surface)."""
    if prm[1] == 0.0:
        return 1.0, 0.0
    qv = prm[1] * math.exp(-3.0 * ln_a)
    return 1.0 + qv, qv


@jit
def angle(prm, kind, pp, y, mode):
    """w = pi - theta (PRE) or theta (POST); LATE: theta from the constraint (theta < pi/2)."""
    if mode == LATE:
        big_a, _ = _factor(prm, y[1])
        rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
        return math.asin(math.sqrt(min(rho / (prm[0] * big_a), 1.0)))
    return math.exp(y[0])


@jit
def rates(prm, kind, pp, y, mode, want_obs):
    w = angle(prm, kind, pp, y, mode)
    ell = prm[2]
    big_a, qv = _factor(prm, y[1])
    sgn = -1.0 if mode == PRE else 1.0
    hub = sgn * big_a * math.sin(2.0 * w) / (2.0 * ell)
    phi, phidot = y[2], y[3]
    V, dV, _ = potential_terms(kind, pp, phi)
    kin = 0.5 * phidot * phidot
    rho = kin + V
    phiddot = -3.0 * hub * phidot - dV
    drive = 4.0 * math.pi * ell * (2.0 * kin - rho * qv / big_a)
    wdot = drive if mode == PRE else -drive
    rhs = (0.0 if mode == LATE else wdot / w, hub, phidot, phiddot, 0.0, 0.0)
    if not want_obs:
        return rhs, rho, _ZERO8
    # d/dt [A sin(2 theta) / (2 l)] with dA/dt = -3 H (A - 1); cos(2 w) = cos(2 theta) either way
    hdot = -3.0 * hub * hub * qv / big_a + big_a * math.cos(2.0 * w) * (-drive) / ell
    return rhs, rho, (y[1], hub, hdot, phi, phidot, phiddot, rho, V)


@jit
def residual(prm, kind, pp, y, mode):
    """|rho_c' A sin^2 theta - rho| / rho."""
    w = angle(prm, kind, pp, y, mode)
    big_a, _ = _factor(prm, y[1])
    rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
    return abs(prm[0] * big_a * math.sin(w) ** 2 - rho) / rho


@jit
def late_density(prm):
    return 0.01 * prm[0]


@jit
def to_post(prm, y):
    return (math.log(math.pi - math.exp(y[0])), y[1], y[2], y[3], y[4], y[5])


@jit
def to_late(prm, kind, pp, y):
    return (math.log(angle(prm, kind, pp, y, LATE)), y[1], y[2], y[3], y[4], y[5])
