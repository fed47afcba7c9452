"""Primordial spectra in bounce units: P_s(k), P_t(k) for k in units where a_B = 1.

Each mode is evolved from its initial state (see :mod:`.states`) through the bounce and stopped
when frozen far outside the Hubble radius during inflation, k/(aH) = ``freeze`` (1e-3 by
default; corrections are of order (k/aH)^2). Ultraviolet modes are started late, inside the
Hubble radius during inflation, by the WKB jump of :mod:`.modes`: exact to the second adiabatic
order, which joins the slow-roll spectra continuously.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .background import BackgroundTable
from .modes import ModeResult, ModeSolver
from .prescriptions import DEFAULT_SIGN_CONVENTION, mode_system
from .states import Bogoliubov, make_state


@dataclass(frozen=True)
class BounceSpectrum:
    """Spectra in bounce units with provenance and diagnostics."""

    k: np.ndarray
    scalar: np.ndarray
    tensor: np.ndarray
    k_lqc: float
    prescription: str
    state: str
    sign_convention: str
    scalar_modes: ModeResult
    tensor_modes: ModeResult
    notes: tuple[str, ...] = ()
    settings: dict = field(default_factory=dict)

    @property
    def max_wronskian_error(self) -> float:
        """max |W - i| / max(1, 2|x||pi|) over all modes (round-off floor ~1e-16 x steps)."""
        out = 0.0
        for r in (self.scalar_modes, self.tensor_modes):
            out = max(out, float(np.max(r.wronskian_error / np.maximum(1, r.wronskian_scale))))
        return out


def bounce_spectra(table: BackgroundTable, k: np.ndarray, *, prescription: str = "dressed_metric",
                   state: str = "remote_past",
                   sign_convention: str = DEFAULT_SIGN_CONVENTION,
                   bogoliubov: Bogoliubov | None = None, step: float = 0.08,
                   adiabatic_ratio: float = 40.0, freeze: float = 1e-3,
                   switch_density: float = 1e-4, show_progress: bool = False) -> BounceSpectrum:
    """Scalar and tensor spectra at the wavenumbers ``k`` (bounce units, a_B = 1)."""
    k = np.asarray(k, dtype=float)
    init = make_state(state, bogoliubov)
    kw = {"step": step, "adiabatic_ratio": adiabatic_ratio, "freeze": freeze}
    from ..progress import progress

    bar = progress(total=2 * len(k), desc="modes", enabled=show_progress)
    tens = ModeSolver(mode_system(table, "tensor", prescription), **kw).solve(k, init, bar=bar)
    ssys = mode_system(table, "scalar", prescription, sign_convention, switch_density)
    scal = ModeSolver(ssys, **kw).solve(k, init, bar=bar)
    bar.close()
    notes = [tens.description, scal.description]
    nf = int((~scal.frozen).sum() + (~tens.frozen).sum())
    if nf:
        notes.append(f"{nf} modes were not frozen (k/aH > {freeze:g}) when the table ended")
    k_lqc = table.k_lqc if table.has_bounce else float("nan")
    return BounceSpectrum(k, scal.power, tens.power, k_lqc, prescription, state,
                          ssys.sign_convention, scal, tens, tuple(notes),
                          {**kw, "switch_density": switch_density,
                           "bogoliubov": None if bogoliubov is None else bogoliubov.__dict__})
