"""Background providers for the mode equations: dense tables in cosmic time.

The mode integrator never calls the background engine while it steps; it reads a
:class:`BackgroundTable`: samples of ln a, H, Hdot, phi, phidot, phiddot and V, V', V'' on a grid
in cosmic time t that is uniform in the *background clock* tau, d tau = omega_bg dt with
omega_bg^2 = H^2 + |Hdot| + |V''| (so the bounce, the kinetic era and inflation get comparable
numbers of points). Planck units G = c = hbar = 1 (m_Pl = 1); ``critical_density`` is inf for a
classical (general-relativity) background.

Providers
---------
* :func:`de_sitter` -- a = exp(H t) (tensors only: phidot = 0).
* :func:`power_law_inflation` -- a = (t/t_1)^p driven by V = V_0 exp(-sqrt(16 pi/p) phi)
  (exact classical solution; Lucchin & Matarrese 1985, textbook).
* :func:`massless_bounce` -- a = a_B (1 + 24 pi rho_c t^2)^(1/6), phidot^2 = 2 rho,
  rho = rho_c (a_B/a)^6 (Ashtekar & Singh, CQG 28 (2011) 213001).
* :func:`integrate_background` -- our own integration of the modified Friedmann,
  Raychaudhuri and Klein-Gordon equations (physics notes section 1) from a bounce or a classical
  start, keeping the Friedmann constraint: H is taken from the constraint (branch sign fixed)
  wherever rho < rho_c/100 and from the Raychaudhuri equation only nearer the bounce.
* :func:`from_trajectory` -- a :class:`~bouncelike.background.result.BackgroundTrajectory`
  resampled through its ``state_at`` with its potential.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.integrate import solve_ivp
from scipy.interpolate import CubicSpline

from ..errors import NumericalFailure


@dataclass(frozen=True)
class BackgroundTable:
    """Dense background samples on a grid of cosmic time (increasing).

    ``t_bounce`` is NaN without a bounce. ``t_inflation_end`` is NaN when inflation does not end
    inside the table. ``label`` says where it came from.
    """

    t: np.ndarray
    ln_a: np.ndarray
    H: np.ndarray
    Hdot: np.ndarray
    phi: np.ndarray
    phidot: np.ndarray
    phiddot: np.ndarray
    V: np.ndarray
    dV: np.ndarray
    d2V: np.ndarray
    critical_density: float = math.inf
    t_bounce: float = math.nan
    t_inflation_end: float = math.nan
    label: str = ""
    info: dict = field(default_factory=dict)

    @property
    def a(self) -> np.ndarray:
        return np.exp(self.ln_a)

    @property
    def rho(self) -> np.ndarray:
        return 0.5 * self.phidot**2 + self.V

    @property
    def Omega(self) -> np.ndarray:
        """Omega = 1 - 2 rho / rho_c (1 for a classical background)."""
        return 1.0 - 2.0 * self.rho / self.critical_density

    @property
    def omega_bg2(self) -> np.ndarray:
        return self.H**2 + np.abs(self.Hdot) + np.abs(self.d2V)

    @property
    def has_bounce(self) -> bool:
        return bool(np.isfinite(self.t_bounce))

    def section(self, lo: int, hi: int, ln_a_shift: float = 0.0) -> BackgroundTable:
        """Nodes lo..hi (inclusive) with ln a shifted by ``ln_a_shift`` (a -> a e^shift)."""
        sl = slice(lo, hi + 1)
        t_b = self.t_bounce if self.has_bounce and self.t[lo] < self.t_bounce < self.t[hi] \
            else math.nan
        return BackgroundTable(self.t[sl], self.ln_a[sl] + ln_a_shift, self.H[sl],
                               self.Hdot[sl], self.phi[sl], self.phidot[sl], self.phiddot[sl],
                               self.V[sl], self.dV[sl], self.d2V[sl], self.critical_density,
                               t_b, self.t_inflation_end if self.t[lo] <= self.t_inflation_end
                               <= self.t[hi] else math.nan, self.label + " (section)",
                               dict(self.info))

    def bounce_index(self) -> int:
        if not self.has_bounce:
            raise NumericalFailure("background has no bounce")
        return int(np.argmin(np.abs(self.t - self.t_bounce)))

    @property
    def k_lqc(self) -> float:
        """k_LQC = sqrt(a''/a) at the bounce = a_B sqrt(8 pi (rho_c - V_B)) (physics notes s.4)."""
        i = self.bounce_index()
        return float(math.exp(self.ln_a[i]) * math.sqrt(8 * math.pi * (self.critical_density
                                                                         - self.V[i])))

    def conformal_time(self) -> np.ndarray:
        """eta(t) - eta(t_0) by Simpson integration of dt/a in the clock variable."""
        return _cumulative(self, np.exp(-self.ln_a))


def _cumulative(tab: BackgroundTable, f: np.ndarray) -> np.ndarray:
    """Cumulative integral of f dt along the table (cubic spline, exact at the nodes)."""
    sp = CubicSpline(tab.t, f)
    return sp.antiderivative()(tab.t) - sp.antiderivative()(tab.t[0])


def clock_grid(t: np.ndarray, omega: np.ndarray, points_per_unit: float,
               must_include: tuple[float, ...] = ()) -> np.ndarray:
    """Times uniform in tau = int omega dt (omega sampled at increasing times ``t``)."""
    tau = np.concatenate([[0.0], np.cumsum(0.5 * (omega[1:] + omega[:-1]) * np.diff(t))])
    n = max(int(tau[-1] * points_per_unit) + 2, 200)
    grid = np.interp(np.linspace(0.0, tau[-1], n), tau, t)
    grid[0], grid[-1] = t[0], t[-1]
    for tm in must_include:
        if np.isfinite(tm) and grid[0] < tm < grid[-1]:
            i = int(np.argmin(np.abs(grid - tm)))
            if 0 < i < len(grid) - 1:
                grid[i] = tm
    return grid


def _table(t, ln_a, H, Hdot, phi, phidot, phiddot, V, dV, d2V, **kw) -> BackgroundTable:
    arrs = [np.asarray(x, dtype=float) for x in (t, ln_a, H, Hdot, phi, phidot, phiddot, V, dV,
                                                  d2V)]
    return BackgroundTable(*arrs, **kw)


# -- analytic providers ------------------------------------------------------------------------
def de_sitter(hubble: float, t_start: float, t_end: float, points: int = 4000) -> BackgroundTable:
    """Exact de Sitter a = exp(H t); the field is frozen (tensor modes only)."""
    t = np.linspace(t_start, t_end, points)
    z = np.zeros_like(t)
    return _table(t, hubble * t, hubble + z, z, z, z, z, z + 3 * hubble**2 / (8 * math.pi), z, z,
                  label=f"de Sitter H={hubble:g}")


def power_law_inflation(p: float, t_start: float, t_end: float,
                        points: int = 4000) -> BackgroundTable:
    """a = t^p (t in Planck units, a(1) = 1), phidot = sqrt(p/4pi)/t, V = p(3p-1)/(8 pi t^2).

    The potential is V_0 exp(-lambda phi) with lambda = sqrt(16 pi / p), phi = sqrt(p/4pi) ln t
    (classical exact solution).
    """
    if p <= 1:
        raise ValueError("power-law inflation needs p > 1")
    t = np.geomspace(t_start, t_end, points)
    c = math.sqrt(p / (4 * math.pi))
    lam = math.sqrt(16 * math.pi / p)
    V = p * (3 * p - 1) / (8 * math.pi * t**2)
    return _table(t, p * np.log(t), p / t, -p / t**2, c * np.log(t), c / t, -c / t**2, V,
                  -lam * V, lam**2 * V, label=f"power-law inflation p={p:g}")


def massless_bounce(critical_density: float, t_start: float, t_end: float,
                    points_per_unit: float = 60.0, a_bounce: float = 1.0) -> BackgroundTable:
    """Exact effective LQC bounce of a massless field (Ashtekar & Singh 2011, CQG 28 213001)."""
    rc = critical_density
    b = 24 * math.pi * rc

    def fields(t):
        q = 1 + b * t**2
        H = 8 * math.pi * rc * t / q
        Hdot = 8 * math.pi * rc * (1 - b * t**2) / q**2
        rho = rc / q
        phidot = np.sqrt(2 * rho)
        phiddot = -3 * H * phidot
        phi = np.arcsinh(math.sqrt(b) * t) / math.sqrt(12 * math.pi)
        return math.log(a_bounce) + np.log(q) / 6, H, Hdot, phi, phidot, phiddot

    ts = np.sinh(np.linspace(np.arcsinh(t_start), np.arcsinh(t_end), 20000))
    _, H, Hdot, *_ = fields(ts)
    t = clock_grid(ts, np.sqrt(H**2 + np.abs(Hdot)), points_per_unit, (0.0,))
    ln_a, H, Hdot, phi, phidot, phiddot = fields(t)
    z = np.zeros_like(t)
    return _table(t, ln_a, H, Hdot, phi, phidot, phiddot, z, z, z, critical_density=rc,
                  t_bounce=0.0 if t[0] < 0 < t[-1] else math.nan,
                  label=f"massless bounce rho_c={rc:g}")


# -- own integration ---------------------------------------------------------------------------
def _rhs_factory(V: Callable, dV: Callable, rc: float):
    inv_rc = 0.0 if not np.isfinite(rc) else 1.0 / rc

    def hubble_used(y):
        _, Hv, phi, phidot = y
        rho = 0.5 * phidot**2 + float(V(phi))
        if rho * inv_rc > 0.01:
            return Hv, rho
        s = 1.0 if Hv >= 0 else -1.0
        return s * math.sqrt(max(8 * math.pi / 3 * rho * (1 - rho * inv_rc), 0.0)), rho

    def rhs(t, y):
        H, rho = hubble_used(y)
        phidot = y[3]
        return [H, -4 * math.pi * phidot**2 * (1 - 2 * rho * inv_rc), phidot,
                -3 * H * phidot - float(dV(y[2]))]

    return rhs, hubble_used


def integrate_background(potential: Any, critical_density: float, phi0: float, phidot0: float,
                         *, t_past: float | None = None, past_density: float | None = None,
                         extra_efolds: float = 2.0, max_time: float = 1e12,
                         rtol: float = 1e-11, points_per_unit: float = 60.0,
                         max_efolds: float = 2.0e4, dense_efolds: float = 60.0) -> BackgroundTable:
    """Integrate the effective background through the bounce and inflation (physics notes s.1).

    With a finite ``critical_density`` the start (t = 0) is the bounce: rho(phi0, phidot0) must
    equal rho_c, H = 0, a_B = 1. The contracting branch is integrated backwards until
    rho <= ``past_density`` or t <= -``t_past`` (either may be None; both None: no past).
    With ``critical_density = inf`` the start is classical, expanding, at t = 0, a = 1.
    Forward integration stops ``extra_efolds`` after the end of inflation (epsilon_H = 1 after
    a potential-dominated accelerating phase), at ``max_efolds`` or at ``max_time``. The grid
    has ``points_per_unit`` nodes per unit of background clock, 20 times fewer in the slow
    roll between ln a = ``dense_efolds`` and 100 e-folds before the end of inflation.
    """
    rc = critical_density
    V, dV, d2V = potential.V, potential.dV, potential.d2V
    rhs, hubble_used = _rhs_factory(V, dV, rc)
    rho0 = 0.5 * phidot0**2 + float(V(phi0))
    if np.isfinite(rc):
        if abs(rho0 - rc) > 1e-9 * rc:
            raise ValueError("a bounce start needs rho(phi0, phidot0) = rho_c")
        H0 = 0.0
    else:
        H0 = math.sqrt(8 * math.pi / 3 * rho0)
    y0 = [0.0, H0, phi0, phidot0]
    atol = [1e-12, 1e-14, 1e-12, 1e-14]

    state = {"inflating": False}

    def end_event(t, y):
        H, rho = hubble_used(y)
        if H <= 0:
            return 1.0
        eps = -rhs(t, y)[1] / H**2
        if not state["inflating"]:
            if eps < 1 and float(V(y[2])) > 0.5 * y[3] ** 2:
                state["inflating"] = True
            return 1.0
        return 1.0 - eps

    end_event.terminal = True
    end_event.direction = -1

    def efold_cap(t, y):
        return max_efolds - y[0]

    efold_cap.terminal = True

    fwd = solve_ivp(rhs, (0.0, max_time), y0, method="DOP853", rtol=rtol, atol=atol,
                    events=[end_event, efold_cap], dense_output=True)
    if fwd.status < 0:
        raise NumericalFailure(f"background integration failed: {fwd.message}")
    t_end_infl = float(fwd.t_events[0][0]) if len(fwd.t_events[0]) else math.nan
    if np.isfinite(t_end_infl) and extra_efolds > 0:
        yend = fwd.sol(t_end_infl)
        Hend = hubble_used(yend)[0]
        more = solve_ivp(rhs, (t_end_infl, t_end_infl + 3 * extra_efolds / Hend), yend,
                         method="DOP853", rtol=rtol, atol=atol, dense_output=True,
                         events=[lambda t, y: y[0] - yend[0] - extra_efolds])
        more.t_events[0]  # noqa: B018  (events evaluated for the stop)
        t_stop = float(more.t_events[0][0]) if len(more.t_events[0]) else float(more.t[-1])
        pieces = [(fwd.sol, 0.0, t_end_infl), (more.sol, t_end_infl, t_stop)]
    else:
        pieces = [(fwd.sol, 0.0, float(fwd.t[-1]))]
    steps = [fwd.t]
    if len(pieces) > 1:
        steps.append(more.t[more.t <= pieces[1][2]])

    if np.isfinite(rc) and (t_past is not None or past_density is not None):
        def past_event(t, y):
            return hubble_used(y)[1] - (past_density if past_density else 0.0)

        past_event.terminal = True
        bwd = solve_ivp(rhs, (0.0, -(t_past if t_past else max_time)), y0, method="DOP853",
                        rtol=rtol, atol=atol, dense_output=True,
                        events=[past_event] if past_density else None)
        if bwd.status < 0:
            raise NumericalFailure(f"background integration (past) failed: {bwd.message}")
        pieces.insert(0, (bwd.sol, float(bwd.t[-1]), 0.0))
        steps.insert(0, bwd.t[::-1])

    ts = np.unique(np.concatenate(steps))
    dense = []
    for i in range(len(ts) - 1):  # refine solver steps for the clock integral
        dense.append(np.linspace(ts[i], ts[i + 1], 8, endpoint=False))
    dense.append(ts[-1:])
    ts = np.concatenate(dense)

    def evaluate(tt):
        out = np.empty((4, len(tt)))
        for sol, lo, hi in pieces:
            m = (tt >= lo) & (tt <= hi)
            if m.any():
                out[:, m] = sol(tt[m])
        return out

    y = evaluate(ts)
    rho = 0.5 * y[3] ** 2 + V(y[2])
    omega = np.sqrt(np.abs(8 * math.pi / 3 * rho) + 4 * math.pi * y[3] ** 2 + np.abs(d2V(y[2])))
    # long slow roll between the first `dense_efolds` e-folds and the last 100 before the end
    # of inflation carries no mode (features freeze early, the observable window late):
    # sample it 20 times more sparsely
    ln_a_end = float(np.interp(t_end_infl, ts, y[0])) if np.isfinite(t_end_infl) else np.inf
    middle = (y[0] > dense_efolds) & (y[0] < ln_a_end - 100.0) & (ts > 0)
    omega = omega * np.where(middle, 0.05, 1.0)
    t = clock_grid(ts, omega, points_per_unit,
                   (0.0, t_end_infl) if np.isfinite(rc) else (t_end_infl,))
    y = evaluate(t)
    ln_a, Hv, phi, phidot = y
    Vv = V(phi)
    rho = 0.5 * phidot**2 + Vv
    inv_rc = 1.0 / rc if np.isfinite(rc) else 0.0
    Hc = np.sign(Hv) * np.sqrt(np.maximum(8 * math.pi / 3 * rho * (1 - rho * inv_rc), 0.0))
    H = np.where(rho * inv_rc > 0.01, Hv, Hc)
    Hdot = -4 * math.pi * phidot**2 * (1 - 2 * rho * inv_rc)
    dVv = dV(phi)
    resid = np.abs(H**2 - 8 * math.pi / 3 * rho * (1 - rho * inv_rc)) / (8 * math.pi / 3 * rho)
    return _table(t, ln_a, H, Hdot, phi, phidot, -3 * H * phidot - dVv, Vv, dVv, d2V(phi),
                  critical_density=rc, t_bounce=0.0 if np.isfinite(rc) and t[0] < 0 else
                  (0.0 if np.isfinite(rc) else math.nan),
                  t_inflation_end=t_end_infl,
                  label="integrated effective background" if np.isfinite(rc) else
                  "integrated classical background",
                  info={"max_constraint_residual": float(resid.max()),
                        "efolds_to_inflation_end": float(np.interp(t_end_infl, t, ln_a))
                        if np.isfinite(t_end_infl) else math.nan})


def from_trajectory(trajectory: Any, potential: Any,
                    points_per_unit: float = 60.0) -> BackgroundTable:
    """Resample a BackgroundTrajectory (engine output) on the clock grid via ``state_at``."""
    tr = trajectory
    omega = np.sqrt(tr.H**2 + np.abs(tr.Hdot) + np.abs(potential.d2V(tr.phi)))
    t = clock_grid(np.asarray(tr.t), omega, points_per_unit,
                   (tr.events.t_bounce, tr.events.t_inflation_end))
    s = tr.state_at(t)
    phi, phidot, H = s["phi"], s["phidot"], s["H"]
    rc = float(tr.critical_density) if np.isfinite(tr.critical_density) else math.inf
    rho = 0.5 * phidot**2 + potential.V(phi)
    inv_rc = 0.0 if not np.isfinite(rc) else 1.0 / rc
    Hdot = -4 * math.pi * phidot**2 * (1 - 2 * rho * inv_rc)
    dVv = potential.dV(phi)
    return _table(t, s["ln_a"], H, Hdot, phi, phidot, -3 * H * phidot - dVv, potential.V(phi),
                  dVv, potential.d2V(phi), critical_density=rc,
                  t_bounce=float(tr.events.t_bounce), t_inflation_end=float(
                      tr.events.t_inflation_end), label=f"trajectory ({tr.dynamics})")
