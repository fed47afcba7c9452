"""Background providers for the mode equations: tables in cosmic time.

The mode integrator never calls the background engine while it steps; it reads a
:class:`BackgroundTable` (:mod:`bouncelike.background.table`, re-exported here): samples of
ln a, H, Hdot, phi, phidot, phiddot and V, V', V'' on a grid in cosmic time t that is uniform in
the *background clock* tau, d tau = omega_bg dt with omega_bg^2 = H^2 + |Hdot| + |V''| (so the
bounce, the kinetic era and inflation get comparable numbers of points). Planck units
G = c = hbar = 1 (m_Pl = 1); ``critical_density`` is inf for a classical (general-relativity)
background.

Providers
---------
* :func:`de_sitter` -- a = exp(H t) (tensors only: phidot = 0).
* :func:`power_law_inflation` -- a = (t/t_1)^p driven by V = V_0 exp(-sqrt(16 pi/p) phi)
  (exact classical solution; Lucchin & Matarrese 1985, textbook).
* :func:`massless_bounce` -- a = a_B (1 + 24 pi rho_c t^2)^(1/6), phidot^2 = 2 rho,
  rho = rho_c (a_B/a)^6 (Ashtekar & Singh, CQG 28 (2011) 213001).
* :func:`integrate_background` -- the background engine's table from a bounce state (or a
  classical start): :func:`bouncelike.background.table.table_from_state` (same keywords: the
  bounce state, ``past_density`` or ``t_past`` for the contracting branch, ``extra_efolds``
  after the end of inflation, ``max_efolds``, ``rtol``, ``points_per_unit``).
"""

from __future__ import annotations

import math

import numpy as np

from ..background.table import BackgroundTable, clock_grid, cumulative, table_from_state

#: the engine's table from a bounce state (name kept for the perturbation layer)
integrate_background = table_from_state
_cumulative = cumulative

__all__ = ["BackgroundTable", "clock_grid", "de_sitter", "integrate_background",
           "massless_bounce", "power_law_inflation"]


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
