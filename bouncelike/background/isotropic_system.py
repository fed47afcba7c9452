"""Compiled right-hand side of the effective isotropic bounce, with its constraint-keeping modes.

State ``y = (ln a, phi, phidot, H)``; Planck units, G = 1; ``prm = (1/rho_c, 0, 0, 0)`` (1/rho_c
= 0 gives general relativity). Equations (physics notes, section 1; Ashtekar & Singh, Class.
Quantum Grav. 28 (2011) 213001):

* modified Friedmann      H^2 = F(rho) = (8 pi / 3) rho (1 - rho / rho_c)
* modified Raychaudhuri   Hdot = -4 pi (rho + P)(1 - 2 rho / rho_c) = -8 pi K (1 - 2 rho / rho_c)
* Klein-Gordon            phiddot = -3 H phidot - V'(phi)

with K = phidot^2 / 2, rho = K + V, P = K - V.

Keeping the constraint (modes). In mode 0 (contracting) and mode 2 (expanding), used while
rho < rho_c / 100, the Hubble rate is *not* evolved: H = s sqrt(F(rho)) with s = -1 and +1; the
fourth component of ``y`` is carried but ignored (and not error-controlled). In mode 1 (near
the bounce, rho >= rho_c / 100, where H passes through 0) H is evolved with the Raychaudhuri
equation. The switches are this system's event (rho / rho_c - 1/100, up in mode 0, down in
mode 1 after the bounce); at the switch into mode 1, H is set to -sqrt(F). The constraint
residual |H^2 - F| / ((8 pi / 3) rho) of mode 1 is what the engine reports (zero by
construction in modes 0 and 2).

Error scales: each component against its natural size, so that zero crossings of an
oscillating field do not force tiny steps: phidot against atol sqrt(rho/rho_c) +
rtol max(|phidot|, sqrt(2 rho)); phi against atol sqrt(rho/rho_c) + rtol max(|phi|, envelope),
the envelope being the recent maximum of |phi| (decaying by ENVELOPE_DECAY per accepted step,
the solver's ``memory``); ln a against atol + rtol max(1, |ln a|); H (mode 1) against
atol + rtol max(|H|, sqrt(8 pi rho / 3)).
"""

from __future__ import annotations

import math

from .jit import inline
from .potential_kernels import potential_terms

EIGHT_PI_3 = 8.0 * math.pi / 3.0
#: rho / rho_c below which H is taken from the constraint (modes 0 and 2)
SWITCH_FRACTION = 0.01
#: per accepted step decay of the envelope of |phi| used as its error scale
ENVELOPE_DECAY = 0.99
CONTRACTING, BOUNCE, EXPANDING = 0, 1, 2


@inline
def hubble_squared(rho, inv_rho_c):
    """F(rho) = (8 pi / 3) rho (1 - rho / rho_c): the modified Friedmann right-hand side."""
    return EIGHT_PI_3 * rho * (1.0 - rho * inv_rho_c)


@inline
def _derivatives(prm, kind, pp, y, mode):
    """(H, phidot, phiddot, Hdot, rho, V, K) at one state; H from the constraint off mode 1."""
    inv = prm[0]
    phi, phidot = y[1], y[2]
    V, dV, _ = potential_terms(kind, pp, phi)
    kin = 0.5 * phidot * phidot
    rho = kin + V
    if mode == BOUNCE:
        H = y[3]
    else:
        F = hubble_squared(rho, inv)
        s = -1.0 if mode == CONTRACTING else 1.0
        H = s * math.sqrt(F) if F > 0.0 else 0.0
    return (H, phidot, -3.0 * H * phidot - dV,
            -4.0 * math.pi * phidot * phidot * (1.0 - 2.0 * rho * inv), rho, V, kin)


@inline
def rates(prm, kind, pp, y, mode, want_obs):
    """(dy/dt as a 6-tuple, rho, observables (ln a, H, Hdot, phi, phidot, phiddot, rho, V))."""
    H, d1, d2, d3, rho, V, _ = _derivatives(prm, kind, pp, y, mode)
    return ((H, d1, d2, d3, 0.0, 0.0), rho, (y[0], H, d3, y[1], y[2], d2, rho, V))


@inline
def error_scale(prm, y, ynew, aux0, aux1, mode, rtol, atol, memory):
    """(error scale of each component (6-tuple), number of controlled components)."""
    inv = prm[0]
    rho = max(aux0, aux1)
    rho_scale = math.sqrt(rho * (inv if inv > 0.0 else 1.0))
    s0 = atol + rtol * max(1.0, max(abs(y[0]), abs(ynew[0])))
    s1 = atol * rho_scale + rtol * max(max(abs(y[1]), abs(ynew[1])), memory)
    s2 = atol * rho_scale + rtol * max(max(abs(y[2]), abs(ynew[2])), math.sqrt(2.0 * rho))
    if mode != BOUNCE:  # H is not evolved: three components
        return (s0, s1, s2, 1.0, 1.0, 1.0), 3
    s3 = atol + rtol * max(max(abs(y[3]), abs(ynew[3])), math.sqrt(EIGHT_PI_3 * rho))
    return (s0, s1, s2, s3, 1.0, 1.0), 4


@inline
def memory_update(y, memory, first):
    """Envelope of |phi| (the phi error scale)."""
    if first:
        return abs(y[1])
    return max(abs(y[1]), ENVELOPE_DECAY * memory)


@inline
def switch_value(prm, mode, obs):
    return obs[6] * prm[0] - SWITCH_FRACTION


@inline
def switch_direction(prm, mode, bounced):
    """Into mode 1 (up) in the contracting branch, out of it (down) after the bounce."""
    if prm[0] <= 0.0:
        return 0
    if mode == CONTRACTING:
        return 1
    if mode == BOUNCE and bounced:
        return -1
    return 0


@inline
def apply_switch(prm, kind, pp, y, mode):
    """(state, mode) after the switch event: into mode 1 H = -sqrt(F), out of it mode 2."""
    if mode == CONTRACTING:
        V, _, _ = potential_terms(kind, pp, y[1])
        F = hubble_squared(0.5 * y[2] * y[2] + V, prm[0])
        return (y[0], y[1], y[2], -1.0 * math.sqrt(F), y[4], y[5]), BOUNCE
    return y, EXPANDING


@inline
def prepare(prm, kind, pp, y, mode, bounced):
    """A start in mode 1 before the bounce takes H from the constraint (H < 0)."""
    if mode == BOUNCE and not bounced:
        V, _, _ = potential_terms(kind, pp, y[1])
        F = hubble_squared(0.5 * y[2] * y[2] + V, prm[0])
        return (y[0], y[1], y[2], -1.0 * math.sqrt(F) if F > 0.0 else 0.0, y[4], y[5])
    return y


@inline
def residual(prm, kind, pp, y, mode):
    """|H^2 - F(rho)| / ((8 pi / 3) rho) of the evolved H (mode 1); 0 where H is F's root."""
    if mode != BOUNCE:
        return 0.0
    H, _, _, _, rho, _, _ = _derivatives(prm, kind, pp, y, mode)
    return abs(H * H - hubble_squared(rho, prm[0])) / (EIGHT_PI_3 * rho)
