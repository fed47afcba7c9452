"""Mode equations of the two effective prescriptions, written as linear Hamiltonian systems.

Every mode is a canonical pair (x, pi) in cosmic time t with the quadratic Hamiltonian
H = (A pi^2 + 2 C x pi + B x^2)/2, i.e.

    xdot = C x + A pi,        pidot = -B x - C pi,

normalised so that the Wronskian x pi* - x* pi = i for a positive-frequency mode. Each *form*
gives A, B, C through k-independent profiles (L = ln a):

    A = e^{-3L} P_A,   B = k^2 e^{L} P_B2 + e^{3L} P_B0 + k^4 e^{-L} P_B4,   C = k^2 e^{-2L} P_C2,

the canonical variable mu = z x of the second-order form mu'' + (k^2 Omega_eff - z''/z) mu = 0
(' = d/d eta, conformal time), and the spectrum P = k^3 amp |x|^2 once the mode is frozen.

Forms (Omega = 1 - 2 rho/rho_c)
--------------------------------
* ``tensor_dressed``: x = h (per polarisation, mu = a h), A = 1/a^3, B = k^2 a; amp = 32/pi
  (physics notes s.4: P_T = (32 k^3/pi)|h|^2; de Sitter gives 16 H^2/pi).
* ``tensor_deformed``: x = h, pi = a^2 h'/Omega: h' = Omega pi/a^2, pi' = -k^2 a^2 h (physics
  notes s.4: regular through Omega = 0), i.e. A = Omega/a^3, B = k^2 a; mu = z_T h with
  z_T = a/sqrt(Omega) where Omega > 0.
* ``scalar_dressed``: x = Q (flat-gauge field perturbation, v = a Q), pi = a^3 Qdot:
  A = 1/a^3, B = (k^2 + a^2 U) a, with the bounce-regular potential
  U = f V + 2 s sqrt(f) V_phi + V_phiphi, f = 24 pi phidot^2/rho (Agullo, Ashtekar & Nelson,
  CQG 30 (2013) 085014; Agullo & Morris, PRD 92 (2015) 124040). Since v'' = -(k^2 - a''/a +
  a^2 U) v, (a^2 Q')' = -(k^2 + a^2 U) a^2 Q exactly: no a''/a is needed. amp = (H/phidot)^2
  /(2 pi^2) (P_R = k^3/(2 pi^2) (H/phidot)^2 |Q|^2).
  ``sign_convention`` (how s is carried across the bounce; the literature differs, physics
  notes s.4):

  - "classical" (default): s = sign(phidot H) at every instant, the sign of 8 pi phidot/H in
    the classical potential, so that a''/a - a^2 U equals the classical z''/z (z = a phidot/H)
    on both branches wherever rho << rho_c (up to O(rho/rho_c)). The printed form (s = -1,
    Agullo, Ashtekar & Nelson 2013) was derived for the expanding branch with the field rolling
    down; carrying s with the sign of the scale factor's momentum (pi_a ~ -a^2 H, which flips
    at the bounce), so that the contracting branch keeps its classical limit, is the extension
    across the bounce discussed by Li, Singh & Wang (arXiv:2105.14067); earlier dressed-metric
    computations (e.g. arXiv:1912.08225) continued the expanding-branch form, and the two
    papers' infrared spectra differ by ~10% (physics notes s.4). Only the abstracts were
    reachable here: which paper uses which choice is from memory. At H = 0 no sign is
    defined: there s = 0 (the V_phi term is dropped at the bounce instant) and U jumps by
    4 sqrt(f) |V_phi| ~ 50 m^2 phi_B across the bounce (~1e-10 against k_LQC^2 ~ 10 for
    inflaton masses ~1e-6; the integrator's splines are split at the bounce node, so the jump
    is spread over one grid interval on each side, without overshoot).
  - "fixed_slow_roll" (the default until the classical limit was required): s held through
    the whole evolution at its slow-roll value sign(phidot H) at the end of inflation, i.e. the
    printed s = -1 for the printed orientation (phi > 0 rolling down) and its mirror image
    otherwise. Away from the bounce it has the non-classical sign wherever phidot H > 0: while
    a field thrown up its potential still climbs after the bounce, and on alternate
    half-oscillations in the contracting branch.

  The two differ only where V_phi != 0 and phidot H > 0; models/bounce.py reports how much P_s
  changes with the other convention.
* ``scalar_deformed`` (deformed algebra, Cailleteau, Mielczarek, Barrau & Grain 2012; Bolliet
  et al. arXiv:1508.06786): v'' + (Omega k^2 - z_S''/z_S) v = 0, z_S = a phidot/H, singular
  where H = 0. With R = v/z_S and Z = a^3 phidot^2/H^2 the pair (R, p = Z Rdot) has
  H = p^2/(2Z) + k^2 Omega Z R^2/(2 a^2). Because Hdot = -4 pi phidot^2 Omega on the effective
  background, Omega Z/a^2 = (a/4pi) d(1/H)/dt, so g = (I - a/H)/(4 pi) with I = int a dt obeys
  gdot = -Omega Z/a^2 and the time-dependent canonical change s = p - k^2 g R gives the exact
  rank-one Hamiltonian K = (s + k^2 g R)^2/(2 Z), whose coefficients
  1/Z = H^2/(a^3 phidot^2), g/Z = H (I H - a)/(4 pi a^3 phidot^2),
  g^2/Z = (I H - a)^2/(16 pi^2 a^3 phidot^2) are all regular at H = 0 (derived here; the
  cancellation of the pole is exact). This form is used wherever rho > ``switch_density``
  x rho_c (it needs phidot != 0 there). Elsewhere the mode is carried as Q = (phidot/H) R with
  A = 1/a^3, B = (Omega k^2 + a^2 U_cl) a, U_cl the classical-sign potential: there it differs
  from the exact deformed-algebra equation by O(rho/rho_c) <= switch_density.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.integrate import quad
from scipy.interpolate import CubicSpline

from ..errors import InputError
from .background import BackgroundTable, _cumulative

PRESCRIPTIONS = ("dressed_metric", "deformed_algebra")
SIGN_CONVENTIONS = ("classical", "fixed_slow_roll")
DEFAULT_SIGN_CONVENTION = "classical"
FIELDS = ("tensor", "scalar")


@dataclass(frozen=True)
class ModeForm:
    """Node samples of one canonical form (see module docstring)."""

    name: str
    PA: np.ndarray
    PB2: np.ndarray
    PB0: np.ndarray
    PB4: np.ndarray
    PC2: np.ndarray
    omega_eff: np.ndarray   # coefficient of k^2 in W^2 = k^2 Omega_eff - z''/z
    zz: np.ndarray          # z''/z (conformal)
    lnz: np.ndarray
    dlnz: np.ndarray        # (ln z)' (conformal)
    wbg2: np.ndarray        # background rate squared (cosmic time): step and adiabaticity test
    amp: np.ndarray


@dataclass(frozen=True)
class ModeSystem:
    table: BackgroundTable
    field: str
    prescription: str
    sign_convention: str
    forms: tuple[ModeForm, ...]
    form_of_node: np.ndarray
    description: str
    extras: dict = field(default_factory=dict)


def _slow_roll_orientation(tab: BackgroundTable) -> float:
    """sign(phidot H) during inflation: at the end of inflation, else at the last node."""
    if np.isfinite(tab.t_inflation_end):
        i = int(np.argmin(np.abs(tab.t - tab.t_inflation_end)))
    else:
        i = len(tab.t) - 1
    while i > 0 and tab.phidot[i] * tab.H[i] == 0:
        i -= 1
    return float(np.sign(tab.phidot[i] * tab.H[i])) or -1.0


def bounce_potential(tab: BackgroundTable,
                     sign_convention: str = DEFAULT_SIGN_CONVENTION) -> np.ndarray:
    """U = f V + 2 s sqrt(f) V_phi + V_phiphi, f = 24 pi phidot^2/rho (AAN 2013).

    s per ``sign_convention`` (module docstring): "classical" sign(phidot H) (0 at H = 0),
    "fixed_slow_roll" its value during slow roll.
    """
    rho = tab.rho
    f = 24 * math.pi * tab.phidot**2 / rho
    if sign_convention == "fixed_slow_roll":
        s = np.full_like(f, _slow_roll_orientation(tab))
    elif sign_convention == "classical":
        s = np.sign(tab.phidot * tab.H)
    else:
        raise InputError(f"perturbations.sign_convention must be one of {SIGN_CONVENTIONS}")
    return f * tab.V + 2 * s * np.sqrt(f) * tab.dV + tab.d2V


def _a_dd_over_a(tab: BackgroundTable) -> np.ndarray:
    return tab.a**2 * (2 * tab.H**2 + tab.Hdot)


def _q_form(tab: BackgroundTable, name: str, U: np.ndarray, omega_eff: np.ndarray) -> ModeForm:
    a = tab.a
    one = np.ones_like(a)
    zero = np.zeros_like(a)
    with np.errstate(divide="ignore", invalid="ignore"):
        amp = (tab.H / tab.phidot) ** 2 / (2 * math.pi**2)
    return ModeForm(name, one, omega_eff, U, zero, zero, omega_eff, _a_dd_over_a(tab) - a**2 * U,
                    tab.ln_a, a * tab.H, tab.omega_bg2 + np.abs(U), amp)


def tensor_forms(tab: BackgroundTable, prescription: str) -> ModeForm:
    a = tab.a
    one = np.ones_like(a)
    zero = np.zeros_like(a)
    amp = np.full_like(a, 32 / math.pi)
    if prescription == "dressed_metric":
        return ModeForm("tensor_dressed", one, one, zero, zero, zero, one, _a_dd_over_a(tab),
                        tab.ln_a, a * tab.H, tab.omega_bg2, amp)
    Om = tab.Omega
    rc = tab.critical_density
    Omd = 6 * tab.H * tab.phidot**2 / rc
    Omdd = 6 * (tab.Hdot * tab.phidot**2 + 2 * tab.H * tab.phidot * tab.phiddot) / rc
    with np.errstate(divide="ignore", invalid="ignore"):
        r = Omd / Om
        dlnz = a * (tab.H - 0.5 * r)
        d2lnz = a**2 * (tab.H * (tab.H - 0.5 * r) + tab.Hdot - 0.5 * Omdd / Om + 0.5 * r**2)
        zz = np.where(Om > 0, d2lnz + dlnz**2, np.inf)
        lnz = tab.ln_a - 0.5 * np.log(np.where(Om > 0, Om, np.nan))
    return ModeForm("tensor_deformed", Om, one, zero, zero, zero, Om, zz, lnz, dlnz,
                    tab.omega_bg2, amp)


def _deformed_scalar_r_form(tab: BackgroundTable) -> ModeForm:
    a, H, pd, pdd = tab.a, tab.H, tab.phidot, tab.phiddot
    ib = tab.bounce_index()
    integral = _cumulative(tab, a)
    integral = integral - integral[ib]
    q = integral * H / a - 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        PA = (H / pd) ** 2
        PC2 = H * q / (4 * math.pi * pd**2)
        PB4 = q**2 / (16 * math.pi**2 * pd**2)
        rc = tab.critical_density
        Om = tab.Omega
        Hdd = -4 * math.pi * (2 * pd * pdd * Om + pd**2 * 6 * H * pd**2 / rc)
        pddd = -3 * tab.Hdot * pd - 3 * H * pdd - tab.d2V * pd
        g1 = H + pdd / pd - tab.Hdot / H
        dlnz = a * g1
        d2lnz = a**2 * (H * g1 + tab.Hdot + pddd / pd - (pdd / pd) ** 2 - Hdd / H
                        + (tab.Hdot / H) ** 2)
        zz = d2lnz + dlnz**2
        lnz = tab.ln_a + np.log(np.abs(pd / H))
    zero = np.zeros_like(a)
    return ModeForm("scalar_deformed_regular", PA, zero, zero, PB4, PC2, Om, zz, lnz, dlnz,
                    tab.omega_bg2, np.full_like(a, 1 / (2 * math.pi**2)))


def mode_system(tab: BackgroundTable, field_: str, prescription: str,
                sign_convention: str = DEFAULT_SIGN_CONVENTION,
                switch_density: float = 1e-4) -> ModeSystem:
    """Build the mode system of one field ("tensor"/"scalar") in one prescription."""
    if prescription not in PRESCRIPTIONS:
        raise InputError(f"perturbations.prescription must be one of {PRESCRIPTIONS}, "
                         f"got {prescription!r}")
    if field_ not in FIELDS:
        raise ValueError(field_)
    if sign_convention not in SIGN_CONVENTIONS:
        raise InputError(f"perturbations.sign_convention must be one of {SIGN_CONVENTIONS}, "
                         f"got {sign_convention!r}")
    n = len(tab.t)
    if prescription == "deformed_algebra" and not np.isfinite(tab.critical_density):
        prescription_used = "dressed_metric"  # Omega = 1 classically: the two coincide
    else:
        prescription_used = prescription
    if field_ == "tensor":
        form = tensor_forms(tab, prescription_used)
        desc = ("tensor modes, dressed metric: h'' + 2 (a'/a) h' + k^2 h = 0"
                if prescription_used == "dressed_metric" else
                "tensor modes, deformed algebra: h' = Omega pi/a^2, pi' = -k^2 a^2 h")
        return ModeSystem(tab, field_, prescription, sign_convention, (form,),
                          np.zeros(n, dtype=np.int64), desc)
    if np.any(tab.phidot == 0):
        raise InputError("scalar modes need a rolling field (phidot != 0); de Sitter has none")
    if prescription_used == "dressed_metric":
        U = bounce_potential(tab, sign_convention)
        form = _q_form(tab, "scalar_dressed", U, np.ones(n))
        desc = (f"scalar modes, dressed metric: v'' + (k^2 - a''/a + a^2 U) v = 0, "
                f"U bounce-regular, sign convention '{sign_convention}'")
        return ModeSystem(tab, field_, prescription, sign_convention, (form,),
                          np.zeros(n, dtype=np.int64), desc)
    U = bounce_potential(tab, "classical")
    qform = _q_form(tab, "scalar_deformed_q", U, tab.Omega)
    rform = _deformed_scalar_r_form(tab)
    near = tab.rho > switch_density * tab.critical_density
    if np.any(tab.phidot[near] == 0):
        raise InputError("deformed-algebra scalars need phidot != 0 near the bounce")
    form_of_node = near.astype(np.int64)
    desc = ("scalar modes, deformed algebra: v'' + (Omega k^2 - z_S''/z_S) v = 0, z_S = a phidot/H,"
            f" integrated in the regular variables (R, s = p - k^2 g R) where rho > "
            f"{switch_density:g} rho_c and as Q = (phidot/H) R with Omega k^2 and the classical "
            "potential elsewhere (difference O(rho/rho_c) there)")
    return ModeSystem(tab, field_, prescription, "classical", (qform, rform), form_of_node, desc,
                      {"switch_density": switch_density})


def euclidean_growth_rate(tab: BackgroundTable) -> float:
    """2 int sqrt(-Omega) d eta over the Euclidean phase (WKB growth exponent per unit k).

    Omega and ln a are splined on the nodes around the phase, its edges are the roots of the
    Omega spline, and the integral is taken with the square-root edges as quadrature weights
    (a trapezoid on the nodes misses them: relative error 3.5e-4 on the usual grids). The
    massless bounce gives 2 k_LQC int sqrt(-Omega) d eta = 1.59419 in units of k/k_LQC.
    """
    neg = np.nonzero(tab.Omega < 0)[0]
    if not len(neg):
        return 0.0
    sel = slice(max(int(neg[0]) - 4, 0), min(int(neg[-1]) + 5, len(tab.t)))
    om = CubicSpline(tab.t[sel], tab.Omega[sel])
    ln_a = CubicSpline(tab.t[sel], tab.ln_a[sel])
    roots = om.roots(extrapolate=False)
    t0 = roots[roots <= tab.t[neg[0]]].max() if np.any(roots <= tab.t[neg[0]]) else tab.t[0]
    t1 = roots[roots >= tab.t[neg[-1]]].min() if np.any(roots >= tab.t[neg[-1]]) else tab.t[-1]

    def smooth(t):  # sqrt(-Omega) / a divided by the square-root edge factors
        d = (t - t0) * (t1 - t)
        # at an edge, -Omega / d -> |dOmega/dt| / (t1 - t0)
        q = -float(om(t)) / d if d > 0 else abs(float(om(t, 1))) / (t1 - t0)
        return math.sqrt(max(q, 0.0)) * math.exp(-float(ln_a(t)))

    val = quad(smooth, t0, t1, weight="alg", wvar=(0.5, 0.5), limit=200)[0]
    return 2 * val
