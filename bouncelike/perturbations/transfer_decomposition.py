"""Exact decomposition of the bounce modes: alpha, rho = |beta/alpha|, residual phase theta.

See :mod:`.transfer` for what the transfer depends on and why it is split this way.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError

MATCH_EFOLDS = 3.5
X_GRID = np.geomspace(0.01, 100.0, 401)
FIELDS = ("scalar", "tensor")


def quadratic_bounce(mass: float, phi_b: float, past_density: float | None = None):
    """Bounce background of V = m^2 phi^2/2 with phi = phi_B at the bounce (phidot > 0).

    The contracting branch reaches ``past_density`` (default: far enough for the remote-past
    state of every x >= X_GRID[0], :func:`.states.remote_past_density`).
    """
    from ..background.potentials import Quadratic
    from ..units import critical_density
    from .background import integrate_background
    from .states import remote_past_density

    rc = critical_density()
    if past_density is None:
        past_density = remote_past_density(float(X_GRID[0]), rc)
    pot = Quadratic(mass=mass)
    return integrate_background(pot, rc, phi_b, math.sqrt(2 * (rc - float(pot.V(phi_b)))),
                                past_density=past_density)


def conformal_duration(tab, eta: np.ndarray | None = None) -> float:
    """D = k_LQC (eta_end - eta_B): conformal time from the bounce to the end of inflation."""
    eta = tab.conformal_time() if eta is None else eta
    if not np.isfinite(tab.t_inflation_end):
        raise InputError("transfer: inflation does not end within the background table")
    return float(tab.k_lqc * (np.interp(tab.t_inflation_end, tab.t, eta)
                              - eta[tab.bounce_index()]))


@dataclass(frozen=True)
class Decomposition:
    """Exact pieces of T for one background and field (see the module docstring).

    ``omega``: the conformal frequency W = sqrt(k^2 Omega_eff - z''/z) of each mode at the
    matching time, where alpha and beta are defined (the energy of one quantum there is W/a).
    """

    x: np.ndarray
    ln_alpha: np.ndarray
    rho: np.ndarray
    phase: np.ndarray          # arg(beta/alpha) - 2 arg X_+ (radians, not reduced)
    ln_power: np.ndarray       # bounce spectrum (exact)
    ln_standard: np.ndarray    # P_std: adiabatic vacuum started after the bounce (exact)
    duration: float
    start_adiabaticity: np.ndarray | None = None  # rate/frequency where the state is set
    omega: np.ndarray | None = None  # conformal frequency at the matching time

    @property
    def ln_transfer(self) -> np.ndarray:
        return self.ln_power - self.ln_standard

    @property
    def ln_mean_transfer(self) -> np.ndarray:
        """ln of the period mean of T: |alpha|^2 (1 + rho^2) = |alpha|^2 + |beta|^2."""
        return 2 * self.ln_alpha + np.log1p(self.rho**2)

    @property
    def beta2(self) -> np.ndarray:
        """|beta|^2 = |alpha|^2 rho^2: quanta per mode created relative to the adiabatic
        vacuum of the matching time."""
        return np.exp(2 * self.ln_alpha) * self.rho**2


def decompose(tab, x: np.ndarray, field_: str, prescription: str = "dressed_metric",
              state: str = "remote_past", match_efolds: float = MATCH_EFOLDS,
              sign_convention: str | None = None,
              solver_options: dict | None = None, *, bogoliubov=None,
              switch_density: float | None = None, full=None,
              duration: float | None = None) -> Decomposition:
    """Integrate the modes x k_LQC exactly and split them as in the module docstring.

    ``sign_convention``: of the dressed-metric scalar potential (None: the default of
    prescriptions.py); ``solver_options``: keyword arguments of the ModeSolver (step, ...);
    ``bogoliubov``: a rotation of the state (:class:`.states.Bogoliubov`); ``switch_density``:
    of the deformed-algebra scalars (None: the default of prescriptions.py); ``full``: the
    :class:`.modes.ModeResult` of these modes already integrated to freeze-out with the same
    settings (reused instead of integrating them again); ``duration``: D of this background
    when ``tab`` is a section that ends before inflation does.
    Every mode needs W^2 > 0 at the matching time (InputError otherwise).
    """
    from .modes import ModeSolver
    from .prescriptions import DEFAULT_SIGN_CONVENTION, mode_system
    from .states import make_state

    x = np.asarray(x, dtype=float)
    k = x * tab.k_lqc
    extra = {} if switch_density is None else {"switch_density": switch_density}
    sol = ModeSolver(mode_system(tab, field_, prescription,
                                 sign_convention or DEFAULT_SIGN_CONVENTION, **extra),
                     **(solver_options or {}))
    im = matching_index(tab, match_efolds)
    init = make_state(state, bogoliubov)
    if full is None:
        full = sol.solve(k, init)
    end_index = sol.end_index
    sol.end_index = lambda kk: (im, True)
    try:
        mid = sol.solve(k, init)
    finally:
        sol.end_index = end_index
    fm = int(sol.form_of_node[im])
    alpha = np.empty(len(k), complex)
    beta = np.empty(len(k), complex)
    omega = np.empty(len(k))
    start = {}
    for j, kk in enumerate(k):
        w2 = sol.w2(fm, kk)
        if not w2[im] > 0:
            raise InputError(f"transfer: mode x = {x[j]:.4g} does not oscillate at the "
                             "matching time (W^2 <= 0): no adiabatic basis there")
        omega[j] = math.sqrt(w2[im])
        mu, dmu = sol.to_mu(fm, im, kk, mid.x_end[j], mid.p_end[j])
        fb, dfb = sol.adiabatic_basis(fm, im, kk, w2)
        alpha[j] = -1j * (mu * dfb.conjugate() - dmu * fb.conjugate())
        beta[j] = 1j * (mu * dfb - dmu * fb)
        start[float(kk)] = sol.from_mu(fm, im, kk, fb, dfb)
    ref = sol.solve(k, lambda s, kk: (im, *start[float(kk)], math.nan))
    ratio = beta / alpha
    return Decomposition(x, np.log(np.abs(alpha)), np.abs(ratio),
                         np.angle(ratio) - 2 * np.angle(ref.x_end), np.log(full.power),
                         np.log(ref.power),
                         conformal_duration(tab, sol.eta) if duration is None else duration,
                         full.start_adiabaticity, omega)


def matching_index(tab, match_efolds: float = MATCH_EFOLDS) -> int:
    """The background node ``match_efolds`` e-folds after the bounce (InputError if none)."""
    ib = tab.bounce_index()
    after = np.nonzero(tab.ln_a[ib:] - tab.ln_a[ib] >= match_efolds)[0]
    if not len(after):
        raise InputError("transfer: the background ends before the matching time")
    return ib + int(after[0])


def matching_frequency2(tab, x: np.ndarray, field_: str, prescription: str = "dressed_metric",
                        sign_convention: str | None = None,
                        switch_density: float | None = None,
                        match_efolds: float = MATCH_EFOLDS) -> np.ndarray:
    """W^2 of each mode x k_LQC at the matching time (where :func:`decompose` needs W^2 > 0)."""
    from .prescriptions import DEFAULT_SIGN_CONVENTION, mode_system

    extra = {} if switch_density is None else {"switch_density": switch_density}
    system = mode_system(tab, field_, prescription, sign_convention or DEFAULT_SIGN_CONVENTION,
                         **extra)
    im = matching_index(tab, match_efolds)
    form = system.forms[int(system.form_of_node[im])]
    k = np.asarray(x, dtype=float) * tab.k_lqc
    return k * k * form.omega_eff[im] - form.zz[im]


def _theta(dec: Decomposition, tilt: np.ndarray) -> np.ndarray:
    th = dec.phase - 2 * dec.x * dec.duration + math.pi - tilt * math.pi / 2
    return np.angle(np.exp(1j * th))


def _tilt_basis(ln_d: np.ndarray, dt: np.ndarray) -> np.ndarray:
    """Basis of the tilt correction of theta (dt = tilt - tilt0(D), l = ln D - 9).

    dt, dt l, dt l^2, dt^2, dt^2 l, dt^3 along the last axis; every term vanishes at dt = 0
    (the phi_B = 1.2 rows).
    """
    ld = ln_d - 9.0
    return np.stack([dt, dt * ld, dt * ld * ld, dt * dt, dt * dt * ld, dt**3], axis=-1)


def _tilt(x: np.ndarray, ln_standard: np.ndarray) -> np.ndarray:
    """One tilt per background: slope of a straight-line fit of ln P_std against ln x.

    The fast model is fed one tilt (n_s - 1 or n_t at the pivot); the x dependence of the
    local tilt near the onset of inflation goes into theta(x, D) alike.
    """
    lx = np.log(x)
    return np.full(len(x), np.polyfit(lx, ln_standard, 1)[0])
