"""Pivot constraints and the large-scale temperature term in one likelihood.

:class:`CombinedLikelihood` adds the low-ell temperature statistic T (:mod:`.lowell`) to the
chi-square of the Gaussian pivot terms (:mod:`.gaussian`); ``[likelihood] sets`` builds it as
soon as a set of kind ``temperature_low_ell`` is listed (e.g. ``planck2018_lowell_tt``).

**Overlap.** The Planck pivot sets come from the full Planck likelihood, which includes the
multipoles below 30; their amplitude and tilt are set mostly by the thousands of multipoles
above. The two are combined as independent: the low-ell temperature is counted twice only to
the extent it moves A_s and n_s (small; stated in every score).

**Featured spectra.** With this term on, a spectrum with oscillations is scored, not refused:
the pivot summaries are taken from its period mean (:class:`PeriodMeanView`; the bounce
transfer model knows its period mean exactly, a plain table is smoothed where it zigzags), the
amplitude, tilt and runnings from the cubic fit of ln P_s of that mean, r from the fit of
ln(P_t/P_s) (smooth where both fields carry the same features); the features themselves are
judged by the low-ell term. A quantity whose fit residual still exceeds the tolerance (the
features reach that pivot's window) cannot be summarised: the point raises
:class:`~bouncelike.errors.NotEvaluable` with the reason.

**Verdict.** T is not chi-square distributed. Under the hypothesis that the model is true,
X = chi2_m + T has a law that does not depend on the model (:mod:`.lowell_calibration`); the
p-value is P(X >= chi2_pivot + T) and the thresholds are those of the Gaussian likelihood
(excluded at 99.7% if p < 0.003, at 95% if p < 0.05).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace
from typing import Any

from ..errors import InputError, NotEvaluable
from ..spectra.oscillations import PeriodMeanView, knows_oscillations
from ..spectra.powerlaw import PowerLawSpectra
from ..spectra.summary import DEFAULT_HALF_WIDTH, DEFAULT_TOLERANCE, PivotSummary
from .bounds import spectra_cap
from .gaussian import GaussianLikelihood
from .lowell import LowEllTemperature
from .lowell_calibration import P_FLOOR
from .score import Score, verdict_from_p
from .sets import QUANTITIES, ConstraintSet

COMBINED_RULE = (
    "verdict: excluded at 99.7% if p < 0.003, excluded at 95% if p < 0.05, else allowed; "
    "p = P(X >= chi2_pivot + T) with X = chi2_m (the m pivot terms) + sum_ell nu_ell "
    "[u - ln u - 1], u ~ chi2_nu/nu (the law of the low-ell statistic T when the model is "
    "true, independent of the model), by numerical convolution; p below "
    f"{P_FLOOR:g} is given as that bound")


class CombinedLikelihood:
    """Gaussian pivot terms (optional) plus one large-scale temperature term."""

    def __init__(self, gaussian: GaussianLikelihood | None, low_ell: LowEllTemperature,
                 tolerance: float = DEFAULT_TOLERANCE):
        self.gaussian = gaussian
        self.low_ell = low_ell
        self.tolerance = float(tolerance)

    @property
    def sets(self) -> tuple[ConstraintSet, ...]:
        """The pivot constraint sets (the low-ell set is :attr:`low_ell`)."""
        return self.gaussian.sets if self.gaussian is not None else ()

    @property
    def pivots(self) -> tuple[float, ...]:
        return self.gaussian.pivots if self.gaussian is not None else ()

    @property
    def dof(self) -> int:
        return (self.gaussian.dof if self.gaussian is not None else 0) + len(self.low_ell.ells)

    # -- pivot part ------------------------------------------------------------------------
    def _view(self, spectra: Any) -> Any:
        # objects with exact (or already computed) summaries are asked directly
        if hasattr(spectra, "summary_at") or not knows_oscillations(spectra):
            return spectra
        return PeriodMeanView(spectra)

    def _check(self, summaries: Sequence[PivotSummary]) -> None:
        """NotEvaluable when a needed quantity of the period mean is not a cubic near its pivot."""
        by_pivot = {s.pivot: s for s in summaries}
        for cset in self.sets:
            sm = by_pivot[cset.pivot]
            if sm.method != "fit":
                continue
            for q in cset.quantities:
                rms = sm.rms_ratio if q == "r" else sm.rms_scalar
                if not rms <= self.tolerance:
                    what = "ln(P_t/P_s)" if q == "r" else "ln P_s"
                    raise NotEvaluable(
                        f"{cset.name}: the period-mean spectrum departs from a cubic in ln k "
                        f"near k = {sm.pivot:g} Mpc^-1 ({what} residual rms {rms:.3g} > "
                        f"{self.tolerance:g}): the features reach this pivot's window, so "
                        f"{q} cannot be summarised there")

    def summaries(self, spectra: Any) -> tuple[PivotSummary, ...]:
        """Pivot summaries of the period mean; NotEvaluable when a needed quantity is not
        represented. The returned summaries carry ``fit_ok = True``: they passed the
        per-quantity check (scalar residual for the amplitude and tilts, ratio residual for r).
        """
        if self.gaussian is None:
            return ()
        summaries = self.gaussian.summaries(self._view(spectra))
        self._check(summaries)
        return tuple(replace(s, fit_ok=True) for s in summaries)

    def _pivot_chi2(self, spectra: Any) -> float:
        if self.gaussian is None:
            return 0.0
        if type(spectra) is PowerLawSpectra:
            return self.gaussian._chi2(self.gaussian._values(spectra))
        values = [tuple(s.value(q) for q in QUANTITIES) for s in self.summaries(spectra)]
        return self.gaussian._chi2(values)

    # -- evaluation --------------------------------------------------------------------------
    def log_likelihood(self, spectra: Any) -> float:
        """-(chi2_pivot + T)/2; -inf when not finite; NotEvaluable as documented."""
        total = self._pivot_chi2(spectra) + self.low_ell.chi2(self.low_ell.predict(spectra))
        if total != total or total == math.inf:
            return -math.inf
        return -0.5 * total

    def score(self, spectra: Any) -> Score:
        """Score with every pivot term and every multipole as terms, calibrated p-value."""
        view = self._view(spectra)
        g = self.gaussian.score(view) if self.gaussian is not None else None
        if g is not None:
            self._check(g.summaries)
        low = self.low_ell.score(spectra)
        m = g.dof if g is not None else 0
        total = (g.chi2 if g is not None else 0.0) + low.total
        p, bound = self.low_ell.p_value(total, m)
        verdict, level = verdict_from_p(p)
        cap = spectra_cap(spectra)
        if cap and verdict == "allowed":  # a capped amplitude only bounds the statistic
            verdict = "undetermined"
        notes: list[str] = []
        fit_quality: list[dict[str, Any]] = []
        if g is not None:
            notes += self.gaussian.notes(view, g.summaries, rule=None, fit_warnings=False,
                                         other_terms=True)
            for f, sm in zip(g.fit_quality, g.summaries, strict=True):
                fit_quality.append({**f, "fit_ok": True, "rms_scalar": sm.rms_scalar,
                                    "rms_ratio": sm.rms_ratio,
                                    "period_mean": view is not spectra})
            if view is not spectra and any(s.method == "fit" for s in g.summaries):
                notes.append(
                    "pivot summaries from the period mean of the spectra: amplitude, tilt and "
                    "runnings from the cubic fit of ln P_s, r from the fit of ln(P_t/P_s), each "
                    f"within the tolerance {self.tolerance:g}; the features are judged by the "
                    "large-scale temperature term")
        else:
            notes += [str(n) for n in getattr(spectra, "notes", ()) or ()]
        notes += list(low.notes)
        notes.append("the pivot sets and the low-ell set are treated as independent; "
                     + COMBINED_RULE)
        return Score(
            chi2=total, dof=m + len(low.ells), p_value=p, verdict=verdict, excluded_at=level,
            log_likelihood=-0.5 * total,
            terms=(*(g.terms if g is not None else ()), *low.terms()),
            notes=tuple(notes), fit_quality=tuple(fit_quality),
            sets=(*(g.sets if g is not None else ()), low.set_name),
            summaries=g.summaries if g is not None else (), rule=COMBINED_RULE,
            p_value_is_bound=bound, low_ell=low, cap=cap)


def combined_likelihood(pivot_sets: Sequence[ConstraintSet], low_sets: Sequence[Any],
                        allow_overlap: bool = False, *, tolerance: float = DEFAULT_TOLERANCE,
                        half_width: float = DEFAULT_HALF_WIDTH,
                        ell_range: tuple[int, int] | None = None) -> CombinedLikelihood:
    """Build a :class:`CombinedLikelihood` from loaded sets (one low-ell set)."""
    if len(low_sets) != 1:
        names = ", ".join(s.name for s in low_sets)
        raise InputError(f"only one large-scale temperature set can be used at a time "
                         f"(got {names}); they would count the same sky twice")
    gaussian = (GaussianLikelihood(pivot_sets, allow_overlap, tolerance=tolerance,
                                   half_width=half_width) if pivot_sets else None)
    return CombinedLikelihood(gaussian, LowEllTemperature(low_sets[0], ell_range), tolerance)
