"""Fast bounce spectra for sampling: a power law times the cached transfer."""

from __future__ import annotations

import math

import numpy as np

from ..errors import NotEvaluable
from .transfer_table import certified_ranges, load_transfer, represented_floor

CAP_EXPONENT = 600.0


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
    ``certified`` (the window 1e-4-0.2 Mpc^-1 lies within the certified k/k_LQC ranges of
    CERTIFIED_RANGES for this table) and ``x_window_min``. Certified accuracy
    (``bouncelike transfer-check``, dressed metric, remote-past state): <= 0.1% for window
    points above 0.1 k_LQC, <= 1% pointwise (max 0.50% with --seed 11) in the deepest troughs
    between 0.01 and 0.1 k_LQC; per table and potential in :mod:`.transfer`.

    ``potential``: the family of backgrounds the cache was calibrated on ("quadratic",
    "starobinsky"; :mod:`.transfer_backgrounds`); another potential is refused (InputError with
    the reason). A background outside what the cache covers is not evaluable
    (:class:`~bouncelike.errors.NotEvaluable`, one line naming the quantity and the covered
    range; :meth:`coverage`): D outside the calibration rows, n_s - 1 or n_t = -r/8 outside the
    calibrated tilts (when D is given: the residual phase depends on them), V_B/rho_c (optional
    parameter ``log10_potential_fraction``) outside the calibrated range, or a window reaching
    below the smallest x the table represents for its whole family (``represented_floor``, e.g.
    the remote-past state on Starobinsky bounces is not set below 0.363 k_LQC). Background
    edge values are never held; a window below the tabulated 0.01 k_LQC of a quadratic table is
    evaluated with the edge values and flagged uncertified (``certified`` = 0), as before.
    """

    parameter_names = ("ln_1e10_As", "n_s", "r", "log10_k_lqc", "log10_conformal_duration")
    #: read when present: V_B/rho_c of the background, checked against the cached range
    optional_parameter_names = ("log10_conformal_duration", "log10_potential_fraction")

    def __init__(self, prescription: str = "dressed_metric", state: str = "remote_past",
                 pivot: float = 0.05, k_grid: np.ndarray | None = None,
                 average_unresolved: bool = True, potential: str = "quadratic"):
        from .transfer_backgrounds import family

        family(potential)  # InputError for a potential without a cache, with the reason
        self.table = load_transfer(prescription, state, potential)
        self.average_unresolved = average_unresolved
        self.pivot = pivot
        self.k = np.geomspace(1e-5, 1.0, 300) if k_grid is None else np.asarray(k_grid)
        self._dlnk = float(np.log(self.k[-1] / self.k[0]) / max(len(self.k) - 1, 1))

    def coverage(self, params: dict) -> None:
        """Raise NotEvaluable (one line: what is out of range, the covered range) for a
        background the cache does not cover: conformal duration, tilts (both only with D
        given), bounce potential fraction (when given), or a window reaching modes below the
        smallest x where the state is set on the calibration backgrounds. D and the tilts are
        checked only where the window meets the tabulated range (they set the features'
        phase)."""
        t = self.table
        what = f"({t.prescription}, {t.state}, {t.family} bounces)"
        ld = params.get("log10_conformal_duration")
        xmin = 1e-4 / 10 ** params["log10_k_lqc"]
        # D and the tilts set the phase of the features: they matter where the window meets
        # the tabulated range (above it the dressed-metric T is 1; the deformed algebra keeps
        # the anchor's oscillation)
        features = xmin < t.x[-1] or t.growth_per_x > 0
        if ld is not None and features:
            lo, hi = t.d_range
            if not lo <= 10**ld <= hi:
                raise NotEvaluable(f"bounce transfer: conformal duration D = {10**ld:.4g} is "
                                   f"outside the cached range {lo:.4g}-{hi:.4g} {what}")
            if t.tilt_range is not None:
                for f, tilt, name in (("scalar", params["n_s"] - 1, "n_s - 1"),
                                      ("tensor", -params.get("r", 0.0) / 8, "n_t = -r/8")):
                    a, b = t.tilt_range[f]
                    if f == "tensor" and not params.get("r", 0.0) > 0:
                        continue  # no tensors: their phase does not enter
                    if not a <= tilt <= b:
                        raise NotEvaluable(f"bounce transfer: {name} = {tilt:.4g} is outside "
                                           f"the calibrated range {a:.4g} to {b:.4g} {what}")
        lf = params.get("log10_potential_fraction")
        if lf is not None and t.fraction_range is not None:
            a, b = t.fraction_range
            if not a * (1 - 1e-9) <= 10**lf <= b * (1 + 1e-9):
                raise NotEvaluable(f"bounce transfer: potential fraction V_B/rho_c = "
                                   f"{10**lf:.3g} is outside the cached range {a:.3g}-{b:.3g} "
                                   f"{what}")
        floor, why = represented_floor(t)
        if why and xmin < floor:
            raise NotEvaluable(f"bounce transfer: the observable window reaches k = {xmin:.3g} "
                               f"k_LQC, below {floor:.3g} k_LQC, where {why} {what}")

    def spectra(self, params: dict):
        from ..spectra.tabulated import TabulatedSpectra

        self.coverage(params)
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
            "k/k_LQC over the observable window)",)
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
        floor, why = represented_floor(self.table)
        t = self.table
        below = ((floor * 10 ** params["log10_k_lqc"],
                  f"k < {floor:.3g} k_LQC: {why}; {t.prescription}, {t.state}, {t.family} "
                  "bounces") if why else None)
        return TabulatedSpectra(self.k, ps, pt, notes=notes, label="bounce transfer model",
                                period_mean=period_mean, oscillation_period=period,
                                unrepresented_below=below)

    @staticmethod
    def _powers(params: dict, lt: dict, lk: np.ndarray):
        """P_s, P_t (and where capped) of the power law times the transfer ``lt``."""
        a_s = math.exp(params["ln_1e10_As"]) * 1e-10
        r = params.get("r", 0.0)
        # deformed algebra far above k_LQC: a common cap e^600 on the transfer keeps P_t/P_s
        # (both grow with the same exponent G; see bouncelike.models.bounce_ultraviolet)
        top = np.maximum(lt["scalar"], lt["tensor"])
        capped = top + lt["growth"] > CAP_EXPONENT
        ls = np.where(capped, lt["scalar"] - top + CAP_EXPONENT, lt["scalar"] + lt["growth"])
        ltt = np.where(capped, lt["tensor"] - top + CAP_EXPONENT, lt["tensor"] + lt["growth"])
        ps = a_s * np.exp((params["n_s"] - 1) * lk + ls)
        pt = r * a_s * np.exp(-r / 8 * lk + ltt) if r > 0 else np.zeros_like(ps)
        return ps, pt, capped

    def derived(self, params: dict) -> dict:
        self.coverage(params)
        xmin = 1e-4 / 10 ** params["log10_k_lqc"]
        xmax = 0.2 / 10 ** params["log10_k_lqc"]
        t = self.table
        ranges = certified_ranges(t.prescription, t.state, t.family)
        inside = any(a <= xmin and xmax <= b for a, b in ranges)
        return {"certified": bool(inside), "x_window_min": xmin}
