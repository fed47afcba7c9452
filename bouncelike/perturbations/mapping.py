"""From bounce units to comoving Mpc^-1 (physics notes section 5).

The pivot k_* left the Hubble radius N_* e-folds before the end of inflation, at a_* with
a_* H_* = k_* (comoving). With a_B = 1 in bounce units, a bounce-unit wavenumber k_b is
k_b x k_* / (a_* H_*) in Mpc^-1, and N_B* = ln(a_*/a_B) is the number of e-folds from the
bounce to the pivot's exit: ln(k_*/k_LQC) = N_B* + ln(H_*/sqrt(8 pi (rho_c - V_B))).

N_* is either given or follows from the reheating history by the Liddle & Leach estimate
(PRD 68 (2003) 103503), in the form of the Planck 2018 inflation paper (arXiv:1807.06211,
the N_* equation of its section on reheating; from memory, the search tool did not return
its text):

    N_* = 67 - ln(k_*/(a_0 H_0)) + (1/4) ln(V_*^2/(M_Pl^4 rho_end))
          + ((1 - 3w)/(12 (1 + w))) ln(rho_reh/rho_end) - (1/12) ln g_th,

M_Pl the reduced Planck mass (so V/M_Pl^4 = (8 pi)^2 V in our Planck units), rho_end the density
at the end of inflation, V_* the potential at the pivot's exit (solved self-consistently), and
g_th the number of relativistic degrees of freedom thermalised at the end of reheating (the
entropy then, s ~ g_th T^3, is what today's radiation is compared with). Default
``G_TH_DEFAULT`` = 106.75, all Standard Model particles relativistic (Kolb & Turner, The Early
Universe, ch. 3; the usual choice for reheating above the electroweak scale); allowed
1-1e5 (g_th = 1000, a large extension, moves N_* by a further -0.19).
The term is -0.39 e-folds at the default (-0.58 at g_th = 1000); with V_* solved along it,
k_LQC in Mpc^-1 moves down by a factor ~1.5 (measured 1.48 at the default, 1.78 at 1000).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..quantities import (
    EQUATION_OF_STATE,
    LOG10_REHEATING_DENSITY,
    PIVOT,
    THERMAL_DEGREES_OF_FREEDOM,
)
from ..units import hubble_radius_wavenumber
from .background import BackgroundTable

#: Observable window of comoving wavenumbers (Mpc^-1), common practice (physics notes s.5).
OBSERVABLE_WINDOW = (1e-4, 0.2)
#: Wavenumbers (Mpc^-1) the bounce model always tabulates around the window: (from, to, count).
WINDOW_GRID = (1e-5, 1.0, 40)
#: relativistic degrees of freedom at thermalisation, default (module doc; declared with its
#: allowed range in :data:`bouncelike.quantities.THERMAL_DEGREES_OF_FREEDOM`)
G_TH_DEFAULT = THERMAL_DEGREES_OF_FREEDOM.default


@dataclass(frozen=True)
class ScaleMap:
    """Conversion of one background: k_mpc = k_bounce * mpc_per_bounce_unit."""

    n_star: float
    n_bounce_pivot: float
    pivot: float
    ln_mpc_per_bounce_unit: float
    ln_k_lqc_mpc: float
    ln_a_pivot: float

    @property
    def mpc_per_bounce_unit(self) -> float:
        return math.exp(self.ln_mpc_per_bounce_unit) if self.ln_mpc_per_bounce_unit > -700 else 0.0

    @property
    def k_lqc_mpc(self) -> float:
        return math.exp(self.ln_k_lqc_mpc) if self.ln_k_lqc_mpc > -700 else 0.0

    def to_mpc(self, k_bounce):
        return np.exp(np.log(np.asarray(k_bounce, dtype=float)) + self.ln_mpc_per_bounce_unit)

    def to_bounce(self, k_mpc):
        return np.exp(np.log(np.asarray(k_mpc, dtype=float)) - self.ln_mpc_per_bounce_unit)

    def bounce_scale_note(self) -> str:
        lo, hi = OBSERVABLE_WINDOW
        lk = self.ln_k_lqc_mpc / math.log(10)
        if lk < math.log10(lo):
            where = f"{math.log10(lo) - lk:.1f} decades below the observable window"
        elif lk > math.log10(hi):
            where = f"{lk - math.log10(hi):.1f} decades above the observable window"
        else:
            where = "inside the observable window"
        return (f"bounce scale k_LQC = 10^{lk:.2f} Mpc^-1, {where} ({lo:g}-{hi:g} Mpc^-1, common "
                f"practice); N_B* = {self.n_bounce_pivot:.2f} e-folds from the bounce to the "
                f"exit of k_* = {self.pivot:g} Mpc^-1, N_* = {self.n_star:.2f}")


def _exit_index_quantities(tab: BackgroundTable, ln_a_end: float, n: float):
    ln_a = ln_a_end - n
    post = tab.t > (tab.t_bounce if tab.has_bounce else -np.inf)
    ln_a_p = tab.ln_a[post]
    ln_aH_p = ln_a_p + np.log(np.maximum(tab.H[post], 1e-300))
    order = np.argsort(ln_a_p)
    V = np.interp(ln_a, ln_a_p[order], tab.V[post][order])
    ln_aH = np.interp(ln_a, ln_a_p[order], ln_aH_p[order])
    return ln_a, V, ln_aH


def liddle_leach_n_star(tab: BackgroundTable, w: float, rho_reh: float, pivot: float = PIVOT,
                        h0: float | None = None, g_th: float = G_TH_DEFAULT) -> float:
    """Solve the Liddle & Leach estimate for N_* on this background (Planck units rho_reh).

    ``g_th``: relativistic degrees of freedom thermalised at the end of reheating (the
    [reheating] key ``thermal_degrees_of_freedom``; module docstring).
    """
    if not np.isfinite(tab.t_inflation_end):
        raise InputError("reheating: inflation does not end within the background; give "
                         "reheating.N_star directly")
    EQUATION_OF_STATE.check(w, "reheating.equation_of_state")
    THERMAL_DEGREES_OF_FREEDOM.check(g_th, "reheating.thermal_degrees_of_freedom")
    i_end = int(np.argmin(np.abs(tab.t - tab.t_inflation_end)))
    rho_end = float(tab.rho[i_end])
    if not 0 < rho_reh <= rho_end:
        LOG10_REHEATING_DENSITY.check(
            math.log10(rho_reh) if rho_reh > 0 else -math.inf,
            "reheating.log10_reheating_density", upper=math.log10(rho_end) * (1 - 1e-15),
            reason=f"reheating ends after inflation: rho_reh <= rho_end = {rho_end:.3g}")
    ln_a_end = float(tab.ln_a[i_end])
    mp4 = 1 / (8 * math.pi) ** 2
    k0 = hubble_radius_wavenumber(h0)
    n = 55.0
    for _ in range(50):
        _, V, _ = _exit_index_quantities(tab, ln_a_end, n)
        new = (67 - math.log(pivot / k0) + 0.25 * math.log(V**2 / (mp4 * rho_end))
               + (1 - 3 * w) / (12 * (1 + w)) * math.log(rho_reh / rho_end)
               - math.log(g_th) / 12)
        if abs(new - n) < 1e-10:
            break
        n = new
    return n


def scale_map(tab: BackgroundTable, n_star: float, pivot: float = PIVOT) -> ScaleMap:
    """Map bounce units to Mpc^-1 given N_* (e-folds from the pivot's exit to the end)."""
    if not np.isfinite(tab.t_inflation_end):
        raise InputError("inflation does not end within the background: cannot place N_*")
    i_end = int(np.argmin(np.abs(tab.t - tab.t_inflation_end)))
    ln_a_end = float(tab.ln_a[i_end])
    ln_a_b = float(tab.ln_a[tab.bounce_index()]) if tab.has_bounce else 0.0
    if n_star <= 0 or ln_a_end - n_star <= ln_a_b:
        raise InputError(f"reheating.N_star = {n_star:.3g} does not fit: the background has "
                         f"{ln_a_end - ln_a_b:.3g} e-folds from the bounce to the end of inflation")
    ln_a, _, ln_aH = _exit_index_quantities(tab, ln_a_end, n_star)
    ln_factor = math.log(pivot) - ln_aH
    k_lqc = tab.k_lqc if tab.has_bounce else float("nan")
    return ScaleMap(n_star, ln_a - ln_a_b, pivot, ln_factor, math.log(k_lqc) + ln_factor, ln_a)
