"""The standard (no-bounce) spectra at the pivot's exit, read off a background.

At the exit of the pivot scale, k_* = a_* H_*, the Hubble-flow parameters eps = -Hdot/H^2 and
eta = -phiddot/(H phidot) of the background give the next-to-leading-order slow-roll spectra
(Stewart & Lyth, Phys. Lett. B 302 (1993) 171, in the form of Lidsey et al., Rev. Mod. Phys. 69
(1997) 373, from memory; Planck units, m_Pl = 1, C = -2 + ln 2 + gamma_E):

    P_s = [1 - (2C + 1) eps + C eta]^2 H^4 / (4 pi^2 phidot^2)
    P_t = [1 - (C + 1) eps]^2 16 H^2 / pi
    n_s - 1 = 2 eta - 4 eps,   r = P_t / P_s  (tensor tilt by consistency, -r/8);

running is not carried (second order in slow roll, ~ -7e-4 for m^2 phi^2 / 2). The check against
the leading-order formulas of :mod:`.slowroll` is in tests/test_sampling_bounce_physical.py.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import NumericalFailure

#: C = -2 + ln 2 + Euler's gamma (Stewart & Lyth 1993)
C_SL = -2.0 + math.log(2.0) + 0.5772156649015329


def pivot_observables(tab: Any, ln_a_pivot: float) -> dict[str, float]:
    """Standard spectra at the pivot's exit (ln a = ``ln_a_pivot``, after the bounce)."""
    ib = tab.bounce_index() if tab.has_bounce else 0
    ln_a = tab.ln_a[ib + 1:]
    order = np.argsort(ln_a)
    la = ln_a[order]

    def at(arr: np.ndarray) -> float:
        return float(np.interp(ln_a_pivot, la, np.asarray(arr)[ib + 1:][order]))

    H, Hdot, phidot, phiddot = at(tab.H), at(tab.Hdot), at(tab.phidot), at(tab.phiddot)
    if not (H > 0 and phidot != 0):
        raise NumericalFailure("the pivot leaves the Hubble radius outside the inflationary "
                               "stretch of the background")
    eps = -Hdot / H**2
    eta = -phiddot / (H * phidot)
    if not 0 < eps < 1:
        raise NumericalFailure(f"the pivot leaves the Hubble radius while the background is "
                               f"not inflating (epsilon_H = {eps:.3g})")
    p_s = (1 - (2 * C_SL + 1) * eps + C_SL * eta) ** 2 * H**4 / (4 * math.pi**2 * phidot**2)
    p_t = (1 - (C_SL + 1) * eps) ** 2 * 16 * H**2 / math.pi
    return {"A_s": p_s, "ln_1e10_As": math.log(1e10 * p_s), "n_s": 1 + 2 * eta - 4 * eps,
            "r": p_t / p_s, "epsilon": eps, "H": H}
