"""Bounce models for sampling through the cached transfer of the bounce.

The fast evaluator, a standard power law at the pivot times the cached transfer T(k/k_LQC, D),
is :class:`bouncelike.perturbations.transfer_model.BounceSpectraModel` (transfer numerics and
their coverage checks live with the cache). :class:`BounceTransferModel` is the
phenomenological bounce model of the registry (``bounce_dressed_metric``,
``bounce_deformed_algebra`` and the dressed metric in the non-oscillating and low-energy
states): parameters ``ln_1e10_As``, ``n_s``,
``r`` (the slow-roll part at k_* = 0.05 Mpc^-1), ``log10_k_lqc`` (the comoving bounce scale in
Mpc^-1) and ``critical_density`` (Planck units; enters only the derived e-folds). Derived:

``N_B_star``      e-folds from the bounce to the exit of the pivot scale,
                  N_B* = ln(k_*/k_LQC) - ln(H_*/sqrt(8 pi rho_c)) (physics notes, section 5,
                  with V_B << rho_c; :func:`bouncelike.quantities.n_bounce_pivot`), H_* from
                  the tensor amplitude P_t = r A_s = 16 H_*^2 / pi (Planck units, de Sitter;
                  same notes, section 4); NaN for r = 0
``x_window_min``  1e-4 Mpc^-1 / k_LQC, the window's lower end in units of the bounce scale
``certified``     1 when the whole window lies where the cached transfer is certified
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import ClassVar

from ..perturbations.transfer_model import BounceSpectraModel
from ..quantities import (
    CERTIFIED,
    CRITICAL_DENSITY,
    LN_AMPLITUDE,
    LOG10_BOUNCE_SCALE,
    N_BOUNCE_PIVOT,
    PIVOT,
    TENSOR_RATIO,
    TILT,
    WINDOW_IN_BOUNCE_UNITS,
    n_bounce_pivot,
)
from ..spectra.tabulated import TabulatedSpectra
from .base import ForwardModel
from .variants import family_variants


class BounceTransferModel(ForwardModel):
    """Standard power law times the cached transfer of the bounce (module docstring)."""

    prescription: ClassVar[str] = ""
    state: ClassVar[str] = "remote_past"
    parameters = (LN_AMPLITUDE, TILT, TENSOR_RATIO, LOG10_BOUNCE_SCALE, CRITICAL_DENSITY)
    derived_parameters = (N_BOUNCE_PIVOT, WINDOW_IN_BOUNCE_UNITS, CERTIFIED)
    config_section = "bounce_transfer"

    def __init__(self) -> None:
        self._model: BounceSpectraModel | None = None

    def _fast(self) -> BounceSpectraModel:
        if self._model is None:
            self._model = BounceSpectraModel(prescription=self.prescription, pivot=PIVOT,
                                             state=self.state)
        return self._model

    def spectra(self, p: Mapping[str, float]) -> TabulatedSpectra:
        return self._fast().spectra(p)

    def derived(self, p: Mapping[str, float]) -> dict[str, float]:
        d = self._fast().derived(p)
        a_s = math.exp(p["ln_1e10_As"]) * 1e-10
        if p["r"] > 0:
            hubble = math.sqrt(math.pi * a_s * p["r"] / 16.0)
            ln_ratio = math.log(PIVOT) - p["log10_k_lqc"] * math.log(10.0)
            n_b = n_bounce_pivot(ln_ratio, hubble, p["critical_density"])
        else:
            n_b = math.nan
        return {"N_B_star": n_b, "x_window_min": float(d["x_window_min"]),
                "certified": float(bool(d["certified"]))}


#: the registry's cached-transfer bounce models, one per perturbation variant
BOUNCE_TRANSFER_MODELS = family_variants(BounceTransferModel, "bounce_{}",
                                         "Bounce (cached transfer), {}")
