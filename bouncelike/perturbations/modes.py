"""Mode evolution: symplectic integration, compiled with numba, plus WKB jumps.

Method
------
* Numerical stretches: each step is the exact flow of the Hamiltonian with coefficients frozen
  at the step midpoint (exponential midpoint rule: a 2x2 rotation, boost or shear, exact for
  constant coefficients, symmetric and symplectic), composed in Yoshida's fourth-order triple
  jump. A symplectic linear map conserves the Wronskian x pi* - x* pi exactly (round-off only),
  whatever the step sizes, so it is a genuine accuracy check of nothing but round-off; accuracy
  is checked instead against exact solutions and an independent integration (tests). The step
  is ``step`` / omega with omega^2 = k^2 |Omega_eff| / a^2 + omega_bg^2 + |[M, Mdot]|^(2/3)
  (:func:`step_rate2`): the frequency, the background rates and the rate at which the generator
  M of (x, pi) turns. The last one is the Airy rate (k^2 |dOmega/dt| / a^2)^(1/3) at the
  turning points Omega = 0 of the deformed algebra (~50 at k = 30 k_LQC, where the frequency
  and omega_bg ~ 3 vanish or stay small): without it the steps there were up to ~17 times too
  long and ln T at 30 k_LQC was off by up to 16 (measured), depending on where steps fell.
* Adiabatic stretches: where W^2 = k^2 Omega_eff - z''/z > ``adiabatic_ratio``^2 x rate^2,
  rate^2 = a^2 omega_bg^2 + (W'/W)^2 + |W''/W| (conformal time, :meth:`ModeSolver.flags`), i.e.
  where the adiabaticity parameters |W'|/W^2 and sqrt(|W''|/W^3) and a omega_bg/W are all below
  1/``adiabatic_ratio`` (0.025 by default), over a stretch holding more than ``min_jump_phase``
  radians, the mode is projected on
  the second-order adiabatic basis f = exp(-i int W d eta)/sqrt(2W), f' = (-iW - W'/(2W)) f
  (Bogoliubov alpha, beta; |alpha|^2 - |beta|^2 equals the Wronskian exactly) and rebuilt at the
  far end with the phase int W d eta (Simpson on the background grid). This is how ultraviolet
  modes are started late inside the Hubble radius during inflation, and how deformed-algebra
  modes cross the long oscillatory eras before and after the bounce. The W-rates matter near
  Omega = 0, where W'/W ~ (dOmega/d eta)/(2 Omega) outgrows the background rate: with the
  background rate alone jumps ended where |W'|/W^2 ~ 0.8 (k = 60-100 k_LQC, measured).
* Each mode stops where k/(aH) = ``freeze`` during inflation (after the last minimum of aH).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numba import njit
from scipy.integrate import cumulative_simpson
from scipy.interpolate import CubicSpline

from ..errors import NumericalFailure
from ..kernel_cache import numba_imported
from .prescriptions import ModeSystem

numba_imported()  # a command's compile watch starts listening (kernel_cache.py)

_W1 = 1.0 / (2.0 - 2.0 ** (1.0 / 3.0))
_W0 = -(2.0 ** (1.0 / 3.0)) * _W1


# -- compiled core -----------------------------------------------------------------------------
@njit(cache=True)
def _seval(S, j, i, t, tg):
    dx = t - tg[i]
    return ((S[j, i, 0] * dx + S[j, i, 1]) * dx + S[j, i, 2]) * dx + S[j, i, 3]


@njit(cache=True)
def _sderiv(S, j, i, t, tg):
    dx = t - tg[i]
    return (3.0 * S[j, i, 0] * dx + 2.0 * S[j, i, 1]) * dx + S[j, i, 2]


@njit(cache=True)
def _locate(tg, t, i):
    n = tg.shape[0]
    while i < n - 2 and t > tg[i + 1]:
        i += 1
    while i > 0 and t < tg[i]:
        i -= 1
    return i


@njit(cache=True)
def _flow(S, tg, i, tm, tau, k2, x, p):
    i = _locate(tg, tm, i)
    L = _seval(S, 7, i, tm, tg)
    A = math.exp(-3.0 * L) * _seval(S, 0, i, tm, tg)
    B = (k2 * math.exp(L) * _seval(S, 1, i, tm, tg) + math.exp(3.0 * L) * _seval(S, 2, i, tm, tg)
         + k2 * k2 * math.exp(-L) * _seval(S, 3, i, tm, tg))
    C = k2 * math.exp(-2.0 * L) * _seval(S, 4, i, tm, tg)
    lam2 = C * C - A * B
    z = lam2 * tau * tau
    if abs(z) < 1e-3:
        c = 1.0 + z / 2.0 + z * z / 24.0 + z * z * z / 720.0
        s = tau * (1.0 + z / 6.0 + z * z / 120.0 + z * z * z / 5040.0)
    elif z < 0.0:
        w = math.sqrt(-lam2)
        c = math.cos(w * tau)
        s = math.sin(w * tau) / w
    else:
        w = math.sqrt(lam2)
        c = math.cosh(w * tau)
        s = math.sinh(w * tau) / w
    xn = c * x + s * (C * x + A * p)
    pn = c * p - s * (B * x + C * p)
    return xn, pn, i


@njit(cache=True)
def step_rate2(S, tg, i, t, k2):
    """Squared rate that sets the step at t: omega^2 + omega_bg^2 + |[M, Mdot]|^(2/3).

    M = [[C, A], [-B, -C]] is the generator of (x, pi); the commutator term measures how fast M
    turns (the local error of the exponential midpoint rule is dt^3 [M, Mdot]/12). Its size,
    invariant under x -> l x, pi -> pi/l, is |A'B - AB'| + 2 sqrt(|CA' - AC'| |CB' - BC'|)
    (dots: d/dt). Near a turning point Omega = 0 of the deformed algebra it is
    k^2 |dOmega/dt|/a^2, the Airy rate cubed, while omega and omega_bg stay small there.
    """
    L = _seval(S, 7, i, t, tg)
    dL = _sderiv(S, 7, i, t, tg)
    e1 = math.exp(L)
    e2 = math.exp(-2.0 * L)
    e3 = math.exp(3.0 * L)
    em1 = 1.0 / e1
    em3 = 1.0 / e3
    pa, dpa = _seval(S, 0, i, t, tg), _sderiv(S, 0, i, t, tg)
    pb2, dpb2 = _seval(S, 1, i, t, tg), _sderiv(S, 1, i, t, tg)
    pb0, dpb0 = _seval(S, 2, i, t, tg), _sderiv(S, 2, i, t, tg)
    pb4, dpb4 = _seval(S, 3, i, t, tg), _sderiv(S, 3, i, t, tg)
    pc2, dpc2 = _seval(S, 4, i, t, tg), _sderiv(S, 4, i, t, tg)
    k4 = k2 * k2
    A = em3 * pa
    dA = em3 * (dpa - 3.0 * dL * pa)
    B = k2 * e1 * pb2 + e3 * pb0 + k4 * em1 * pb4
    dB = (k2 * e1 * (dpb2 + dL * pb2) + e3 * (dpb0 + 3.0 * dL * pb0)
          + k4 * em1 * (dpb4 - dL * pb4))
    C = k2 * e2 * pc2
    dC = k2 * e2 * (dpc2 - 2.0 * dL * pc2)
    comm = abs(dA * B - A * dB) + 2.0 * math.sqrt(abs(C * dA - A * dC) * abs(C * dB - B * dC))
    return (k2 * abs(_seval(S, 5, i, t, tg)) * e2 + abs(_seval(S, 6, i, t, tg))
            + comm ** (2.0 / 3.0))


@njit(cache=True)
def evolve(k, x, p, t0, t1, S, tg, step, max_steps):
    """Evolve (x, pi) (complex) from t0 to t1 > t0; returns x, pi, number of steps."""
    k2 = k * k
    t = t0
    i = _locate(tg, t0, 0)
    nstep = 0
    while t < t1 and nstep < max_steps:
        i = _locate(tg, t, i)
        dt = step / math.sqrt(step_rate2(S, tg, i, t, k2))
        if t + dt > t1:
            dt = t1 - t
        ts = t
        x, p, i = _flow(S, tg, i, ts + 0.5 * _W1 * dt, _W1 * dt, k2, x, p)
        ts += _W1 * dt
        x, p, i = _flow(S, tg, i, ts + 0.5 * _W0 * dt, _W0 * dt, k2, x, p)
        ts += _W0 * dt
        x, p, i = _flow(S, tg, i, ts + 0.5 * _W1 * dt, _W1 * dt, k2, x, p)
        t = t + dt if t + dt < t1 else t1
        nstep += 1
    return x, p, nstep


# -- splines -----------------------------------------------------------------------------------
def _spline_coefficients(t: np.ndarray, rows: list[np.ndarray], breaks: list[int]) -> np.ndarray:
    """Cubic-spline coefficients (nrow, n-1, 4), not-a-knot, split at ``breaks`` nodes."""
    n = len(t)
    out = np.zeros((len(rows), n - 1, 4))
    cuts = [0] + sorted(b for b in breaks if 0 < b < n - 1) + [n - 1]
    for j, y in enumerate(rows):
        y = np.where(np.isfinite(y), y, 0.0)
        for lo, hi in zip(cuts[:-1], cuts[1:], strict=True):
            if hi - lo < 3:
                c = np.zeros((4, hi - lo))
                c[2] = np.diff(y[lo:hi + 1]) / np.diff(t[lo:hi + 1])
                c[3] = y[lo:hi]
            else:
                c = CubicSpline(t[lo:hi + 1], y[lo:hi + 1]).c
            out[j, lo:hi] = c.T
    return out


# -- mode results ------------------------------------------------------------------------------
@dataclass(frozen=True)
class ModeResult:
    """Modes of one field evolved to freeze-out.

    power : P(k) at freeze-out (bounce units: k comoving with a_B = 1 for bounces).
    frozen : bool per k (False when the table ended before k/(aH) reached ``freeze``).
    wronskian_error : max over the mode of |x pi* - x* pi - i| (at every segment end).
    wronskian_scale : max of 2|x||pi| at the same points: the round-off floor of the
        Wronskian is ~1e-16 x this scale (double precision), so conservation is judged
        against max(1, scale).
    steps : integrator steps per mode; jumped_phase : radians crossed by WKB jumps.
    start_adiabaticity : rate/W at the state time (small = well-defined adiabatic start).
    """

    k: np.ndarray
    power: np.ndarray
    frozen: np.ndarray
    wronskian_error: np.ndarray
    wronskian_scale: np.ndarray
    steps: np.ndarray
    jumped_phase: np.ndarray
    t_end: np.ndarray
    x_end: np.ndarray
    start_adiabaticity: np.ndarray
    description: str
    settings: dict = field(default_factory=dict)
    p_end: np.ndarray | None = None  # conjugate momentum at t_end (same form as x_end)
    jumps: tuple = ()  # per mode: ((i, j), ...) background nodes where each WKB jump starts/ends


class ModeSolver:
    """Prepare splines and node arrays of a :class:`ModeSystem` once; solve many k."""

    def __init__(self, system: ModeSystem, *, step: float = 0.08, adiabatic_ratio: float = 40.0,
                 min_jump_phase: float = 40.0, freeze: float = 1e-3):
        self.system = system
        tab = system.table
        self.t = np.ascontiguousarray(tab.t, dtype=float)
        self.step = step
        self.adiabatic_ratio = adiabatic_ratio
        self.min_jump_phase = min_jump_phase
        self.freeze = freeze
        breaks = [tab.bounce_index()] if tab.has_bounce else []
        self.breaks = breaks
        self.splines = []
        for form in system.forms:
            rows = [form.PA, form.PB2, form.PB0, form.PB4, form.PC2, form.omega_eff, form.wbg2,
                    tab.ln_a]
            self.splines.append(np.ascontiguousarray(_spline_coefficients(self.t, rows, breaks)))
        self.a = tab.a
        self.eta = tab.conformal_time()
        self.aH = self.a * tab.H
        # index after which aH grows monotonically up to the end (inflation)
        post = np.arange(len(self.t))
        if tab.has_bounce:
            post = post[post > tab.bounce_index()]
        i_min = post[np.argmin(self.aH[post])]
        self.i_infl = int(i_min)
        self.form_of_node = system.form_of_node
        # conformal-time derivatives of the k^2 coefficient and of z''/z in W^2 (adiabaticity)
        self._w2_rates = []
        for form in system.forms:
            with np.errstate(invalid="ignore", over="ignore"):
                pair = []
                for y in (form.omega_eff, form.zz):
                    y = np.where(np.isfinite(y), y, np.nan)
                    yt = np.gradient(y, self.t, edge_order=2)
                    ytt = np.gradient(yt, self.t, edge_order=2)
                    pair.append((self.a * yt, self.a**2 * (ytt + tab.H * yt)))
            self._w2_rates.append(pair)

    # -- node-level helpers --------------------------------------------------------------------
    def _coef(self, f: int, i: int, k: float) -> tuple[float, float]:
        F = self.system.forms[f]
        L = self.system.table.ln_a[i]
        A = math.exp(-3 * L) * F.PA[i]
        C = k * k * math.exp(-2 * L) * F.PC2[i]
        return A, C

    def to_mu(self, f: int, i: int, k: float, x: complex, p: complex) -> tuple[complex, complex]:
        F = self.system.forms[f]
        A, C = self._coef(f, i, k)
        xprime = self.a[i] * (C * x + A * p)
        z = math.exp(F.lnz[i])
        return z * x, z * (F.dlnz[i] * x + xprime)

    def from_mu(self, f: int, i: int, k: float, mu: complex, dmu: complex) -> tuple[complex,
                                                                                  complex]:
        F = self.system.forms[f]
        A, C = self._coef(f, i, k)
        z = math.exp(F.lnz[i])
        x = mu / z
        xprime = dmu / z - F.dlnz[i] * x
        return x, (xprime / self.a[i] - C * x) / A

    def w2(self, f: int, k: float) -> np.ndarray:
        F = self.system.forms[f]
        return k * k * F.omega_eff - F.zz

    def adiabatic_basis(self, f: int, i: int, k: float, w2: np.ndarray) -> tuple[complex,
                                                                                  complex]:
        """(f, f') of the second-order adiabatic basis at node i (conformal time)."""
        W = math.sqrt(w2[i])
        j0, j1 = max(i - 1, 0), min(i + 1, len(w2) - 1)
        dw2 = self.a[i] * (w2[j1] - w2[j0]) / (self.t[j1] - self.t[j0])  # d/d eta = a d/dt
        fv = 1 / math.sqrt(2 * W)
        return complex(fv), (-1j * W - dw2 / (4 * W * W)) * fv

    # -- planning ------------------------------------------------------------------------------
    def end_index(self, k: float) -> tuple[int, bool]:
        target = k / self.freeze
        cand = np.nonzero(self.aH[self.i_infl:] >= target)[0]
        if len(cand) == 0:
            return len(self.t) - 1, False
        return int(self.i_infl + cand[0]), True

    def adiabatic_rate2(self, k: float) -> tuple[np.ndarray, np.ndarray]:
        """Squared rate of the adiabaticity test per node and W^2 of the node's form.

        rate^2 = a^2 omega_bg^2 + (W'/W)^2 + |W''/W| (conformal time; W'/W = (W^2)'/(2 W^2),
        W''/W = (W^2)''/(2 W^2) - ((W^2)')^2/(4 W^4), derivatives of k^2 Omega_eff and z''/z by
        second-order differences on the background grid). NaN where W^2 is not finite.
        """
        fon = self.form_of_node
        n = len(self.t)
        w2, rate2 = np.empty(n), np.empty(n)
        k2 = k * k
        for f, F in enumerate(self.system.forms):
            m = fon == f
            (o1, o2), (z1, z2) = self._w2_rates[f]
            with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
                ww = k2 * F.omega_eff[m] - F.zz[m]
                d1 = k2 * o1[m] - z1[m]
                d2 = k2 * o2[m] - z2[m]
                lw1 = d1 / (2 * ww)
                lw2 = d2 / (2 * ww) - lw1**2
                w2[m] = ww
                rate2[m] = self.a[m] ** 2 * F.wbg2[m] + lw1**2 + np.abs(lw2)
        return rate2, w2

    def flags(self, k: float) -> tuple[np.ndarray, np.ndarray]:
        """Adiabatic flag per node and W^2 of the node's form.

        A node is adiabatic where W^2 > ``adiabatic_ratio``^2 x rate^2 (:meth:`adiabatic_rate2`):
        then |W'|/W^2, sqrt(|W''|/W^3) and a omega_bg / W are all below 1/``adiabatic_ratio``.
        """
        rate2, w2 = self.adiabatic_rate2(k)
        with np.errstate(invalid="ignore"):
            ok = np.isfinite(w2) & np.isfinite(rate2) & (w2 > self.adiabatic_ratio**2 * rate2)
        return ok, w2

    def _long_runs(self, ok, phase, i0, i_end) -> list[tuple[int, int]]:
        """Maximal adiabatic runs [i, j] within [i0, i_end] holding > min_jump_phase radians."""
        seg = ok[i0:i_end + 1].astype(np.int8)
        d = np.diff(np.concatenate([[0], seg, [0]]))
        starts = np.nonzero(d == 1)[0] + i0
        ends = np.nonzero(d == -1)[0] - 1 + i0
        return [(int(a), int(b)) for a, b in zip(starts, ends, strict=True)
                if b > a and phase[b] - phase[a] > self.min_jump_phase]

    # -- solving -------------------------------------------------------------------------------
    def solve(self, ks: np.ndarray, initial, max_steps: int = 50_000_000,
              bar=None) -> ModeResult:
        """Evolve every k from the state given by ``initial(solver, k) -> (i0, x, pi, adiab)``."""
        ks = np.asarray(ks, dtype=float)
        nk = len(ks)
        power = np.empty(nk)
        frozen = np.zeros(nk, bool)
        werr = np.zeros(nk)
        wscale = np.zeros(nk)
        steps = np.zeros(nk, np.int64)
        jumped = np.zeros(nk)
        t_end = np.empty(nk)
        x_end = np.empty(nk, complex)
        p_end = np.empty(nk, complex)
        adiab = np.empty(nk)
        jumps = []
        fon = self.form_of_node
        for m, k in enumerate(ks):
            i0, x, p, adiab[m] = initial(self, k)
            i_end, frozen[m] = self.end_index(k)
            if i_end <= i0:
                raise NumericalFailure(f"mode k={k:g} is already frozen at its initial time")
            ok, w2 = self.flags(k)
            with np.errstate(invalid="ignore"):
                W_over_a = np.sqrt(np.where(np.isfinite(w2) & (w2 > 0), w2, 0.0)) / self.a
            phase = cumulative_simpson(W_over_a, x=self.t, initial=0.0)
            runs = self._long_runs(ok, phase, i0, i_end)
            jumps.append(tuple(runs))
            i = i0
            while i < i_end:
                if runs and runs[0][0] == i:
                    _, j = runs.pop(0)
                    f_i, f_j = fon[i], fon[j]
                    mu, dmu = self.to_mu(f_i, i, k, x, p)
                    fb, dfb = self.adiabatic_basis(f_i, i, k, w2)
                    alpha = -1j * (mu * dfb.conjugate() - dmu * fb.conjugate())
                    beta = 1j * (mu * dfb - dmu * fb)
                    th = phase[j] - phase[i]
                    fb, dfb = self.adiabatic_basis(f_j, j, k, w2)
                    e = complex(math.cos(th), -math.sin(th))
                    mu = alpha * e * fb + beta * e.conjugate() * fb.conjugate()
                    dmu = alpha * e * dfb + beta * e.conjugate() * dfb.conjugate()
                    x, p = self.from_mu(f_j, j, k, mu, dmu)
                    jumped[m] += th
                    i = j
                    werr[m] = max(werr[m], abs(x * p.conjugate() - x.conjugate() * p - 1j))
                    wscale[m] = max(wscale[m], 2 * abs(x) * abs(p))
                    continue
                # numerical stretch up to the next long adiabatic run, form change or the end
                stop = runs[0][0] if runs else i_end
                f = fon[i]
                change = np.nonzero(fon[i + 1:stop + 1] != f)[0]
                j = i + 1 + int(change[0]) if len(change) else stop
                x, p, ns = evolve(k, complex(x), complex(p), self.t[i], self.t[j],
                                  self.splines[f], self.t, self.step, max_steps)
                steps[m] += ns
                if fon[j] != f:
                    mu, dmu = self.to_mu(f, j, k, x, p)
                    x, p = self.from_mu(fon[j], j, k, mu, dmu)
                werr[m] = max(werr[m], abs(x * p.conjugate() - x.conjugate() * p - 1j))
                wscale[m] = max(wscale[m], 2 * abs(x) * abs(p))
                i = j
            form = self.system.forms[fon[i_end]]
            power[m] = k**3 * form.amp[i_end] * abs(x) ** 2
            t_end[m] = self.t[i_end]
            x_end[m] = x
            p_end[m] = p
            if bar is not None:
                bar.update(1)
        return ModeResult(ks, power, frozen, werr, wscale, steps, jumped, t_end, x_end, adiab,
                          self.system.description,
                          {"step": self.step, "adiabatic_ratio": self.adiabatic_ratio,
                           "min_jump_phase": self.min_jump_phase, "freeze": self.freeze},
                          p_end, tuple(jumps))
