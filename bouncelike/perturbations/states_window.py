"""States chosen by an optimality condition over a window of time around the bounce.

Two published states, both regular at the bounce (they are set there, from the background
around it, with no reference to the contracting past), for the dressed metric:

* ``non_oscillating`` -- the non-oscillating vacuum of Martin de Blas & Olmedo (JCAP 06 (2016)
  029, arXiv:1601.01716): for each k, the normalised solution whose power |mu_k|^2 oscillates
  least over a time interval around the bounce. The measure of oscillation is taken as
  O[mu] = int (d|mu_k|^2/d eta)^2 d eta over the window (the functional form is from memory:
  the paper's text could not be checked here; the abstract confirms only that the state is
  proposed as a vacuum for the perturbations and suppresses large-scale power in their
  hybrid setting). mu = z x is the canonical (Mukhanov-Sasaki) variable, mu = a h for tensors
  and a Q for scalars (dressed metric, ``prescriptions.py``).
* ``low_energy`` -- the state of low energy (SLE; Olbermann, Class. Quantum Grav. 24 (2007)
  5011; in loop quantum cosmology Martin-Benito, Neves & Olmedo, arXiv:2104.03035, whose
  abstract states the definition: the state minimising the energy density smeared along the
  worldline of an isotropic observer with a smearing function, unique up to a phase, exactly
  Hadamard). The energy density of one mode of the field x (h or Q) is
  rho_k = (|xdot|^2 + omega^2 |x|^2)/2, omega^2 = (k^2 + a^2 U)/a^2 (U the scalar potential of
  the dressed metric, 0 for tensors): the mode Hamiltonian over a^3. The renormalised energy
  differs from it by a state-independent subtraction, which does not move the minimum.

Choices made here (the papers' constructions need them; stated and measured)
-----------------------------------------------------------------------------
* Window: from ``WINDOW_EFOLDS`` (1) e-fold before to 1 e-fold after the bounce in ln a, i.e.
  while rho >= e^-6 rho_c ~ 2.5e-3 rho_c on a kinetic bounce: the stretch where the quantum
  correction rho/rho_c to the Friedmann equation exceeds ~0.25%. It contains the
  super-inflation phase (|ln a| < ln 2 / 6) and the start of both kinetic eras.
  Measured dependence (tensor modes, m = 1.2e-6, phi_B = 1.2; period-averaged transfer at
  x = 0.01 / 0.1 / 1): non-oscillating 5.72 / 2.50 / 1.0725 for half-width 0.5 e-fold,
  4.41 / 2.18 / 1.0726 for 1, 3.59 / 2.16 / 1.0723 for 2; low energy 29.9 / 3.36 / 1.095,
  21.9 / 2.73 / 1.083, 12.3 / 2.31 / 1.079. Above x ~ 1 the window does not matter.
* Smearing function of the SLE: the bump f(t) = exp(-1/(1 - tau^2)) on the window,
  tau = (t - t_B)/(t_edge - t_B) with the window edge on each side (smooth, compactly
  supported, as Olbermann requires for the Hadamard property).
* Above ``WINDOW_X_MAX`` (30 k_LQC) both states are replaced by the fourth-order adiabatic
  vacuum at the bounce (``states.bounce_adiabatic4``): there the window holds hundreds of
  oscillations, both states tend to the adiabatic vacuum, and the period-averaged transfers
  differ by < 1e-11 at 10-100 k_LQC (measured), while the cost of the window grows as k.

Construction (exact for any reference solution)
-----------------------------------------------
Take one normalised solution S over the window (Wronskian x pi* - x* pi = i, evolved with the
mode integrator of ``modes.py`` from the window's first node). Every normalised state is
T = lam S + nu S* with |lam|^2 - |nu|^2 = 1 (a global phase does not matter), and every
quadratic quantity depends only on s = |lam|^2 + |nu|^2 and c = lam nu*:
|T|^2 = s |S|^2 + 2 Re(c S^2). With c = (u + i v)/2, X = (s, u, v) lies on the unit
hyperboloid X^T G X = s^2 - u^2 - v^2 = 1 (s > 0), G = diag(1, -1, -1).

* O is a quadratic form X^T M X (M the Gram matrix of (|S|^2)', Re (S^2)', -Im (S^2)' in
  conformal time): its minimum on the hyperboloid is the generalised eigenvector of
  M X = lambda G X with X^T G X > 0 (one exists, M being positive definite and G of signature
  (1, 2)), and O_min = lambda.
* The smeared energy is linear, E = s c1 + 2 Re(c c2) with c1 = int f^2 (|Sdot|^2 +
  omega^2 |S|^2)/2 dt, c2 = int f^2 (Sdot^2 + omega^2 S^2)/2 dt: its minimum is at
  s = c1/sqrt(c1^2 - |c2|^2), c = -s c2*/(2 c1), E_min = sqrt(c1^2 - |c2|^2) (derived here;
  the form of Olbermann's closed expression, from memory).

Sampling: uniform in cosmic time over the window with ``POINTS_PER_RADIAN`` (4) points per
radian of the fastest integrand phase 2 k Delta eta (at least ``MIN_POINTS``), Simpson's rule;
doubling both, or halving the integrator step, moves the state by < 1e-8 relative
(tests/test_perturbation_window_states.py).

What these states do to the power (measured; the module docstring of :mod:`.states`)
----------------------------------------------------------------------------------
Both reduce the infrared enhancement of the remote-past state but cannot bring the
period-averaged power below the power law on scales that re-enter the Hubble radius during the
kinetic era (x above ~1e-3 here, the whole cached range): there T_mean = |alpha|^2 + |beta|^2
= 1 + 2|beta|^2 >= 1 for every state (see :mod:`.states`).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.integrate import simpson
from scipy.interpolate import CubicSpline
from scipy.linalg import eig

from ..errors import InputError, NumericalFailure
from .modes import evolve

#: half-width of the window in e-folds of the scale factor on each side of the bounce
WINDOW_EFOLDS = 1.0
#: above this k/k_LQC the fourth-order adiabatic vacuum at the bounce is used instead
WINDOW_X_MAX = 30.0
#: sample density of the window quadrature (points per radian of 2 k Delta eta) and minimum
POINTS_PER_RADIAN = 4.0
MIN_POINTS = 801
_G = np.diag([1.0, -1.0, -1.0])


# -- pure array functions ----------------------------------------------------------------------
def hyperboloid_point(s: float, c: complex) -> np.ndarray:
    """X = (s, 2 Re c, 2 Im c) of a Bogoliubov rotation (s = |lam|^2 + |nu|^2, c = lam nu*)."""
    return np.array([s, 2 * c.real, 2 * c.imag])


def rotation(X: np.ndarray) -> tuple[float, complex]:
    """(lam, nu) with lam > 0 of the hyperboloid point X = (s, u, v): T = lam S + nu S*."""
    s, u, v = (float(q) for q in X)
    lam = math.sqrt((s + 1) / 2)
    return lam, complex(u, -v) / (2 * lam)


def oscillation_form(eta_weight: np.ndarray, t: np.ndarray, mu: np.ndarray,
                     dmu: np.ndarray) -> np.ndarray:
    """Gram matrix M of O = int (d|T|^2/d eta)^2 d eta = X^T M X (module docstring).

    ``mu``, ``dmu``: reference solution and its conformal-time derivative at times ``t``;
    ``eta_weight`` = d eta/dt (1/a).
    """
    d_abs = 2 * np.real(np.conj(mu) * dmu)
    d_sq = 2 * mu * dmu
    g = np.array([d_abs, d_sq.real, -d_sq.imag])
    return np.array([[simpson(gi * gj * eta_weight, x=t) for gj in g] for gi in g])


def minimal_oscillation(M: np.ndarray) -> tuple[np.ndarray, float]:
    """Point of the unit hyperboloid minimising X^T M X, and the minimum."""
    vals, vecs = eig(_G, M)  # G X = (1/lambda) M X
    best = None
    for j in range(3):
        if not np.isfinite(vals[j]):
            continue
        X = np.real(vecs[:, j])
        norm = float(X @ _G @ X)
        if norm > 0:
            X = X / math.sqrt(norm) * math.copysign(1.0, X[0])
            val = float(X @ M @ X)
            if best is None or val < best[1]:
                best = (X, val)
    if best is None:
        raise NumericalFailure("non-oscillating state: no timelike eigenvector of the "
                               "oscillation form (degenerate reference solution)")
    return best


def energy_coefficients(weight: np.ndarray, t: np.ndarray, x: np.ndarray, xdot: np.ndarray,
                        omega2: np.ndarray) -> tuple[float, complex]:
    """(c1, c2) of the smeared energy E = s c1 + 2 Re(c c2) (module docstring)."""
    c1 = simpson(weight * (np.abs(xdot) ** 2 + omega2 * np.abs(x) ** 2) / 2, x=t)
    c2 = simpson(weight * (xdot**2 + omega2 * x**2) / 2, x=t)
    return float(c1), complex(c2)


def minimal_energy(c1: float, c2: complex) -> tuple[np.ndarray, float]:
    """Point of the unit hyperboloid minimising s c1 + 2 Re(c c2), and the minimum."""
    disc = c1 * c1 - abs(c2) ** 2
    if not disc > 0:
        raise NumericalFailure("state of low energy: smeared energy not positive definite "
                               f"(c1^2 - |c2|^2 = {disc:.3g})")
    s = c1 / math.sqrt(disc)
    return hyperboloid_point(s, -s * c2.conjugate() / (2 * c1)), math.sqrt(disc)


def bump(tau: np.ndarray) -> np.ndarray:
    """exp(-1/(1 - tau^2)) for |tau| < 1, 0 elsewhere (smooth, compact support)."""
    inside = np.abs(tau) < 1
    out = np.zeros_like(tau)
    out[inside] = np.exp(-1 / (1 - tau[inside] ** 2))
    return out


# -- window of one background ------------------------------------------------------------------
def window_nodes(table, efolds: float = WINDOW_EFOLDS) -> tuple[int, int]:
    """First and last background nodes of |ln(a/a_B)| <= ``efolds`` around the bounce."""
    ib = table.bounce_index()
    rel = table.ln_a - table.ln_a[ib]
    before = np.nonzero(rel[:ib] >= efolds)[0]
    after = np.nonzero(rel[ib:] >= efolds)[0]
    if not len(before) or not len(after):
        raise NumericalFailure(f"the window of {efolds:g} e-folds around the bounce is not in "
                               "the background table (integrate the contracting branch "
                               "further into the past)")
    return int(before[-1]), ib + int(after[0])


def reference_solution(solver, k: float, i0: int, i1: int,
                       points_per_radian: float = POINTS_PER_RADIAN,
                       min_points: int = MIN_POINTS):
    """Normalised solution over nodes i0..i1: (t, x, pi, form) sampled uniformly in t."""
    f = int(solver.form_of_node[i0])
    if np.any(solver.form_of_node[i0:i1 + 1] != f):
        raise NumericalFailure("window states need one mode form across the window")
    deta = float(solver.eta[i1] - solver.eta[i0])
    n = int(max(min_points, points_per_radian * 2 * k * deta)) // 2 * 2 + 1
    t = np.linspace(solver.t[i0], solver.t[i1], n)
    w0 = math.hypot(k, solver.system.table.k_lqc)
    a0 = float(solver.a[i0])
    x, p = complex(1 / (a0 * math.sqrt(2 * w0))), complex(-1j * a0 * math.sqrt(w0 / 2))
    xs = np.empty(n, complex)
    ps = np.empty(n, complex)
    xs[0], ps[0] = x, p
    S = solver.splines[f]
    for j in range(1, n):
        x, p, _ = evolve(k, x, p, t[j - 1], t[j], S, solver.t, solver.step, 50_000_000)
        xs[j], ps[j] = x, p
    return t, xs, ps, f


def _background_on(solver, i0: int, i1: int, t: np.ndarray, f: int):
    """ln a (and H = d ln a/dt), P_A, P_B2 and P_B0 of form f on the sample times."""
    lo, hi = max(i0 - 3, 0), min(i1 + 4, len(solver.t))
    tt = solver.t[lo:hi]
    sp = CubicSpline(tt, solver.system.table.ln_a[lo:hi])
    F = solver.system.forms[f]
    # P_B0 carries the bounce potential's jump at H = 0 (sign convention): linear there
    return (sp(t), sp(t, 1), np.interp(t, tt, F.PA[lo:hi]), np.interp(t, tt, F.PB2[lo:hi]),
            np.interp(t, tt, F.PB0[lo:hi]))


def _require_dressed(solver, name: str) -> None:
    sysm = solver.system
    if sysm.prescription != "dressed_metric":
        raise InputError(f"perturbations.state = '{name}' needs prescription 'dressed_metric' "
                         "(in the deformed algebra Omega < 0 around the bounce: no positive "
                         "energy and z = a/sqrt(Omega) is singular there)")
    for F in sysm.forms:
        if np.any(F.PB4) or np.any(F.PC2):
            raise InputError(f"perturbations.state = '{name}': unsupported mode form {F.name}")


def window_state(solver, k: float, kind: str, efolds: float = WINDOW_EFOLDS,
                 points_per_radian: float = POINTS_PER_RADIAN, min_points: int = MIN_POINTS,
                 with_value: bool = False):
    """``kind`` = "non_oscillating" or "low_energy": (i0, x, pi, nan) at the window's start.

    ``with_value``: also return the minimised functional and the reference solution's data
    (t, x, pi, X) for checks.
    """
    _require_dressed(solver, kind)
    i0, i1 = window_nodes(solver.system.table, efolds)
    t, xs, ps, f = reference_solution(solver, k, i0, i1, points_per_radian, min_points)
    ln_a, hub, pa, pb2, pb0 = _background_on(solver, i0, i1, t, f)
    a = np.exp(ln_a)
    xdot = pa * ps / a**3
    if kind == "non_oscillating":
        mu = a * xs
        dmu = a * a * (hub * xs + xdot)
        X, value = minimal_oscillation(oscillation_form(1 / a, t, mu, dmu))
    elif kind == "low_energy":
        omega2 = (k * k * pb2 + a * a * pb0) / (a * a)
        if np.any(omega2 <= 0):
            raise NumericalFailure(f"state of low energy: k^2 + a^2 U <= 0 in the window for "
                                   f"k = {k:g} (no positive energy)")
        ib = solver.system.table.bounce_index()
        tb = solver.t[ib]
        tau = np.where(t < tb, (t - tb) / (tb - t[0]), (t - tb) / (t[-1] - tb))
        X, value = minimal_energy(*energy_coefficients(bump(tau) ** 2, t, xs, xdot, omega2))
    else:
        raise ValueError(kind)
    lam, nu = rotation(X)
    x0 = lam * xs[0] + nu * xs[0].conjugate()
    p0 = lam * ps[0] + nu * ps[0].conjugate()
    if with_value:
        return (i0, x0, p0, math.nan), value, (t, xs, ps, X)
    return i0, x0, p0, math.nan
