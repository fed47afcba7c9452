"""The dynamical systems of the engine, dispatched by system code (compiled).

Each system lives in its own module and supplies, for a state tuple ``y`` (padded to 6 floats),
an integer ``mode`` and its parameter tuple ``prm`` (4 floats; the potential by kernel code
``kind`` and parameters ``pp``):

* ``rates(prm, kind, pp, y, mode, want_obs) -> (dy/dt, rho, observables)``, observables
  (ln a, H, Hdot, phi, phidot, phiddot, rho, V) (mean H for anisotropic systems);
* ``residual(prm, kind, pp, y, mode)``: the relative constraint residual;
* its change of variables at the bounce and its late change to the constraint.

======================  =======================================================================
``SYS_ISOTROPIC``       :mod:`.isotropic_system` (ln a, phi, phidot, H); modes 0/1/2 = H from
                        the constraint (contracting) / H evolved near the bounce / constraint
                        (expanding)
``SYS_BIANCHI``         :mod:`.bianchi_system`; modes PRE / POST / LATE (log-angle before and
``SYS_ASYMMETRIC``      :mod:`.asymmetric_system`  after the bounce, angle from the constraint
``SYS_LOOP``            :mod:`.loop_system`        far after it)
======================  =======================================================================

The canonical systems (every code but ``SYS_ISOTROPIC``) share their rules here (the
functions of each system are imported by name: the uncompiled copy of the engine follows
globals, not module attributes): error scales
``atol[mode, i] + rtol max(|y_i|, |ynew_i|)``, the map PRE -> POST at the bounce and the switch
POST -> LATE when rho falls below the system's ``late_density``.
"""

from __future__ import annotations

from .asymmetric_system import late_density as asym_late_density
from .asymmetric_system import rates as asym_rates
from .asymmetric_system import residual as asym_residual
from .asymmetric_system import to_late as asym_to_late
from .asymmetric_system import to_post as asym_to_post
from .bianchi_system import anisotropy as bia_anisotropy
from .bianchi_system import late_density as bia_late_density
from .bianchi_system import rates as bia_rates
from .bianchi_system import residual as bia_residual
from .bianchi_system import to_late as bia_to_late
from .bianchi_system import to_post as bia_to_post
from .isotropic_system import apply_switch as iso_apply_switch
from .isotropic_system import error_scale as iso_error_scale
from .isotropic_system import memory_update as iso_memory_update
from .isotropic_system import prepare as iso_prepare
from .isotropic_system import rates as iso_rates
from .isotropic_system import residual as iso_residual
from .isotropic_system import switch_direction as iso_switch_direction
from .isotropic_system import switch_value as iso_switch_value
from .jit import inline, jit
from .loop_system import late_density as loop_late_density
from .loop_system import rates as loop_rates
from .loop_system import residual as loop_residual
from .loop_system import to_late as loop_to_late
from .loop_system import to_post as loop_to_post

SYS_ISOTROPIC, SYS_BIANCHI, SYS_ASYMMETRIC, SYS_LOOP = 0, 1, 2, 3
PRE, POST, LATE = 0, 1, 2
N_OBS = 8
LN_A, HUB, HDOT, PHI, PHIDOT, PHIDDOT, RHO, POT = range(N_OBS)


@inline
def _tup(a):
    """A state array (length 4 or 6) as a 6-tuple padded with zeros."""
    if a.shape[0] == 6:
        return (a[0], a[1], a[2], a[3], a[4], a[5])
    return (a[0], a[1], a[2], a[3], 0.0, 0.0)


@jit
def _rates(code, prm, kind, pp, y, mode, want_obs):
    if code == SYS_ISOTROPIC:
        return iso_rates(prm, kind, pp, y, mode, want_obs)
    if code == SYS_BIANCHI:
        return bia_rates(prm, kind, pp, y, mode, want_obs)
    if code == SYS_ASYMMETRIC:
        return asym_rates(prm, kind, pp, y, mode, want_obs)
    return loop_rates(prm, kind, pp, y, mode, want_obs)


@inline
def rhs_into(code, prm, kind, pp, y, mode, k, row):
    """dy/dt at the state array ``y`` into k[row]; returns rho."""
    r, rho, _ = _rates(code, prm, kind, pp, _tup(y), mode, False)
    for i in range(y.shape[0]):
        k[row, i] = r[i]
    return rho


@inline
def observe(code, prm, kind, pp, y, mode):
    """Observables (ln a, H, Hdot, phi, phidot, phiddot, rho, V) at the state array ``y``."""
    _, _, obs = _rates(code, prm, kind, pp, _tup(y), mode, True)
    return obs


@jit
def residual(code, prm, kind, pp, y, mode):
    yt = _tup(y)
    if code == SYS_ISOTROPIC:
        return iso_residual(prm, kind, pp, yt, mode)
    if code == SYS_BIANCHI:
        return bia_residual(prm, kind, pp, yt, mode)
    if code == SYS_ASYMMETRIC:
        return asym_residual(prm, kind, pp, yt, mode)
    return loop_residual(prm, kind, pp, yt, mode)


@jit
def error_scale(code, prm, y, ynew, aux0, aux1, mode, rtol, atol, memory, scale):
    """Error scale of each controlled component into ``scale``; returns their number.
    ``atol[mode, i]``: absolute tolerances (the isotropic system reads ``atol[mode, 0]``)."""
    if code == SYS_ISOTROPIC:
        return iso_error_scale(prm, y, ynew, aux0, aux1, mode, rtol, atol[mode, 0], memory,
                                scale)
    n = y.shape[0]
    for i in range(n):
        scale[i] = atol[mode, i] + max(abs(y[i]), abs(ynew[i])) * rtol
    return n


@jit
def memory_update(code, y, memory, first):
    """The system's error-scale memory after an accepted step (isotropic: envelope of |phi|)."""
    if code == SYS_ISOTROPIC:
        return iso_memory_update(y, memory, first)
    return 0.0


@jit
def _late_density(code, prm):
    if code == SYS_BIANCHI:
        return bia_late_density(prm)
    if code == SYS_ASYMMETRIC:
        return asym_late_density(prm)
    return loop_late_density(prm)


@jit
def switch_value(code, prm, mode, obs):
    """The system's own event: its change of mode (not the bounce)."""
    if code == SYS_ISOTROPIC:
        return iso_switch_value(prm, mode, obs)
    return obs[RHO] - _late_density(code, prm)


@jit
def switch_direction(code, prm, mode, bounced):
    if code == SYS_ISOTROPIC:
        return iso_switch_direction(prm, mode, bounced)
    return -1 if mode == POST else 0


@jit
def apply_switch(code, prm, kind, pp, y, mode):
    """Change of mode at the system's event (state array changed in place); the new mode."""
    if code == SYS_ISOTROPIC:
        return iso_apply_switch(prm, kind, pp, y, mode)
    if code == SYS_BIANCHI:
        bia_to_late(prm, kind, pp, y)
    elif code == SYS_ASYMMETRIC:
        asym_to_late(prm, kind, pp, y)
    else:
        loop_to_late(prm, kind, pp, y)
    return LATE


@jit
def bounce_switch(code, prm, y, mode):
    """Change of variables at the bounce (in place): the new mode, or -1 for none."""
    if code == SYS_ISOTROPIC or mode != PRE:
        return -1
    if code == SYS_BIANCHI:
        bia_to_post(prm, y)
    elif code == SYS_ASYMMETRIC:
        asym_to_post(prm, y)
    else:
        loop_to_post(prm, y)
    return POST


@jit
def prepare(code, prm, kind, pp, y, mode, bounced):
    """Adjust the initial state before the first step (isotropic mode 1: H from the constraint)."""
    if code == SYS_ISOTROPIC:
        iso_prepare(prm, kind, pp, y, mode, bounced)


@jit
def observe_many(code, prm, kind, pp, states, modes, out):
    """Observables of many states (rows of ``states``) into the rows of ``out``."""
    for j in range(states.shape[0]):
        obs = observe(code, prm, kind, pp, states[j], modes[j])
        for i in range(N_OBS):
            out[j, i] = obs[i]


@jit
def residual_many(code, prm, kind, pp, states, modes, out):
    for j in range(states.shape[0]):
        out[j] = residual(code, prm, kind, pp, states[j], modes[j])


@jit
def anisotropy_many(prm, kind, pp, states, modes, out):
    """Bianchi I directional rates and shear (H_1, H_2, H_3, sigma^2) of many states."""
    for j in range(states.shape[0]):
        r = bia_anisotropy(prm, kind, pp, _tup(states[j]), modes[j])
        for i in range(4):
            out[j, i] = r[i]


@jit
def evaluate(code, prm, kind, pp, y, mode, out, obs):
    """dy/dt into ``out`` and the observables into ``obs`` at one state (tests and tools)."""
    r, _, ob = _rates(code, prm, kind, pp, _tup(y), mode, True)
    for i in range(y.shape[0]):
        out[i] = r[i]
    for i in range(N_OBS):
        obs[i] = ob[i]
