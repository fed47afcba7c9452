"""Initial states of the modes, selected by name.

* ``remote_past`` -- second-order adiabatic (Minkowski-like) vacuum at the first node of the
  background table, which must lie in the remote contracting past where
  W^2 = k^2 Omega - z''/z >> (background rate)^2; the ratio rate/W at that node is reported per
  mode (``start_adiabaticity``). On a classical background the same name gives the adiabatic
  (Bunch-Davies-like) vacuum at the start of the table.
* ``bounce_adiabatic4`` -- fourth-order adiabatic vacuum at the bounce (dressed metric only:
  in the deformed algebra Omega = -1 there and no positive frequency exists).
  W_4^2 = omega^2 - (1/2)[W_2''/W_2 - (3/2)(W_2'/W_2)^2], W_2^2 likewise from omega^2 =
  k^2 - z''/z, derivatives by central differences on a conformal-time stencil of width
  0.01/k_LQC. Where W_4^2 <= k^2/4 (infrared, k below about k_LQC, where z''/z ~ k_LQC^2 > 0
  and the adiabatic series has no meaning; likewise where omega^2 <= k^2/4 on the stencil or
  the fourth-order correction exceeds half of omega^2) the Minkowski-like frequency W = k is
  used: a
  documented choice, not a theorem.
* Bogoliubov rotation of either: mode -> alpha mode + beta mode*, with
  beta(k) = beta_0 exp(-(k/k_beta)^2) e^{i theta}, alpha = sqrt(1 + |beta|^2) (real), so that
  |alpha|^2 - |beta|^2 = 1 and the rotation acts only below k_beta (ultraviolet untouched).
  The spectrum becomes P_ref |alpha + e^{i theta'} beta|^2 with theta' set by the mode's phase,
  1 + 2|beta|^2 on phase average (physics notes s.4).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import CubicSpline

from ..errors import InputError, NumericalFailure

STATES = ("remote_past", "bounce_adiabatic4")


def remote_past(solver, k: float):
    i0 = 0
    f = solver.form_of_node[i0]
    F = solver.system.forms[f]
    w2 = solver.w2(f, k)
    if not (np.isfinite(w2[i0]) and w2[i0] > 0):
        raise NumericalFailure(f"mode k={k:g} has no positive frequency at the start of the "
                               "background table (start it further in the past)")
    rate = math.sqrt(solver.a[i0] ** 2 * F.wbg2[i0])
    mu, dmu = solver.adiabatic_basis(f, i0, k, w2)
    x, p = solver.from_mu(f, i0, k, mu, dmu)
    return i0, x, p, rate / math.sqrt(w2[i0])


def _w2_second_order(w2: np.ndarray, d: float) -> np.ndarray:
    """W_2^2 on the inner points of an equally spaced stencil of omega^2 values."""
    d1 = (w2[2:] - w2[:-2]) / (2 * d)
    d2 = (w2[2:] - 2 * w2[1:-1] + w2[:-2]) / d**2
    om2 = w2[1:-1]
    # W = sqrt(om2): W'/W = om2'/(2 om2), W''/W = om2''/(2 om2) - om2'^2/(4 om2^2)
    wpp = d2 / (2 * om2) - d1**2 / (4 * om2**2)
    wp = d1 / (2 * om2)
    return om2 - 0.5 * (wpp - 1.5 * wp**2)


def bounce_adiabatic4(solver, k: float):
    sysm = solver.system
    tab = sysm.table
    if sysm.prescription != "dressed_metric":
        raise InputError("perturbations.state = 'bounce_adiabatic4' needs prescription "
                         "'dressed_metric' (Omega < 0 at the bounce in the deformed algebra)")
    ib = tab.bounce_index()
    f = solver.form_of_node[ib]
    F = sysm.forms[f]
    cache = getattr(solver, "_bounce_cache", None)
    if cache is None:
        lo, hi = max(ib - 400, 0), min(ib + 400, len(tab.t) - 1)
        eta = solver.eta[lo:hi + 1]
        zz = CubicSpline(eta, F.zz[lo:hi + 1])
        d = 0.01 / tab.k_lqc
        stencil = solver.eta[ib] + d * np.arange(-4, 5)
        cache = (zz(stencil), d)
        solver._bounce_cache = cache
    zz_s, d = cache
    om2 = k * k - zz_s
    w2_2 = _w2_second_order(om2, d)
    w4sq = None
    if np.all(om2 > 0.25 * k * k) and np.all(w2_2 > 0.25 * k * k):
        # the bracket of the W_4 iteration, evaluated with W_2 in place of omega
        w4sq = om2[2:-2] - (w2_2[1:-1] - _w2_second_order(w2_2, d))
    if (w4sq is None or np.any(w4sq <= 0.25 * k * k)
            or np.any(np.abs(w4sq - om2[2:-2]) > 0.5 * om2[2:-2])):
        W, dW = k, 0.0
    else:
        c = len(w4sq) // 2
        W = math.sqrt(w4sq[c])
        dW = (math.sqrt(w4sq[c + 1]) - math.sqrt(w4sq[c - 1])) / (2 * d)
    fv = 1 / math.sqrt(2 * W)
    mu, dmu = complex(fv), (-1j * W - dW / (2 * W)) * fv
    x, p = solver.from_mu(f, ib, k, mu, dmu)
    return ib, x, p, math.nan


@dataclass(frozen=True)
class Bogoliubov:
    """beta(k) = beta0 exp(-(k/k_beta)^2) e^{i theta}, alpha = sqrt(1 + |beta|^2)."""

    beta0: float
    k_beta: float
    theta: float = 0.0

    def coefficients(self, k: float) -> tuple[float, complex]:
        b = self.beta0 * math.exp(-((k / self.k_beta) ** 2))
        return math.sqrt(1 + b * b), b * complex(math.cos(self.theta), math.sin(self.theta))


def make_state(name: str, bogoliubov: Bogoliubov | None = None) -> Callable:
    """State function ``(solver, k) -> (i0, x, pi, start_adiabaticity)`` by name."""
    base = {"remote_past": remote_past, "bounce_adiabatic4": bounce_adiabatic4}.get(name)
    if base is None:
        raise InputError(f"perturbations.state must be one of {STATES}, got {name!r}")
    if bogoliubov is None:
        return base

    def rotated(solver, k):
        i0, x, p, ad = base(solver, k)
        al, be = bogoliubov.coefficients(k)
        return i0, al * x + be * x.conjugate(), al * p + be * p.conjugate(), ad

    return rotated
