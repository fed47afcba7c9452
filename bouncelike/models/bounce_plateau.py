"""Plateau inflation that outlasts the background's e-fold cap: the window spectra of the
slow-roll attractor.

When inflation has not ended at the cap of the bounce model's background (a plateau thrown up
at the bounce), the e-folds still to come follow from slow roll on the potential,
N(phi) = 8 pi int V/V' dphi from the field where epsilon_V = (V'/V)^2/(16 pi) = 1 (Planck
units; textbook first-order slow roll). A classical background started 95 e-folds before the
end of inflation then carries the modes of the observable window (started inside the Hubble
radius, the bounce untouched), and the bounce scale follows from N_B* = (cap) + (slow-roll
e-folds) - N_*, ln(k_*/k_LQC) = N_B* + ln(H_*/sqrt(8 pi (rho_c - V_B))) (physics notes,
section 5; :func:`bouncelike.quantities.ln_pivot_over_bounce_scale`).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy.integrate import quad
from scipy.optimize import brentq

from ..background.table import BackgroundTable, table_from_state
from ..errors import NotEvaluable
from ..perturbations.mapping import WINDOW_GRID, ScaleMap, scale_map
from ..perturbations.spectra import BounceSpectrum, bounce_spectra
from ..quantities import ln_pivot_over_bounce_scale
from .bounce_ultraviolet import capped_boost, deformed_uv_tensor_note
from .reheating import Reheating


def slow_roll_end(potential: Any, phi: float) -> float:
    """Field value where epsilon_V = (V'/V)^2/(16 pi) = 1, rolling down from ``phi``."""
    if not float(potential.V(phi)) > 0:
        raise NotEvaluable(f"the potential vanishes at the end of the background (phi = "
                           f"{phi:.4g}): a field without potential energy never inflates, so "
                           "no pivot exit can be placed")
    s = math.copysign(1.0, float(potential.dV(phi)))

    def eps(x):
        return (float(potential.dV(x)) / float(potential.V(x))) ** 2 / (16 * math.pi) - 1.0

    if eps(phi) >= 0:
        raise NotEvaluable("the field is not inflating where the background integration "
                           "stopped (epsilon_V >= 1 there): no slow-roll continuation")
    prev, step, x = phi, 1e-3 * max(abs(phi), 1.0), phi
    while eps(x) < 0:
        prev = x
        x -= s * step
        step *= 1.5
        if abs(x - phi) > 1e3:
            raise NotEvaluable("slow roll never ends along the potential within 1000 m_Pl of "
                               "the field at the e-fold cap: no pivot exit can be placed")
    return brentq(eps, prev, x)


def slow_roll_efolds(potential: Any, phi: float, phi_end: float) -> float:
    """N(phi) = 8 pi int_{phi_end}^{phi} V/V' dphi (Planck units)."""
    return 8 * math.pi * quad(lambda y: float(potential.V(y)) / float(potential.dV(y)),
                              phi_end, phi, limit=400)[0]


def plateau_window(tab: BackgroundTable, potential: Any, opts: Any, reheating: Reheating
                   ) -> tuple[BackgroundTable, BounceSpectrum, ScaleMap, np.ndarray,
                              tuple[str, ...]]:
    """Inflation outlasts the integration cap: window spectra of the slow-roll attractor
    (module docstring). ``opts``: the bounce model's perturbation options. Returns the classical
    table, the spectrum, the scale map, k in Mpc^-1 and the notes."""
    if potential is None:
        raise NotEvaluable("inflation does not end within the background: N_* cannot be "
                           "placed")
    phi_cap = float(tab.phi[-1])
    phi_end = slow_roll_end(potential, phi_cap)
    n_cap = slow_roll_efolds(potential, phi_cap, phi_end)
    target = 95.0
    if n_cap < target + 5:
        raise NotEvaluable(f"inflation does not end within the background, and slow roll adds "
                           f"only {n_cap:.0f} e-folds after the cap: N_* cannot be placed")
    phi_x = brentq(lambda y: slow_roll_efolds(potential, y, phi_end) - target, phi_end, phi_cap)
    v0 = -float(potential.dV(phi_x)) / math.sqrt(24 * math.pi * float(potential.V(phi_x)))
    ctab = table_from_state(potential, math.inf, phi_x, v0)
    n_star = reheating.n_star(ctab)
    pivot = reheating.pivot
    sm_c = scale_map(ctab, n_star, pivot)
    lo, hi, n = WINDOW_GRID
    k_mpc = np.geomspace(lo, hi, n)
    kb = sm_c.to_bounce(k_mpc)
    std = bounce_spectra(ctab, kb, prescription="dressed_metric", state="remote_past",
                         sign_convention="classical", step=opts.step,
                         adiabatic_ratio=opts.adiabatic_ratio, freeze=opts.freeze)
    boost_s, boost_t = capped_boost() if opts.prescription == "deformed_algebra" else (1.0, 1.0)
    ln_a_end_classical = float(np.interp(ctab.t_inflation_end, ctab.t, ctab.ln_a))
    n_b_star = float(tab.ln_a[-1] - tab.ln_a[tab.bounce_index()]) + n_cap - n_star
    h_exit = float(np.interp(ln_a_end_classical - n_star, ctab.ln_a, ctab.H))
    ln_k_lqc = math.log(pivot) - ln_pivot_over_bounce_scale(
        n_b_star, h_exit, tab.critical_density, float(tab.V[tab.bounce_index()]))
    sm = ScaleMap(n_star, n_b_star, pivot, ln_k_lqc - math.log(tab.k_lqc), ln_k_lqc, math.nan)
    notes = [sm.bounce_scale_note(),
             f"inflation outlasts the integration cap of {tab.ln_a[-1]:.0f} e-folds after the "
             f"bounce; slow roll adds {n_cap:.0f} more, so N_B* ~ {n_b_star:.0f} and the window "
             "spectra are those of the slow-roll attractor (modes started inside the Hubble "
             "radius during inflation, bounce untouched)"]
    if opts.prescription == "deformed_algebra":
        notes.append("deformed algebra: every window mode lies so far above k_LQC that its "
                     "Euclidean growth exceeds e^600; both powers are given as the standard "
                     "ones x e^600 x their measured ultraviolet ratio, a lower bound")
        notes.append(deformed_uv_tensor_note(
            math.log(pivot) - ln_k_lqc, float(np.interp(math.log(pivot), np.log(k_mpc),
                                                        np.log(std.tensor))), pivot))
    spectrum = BounceSpectrum(kb, std.scalar * boost_s, std.tensor * boost_t, tab.k_lqc,
                              opts.prescription, opts.state, std.sign_convention,
                              std.scalar_modes, std.tensor_modes, std.notes, std.settings)
    return ctab, spectrum, sm, k_mpc, tuple(notes)
