"""Compiled right-hand side of the asymmetric-bounce dynamics (modified loop-quantised
Hamiltonian; derivation in :mod:`bouncelike.background.asymmetric`, Li, Singh & Wang,
arXiv:1801.07313).

State ``y = [u, ln a, phi, phidot]`` with theta = lambda b: u = ln(beta_0 - theta) before the
bounce (PRE), ln(theta) after it (POST); far after the bounce (LATE) theta is solved from the
constraint on the general-relativity branch. ``prm = (rho_c, gamma, gamma lambda, beta_0)``,
beta_0 = arctan(1/gamma).
"""

from __future__ import annotations

import math

from .jit import jit
from .potential_kernels import potential_terms

PRE, POST, LATE = 0, 1, 2
_ZERO8 = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)


@jit
def theta(prm, kind, pp, y, mode):
    """theta = lambda b in each mode (LATE: from rho = rho_c s^2 (1 - (1 + gamma^2) s^2) on the
    expanding branch, s^2 = 2 x / (1 + sqrt(1 - 4 (1 + gamma^2) x)), x = rho / rho_c)."""
    if mode == PRE:
        return prm[3] - math.exp(y[0])
    if mode == LATE:
        rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
        x = rho / prm[0]
        g2 = 1.0 + prm[1] * prm[1]
        s2 = 2.0 * x / (1.0 + math.sqrt(max(1.0 - 4.0 * g2 * x, 0.0)))
        return math.asin(math.sqrt(min(s2, 1.0)))
    return math.exp(y[0])


@jit
def rates(prm, kind, pp, y, mode, want_obs):
    """(dy/dt, rho, observables): H = sin(2 theta)[(1 + gamma^2) cos(2 theta) - gamma^2] /
    (2 gamma lambda), thetadot = -4 pi gamma lambda phidot^2."""
    th = theta(prm, kind, pp, y, mode)
    g2 = prm[1] * prm[1]
    two_gl = 2.0 * prm[2]
    s2t, c2t = math.sin(2 * th), math.cos(2 * th)
    hub = s2t * ((1 + g2) * c2t - g2) / two_gl
    phi, phidot = y[2], y[3]
    V, dV, _ = potential_terms(kind, pp, phi)
    thetadot = -4.0 * math.pi * prm[2] * phidot * phidot
    phiddot = -3.0 * hub * phidot - dV
    if mode == PRE:
        u = -thetadot / math.exp(y[0])
    elif mode == POST:
        u = thetadot / th
    else:
        u = 0.0
    rhs = (u, hub, phidot, phiddot, 0.0, 0.0)
    rho = 0.5 * phidot * phidot + V
    if not want_obs:
        return rhs, rho, _ZERO8
    dh = 2.0 * ((1 + g2) * math.cos(4 * th) - g2 * c2t) / two_gl
    return rhs, rho, (y[1], hub, dh * thetadot, phi, phidot, phiddot, rho, V)


@jit
def gravitational_density(prm, kind, pp, y, mode):
    """rho_c s^2 (1 - (1 + gamma^2) s^2), s = sin theta; before the bounce written with
    1 - (1 + gamma^2) sin^2 theta = (1 + gamma^2) sin(beta_0 + theta) sin(beta_0 - theta)."""
    g2 = 1.0 + prm[1] * prm[1]
    if mode == PRE:
        d = math.exp(y[0])
        b0 = prm[3]
        return prm[0] * math.sin(b0 - d) ** 2 * g2 * math.sin(2 * b0 - d) * math.sin(d)
    s2 = math.sin(theta(prm, kind, pp, y, mode)) ** 2
    return prm[0] * s2 * (1.0 - g2 * s2)


@jit
def residual(prm, kind, pp, y, mode):
    """|rho_grav - rho| / rho (the Hamiltonian constraint)."""
    rho = 0.5 * y[3] * y[3] + potential_terms(kind, pp, y[2])[0]
    return abs(gravitational_density(prm, kind, pp, y, mode) - rho) / rho


@jit
def late_density(prm):
    """1% of the maximum density rho_c / (4 (1 + gamma^2))."""
    return 0.01 * prm[0] / (4.0 * (1.0 + prm[1] * prm[1]))


@jit
def to_post(prm, y):
    return (math.log(prm[3] - math.exp(y[0])), y[1], y[2], y[3], y[4], y[5])


@jit
def to_late(prm, kind, pp, y):
    return (math.log(theta(prm, kind, pp, y, LATE)), y[1], y[2], y[3], y[4], y[5])
