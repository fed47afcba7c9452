"""Bounce models for sampling through the cached transfer of the bounce.

:class:`BounceSpectraModel` is the fast evaluator: a standard power law at the pivot times the
cached transfer T(k/k_LQC, D) of :mod:`bouncelike.perturbations.transfer` (modes from the remote
contracting past unless another cached state is chosen), in well under a millisecond.

:class:`BounceTransferModel` is the phenomenological bounce model of the registry
(``bounce_dressed_metric``, ``bounce_deformed_algebra``): parameters ``ln_1e10_As``, ``n_s``,
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
from typing import Any, ClassVar

import numpy as np

from ..perturbations.mapping import OBSERVABLE_WINDOW
from ..perturbations.transfer import CAP_EXPONENT, CERTIFIED_RANGES, load_transfer
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


class BounceSpectraModel:
    """Fast bounce spectra for sampling: power law x cached transfer T.

    Parameters (``spectra(params)``): ``ln_1e10_As``, ``n_s``, ``r`` (standard slow-roll part at
    the pivot, n_t = -r/8), ``log10_k_lqc`` (bounce scale in Mpc^-1) and
    ``log10_conformal_duration`` (log10 D, D = k_LQC x conformal time from the bounce to the end
    of inflation: the background quantity the features depend on; :func:`conformal_duration`
    computes it from a background, ~3.4-4.1 for quadratic inflatons with m = 1e-6-4e-6).
    ``log10_conformal_duration`` is optional: without it (or None) the spectra carry the
    period-averaged transfer |alpha|^2 (1 + rho^2), the features averaged over their phase
    (|alpha| and rho do not depend on D to < 1e-4).
    Oscillations finer than the k grid (period pi/(x D) in x) are replaced by their period
    average (``average_unresolved=False``: pointwise T). ``derived(params)`` gives
    ``certified`` (the window 1e-4-0.2 Mpc^-1 lies within the tabulated 0.01-100 k_LQC or
    above it, and D within the calibrated range) and ``x_window_min``. Certified accuracy
    (``bouncelike transfer-check``, dressed metric, remote-past state): <= 0.1% for window
    points above 0.1 k_LQC, <= 1% pointwise (max 0.50% with --seed 11) in the deepest troughs
    between 0.01 and 0.1 k_LQC, for tilts within the calibrated range (others are clipped).
    """

    parameter_names = ("ln_1e10_As", "n_s", "r", "log10_k_lqc", "log10_conformal_duration")

    def __init__(self, prescription: str = "dressed_metric", state: str = "remote_past",
                 pivot: float = PIVOT, k_grid: np.ndarray | None = None,
                 average_unresolved: bool = True):
        self.table = load_transfer(prescription, state)
        self.average_unresolved = average_unresolved
        self.pivot = pivot
        self.k = np.geomspace(1e-5, 1.0, 300) if k_grid is None else np.asarray(k_grid)
        self._dlnk = float(np.log(self.k[-1] / self.k[0]) / max(len(self.k) - 1, 1))

    def spectra(self, params: dict) -> TabulatedSpectra:
        r = params.get("r", 0.0)
        x = self.k / 10 ** params["log10_k_lqc"]
        if params.get("log10_conformal_duration") is None:
            lt = self.table.ln_mean_transfer(x, split=True)
        else:
            lt = self.table.ln_transfer(x, 10 ** params["log10_conformal_duration"],
                                        {"scalar": params["n_s"] - 1, "tensor": -r / 8},
                                        average_below=2 * self._dlnk
                                        if self.average_unresolved else None, split=True)
        lk = np.log(self.k / self.pivot)
        ps, pt, capped = self._powers(params, lt, lk)
        notes = () if self.derived(params)["certified"] else (
            "bounce transfer used outside its certified range (CERTIFIED_RANGES of "
            "k/k_LQC over the observable window, or conformal duration outside the "
            "calibrated range)",)
        if np.any(capped):
            notes = (*notes, "deformed algebra: transfer above e^600 capped by a common factor "
                     "(a lower bound; P_t/P_s kept)")
        # period means and the period pi/(x D) of the features in ln k, for consumers that
        # cannot resolve them (protocol of bouncelike.spectra.oscillations); without D the
        # spectra above are already period means
        period_mean, period = (ps, pt), None
        if params.get("log10_conformal_duration") is not None:
            d = 10 ** params["log10_conformal_duration"]
            period_mean = self._powers(params, self.table.ln_mean_transfer(x, d, split=True),
                                       lk)[:2]
            period = math.pi / (x * d)
        return TabulatedSpectra(self.k, ps, pt, notes=notes, label="bounce transfer model",
                                period_mean=period_mean, oscillation_period=period)

    @staticmethod
    def _powers(params: dict, lt: dict, lk: np.ndarray):
        """P_s, P_t (and where capped) of the power law times the transfer ``lt``."""
        a_s = math.exp(params["ln_1e10_As"]) * 1e-10
        r = params.get("r", 0.0)
        # deformed algebra far above k_LQC: a common cap e^600 on the transfer keeps P_t/P_s
        # (both grow with the same exponent G; see the bounce forward model)
        top = np.maximum(lt["scalar"], lt["tensor"])
        capped = top + lt["growth"] > CAP_EXPONENT
        ls = np.where(capped, lt["scalar"] - top + CAP_EXPONENT, lt["scalar"] + lt["growth"])
        ltt = np.where(capped, lt["tensor"] - top + CAP_EXPONENT, lt["tensor"] + lt["growth"])
        ps = a_s * np.exp((params["n_s"] - 1) * lk + ls)
        pt = r * a_s * np.exp(-r / 8 * lk + ltt) if r > 0 else np.zeros_like(ps)
        return ps, pt, capped

    def derived(self, params: dict) -> dict:
        lo_k, hi_k = OBSERVABLE_WINDOW
        xmin = lo_k / 10 ** params["log10_k_lqc"]
        xmax = hi_k / 10 ** params["log10_k_lqc"]
        lo, hi = self.table.d_range
        ld = params.get("log10_conformal_duration")
        d_ok = ld is None or lo <= 10**ld <= hi
        ranges = CERTIFIED_RANGES.get((self.table.prescription, self.table.state), ())
        inside = any(a <= xmin and xmax <= b for a, b in ranges)
        return {"certified": bool(inside and d_ok), "x_window_min": xmin}


class BounceTransferModel(ForwardModel):
    """Standard power law times the cached transfer of the bounce (module docstring)."""

    prescription: ClassVar[str] = ""
    parameters = (LN_AMPLITUDE, TILT, TENSOR_RATIO, LOG10_BOUNCE_SCALE, CRITICAL_DENSITY)
    derived_parameters = (N_BOUNCE_PIVOT, WINDOW_IN_BOUNCE_UNITS, CERTIFIED)
    config_section = "bounce_transfer"

    def __init__(self) -> None:
        self._model: BounceSpectraModel | None = None

    def __getstate__(self) -> dict[str, Any]:
        return {}  # workers rebuild the cached transfer (read from the shipped table)

    def __setstate__(self, state: dict[str, Any]) -> None:
        self._model = None

    def _fast(self) -> BounceSpectraModel:
        if self._model is None:
            self._model = BounceSpectraModel(prescription=self.prescription, pivot=PIVOT)
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


class BounceDressedMetric(BounceTransferModel):
    name = "bounce_dressed_metric"
    title = "Bounce, dressed-metric perturbations (cached transfer)"
    prescription = "dressed_metric"


class BounceDeformedAlgebra(BounceTransferModel):
    name = "bounce_deformed_algebra"
    title = "Bounce, deformed-algebra perturbations (cached transfer)"
    prescription = "deformed_algebra"
