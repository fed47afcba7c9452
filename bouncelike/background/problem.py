"""What the solver integrates: a system (:mod:`.systems`) watched by the cosmological events.

The events of every background, defined here once for all dynamics (compiled):

* **bounce**: H crosses zero upwards (before it, for systems integrated in canonical variables,
  the state changes variables there);
* **end of super-inflation**: first downward zero of Hdot after the bounce;
* **start of inflation**: an upward zero of min(addot / (a (8 pi/3) rho), (V - K) / rho) after
  the bounce (or at it, or at a classical start): accelerated expansion in a potential-dominated
  phase;
* **end of inflation**: the next downward zero of addot (epsilon_H = -Hdot/H^2 = 1);
* **the inflationary phase** of a run is the *longest* accelerated, potential-dominated phase
  after the bounce. After an end of inflation the run goes on: a short burst of acceleration
  (e.g. the field turning on a steep wall of the potential) may be followed by the real
  inflationary phase. The search ends when the field has crossed phi = 0 twice after the end
  of the longest phase so far (it oscillates about the minimum; the brief accelerations at the
  turning points of those oscillations are phases too, counted in ``n_phases``), at the e-fold
  cap (ln a - ln a_start = ``max_efolds`` during a phase: the running phase is reported, a
  lower bound), or at a budget.

Goals (``cfg.goal``): ``GOAL_INFLATION`` stops when the search ends, or ``extra_efolds`` after
the end of the longest phase if that is later; ``GOAL_DENSITY`` stops when rho falls to
``cfg.target_density`` (used for the remote past through time reversal), the phases being
bookkept but never stopping the run.

The solver sees only the hooks below: event values and directions, the action of an event
(continue, switch the system's variables at the event, stop), the change of variables, the
start of a run, the residual tracking and the final status. They take states as 6-tuples and
the bookkeeping ``b`` and settings ``c`` as numba records (``book[0]``, ``cfg[0]``): no array
crosses a function boundary on the hot path.
"""

from __future__ import annotations

import math

import numpy as np

from .isotropic_system import EIGHT_PI_3
from .jit import inline, jit
from .potential_kernels import potential_terms
from .systems import (
    HDOT,
    HUB,
    LN_A,
    PHI,
    PHIDOT,
    POT,
    RHO,
    SYS_ISOTROPIC,
    apply_switch,
    bounce_switch,
    observe,
    prepare,
    residual,
    switch_direction,
    switch_value,
)

E_SYSTEM, E_BOUNCE, E_SI_END, E_START, E_END, E_CAP, E_FIELD, E_DENSITY, E_EFOLDS = range(9)
N_EVENTS = 9
CONTINUE, SWITCH, STOP = 0, 1, 2
GOAL_INFLATION, GOAL_DENSITY = 0, 1
#: why the problem stopped a run (``book.stop``)
STOP_NONE, STOP_END, STOP_EFOLD_CAP, STOP_DENSITY = 0, 1, 2, 3
#: statuses, indices into :data:`bouncelike.background.result.STATUSES`
ST_INFLATED, ST_NO_INFLATION, ST_EFOLD_CAP, ST_NO_BOUNCE, ST_FAILED = range(5)

#: bookkeeping of one run (a numba record; turned into a RunSummary at the Python boundary)
BOOK = np.dtype([
    ("bounced", "b1"), ("has_bounce", "b1"), ("si_ended", "b1"), ("started", "b1"),
    ("any_end", "b1"), ("finished", "b1"), ("crossings", "i8"), ("n_phases", "i8"),
    ("stop", "i8"), ("status", "i8"),
    ("best_n", "f8"), ("cur_ts", "f8"), ("cur_lnas", "f8"), ("lna_cap", "f8"),
    ("lna_target", "f8"),
    ("t_bounce", "f8"), ("lna_bounce", "f8"), ("phi_bounce", "f8"), ("phidot_bounce", "f8"),
    ("vfrac_bounce", "f8"), ("rho_bounce", "f8"), ("t_si_end", "f8"), ("lna_si_end", "f8"),
    ("t_inf_start", "f8"), ("lna_inf_start", "f8"), ("t_inf_end", "f8"),
    ("lna_inf_end", "f8"), ("max_residual", "f8"), ("t_final", "f8"), ("lna_final", "f8"),
], align=True)
#: what the run is for
CONFIG = np.dtype([("max_efolds", "f8"), ("goal", "i8"), ("extra_efolds", "f8"),
                   ("target_density", "f8")], align=True)


def _template() -> np.ndarray:
    book = np.zeros(1, dtype=BOOK)
    for name in BOOK.names:
        if BOOK[name].kind == "f":
            book[name] = np.nan
    book["best_n"], book["max_residual"] = -1.0, 0.0
    book["lna_cap"], book["lna_target"] = np.inf, np.inf
    return book


def _templates() -> dict:
    out = {}
    for bounced in (False, True):
        for has_bounce in (False, True):
            book = _template()
            book["bounced"], book["has_bounce"] = bounced, has_bounce
            out[bounced, has_bounce] = book.tobytes()
    return out


_BOOKS = _templates()


def new_book(bounced: bool, has_bounce: bool) -> np.ndarray:
    """A fresh bookkeeping record (a structured array of one element); ``bounced``: the run
    starts at or after a bounce (or is classical); ``has_bounce``: the start *is* the bounce.
    (Built from bytes: copying a structured array costs ten times more.)"""
    return np.frombuffer(bytearray(_BOOKS[bool(bounced), bool(has_bounce)]), dtype=BOOK)


def new_books(bounced: list, has_bounce: list) -> np.ndarray:
    """Fresh bookkeeping records for many runs (flags per run)."""
    books = np.frombuffer(bytearray(_BOOKS[False, False] * len(bounced)), dtype=BOOK)
    books["bounced"] = bounced
    books["has_bounce"] = has_bounce
    return books


def new_config(max_efolds: float, goal: int = GOAL_INFLATION, extra_efolds: float = 0.0,
               target_density: float = 0.0) -> np.ndarray:
    return np.array([(max_efolds, goal, extra_efolds, target_density)], dtype=CONFIG)


@inline
def _acceleration(obs):
    """addot / (a (8 pi/3) rho) = (H^2 + Hdot) / ((8 pi/3) rho)."""
    return (obs[HUB] * obs[HUB] + obs[HDOT]) / (EIGHT_PI_3 * obs[RHO])


@inline
def _start_value(obs):
    kin = 0.5 * obs[PHIDOT] * obs[PHIDOT]
    return min(_acceleration(obs), (obs[POT] - kin) / obs[RHO])


@inline
def event_values(code, prm, kind, pp, y, mode, b, c):
    """All event functions at the state ``y`` (a 9-tuple, indices E_*)."""
    obs = observe(code, prm, kind, pp, y, mode)
    acc = _acceleration(obs)
    kin = 0.5 * obs[PHIDOT] * obs[PHIDOT]
    return (switch_value(code, prm, mode, obs), obs[HUB], obs[HDOT],
            min(acc, (obs[POT] - kin) / obs[RHO]), acc, obs[LN_A] - b.lna_cap, obs[PHI],
            obs[RHO] - c.target_density, obs[LN_A] - b.lna_target)


@inline
def event_directions(code, prm, mode, b, c):
    """Per event: 1 up, -1 down, 2 either, 0 inactive (a 9-tuple)."""
    return (switch_direction(code, prm, mode, b.bounced),
            0 if b.bounced else 1,
            -1 if (b.has_bounce and not b.si_ended) else 0,
            1 if (b.bounced and not b.started and not b.finished) else 0,
            -1 if b.started else 0,
            1 if b.started else 0,
            2 if (b.any_end and not b.started and not b.finished) else 0,
            -1 if c.target_density > 0.0 else 0,
            1 if (b.finished and c.goal == GOAL_INFLATION) else 0)


@inline
def _start(b, t, lna, max_efolds):
    b.started = True
    b.cur_ts = t
    b.cur_lnas = lna
    b.lna_cap = lna + max_efolds


@jit
def handle_event(code, prm, kind, pp, i, t, y, mode, b, c):
    """Bookkeeping of event ``i`` at time ``t`` (state ``y``); the action for the solver."""
    if i == E_SYSTEM:
        return SWITCH
    if i == E_CAP:
        b.stop = STOP_EFOLD_CAP
        return STOP
    if i == E_DENSITY:
        b.stop = STOP_DENSITY
        return STOP
    if i == E_EFOLDS:
        b.stop = STOP_END
        return STOP
    obs = observe(code, prm, kind, pp, y, mode)
    if i == E_FIELD:
        b.crossings += 1
        if b.crossings < 2:
            return CONTINUE
        if c.goal == GOAL_DENSITY:
            b.finished = True
            return CONTINUE
        if c.extra_efolds > 0.0 and b.best_n >= 0.0:
            target = b.lna_inf_end + c.extra_efolds
            if obs[LN_A] < target:
                b.finished = True
                b.lna_target = target
                return CONTINUE
        b.stop = STOP_END
        return STOP
    if i == E_BOUNCE:
        b.bounced = True
        b.has_bounce = True
        b.t_bounce = t
        b.lna_bounce = obs[LN_A]
        b.phi_bounce = obs[PHI]
        b.phidot_bounce = obs[PHIDOT]
        b.vfrac_bounce = obs[POT] / obs[RHO]
        b.rho_bounce = obs[RHO]
        if _start_value(obs) > 0.0:
            # a potential-dominated bounce: accelerated expansion starts right away
            _start(b, t, obs[LN_A], c.max_efolds)
        if code != SYS_ISOTROPIC and mode == 0:
            return SWITCH  # canonical variables change at the bounce
        return CONTINUE
    if i == E_SI_END:
        b.si_ended = True
        b.t_si_end = t
        b.lna_si_end = obs[LN_A]
    elif i == E_START:
        _start(b, t, obs[LN_A], c.max_efolds)
    elif i == E_END:
        b.started = False
        b.any_end = True
        b.n_phases += 1
        if obs[LN_A] - b.cur_lnas > b.best_n:
            b.crossings = 0
            b.best_n = obs[LN_A] - b.cur_lnas
            b.t_inf_start = b.cur_ts
            b.lna_inf_start = b.cur_lnas
            b.t_inf_end = t
            b.lna_inf_end = obs[LN_A]
    return CONTINUE


@jit
def switch_state(code, prm, kind, pp, i, y, mode):
    """(state, mode) after the change of variables of a SWITCH event."""
    if i == E_BOUNCE:
        return bounce_switch(code, prm, y, mode)
    return apply_switch(code, prm, kind, pp, y, mode)


@jit
def on_start(code, prm, kind, pp, y, mode, b, c):
    """Bookkeeping at t = 0 (returns the prepared state): a bounce start records the bounce; a
    start at or after the bounce in a potential-dominated accelerated state starts inflation."""
    y = prepare(code, prm, kind, pp, y, mode, b.bounced)
    obs = observe(code, prm, kind, pp, y, mode)
    if b.has_bounce:
        b.t_bounce = 0.0
        b.lna_bounce = obs[LN_A]
        b.phi_bounce = obs[PHI]
        b.phidot_bounce = obs[PHIDOT]
        b.vfrac_bounce = obs[POT] / obs[RHO]
        b.rho_bounce = obs[RHO]
    if b.bounced and _start_value(obs) > 0.0:
        _start(b, 0.0, obs[LN_A], c.max_efolds)
    return y


@jit
def time_rate(code, prm, kind, pp, y, mode):
    """The fastest rate of the state (the solver's first step is 1e-3 of its inverse):
    sqrt((8 pi/3) rho) + sqrt(|V''|) + |phidot| / max(|phi|, 1)."""
    obs = observe(code, prm, kind, pp, y, mode)
    _, _, d2v = potential_terms(kind, pp, obs[PHI])
    return (math.sqrt(EIGHT_PI_3 * obs[RHO]) + math.sqrt(abs(d2v))
            + abs(obs[PHIDOT]) / max(abs(obs[PHI]), 1.0))


@inline
def track(code, prm, kind, pp, y, mode, b):
    """Largest constraint residual so far."""
    r = residual(code, prm, kind, pp, y, mode)
    if r > b.max_residual:
        b.max_residual = r


@jit
def finish(code, prm, kind, pp, t, y, mode, b, failed):
    """Final status; a phase still running at a cap is reported (its end stays NaN)."""
    obs = observe(code, prm, kind, pp, y, mode)
    b.t_final = t
    b.lna_final = obs[LN_A]
    if failed:
        b.status = ST_FAILED
    elif b.started:
        b.status = ST_EFOLD_CAP
        b.t_inf_start = b.cur_ts
        b.lna_inf_start = b.cur_lnas
        b.t_inf_end = math.nan
        b.lna_inf_end = math.nan
    elif b.best_n >= 0.0:
        b.status = ST_INFLATED
    elif not b.bounced:
        b.status = ST_NO_BOUNCE
    else:
        b.status = ST_NO_INFLATION
