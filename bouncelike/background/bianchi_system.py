"""Compiled right-hand side of the Bianchi I effective dynamics (Hamilton's equations).

Variables, constraint and the derivation of the equations: :mod:`bouncelike.background.bianchi`
(Ashtekar & Wilson-Ewing, Phys. Rev. D 79 (2009) 083535, arXiv:0903.3397). State
``y = [u, k12, k23, ln a, phi, phidot]`` with k_ij = (x_i - x_j) v (conserved), u = ln(pi - xbar)
before the bounce (mode PRE), ln(xbar) after it (POST), and, far after the bounce (LATE), xbar
solved from the constraint (u then carried but unused). ``prm = (rho_c, gamma lambda, 0, 0)``.

Functions take the state as a tuple of floats (numba passes arrays between compiled functions
with reference counting, which costs more than this right-hand side), and sin/cos of the small
offsets x_i - xbar are Taylor polynomials.
"""

from __future__ import annotations

import math

from .jit import inline, jit
from .potential_kernels import potential_terms

PRE, POST, LATE = 0, 1, 2
_I2, _I6, _I12, _I20, _I30, _I42, _I56 = 1 / 2, 1 / 6, 1 / 12, 1 / 20, 1 / 30, 1 / 42, 1 / 56
_THIRD = 1.0 / 3.0
_ZERO8 = (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)


@inline
def _sincos(d):
    """(sin d, cos d); Taylor polynomials for |d| < 0.02 (truncation below 1e-19 relative)."""
    if abs(d) < 0.02:
        q = d * d
        return (d * (1.0 - q * _I6 * (1.0 - q * _I20 * (1.0 - q * _I42))),
                1.0 - q * _I2 * (1.0 - q * _I12 * (1.0 - q * _I30 * (1.0 - q * _I56))))
    return math.sin(d), math.cos(d)


@jit
def _mean_angle(target, d1, d2, d3, sd1, cd1, sd2, cd2, sd3, cd3):
    """xbar > 0 with sum_{i<j} sin(xbar + d_i) sin(xbar + d_j) = target (Newton iteration from
    the small-angle solution 3 xbar^2 - sum d^2 / 2 = target), sin/cos of the offsets given."""
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


@jit
def solve_mean_angle(target, d1, d2, d3):
    """xbar > 0 with sum_{i<j} sin(xbar + d_i) sin(xbar + d_j) = target."""
    sd1, cd1 = _sincos(d1)
    sd2, cd2 = _sincos(d2)
    sd3, cd3 = _sincos(d3)
    return _mean_angle(target, d1, d2, d3, sd1, cd1, sd2, cd2, sd3, cd3)


@inline
def offsets(y):
    """(x_1 - xbar, x_2 - xbar, x_3 - xbar) from k12, k23 and ln a."""
    f = math.exp(-3.0 * y[3]) * _THIRD
    return (2.0 * y[1] + y[2]) * f, (y[2] - y[1]) * f, -(y[1] + 2.0 * y[2]) * f


@jit
def _angles(prm, kind, pp, y, mode):
    """(s1, s2, s3, c1, c2, c3, d1, d2, d3, base): sin/cos x_i, x_i - xbar, and
    zbar = pi - xbar before the bounce or xbar after it (addition formulas for the offsets)."""
    d1, d2, d3 = offsets(y)
    sd1, cd1 = _sincos(d1)
    sd2, cd2 = _sincos(d2)
    sd3, cd3 = _sincos(d3)
    if mode == PRE:
        zb = math.exp(y[0])
        sb, cb = _sincos(zb)
        # z_i = zbar - d_i; s_i = sin z_i, c_i = -cos z_i
        return (sb * cd1 - cb * sd1, sb * cd2 - cb * sd2, sb * cd3 - cb * sd3,
                -(cb * cd1 + sb * sd1), -(cb * cd2 + sb * sd2), -(cb * cd3 + sb * sd3),
                d1, d2, d3, zb)
    if mode == LATE:
        rho = 0.5 * y[5] * y[5] + potential_terms(kind, pp, y[4])[0]
        xb = _mean_angle(3.0 * rho / prm[0], d1, d2, d3, sd1, cd1, sd2, cd2, sd3, cd3)
    else:
        xb = math.exp(y[0])
    sb, cb = _sincos(xb)
    return (sb * cd1 + cb * sd1, sb * cd2 + cb * sd2, sb * cd3 + cb * sd3,
            cb * cd1 - sb * sd1, cb * cd2 - sb * sd2, cb * cd3 - sb * sd3, d1, d2, d3, xb)


@jit
def rates(prm, kind, pp, y, mode, want_obs):
    """(dy/dt, rho, observables); xdot_i from Hamilton's equations (bianchi.py docstring)."""
    s1, s2, s3, c1, c2, c3, d1, d2, d3, base = _angles(prm, kind, pp, y, mode)
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
    # 3 H = H_1 + H_2 + H_3 evaluated apart from ``sym`` (equal analytically): their difference
    # drives the conserved k_ij and stays at round-off
    three_h = ((e2 + e3 - e1) + (e3 + e1 - e2) + (e1 + e2 - e3)) * inv
    phiddot = -three_h * phidot - dV
    xbar_dot = (xd1 + xd2 + xd3) * _THIRD
    if mode == PRE:
        u = -xbar_dot / base
    elif mode == POST:
        u = xbar_dot / base
    else:
        u = 0.0
    rhs = (u, y[1] * (three_h - sym), y[2] * (three_h - sym), three_h * _THIRD, phidot,
           phiddot)
    if not want_obs:
        return rhs, kin + V, _ZERO8
    # Hdot = mean_i sum_j (dH_i/dx_j) xdot_j; the column sums of 2 gamma lambda dH_i/dx_j are
    # d(c1 a1 + c2 a2 + c3 a3)/dx_j = c_j (c_k + c_l) - s_j a_j
    col1 = c1 * (c2 + c3) - s1 * a1
    col2 = c2 * (c1 + c3) - s2 * a2
    col3 = c3 * (c1 + c2) - s3 * a3
    hdot = (col1 * xd1 + col2 * xd2 + col3 * xd3) * inv * _THIRD
    return rhs, kin + V, (y[3], three_h * _THIRD, hdot, phi, phidot, phiddot, kin + V, V)


@jit
def residual(prm, kind, pp, y, mode):
    """|rho_c S / 3 - rho| / scale, S = sum_{i<j} sin x_i sin x_j; scale = max(rho,
    (rho_c / 3) sum |sin x_i sin x_j|), the size of the constraint's terms (where shear
    dominates S is a near-cancellation and rho alone would measure round-off)."""
    s1, s2, s3, _, _, _, _, _, _, _ = _angles(prm, kind, pp, y, mode)
    rho = 0.5 * y[5] * y[5] + potential_terms(kind, pp, y[4])[0]
    scale = max(rho, prm[0] * _THIRD * (abs(s1 * s2) + abs(s2 * s3) + abs(s3 * s1)))
    return abs(prm[0] * (s1 * s2 + s2 * s3 + s3 * s1) * _THIRD - rho) / scale


@jit
def anisotropy(prm, kind, pp, y, mode):
    """(H_1, H_2, H_3, sigma^2): directional Hubble rates
    H_1 = [cos x2 (s1 + s3) + cos x3 (s1 + s2) - cos x1 (s2 + s3)] / (2 gamma lambda) (cyclic)
    and the shear sigma^2 = sum_i (H_i - H)^2 = (1/3) sum_{i<j} (H_i - H_j)^2, with
    gamma lambda (H_i - H_j) = sin(x_i - x_j) + 2 sin x_k sin((x_i + x_j)/2) sin((x_i - x_j)/2)
    (no cancellation; x_i - x_j = d_i - d_j exactly)."""
    s1, s2, s3, c1, c2, c3, d1, d2, d3, base = _angles(prm, kind, pp, y, mode)
    inv = 0.5 / prm[1]
    e1, e2, e3 = c1 * (s2 + s3), c2 * (s1 + s3), c3 * (s1 + s2)
    sgn = -1.0 if mode == PRE else 1.0  # raw angles: pi - x_i before the bounce, x_i after
    w1, w2, w3 = base + sgn * d1, base + sgn * d2, base + sgn * d3
    total = 0.0
    for di, dj, wi, wj, sk in ((d1, d2, w1, w2, s3), (d2, d3, w2, w3, s1),
                               (d3, d1, w3, w1, s2)):
        d = di - dj
        diff = math.sin(d) + 2.0 * sk * math.sin(0.5 * (wi + wj)) * math.sin(0.5 * d)
        total += (diff / prm[1]) ** 2
    return ((e2 + e3 - e1) * inv, (e3 + e1 - e2) * inv, (e1 + e2 - e3) * inv, total * _THIRD)


@inline
def late_density(prm):
    """Density below which the constraint fixes the mean angle (1% of rho_c)."""
    return 0.01 * prm[0]


@inline
def to_post(prm, y):
    """PRE -> POST at the bounce: u = ln(pi - xbar) becomes ln(xbar)."""
    return (math.log(math.pi - math.exp(y[0])), y[1], y[2], y[3], y[4], y[5])


@jit
def to_late(prm, kind, pp, y):
    """POST -> LATE: the mean angle from the constraint."""
    d1, d2, d3 = offsets(y)
    rho = 0.5 * y[5] * y[5] + potential_terms(kind, pp, y[4])[0]
    return (math.log(solve_mean_angle(3.0 * rho / prm[0], d1, d2, d3)), y[1], y[2], y[3], y[4],
            y[5])
