"""Initial states of the modes, selected by name.

* ``remote_past`` -- second-order adiabatic (Minkowski-like) vacuum set, for each k, at the
  latest node before the bounce where the mode is adiabatic to ``REMOTE_PAST_TOLERANCE``:
  eps = rate/W <= 0.05, W^2 = k^2 Omega - z''/z, rate^2 = (background rate)^2 + (W'/W)^2 +
  |W''/W| (:func:`adiabaticity`; reported per mode as ``start_adiabaticity``).
  In the contracting branch of these backgrounds that point lies in the kinetic era (eps ~
  2 aH/k falls into the past as a^-2 there). Earlier, the contracting branch leaves the kinetic
  era (a few e-folds of potential-dominated contraction where |aH| grows into the past, then
  field oscillations): modes below ~k_LQC are not adiabatic there, so "further into the past"
  means "further back within the last adiabatic stretch before the bounce", where the state is
  converged: moving it from eps = 0.1 to 0.01 changes the spectra by < 2e-5 (measured,
  tests/test_perturbation_states.py). The state is thus the adiabatic vacuum of the kinetic
  contracting era (as in Zhu et al., arXiv:1607.06329: Bunch-Davies vacuum imposed in the
  contracting phase prior to the bounce, where the modes are inside the Hubble radius); the
  earlier contracting history is not part of it. A mode whose eps never reaches the
  tolerance is set where eps is smallest (its ``start_adiabaticity`` > tolerance says so).
  The background table must reach that point: :func:`remote_past_density` gives the density
  down to which the contracting branch must be integrated for the smallest k. Without a
  bounce (classical tables) the state is set at the first node.
* ``bounce_adiabatic4`` -- fourth-order adiabatic vacuum at the bounce (dressed metric only:
  in the deformed algebra Omega = -1 there and no positive frequency exists; Agullo, Ashtekar
  & Nelson 2013 impose fourth-order adiabatic states at the bounce). W^2 is the adiabatic
  series truncated at fourth order, W^2 = w^2 + e2 + e4 with w^2 = k^2 - z''/z
  (:func:`adiabatic_frequency4`), derivatives of z''/z from a degree-7 interpolating spline in
  conformal time around the bounce. The series has a meaning only where w^2 > 0 and its terms
  decrease, |e4| <= |e2| <= w^2/4 (``ADIABATIC4_CRITERION``). At the bounce z''/z ~ k_LQC^2
  and its derivatives are of order k_LQC^(2+n), so the fourth-order state exists there only
  above x_4 ~ 3.8 k_LQC (measured: at 3 k_LQC e2/w^2 = -0.047 but e4/w^2 = -0.077; at
  4 k_LQC -0.013 and -0.011; the same for scalars and every background, the potential being
  ~1e-11 rho_c at the bounce). **Below x_4 no adiabatic state exists at the bounce**; the state
  used there is the ``remote_past`` one (the adiabatic vacuum of the last adiabatic stretch
  before the bounce). The two agree to < 1e-3 in the period-averaged transfer near x_4
  (measured 1.00199 vs 1.00138 at 3 k_LQC, 1.00004 vs 1.0001 at 4), so the spectra are
  continuous in k across the switch. Adiabaticity constrains only the ultraviolet part of a
  state; how the infrared part is fixed is a choice (from memory, AAN 2013 say as much; we did
  not find their treatment of k < k_LQC spelled out). The earlier choice here, W = k at the
  bounce below ~2.4 k_LQC, put a ~20% step into the mean transfer near 2.6 k_LQC.
* ``non_oscillating`` -- the non-oscillating vacuum (Martin de Blas & Olmedo, JCAP 06 (2016)
  029): the normalised mode whose |mu_k|^2 oscillates least, int (d|mu_k|^2/d eta)^2 d eta
  minimal, over the window |ln(a/a_B)| <= 1 around the bounce (:mod:`.states_window`).
* ``low_energy`` -- the state of low energy (Olbermann 2007; in loop quantum cosmology
  Martin-Benito, Neves & Olmedo, arXiv:2104.03035): the mode minimising its energy density
  smeared with a bump over the same window (:mod:`.states_window`).
  Both are dressed-metric states set at the bounce (regular there, no contracting history),
  and both are the adiabatic vacuum in the ultraviolet; above 30 k_LQC the fourth-order
  adiabatic state at the bounce stands in for them (transfers equal to < 1e-11 there).
* Bogoliubov rotation of any of them: mode -> alpha mode + beta mode*, with
  beta(k) = beta_0 exp(-(k/k_beta)^2) e^{i theta}, alpha = sqrt(1 + |beta|^2) (real), so that
  |alpha|^2 - |beta|^2 = 1 and the rotation acts only below k_beta (ultraviolet untouched).
  The spectrum becomes P_ref |alpha + e^{i theta'} beta|^2 with theta' set by the mode's phase,
  1 + 2|beta|^2 on phase average (physics notes s.4).

What a state can do to the power (exact; measured numbers: tensor modes, m = 1.2e-6,
phi_B = 1.2)
--------------------------------------------------------------------------------------------
Every mode k above ~1e-3 k_LQC re-enters the Hubble radius during the kinetic era after the
bounce (aH ~ a^-2 there) and is adiabatic from then until it leaves again during inflation.
Relative to the adiabatic vacuum of that era, whose freeze-out power is the standard power law,
any state is alpha f + beta f*, and the power averaged over the rapid oscillation in k (phase
2 x D, period pi/D in x, D ~ 1e4) is (|alpha|^2 + |beta|^2) P_std = (1 + 2|beta|^2) P_std
>= P_std. **No state set at or before the kinetic era can lower the period-averaged power
below the power law there**; the states differ in how much they raise it. The pointwise power
oscillates between (|alpha| - |beta|)^2 and (|alpha| + |beta|)^2 times P_std, so it dips below
the power law in every trough. Period-averaged transfer at x = 0.01 / 0.1 / 0.3 / 1 k_LQC:
remote_past 24.0 / 8.30 / 3.76 / 1.30; non_oscillating 4.41 / 2.18 / 1.54 / 1.073;
low_energy 21.9 / 2.73 / 1.54 / 1.083 (scalars the same to 1e-4); the state with frequency k
at the bounce (W = k there, the earlier infrared choice here) 36.8 / 3.97 / 1.70 / 1.078. Lower
envelope
(|alpha| - |beta|)^2 at 0.01: non_oscillating 0.115, low_energy 0.023, remote_past 0.021.
The published suppression of large-scale power by such states is therefore either this
lower envelope (a spectrum whose oscillation phase is locked, e.g. by removing the
oscillations) or lies on scales that never re-enter before inflation (x below ~1e-4 for these
backgrounds, outside the cached 0.01-100 k_LQC).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import make_interp_spline

from ..errors import InputError, NumericalFailure
from ..quantities import bounce_scale

STATES = ("remote_past", "bounce_adiabatic4", "non_oscillating", "low_energy")
#: eps = rate/W at which the remote-past state is set (spectra converged to < 2e-5 there).
REMOTE_PAST_TOLERANCE = 0.05
#: the fourth-order series has a meaning where w^2 > 0 and |e4| <= |e2| <= this x w^2
ADIABATIC4_CRITERION = 0.25


def adiabaticity(solver, k: float) -> np.ndarray:
    """eps = rate/W per node (inf where W^2 <= 0): the solver's adiabaticity test.

    rate^2 = a^2 omega_bg^2 + (W'/W)^2 + |W''/W| (:meth:`.modes.ModeSolver.adiabatic_rate2`):
    eps bounds the background rate over W, |W'|/W^2 and sqrt(|W''|/W^3) together, which also
    sees the turning points Omega = 0 of the deformed algebra.
    """
    rate2, w2 = solver.adiabatic_rate2(k)
    with np.errstate(invalid="ignore", divide="ignore"):
        ok = np.isfinite(w2) & np.isfinite(rate2) & (w2 > 0)
        return np.where(ok, np.sqrt(np.abs(rate2 / np.where(ok, w2, 1.0))), np.inf)


def remote_past_density(x_min: float, critical_density: float,
                        tolerance: float = REMOTE_PAST_TOLERANCE) -> float:
    """Density down to which the contracting branch must reach for modes >= x_min k_LQC.

    In the kinetic era of a bounce (a = a_B (rho_c/rho)^(1/6), aH = sqrt(8 pi rho/3) a,
    rate = 2 aH since |Hdot| = 3 H^2; Ashtekar & Singh 2011) eps = 2 aH/k reaches
    ``tolerance``/3 at this density (a margin of 27 in density), for a_B = 1 and
    k = x_min sqrt(8 pi rho_c).
    """
    k = x_min * bounce_scale(critical_density)
    c = 2 * math.sqrt(8 * math.pi / 3) * critical_density ** (1 / 6)
    return (tolerance / 3 * k / c) ** 3


def remote_past(solver, k: float, tolerance: float = REMOTE_PAST_TOLERANCE):
    tab = solver.system.table
    if tab.has_bounce:
        if tab.bounce_index() == 0:
            raise NumericalFailure("the remote-past state needs the contracting branch in the "
                                   "background table (this one starts at the bounce)")
        eps = adiabaticity(solver, k)[:tab.bounce_index()]
        ok = np.nonzero(eps <= tolerance)[0]
        i0 = int(ok[-1]) if len(ok) else int(np.argmin(eps))
    else:
        i0 = 0
        eps = adiabaticity(solver, k)[:1]
    if not np.isfinite(eps[i0]):
        raise NumericalFailure(f"mode k={k:g} has no positive frequency anywhere before the "
                               "bounce in the background table (start it further in the past)")
    f = solver.form_of_node[i0]
    mu, dmu = solver.adiabatic_basis(f, i0, k, solver.w2(f, k))
    x, p = solver.from_mu(f, i0, k, mu, dmu)
    return i0, x, p, float(eps[i0])


def adiabatic_frequency4(k: float, s: np.ndarray) -> tuple[np.ndarray, ...]:
    """Fourth-order adiabatic series of W^2 for w^2 = k^2 - s(eta).

    ``s``: rows s, s', s'', s''', s'''' (conformal-time derivatives of z''/z). From
    W^2 = w^2 - (1/2)[W''/W - (3/2)(W'/W)^2] (Birrell & Davies, Quantum Fields in Curved
    Space, s. 3.5; Parker & Fulling 1974), iterated and truncated order by order
    (u = w^2, u_n its n-th derivative):
    e2 = -u2/(4u) + (5/16) u1^2/u^2,
    e4 = -e2''/(4u) + u2 e2/(4u^2) + (5/8) u1 e2'/u^2 - (5/8) u1^2 e2/u^3.
    Returns (w^2, e2, e4, W'/W to third order).
    """
    u = k * k - s[0]
    u1, u2, u3, u4 = -s[1], -s[2], -s[3], -s[4]
    with np.errstate(invalid="ignore", divide="ignore"):
        e2 = -u2 / (4 * u) + 5 / 16 * u1**2 / u**2
        de2 = -u3 / (4 * u) + 7 / 8 * u1 * u2 / u**2 - 5 / 8 * u1**3 / u**3
        dde2 = (-u4 / (4 * u) + 9 / 8 * u1 * u3 / u**2 + 7 / 8 * u2**2 / u**2
                - 29 / 8 * u1**2 * u2 / u**3 + 15 / 8 * u1**4 / u**4)
        e4 = (-dde2 / (4 * u) + u2 * e2 / (4 * u**2) + 5 / 8 * u1 * de2 / u**2
              - 5 / 8 * u1**2 * e2 / u**3)
        dlnw = (u1 + de2) / (2 * (u + e2 + e4))
    return u, e2, e4, dlnw


def bounce_frequency4(solver, k: float) -> tuple[float, float, float, float]:
    """(w^2, e2, e4, W'/W) of the fourth-order series at the bounce node (dressed metric)."""
    tab = solver.system.table
    ib = tab.bounce_index()
    cache = getattr(solver, "_bounce_derivatives", None)
    if cache is None:
        f = int(solver.form_of_node[ib])
        lo, hi = max(ib - 60, 0), min(ib + 61, len(solver.t))
        sp = make_interp_spline(solver.eta[lo:hi], solver.system.forms[f].zz[lo:hi], k=7)
        cache = solver._bounce_derivatives = np.array([sp(solver.eta[ib], nu) for nu in range(5)])
    return tuple(float(v) for v in adiabatic_frequency4(k, cache))


def bounce_adiabatic4(solver, k: float):
    sysm = solver.system
    if sysm.prescription != "dressed_metric":
        raise InputError("perturbations.state = 'bounce_adiabatic4' needs prescription "
                         "'dressed_metric' (Omega < 0 at the bounce in the deformed algebra)")
    u, e2, e4, dlnw = bounce_frequency4(solver, k)
    c2 = ADIABATIC4_CRITERION
    if not (u > 0 and abs(e4) <= abs(e2) <= c2 * u):
        return remote_past(solver, k)  # no adiabatic state at the bounce (module docstring)
    ib = sysm.table.bounce_index()
    f = int(solver.form_of_node[ib])
    W = math.sqrt(u + e2 + e4)
    fv = 1 / math.sqrt(2 * W)
    x, p = solver.from_mu(f, ib, k, complex(fv), (-1j * W - dlnw) * fv)
    return ib, x, p, math.nan


def _window(kind: str):
    def state(solver, k: float):
        from .states_window import WINDOW_X_MAX, window_state

        if solver.system.prescription == "dressed_metric" and (
                k > WINDOW_X_MAX * solver.system.table.k_lqc):
            return bounce_adiabatic4(solver, k)  # both tend to it (states_window.py)
        return window_state(solver, k, kind)

    state.__name__ = kind
    return state


non_oscillating = _window("non_oscillating")
low_energy = _window("low_energy")


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
    base = {"remote_past": remote_past, "bounce_adiabatic4": bounce_adiabatic4,
            "non_oscillating": non_oscillating, "low_energy": low_energy}.get(name)
    if base is None:
        raise InputError(f"perturbations.state must be one of {STATES}, got {name!r}")
    if bogoliubov is None:
        return base

    def rotated(solver, k):
        i0, x, p, ad = base(solver, k)
        al, be = bogoliubov.coefficients(k)
        return i0, al * x + be * x.conjugate(), al * p + be * p.conjugate(), ad

    return rotated
