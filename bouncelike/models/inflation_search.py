"""The bounce behind a given duration of inflation: the N_inflation search.

The physical bounce models describe a background either by its bounce potential fraction
x_V = V(phi_B)/rho_c or by its number of inflationary e-folds N_inflation (what a prior from
the oscillation phase of the contracting branch constrains). :func:`potential_fraction_for`
finds log10 x_V for a given N_inflation by a secant search over engine runs
(:func:`inflation_efolds`); :func:`bounce_background` gives the table view of the background
the spectra read. One isotropic dynamics per critical density is kept
(:func:`dynamics_for`). ``field_sign`` puts the field on a side of the potential at the bounce
(+1: the side it is thrown up, phi_B > 0 with phidot > 0; -1: a Starobinsky bounce climbing the
steep side towards the plateau, phi_B < 0).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..background.initial import BounceStart, IntegrationSettings
from ..background.isotropic import IsotropicDynamics
from ..background.table import BackgroundTable
from ..errors import NumericalFailure
from ..quantities import LOG10_POTENTIAL_FRACTION, N_INFLATION

_DYNAMICS: dict[float, Any] = {}


def dynamics_for(rho_c: float) -> IsotropicDynamics:
    """The isotropic effective dynamics of critical density ``rho_c`` (cached)."""
    if rho_c not in _DYNAMICS:
        if len(_DYNAMICS) > 64:
            _DYNAMICS.clear()
        _DYNAMICS[rho_c] = IsotropicDynamics(rho_c)
    return _DYNAMICS[rho_c]


def settings() -> IntegrationSettings:
    """Accepted steps only, and an inflationary cap far above any window placement."""
    return IntegrationSettings(dense_points=0, max_inflation_efolds=N_INFLATION.upper)


def bounce_background(dyn: Any, pot: Any, log10_fraction: float,
                      field_sign: int = 1) -> BackgroundTable:
    """The table view from the bounce (x_V = 10^``log10_fraction``, phidot > 0, sign(phi_B) =
    ``field_sign``) to the end of inflation; NumericalFailure unless inflation starts and
    ends."""
    LOG10_POTENTIAL_FRACTION.check(log10_fraction)
    tab = dyn.table(pot, BounceStart(10.0 ** log10_fraction, 1, field_sign), extra_efolds=0.0,
                    settings=settings())
    if tab.summary.status != "inflated":
        raise NumericalFailure(f"background {tab.summary.status}: {tab.summary.message}")
    return tab


def inflation_efolds(dyn: Any, pot: Any, log10_fraction: float, field_sign: int = 1) -> float:
    """Inflationary e-folds of the bounce with x_V = 10^``log10_fraction`` (engine summary)."""
    s = dyn.evolve_summary(pot, BounceStart(10.0 ** log10_fraction, 1, field_sign), settings())
    return s.inflationary_efolds


#: first guess of the search (only its speed depends on it): log10 x_V as a cubic in ln N,
#: fitted to engine runs with m = 1.2e-6 and rho_c = 0.40937 over N = 58-580 (to 0.02 in
#: log10 x_V), moved to other m and rho_c at fixed x_V rho_c / m^2 (fixed phi_B; ~3% in N)
_GUESS_CUBIC = (0.09624572, -1.69551587, 10.56438882, -33.35804853)
_GUESS_REF = (1.2e-6, 0.40937)
#: the same for the Starobinsky plateau (phi_B < 0): log10 x_V linear in ln N through the
#: engine runs N = 162 at 1e-8 and 50.2 at 1e-7 (M = 2.5e-6, rho_c = 0.40937)
_GUESS_STAROBINSKY = (-0.8547, -3.6473)


def _first_guess(pot: Any, rc: float, ln_t: float) -> tuple[float, float]:
    """(log10 x_V, d ln N / d log10 x_V) to start the search from."""
    if getattr(pot, "name", "") == "starobinsky":
        return float(np.polyval(_GUESS_STAROBINSKY, ln_t)), 1.0 / _GUESS_STAROBINSKY[0]
    m_ref, rc_ref = _GUESS_REF
    x0 = (float(np.polyval(_GUESS_CUBIC, ln_t)) + 2 * math.log10(float(pot.mass) / m_ref)
          - math.log10(rc / rc_ref))
    return x0, 1.0 / max(float(np.polyval(np.polyder(_GUESS_CUBIC), ln_t)), 1e-3)


def potential_fraction_for(dyn: Any, pot: Any, n_target: float, field_sign: int = 1,
                           tol: float = 5e-4) -> float:
    """log10 x_V giving ``n_target`` inflationary e-folds (secant in ln N vs log10 x_V), to
    ``tol`` in ln N (0.07 e-folds at N = 140; the stored N_inflation is the exact count of the
    background used).

    Deterministic: the result depends on (N, m, rho_c) only, never on earlier evaluations, so
    chains do not depend on the pool or on the order of evaluation. N grows monotonically with
    x_V over the inflating range of m^2 phi^2; on the Starobinsky bounces with phi_B < 0 it
    falls with x_V (the search follows the sign of its first guess's slope).
    """
    N_INFLATION.check(n_target)
    m = float(pot.mass)
    rc = float(dyn.critical_density)
    ln_t = math.log(n_target)
    x0, slope0 = _first_guess(pot, rc, ln_t)
    x0 = min(x0, -1e-3)
    increasing = slope0 > 0

    def f(lx: float) -> float:
        return math.log(max(inflation_efolds(dyn, pot, lx, field_sign), 1e-3)) - ln_t

    f0 = f(x0)
    if abs(f0) < tol:
        return x0
    x1 = min(x0 - f0 / slope0, -1e-6)
    f1 = f(x1)
    for _ in range(30):
        if abs(f1) < tol:
            return x1
        slope = (f1 - f0) / (x1 - x0) if x1 != x0 else 0.0
        if slope != 0 and (slope > 0) == increasing:
            step = -f1 / slope
        else:  # a flat or wrong-signed secant: a fixed step towards the target
            step = 0.3 * (-1 if (f1 > 0) == increasing else 1)
        x0, f0 = x1, f1
        x1 = min(x1 + max(min(step, 2.0), -2.0), -1e-6)
        f1 = f(x1)
    raise NumericalFailure(f"no bounce potential fraction gives N_inflation = {n_target:g} "
                           f"e-folds of inflation (mass = {m:g}, rho_c = {rc:g})")


