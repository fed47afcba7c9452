"""The dynamical systems of the engine, dispatched by system code (compiled).

Each system lives in its own module and supplies, for a state tuple ``y`` (padded with zeros
to 6 floats; the padding has zero derivatives), an integer ``mode`` and its parameter tuple
``prm`` (4 floats; the potential by kernel code ``kind`` and parameters ``pp``):

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

Every function here takes and returns tuples and scalars only: numba reference-counts arrays
passed between compiled functions, and on the solver's hot path that would cost more than the
right-hand sides themselves. The canonical systems (every code but ``SYS_ISOTROPIC``) share
their rules here (each system's functions are imported by name: the uncompiled copy of the
engine follows globals, not module attributes): error scales
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
#: number of state components of each system (the solver pads states to 6)
SIZES = (4, 6, 4, 4)
PRE, POST, LATE = 0, 1, 2
N_OBS = 8
LN_A, HUB, HDOT, PHI, PHIDOT, PHIDDOT, RHO, POT = range(N_OBS)


@inline
def rates(code, prm, kind, pp, y, mode, want_obs):
    """(dy/dt as a 6-tuple, rho, observables (ln a, H, Hdot, phi, phidot, phiddot, rho, V))."""
    if code == SYS_ISOTROPIC:
        return iso_rates(prm, kind, pp, y, mode, want_obs)
    if code == SYS_BIANCHI:
        return bia_rates(prm, kind, pp, y, mode, want_obs)
    if code == SYS_ASYMMETRIC:
        return asym_rates(prm, kind, pp, y, mode, want_obs)
    return loop_rates(prm, kind, pp, y, mode, want_obs)


@inline
def observe(code, prm, kind, pp, y, mode):
    """Observables (ln a, H, Hdot, phi, phidot, phiddot, rho, V) at the state ``y``."""
    _, _, obs = rates(code, prm, kind, pp, y, mode, True)
    return obs


@inline
def residual(code, prm, kind, pp, y, mode):
    if code == SYS_ISOTROPIC:
        return iso_residual(prm, kind, pp, y, mode)
    if code == SYS_BIANCHI:
        return bia_residual(prm, kind, pp, y, mode)
    if code == SYS_ASYMMETRIC:
        return asym_residual(prm, kind, pp, y, mode)
    return loop_residual(prm, kind, pp, y, mode)


@inline
def error_scale(code, prm, y, ynew, aux0, aux1, mode, rtol, atol, memory):
    """(error scales as a 6-tuple, number of controlled components); ``atol``: the absolute
    tolerances of this mode (6-tuple; the isotropic system reads ``atol[0]``)."""
    if code == SYS_ISOTROPIC:
        return iso_error_scale(prm, y, ynew, aux0, aux1, mode, rtol, atol[0], memory)
    return ((atol[0] + max(abs(y[0]), abs(ynew[0])) * rtol,
             atol[1] + max(abs(y[1]), abs(ynew[1])) * rtol,
             atol[2] + max(abs(y[2]), abs(ynew[2])) * rtol,
             atol[3] + max(abs(y[3]), abs(ynew[3])) * rtol,
             atol[4] + max(abs(y[4]), abs(ynew[4])) * rtol,
             atol[5] + max(abs(y[5]), abs(ynew[5])) * rtol), SIZES[code])


@inline
def memory_update(code, y, memory, first):
    """The system's error-scale memory after an accepted step (isotropic: envelope of |phi|)."""
    if code == SYS_ISOTROPIC:
        return iso_memory_update(y, memory, first)
    return 0.0


@inline
def _late_density(code, prm):
    if code == SYS_BIANCHI:
        return bia_late_density(prm)
    if code == SYS_ASYMMETRIC:
        return asym_late_density(prm)
    return loop_late_density(prm)


@inline
def switch_value(code, prm, mode, obs):
    """The system's own event: its change of mode (not the bounce)."""
    if code == SYS_ISOTROPIC:
        return iso_switch_value(prm, mode, obs)
    return obs[RHO] - _late_density(code, prm)


@inline
def switch_direction(code, prm, mode, bounced):
    if code == SYS_ISOTROPIC:
        return iso_switch_direction(prm, mode, bounced)
    return -1 if mode == POST else 0


@jit
def apply_switch(code, prm, kind, pp, y, mode):
    """(state, mode) after the system's event."""
    if code == SYS_ISOTROPIC:
        return iso_apply_switch(prm, kind, pp, y, mode)
    if code == SYS_BIANCHI:
        return bia_to_late(prm, kind, pp, y), LATE
    if code == SYS_ASYMMETRIC:
        return asym_to_late(prm, kind, pp, y), LATE
    return loop_to_late(prm, kind, pp, y), LATE


@jit
def bounce_switch(code, prm, y, mode):
    """(state, mode) after the change of variables at the bounce (none: mode unchanged)."""
    if code == SYS_ISOTROPIC or mode != PRE:
        return y, mode
    if code == SYS_BIANCHI:
        return bia_to_post(prm, y), POST
    if code == SYS_ASYMMETRIC:
        return asym_to_post(prm, y), POST
    return loop_to_post(prm, y), POST


@jit
def prepare(code, prm, kind, pp, y, mode, bounced):
    """The initial state before the first step (isotropic mode 1: H from the constraint)."""
    if code == SYS_ISOTROPIC:
        return iso_prepare(prm, kind, pp, y, mode, bounced)
    return y


@jit
def row(a, j):
    """Row ``j`` of a 2-D array of states as a 6-tuple (columns beyond its width: 0)."""
    m = a.shape[1]
    return (a[j, 0], a[j, 1], a[j, 2], a[j, 3], a[j, 4] if m > 4 else 0.0,
            a[j, 5] if m > 5 else 0.0)


@jit
def observe_many(code, prm, kind, pp, states, modes, out):
    """Observables of many states (rows of ``states``) into the rows of ``out``."""
    for j in range(states.shape[0]):
        obs = observe(code, prm, kind, pp, row(states, j), modes[j])
        for i in range(N_OBS):
            out[j, i] = obs[i]


@jit
def residual_many(code, prm, kind, pp, states, modes, out):
    for j in range(states.shape[0]):
        out[j] = residual(code, prm, kind, pp, row(states, j), modes[j])


@jit
def anisotropy_many(prm, kind, pp, states, modes, out):
    """Bianchi I directional rates and shear (H_1, H_2, H_3, sigma^2) of many states."""
    for j in range(states.shape[0]):
        r = bia_anisotropy(prm, kind, pp, row(states, j), modes[j])
        for i in range(4):
            out[j, i] = r[i]


@jit
def evaluate(code, prm, kind, pp, y, mode, out, obs):
    """dy/dt into ``out`` and the observables into ``obs`` at one state array (tests, tools)."""
    yt = row(y.reshape((1, y.shape[0])), 0)
    r, _, ob = rates(code, prm, kind, pp, yt, mode, True)
    for i in range(y.shape[0]):
        out[i] = r[i]
    for i in range(N_OBS):
        obs[i] = ob[i]
