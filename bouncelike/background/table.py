"""Read-only table view of an isotropic engine run: what the perturbations read.

A :class:`BackgroundTable` holds ln a, H, Hdot, phi, phidot, phiddot and V, V', V'' on a grid
in cosmic time t that is uniform in the *background clock* tau, d tau = omega dt with
omega^2 = (8 pi/3) rho + 4 pi phidot^2 + |V''| (so the bounce, the kinetic era and inflation get
comparable numbers of points), 20 times sparser in the long slow roll between ``dense_efolds``
after the bounce and 100 e-folds before the end of inflation (no mode lives there: features
freeze early, the observable window late). Planck units G = c = hbar = 1 (m_Pl = 1);
``critical_density`` is inf for a classical (general-relativity) background.

The samples are the engine's 7th-order continuous extension (:mod:`.engine`), with H from the
Friedmann constraint wherever rho < rho_c / 100 (the engine's modes). The bounce (t = 0), the
end of inflation (the engine's one definition: the end of the longest accelerated,
potential-dominated phase after the bounce, :mod:`.problem`), the bounce scale k_LQC and the
e-folds bounce -> end (the N_B* input) are defined here, once, on the view.

The remote past. The effective equations are invariant under time reversal (t -> -t, H -> -H,
phidot -> -phidot), so the contracting branch before a bounce state (phi_B, phidot_B) is the
time-reversed forward evolution of (phi_B, -phidot_B): the same engine, run until rho has
fallen to ``past_density``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.interpolate import CubicSpline
from scipy.optimize import brentq

from ..errors import InputError, NumericalFailure
from ..quantities import bounce_scale
from . import engine, problem
from .initial import IntegrationSettings
from .result import FieldHistory
from .systems import SYS_ISOTROPIC


@dataclass(frozen=True)
class BackgroundTable(FieldHistory):
    """Dense background samples on a grid of cosmic time (increasing).

    ``t_bounce`` is NaN without a bounce. ``t_inflation_end`` is NaN when inflation does not end
    inside the table. ``label`` says where it came from; ``summary`` is the engine's
    :class:`~bouncelike.background.result.RunSummary` of the forward run (None for analytic
    tables).
    """

    V: np.ndarray
    dV: np.ndarray
    d2V: np.ndarray
    critical_density: float = math.inf
    t_bounce: float = math.nan
    t_inflation_end: float = math.nan
    label: str = ""
    info: dict = field(default_factory=dict)
    summary: Any = None

    def __post_init__(self) -> None:
        for name in ("t", "ln_a", "H", "Hdot", "phi", "phidot", "phiddot", "V", "dV", "d2V"):
            arr = np.array(getattr(self, name), dtype=float)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

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
                               dict(self.info), self.summary)

    def bounce_index(self) -> int:
        if not self.has_bounce:
            raise NumericalFailure("background has no bounce")
        return int(np.argmin(np.abs(self.t - self.t_bounce)))

    def inflation_end_index(self) -> int:
        """The node at the end of inflation (the grid contains that time)."""
        if not np.isfinite(self.t_inflation_end):
            raise InputError("inflation does not end within the background")
        return int(np.argmin(np.abs(self.t - self.t_inflation_end)))

    @property
    def ln_a_bounce(self) -> float:
        return float(self.ln_a[self.bounce_index()]) if self.has_bounce else 0.0

    @property
    def ln_a_inflation_end(self) -> float:
        return float(self.ln_a[self.inflation_end_index()])

    @property
    def efolds_bounce_to_end(self) -> float:
        """e-folds from the bounce to the end of inflation (N_B* = this - N_*)."""
        return self.ln_a_inflation_end - self.ln_a_bounce

    @property
    def k_lqc(self) -> float:
        """k_LQC = sqrt(a''/a) at the bounce = a_B sqrt(8 pi (rho_c - V_B)) (physics notes s.4)."""
        i = self.bounce_index()
        return bounce_scale(self.critical_density, float(self.V[i]), math.exp(self.ln_a[i]))

    def conformal_time(self) -> np.ndarray:
        """eta(t) - eta(t_0) by integration of dt/a along the table (cubic spline)."""
        return cumulative(self, np.exp(-self.ln_a))


def cumulative(tab: BackgroundTable, f: np.ndarray) -> np.ndarray:
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


def _refined(times: np.ndarray, per_step: int = 8) -> np.ndarray:
    """Solver step times with ``per_step`` equally spaced points in each step."""
    times = np.unique(times)
    inner = times[:-1, None] + np.diff(times)[:, None] * (np.arange(per_step) / per_step)
    return np.concatenate([inner.ravel(), times[-1:]])


class _Sampler:
    """Observables of the forward run (t >= 0) and the time-reversed past run (t < 0)."""

    def __init__(self, forward: engine.DenseSolution, past: engine.DenseSolution | None):
        self.forward, self.past = forward, past

    def __call__(self, t: np.ndarray) -> dict[str, np.ndarray]:
        t = np.asarray(t, dtype=float)
        out = {k: np.empty(len(t)) for k in ("ln_a", "H", "Hdot", "phi", "phidot", "phiddot")}
        fwd = t >= 0.0
        for mask, dense, sign in ((fwd, self.forward, 1.0), (~fwd, self.past, -1.0)):
            if not mask.any():
                continue
            obs = dense.observables(sign * t[mask])
            for key in out:
                flip = sign if key in ("H", "phidot") else 1.0
                out[key][mask] = flip * obs[key]
        return out


def _stop_time(dense: engine.DenseSolution, t_end: float, target: float) -> float:
    """First time after ``t_end`` with ln a = ``target`` (ln a grows there)."""
    t1 = dense.t_final
    if dense.observables([t1])["ln_a"][0] <= target:
        return t1
    return float(brentq(lambda tt: dense.observables([tt])["ln_a"][0] - target, t_end, t1,
                        xtol=1e-12 * max(abs(t1), 1.0), rtol=1e-14))


def table_from_runs(forward: engine.EngineRun, past: engine.EngineRun | None, potential: Any,
                    critical_density: float, extra_efolds: float, points_per_unit: float,
                    dense_efolds: float) -> BackgroundTable:
    """The table of a forward run from the bounce (or a classical start) at t = 0 and, for a
    bounce, the time-reversed run into the past."""
    rc = critical_density
    fdense = forward.dense
    s = forward.summary
    t_end = float(s.events.t_inflation_end)
    t_stop = fdense.t_final
    if np.isfinite(t_end):
        t_stop = t_end
        if extra_efolds > 0:
            # "a little beyond the end": extra_efolds, or 3 extra_efolds / H_end Planck times
            # (about 1.5 e-folds for 2 in the oscillation era), whichever comes first
            h_end = float(fdense.observables([t_end])["H"][0])
            t_stop = min(_stop_time(fdense, t_end, float(s.events.ln_a_inflation_end)
                                    + extra_efolds), t_end + 3.0 * extra_efolds / h_end,
                         fdense.t_final)
    steps = [fdense.step_starts[fdense.step_starts < t_stop], [t_stop]]
    if past is not None:
        pd = past.dense
        steps.insert(0, -np.concatenate([pd.step_starts, [pd.t_final]]))
    ts = _refined(np.concatenate(steps))
    sample = _Sampler(fdense, past.dense if past is not None else None)
    y = sample(ts)
    phi, phidot = y["phi"], y["phidot"]
    rho = 0.5 * phidot**2 + potential.V(phi)
    omega = np.sqrt(np.abs(8 * math.pi / 3 * rho) + 4 * math.pi * phidot**2
                    + np.abs(potential.d2V(phi)))
    ln_a_end = float(np.interp(t_end, ts, y["ln_a"])) if np.isfinite(t_end) else np.inf
    middle = (y["ln_a"] > dense_efolds) & (y["ln_a"] < ln_a_end - 100.0) & (ts > 0)
    omega = omega * np.where(middle, 0.05, 1.0)
    t = clock_grid(ts, omega, points_per_unit, (0.0, t_end) if np.isfinite(rc) else (t_end,))
    y = sample(t)
    phi = y["phi"]
    residuals = [forward.summary.max_constraint_residual]
    if past is not None:
        residuals.append(past.summary.max_constraint_residual)
    classical = not np.isfinite(rc)
    return BackgroundTable(
        t, y["ln_a"], y["H"], y["Hdot"], phi, y["phidot"], y["phiddot"], potential.V(phi),
        potential.dV(phi), potential.d2V(phi), critical_density=rc,
        t_bounce=math.nan if classical else 0.0, t_inflation_end=t_end,
        label="integrated classical background" if classical else
        "integrated effective background",
        info={"max_constraint_residual": float(max(residuals)),
              "efolds_to_inflation_end": float(np.interp(t_end, t, y["ln_a"]))
              if np.isfinite(t_end) else math.nan,
              "engine": forward.summary.engine, "status": forward.summary.status},
        summary=forward.summary)


def table_from_state(potential: Any, critical_density: float, phi0: float, phidot0: float, *,
                     t_past: float | None = None, past_density: float | None = None,
                     extra_efolds: float = 2.0, max_time: float = 1e12, rtol: float = 1e-11,
                     points_per_unit: float = 60.0, max_efolds: float = 2.0e4,
                     dense_efolds: float = 60.0,
                     settings: IntegrationSettings | None = None) -> BackgroundTable:
    """The background table through the bounce and inflation (physics notes s.1).

    With a finite ``critical_density`` the start (t = 0) is the bounce: rho(phi0, phidot0) must
    equal rho_c, H = 0, a_B = 1. The contracting branch is added back to rho = ``past_density``
    or to t = -``t_past`` (either may be None; both None: no past), by time reversal. With
    ``critical_density = inf`` the start is classical, expanding, at t = 0, a = 1. The table
    goes a little beyond the end of inflation: ``extra_efolds`` e-folds or 3 ``extra_efolds``
    / H_end Planck times after it, whichever comes first; it ends at ``max_efolds``
    inflationary e-folds or ``max_time`` if inflation has not ended by then.
    ``points_per_unit`` nodes per unit of background clock, 20 times fewer in the slow roll
    between ln a = ``dense_efolds`` and 100 e-folds before the end of inflation. ``settings``
    (optional) gives the engine's budgets; ``rtol``, ``max_time`` and ``max_efolds`` override
    its tolerance and caps.
    """
    rc = float(critical_density)
    base = settings or IntegrationSettings()
    rho0 = 0.5 * phidot0**2 + float(potential.V(phi0))
    finite = np.isfinite(rc)
    if finite and abs(rho0 - rc) > 1e-9 * rc:
        raise InputError(f"a bounce start needs rho(phi0, phidot0) = rho_c = {rc:.6g}; "
                         f"got {rho0:.6g}")
    if not rho0 > 0:
        raise InputError("the start has zero energy density; allowed: rho > 0")
    inv = 1.0 / rc if finite else 0.0
    system = engine.System(SYS_ISOTROPIC, (inv, 0.0, 0.0, 0.0))
    fwd_settings = IntegrationSettings(rtol=rtol, atol=base.atol, max_inflation_efolds=max_efolds,
                                       max_time=max_time, dense_points=0,
                                       max_steps=base.max_steps, max_seconds=base.max_seconds)
    forward = engine.run(system, potential, [0.0, phi0, phidot0, 0.0], 1 if finite else 2,
                         fwd_settings, bounced=True, has_bounce=finite,
                         extra_efolds=extra_efolds, store=True)
    if forward.summary.status == "failed":
        raise NumericalFailure(f"background integration failed: {forward.summary.message}")
    past = None
    if finite and (t_past is not None or past_density is not None):
        past_settings = IntegrationSettings(
            rtol=rtol, atol=base.atol, max_inflation_efolds=max_efolds,
            max_time=float(t_past) if t_past else max_time, dense_points=0,
            max_steps=base.max_steps, max_seconds=base.max_seconds)
        past = engine.run(system, potential, [0.0, phi0, -phidot0, 0.0], 1, past_settings,
                          bounced=True, has_bounce=True, goal=problem.GOAL_DENSITY,
                          target_density=float(past_density or 0.0), store=True)
        ok = past.summary.reason == "density" if past_density else past.summary.reason in (
            "time_cap", "density")
        if not ok:
            why = past.summary.message
            if past.summary.status == "efold_cap":
                why = (f"it stays potential-dominated for more than {max_efolds:g} e-folds "
                       "(the time reverse of inflation)")
            raise NumericalFailure(
                "the contracting branch before the bounce does not reach rho = "
                f"{past_density:g}: {why}" if past_density else
                f"background integration (past) failed: {why}")
    return table_from_runs(forward, past, potential, rc, extra_efolds, points_per_unit,
                           dense_efolds)
