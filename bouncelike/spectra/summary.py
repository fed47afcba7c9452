"""Reduce any spectra object to the numbers published bounds constrain, at a given pivot.

Published constraints are stated for ln(1e10 A_s), n_s, dn_s/dln k, d^2 n_s/dln k^2 and r at a
pivot k_* (0.05 or 0.002 Mpc^-1). :func:`summarize` returns these as a :class:`PivotSummary`.

* Objects that can re-expand themselves exactly (a ``summary_at(pivot)`` method, e.g.
  :class:`~bouncelike.spectra.powerlaw.PowerLawSpectra`) are asked directly.
* Anything else (tabulated or featured spectra) is fitted. The method, stated once here:

  0. objects that oscillate faster than they are sampled implement the period-mean protocol
     (:mod:`bouncelike.spectra.oscillations`: the bounce forward and transfer models carry
     their period means, a plain table is smoothed where its rows zigzag): they are read
     through it, i.e. the fit sees their period mean (:class:`~bouncelike.spectra.
     oscillations.PeriodMeanView`), which is what the CMB sees of oscillations finer than its
     resolution in k (~pi/chi_* = 2.3e-4 Mpc^-1, :mod:`bouncelike.sky.projection`);
     ``period_mean`` says whether that changed the spectra in the fit window;

  1. sample x = ln(k/k_*) on ``points`` (default 201) equally spaced values in
     [-half_width, +half_width] (default half_width = 2, i.e. k_* e^-2 .. k_* e^2, a factor 55
     in k; clipped to the object's table range ``k_min``/``k_max`` when it has one);
  2. fit a cubic polynomial c0 + c1 x + c2 x^2 + c3 x^3 to ln P_s by weighted least squares
     with Gaussian weights w(x) = exp(-x^2 / (2 s^2)), s = half_width / 2, so points near the
     pivot count most; read ln(1e10 A_s) = c0 + ln 1e10, n_s = 1 + c1, running = 2 c2,
     running_of_running = 6 c3;
  3. fit ln P_t the same way (when tensors are present): r = exp(c0_t - c0_s), n_t = c1_t;
  4. fit quality ``fit_rms`` = the weighted root-mean-square residual of ln P (the larger of
     scalar and tensor), i.e. the typical fractional mismatch between the spectrum and the
     polynomial near the pivot. ``fit_ok`` is ``fit_rms <= tolerance``. The scalar residual
     alone (``rms_scalar``) and that of the fit of ln(P_t/P_s) (``rms_ratio``; its constant
     term is ln r exactly, the fit being linear) are kept too: a spectrum whose two fields carry
     the same features has a smooth ratio even where each field is not a cubic.

  The default tolerance is 0.01 (1 % in P). It is chosen below the 68 % error of the best
  measured amplitude, sigma(ln 1e10 A_s) = 0.014 (Planck 2018 VI, arXiv:1807.06209, Table 2):
  a spectrum whose shape near the pivot departs from a cubic by more than that is not fairly
  described by the summary numbers, and scoring it through them would mislead. The score
  reports such a failure next to the verdict.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, replace
from typing import Any

import numpy as np

from ..errors import InputError, NumericalFailure

#: Half-width of the fit window in ln k around the pivot.
DEFAULT_HALF_WIDTH = 2.0
#: Tolerance on the weighted rms residual of ln P (1 % in P).
DEFAULT_TOLERANCE = 0.01
#: Number of sample points in the fit window.
DEFAULT_POINTS = 201
#: Degree of the fitted polynomial in ln k (ln A_s, n_s, running, running of running).
FIT_DEGREE = 3

_LN_1E10 = math.log(1e10)


@dataclass(frozen=True)
class PivotSummary:
    """The published-bound quantities of a spectrum at one pivot.

    ``fit_rms`` is the weighted rms residual of ln P around the cubic (0 for an exact
    re-expansion), ``fit_ok`` whether it is within ``tolerance``; ``window`` is the (k_min, k_max)
    fitted, in Mpc^-1, or None when no fit was needed. ``n_t`` is the tensor tilt at the pivot
    (NaN without tensors); ``method`` is ``"exact"`` or ``"fit"``; ``period_mean``: the fit
    read the period mean of oscillations the spectra carry (step 0 of the module docstring).
    """

    pivot: float
    ln_1e10_As: float
    n_s: float
    running: float
    running_of_running: float
    r: float
    fit_rms: float
    fit_ok: bool
    tolerance: float
    window: tuple[float, float] | None
    n_t: float = math.nan
    method: str = "fit"
    rms_scalar: float = 0.0
    rms_ratio: float = 0.0
    period_mean: bool = False

    def value(self, quantity: str) -> float:
        """One of ``ln_1e10_As``, ``n_s``, ``running``, ``running_of_running``, ``r``."""
        return float(getattr(self, quantity))

    def as_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["window"] = list(self.window) if self.window is not None else None
        return d


def _weighted_cubic(x: np.ndarray, y: np.ndarray, w: np.ndarray) -> tuple[np.ndarray, float]:
    """Weighted least-squares cubic; returns coefficients (c0..c3) and the weighted rms residual."""
    sw = np.sqrt(w)
    design = np.vander(x, FIT_DEGREE + 1, increasing=True)
    coef, *_ = np.linalg.lstsq(design * sw[:, None], y * sw, rcond=None)
    resid = y - design @ coef
    rms = float(np.sqrt(np.sum(w * resid**2) / np.sum(w)))
    return coef, rms


def window_wavenumbers(spectra: Any, pivot: float, half_width: float = DEFAULT_HALF_WIDTH,
                       points: int = DEFAULT_POINTS) -> np.ndarray:
    """The wavenumbers (Mpc^-1) the fit samples: steps 1 of the module docstring."""
    if not (pivot > 0 and math.isfinite(pivot)):
        raise InputError(f"pivot must be a positive number of Mpc^-1, got {pivot!r}")
    if not half_width > 0:
        raise InputError(f"fit half-width must be > 0, got {half_width!r}")
    x_lo, x_hi = -half_width, half_width
    k_min = getattr(spectra, "k_min", None)
    k_max = getattr(spectra, "k_max", None)
    if k_min is not None and k_max is not None and not getattr(spectra, "extrapolate", False):
        if not (k_min <= pivot <= k_max):
            raise InputError(
                f"pivot {pivot:g} Mpc^-1 lies outside the spectra table "
                f"[{k_min:.4g}, {k_max:.4g}] Mpc^-1"
            )
        x_lo = max(x_lo, math.log(k_min / pivot))
        x_hi = min(x_hi, math.log(k_max / pivot))
        if x_hi - x_lo < 0.5 * half_width:
            raise InputError(
                f"the spectra table [{k_min:.4g}, {k_max:.4g}] Mpc^-1 covers too little of the "
                f"fit window around the pivot {pivot:g} Mpc^-1 (need at least "
                f"{half_width:g} in ln k)"
            )
    return pivot * np.exp(np.linspace(x_lo, x_hi, points))


def fit_summary(
    spectra: Any,
    pivot: float,
    *,
    half_width: float = DEFAULT_HALF_WIDTH,
    tolerance: float = DEFAULT_TOLERANCE,
    points: int = DEFAULT_POINTS,
) -> PivotSummary:
    """The weighted polynomial fit described in the module docstring (never the exact path)."""
    k = window_wavenumbers(spectra, pivot, half_width, points)
    x = np.log(k / pivot)
    s = half_width / 2.0
    w = np.exp(-0.5 * (x / s) ** 2)

    ps = np.asarray(spectra.scalar(k), dtype=float)
    if not np.all(np.isfinite(ps)) or np.any(ps <= 0):
        raise NumericalFailure(
            f"scalar spectrum is not positive and finite in the window around k = {pivot:g}"
        )
    c_s, rms_s = _weighted_cubic(x, np.log(ps), w)
    pt = np.asarray(spectra.tensor(k), dtype=float)
    if not np.all(np.isfinite(pt)) or np.any(pt < 0):
        raise NumericalFailure(
            f"tensor spectrum is negative or not finite in the window around k = {pivot:g}"
        )
    rms_ratio = 0.0
    if np.all(pt == 0):
        r, n_t, rms_t = 0.0, math.nan, 0.0
    elif np.any(pt == 0):
        raise NumericalFailure(
            f"tensor spectrum vanishes in part of the window around k = {pivot:g}"
        )
    else:
        c_t, rms_t = _weighted_cubic(x, np.log(pt), w)
        r = float(math.exp(c_t[0] - c_s[0]))
        n_t = float(c_t[1])
        rms_ratio = _weighted_cubic(x, np.log(pt) - np.log(ps), w)[1]
    fit_rms = max(rms_s, rms_t)
    return PivotSummary(
        pivot=float(pivot),
        ln_1e10_As=float(c_s[0] + _LN_1E10),
        n_s=float(1.0 + c_s[1]),
        running=float(2.0 * c_s[2]),
        running_of_running=float(6.0 * c_s[3]),
        r=r,
        fit_rms=fit_rms,
        fit_ok=bool(fit_rms <= tolerance),
        tolerance=float(tolerance),
        window=(float(k[0]), float(k[-1])),
        n_t=n_t,
        method="fit",
        rms_scalar=rms_s,
        rms_ratio=rms_ratio,
    )


def summarize(
    spectra: Any,
    pivot: float,
    *,
    half_width: float = DEFAULT_HALF_WIDTH,
    tolerance: float = DEFAULT_TOLERANCE,
) -> PivotSummary:
    """Summary of ``spectra`` at ``pivot`` (Mpc^-1): exact if possible, else the documented fit."""
    from .oscillations import PeriodMeanView, averaged_power, knows_oscillations

    exact = getattr(spectra, "summary_at", None)
    if callable(exact):
        return exact(pivot)
    if not knows_oscillations(spectra):
        return fit_summary(spectra, pivot, half_width=half_width, tolerance=tolerance)
    s = fit_summary(PeriodMeanView(spectra), pivot, half_width=half_width,
                    tolerance=tolerance)
    k = window_wavenumbers(spectra, pivot, half_width)
    mean_s, mean_t = averaged_power(spectra, k, None)
    changed = not (np.array_equal(mean_s, spectra.scalar(k))
                   and np.array_equal(mean_t, spectra.tensor(k)))
    return replace(s, period_mean=changed)
