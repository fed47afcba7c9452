"""Pivot constraints and the large-scale temperature term in one likelihood.

:class:`CombinedLikelihood` adds the low-ell temperature statistic T (:mod:`.lowell`) to the
chi-square of the Gaussian pivot terms (:mod:`.gaussian`); ``[likelihood] sets`` builds it as
soon as a set of kind ``temperature_low_ell`` is listed (e.g. ``planck2018_lowell_tt``).

**Overlap: the low multipoles counted once.** The Planck pivot sets come from the full Planck
likelihood, whose temperature part includes the multipoles below 30 ("Planck TT" = TT at
ell >= 30 plus the low-ell temperature likelihood; Planck 2018 VI, arXiv:1807.06209, Sect. 2,
from memory). For a featureless power law P_pl their numbers already hold what those
multipoles say about it: L_Planck(P_pl) ~ L_pivot(P_pl). A spectrum P that departs from its
power law only at the largest scales then has L_Planck(P) = L_pivot(P_pl) L_low(P) /
L_low(P_pl), so the log-likelihood is

    ln L = -(chi2_pivot + T[P] - T[P_pl]) / 2,

with P_pl the power law those sets see (:meth:`CombinedLikelihood.counterpart`): the pivot
sets that share an ``overlap`` tag with the low-ell set, when together they constrain the
amplitude and the tilt, give it -- amplitude and tilt of P's pivot summary at the pivot of the
first of them that constrains the amplitude, and of the runnings and r only those they
constrain (the others zero: information the pivot sets do not hold is not taken out, and a
summary's running fitted across features is never extrapolated to the largest scales).
Otherwise (no such sets) the two are independent and nothing is subtracted. Why
it matters (measured, tests/test_lowell_published.py): combined as independent, the
power-law posterior of Planck 2018 + BK18 moved by -0.48 sigma in ln(10^10 A_s) and +0.45
sigma in n_s -- the low-ell deficit counted a second time; counted once, a power law is scored
exactly as by its pivot sets and the term judges what the spectrum changes at large scales.

**Featured spectra.** With this term on, a spectrum with oscillations is scored, not refused:
the pivot summaries are taken from its period mean (:class:`PeriodMeanView`; the bounce
transfer model knows its period mean exactly, a plain table is smoothed where it zigzags), the
amplitude, tilt and runnings from the cubic fit of ln P_s of that mean, r from the fit of
ln(P_t/P_s) (smooth where both fields carry the same features); the features themselves are
judged by the low-ell term. A quantity whose fit residual still exceeds the tolerance (the
features reach that pivot's window) cannot be summarised: the point raises
:class:`~bouncelike.errors.NotEvaluable` with the reason.

**Verdict.** The goodness of fit of a configuration is tested with the full statistic
chi2_pivot + T (every datum against the configuration). T is not chi-square distributed. Under
the hypothesis that the model is true, X = chi2_m + T has a law that does not depend on the
model (:mod:`.lowell_calibration`); the p-value is P(X >= chi2_pivot + T) and the thresholds
are those of the Gaussian likelihood (excluded at 99.7% if p < 0.003, at 95% if p < 0.05).
A score's ``log_likelihood`` is the one above (the subtraction included); its ``chi2`` is the
test statistic.
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
                 tolerance: float = DEFAULT_TOLERANCE, *, allow_overlap: bool = False,
                 half_width: float = DEFAULT_HALF_WIDTH,
                 ell_range: tuple[int, int] | None = None):
        self.gaussian = gaussian
        self.low_ell = low_ell
        self.tolerance = float(tolerance)
        self.allow_overlap = bool(allow_overlap)
        self.half_width = float(half_width)
        self.ell_range = None if ell_range is None else (int(ell_range[0]), int(ell_range[1]))
        self.counted_pivot, self.counted_quantities = _counted(self.pivot_sets, low_ell.data)

    @property
    def sets(self) -> tuple[Any, ...]:
        """Every set scored against: the pivot sets, then the large-scale temperature set
        (a :class:`~.lowell_data.LowEllData`): what provenance, manifests, reports and
        rescoring list."""
        return (*self.pivot_sets, self.low_ell.data)

    @property
    def pivot_sets(self) -> tuple[ConstraintSet, ...]:
        """The pivot constraint sets only."""
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
        for cset in self.pivot_sets:
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

    # -- the low multipoles counted once ----------------------------------------------------
    def counterpart(self, summaries: Sequence[PivotSummary]) -> PowerLawSpectra | None:
        """The power law the overlapping pivot sets see (module docstring): the summary at
        :attr:`counted_pivot`, its quantities outside :attr:`counted_quantities` set to zero;
        None when the pivot sets hold no low-ell information on a power law."""
        if self.counted_pivot is None:
            return None
        sm = next(s for s in summaries if s.pivot == self.counted_pivot)
        return PowerLawSpectra(*(sm.value(q) if q in self.counted_quantities else 0.0
                                 for q in QUANTITIES), pivot=self.counted_pivot,
                               label="power law the overlapping pivot sets see")

    def _counted_once(self, spectra: Any) -> tuple[float, float]:
        """(chi2_pivot, T[P] - T[P_pl]) of the log-likelihood."""
        if self.gaussian is None:
            return 0.0, self.low_ell.chi2(self.low_ell.predict(spectra))
        if type(spectra) is PowerLawSpectra:  # exact re-expansion at the pivots
            chi2 = self.gaussian._chi2(self.gaussian._values(spectra))
            if self.counted_pivot is not None and self._own_counterpart(spectra):
                return chi2, 0.0  # a power law is its own counterpart: T[P] - T[P_pl] = 0
            t = self.low_ell.chi2(self.low_ell.predict(spectra))
            if self.counted_pivot is not None:
                t -= self.low_ell.chi2(self.low_ell.predict(self.counterpart(
                    self.gaussian.summaries(spectra))))
            return chi2, t
        t = self.low_ell.chi2(self.low_ell.predict(spectra))
        summaries = self.summaries(spectra)
        chi2 = self.gaussian._chi2([tuple(s.value(q) for q in QUANTITIES) for s in summaries])
        pl = self.counterpart(summaries)
        if pl is not None:
            t -= self.low_ell.chi2(self.low_ell.predict(pl))
        return chi2, t

    def _own_counterpart(self, p: PowerLawSpectra) -> bool:
        """True when the power law has nothing outside :attr:`counted_quantities` (and the
        consistency tensor tilt), so that it is its own counterpart."""
        extra = {"running": p.running, "running_of_running": p.running_of_running, "r": p.r}
        return (all(v == 0.0 for q, v in extra.items() if q not in self.counted_quantities)
                and (p.n_t is None or p.n_t == -p.r / 8.0))

    # -- evaluation --------------------------------------------------------------------------
    def log_likelihood(self, spectra: Any) -> float:
        """-(chi2_pivot + T[P] - T[P_pl])/2 (T[P_pl] only with overlapping pivot sets; module
        docstring); -inf when not finite; NotEvaluable as documented."""
        total = sum(self._counted_once(spectra))
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
        pl = self.counterpart(g.summaries) if g is not None else None
        t_pl = 0.0
        if pl is not None:
            t_pl = self.low_ell.chi2(self.low_ell.predict(pl))
            low = replace(low, counterpart_total=t_pl)
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
        if pl is not None:
            notes.append(
                f"likelihood: the low multipoles counted once -- ln L = -(chi2_pivot + T - "
                f"T[P_pl])/2 with T[P_pl] = {t_pl:.4g} for the power law of the pivot summary "
                f"at k = {self.counted_pivot:g} Mpc^-1, whose low-ell information the "
                "overlapping pivot sets already hold; the verdict tests chi2_pivot + T")
        else:
            notes.append("the pivot sets and the low-ell set share no data: independent")
        notes.append(COMBINED_RULE)
        return Score(
            chi2=total, dof=m + len(low.ells), p_value=p, verdict=verdict, excluded_at=level,
            log_likelihood=-0.5 * (total - t_pl),
            terms=(*(g.terms if g is not None else ()), *low.terms()),
            notes=tuple(notes), fit_quality=tuple(fit_quality),
            sets=(*(g.sets if g is not None else ()), low.set_name),
            summaries=g.summaries if g is not None else (), rule=COMBINED_RULE,
            p_value_is_bound=bound, low_ell=low, cap=cap)


def _counted(pivot_sets: Sequence[ConstraintSet], low: Any
             ) -> tuple[float | None, frozenset[str]]:
    """(pivot, quantities) of the power law whose low-ell information the pivot sets hold: the
    sets sharing an ``overlap`` tag with the low-ell set, when together they constrain the
    amplitude and the tilt; the pivot of the first of them that constrains the amplitude.
    (None, {}) otherwise."""
    tags = set(getattr(low, "overlap_tags", ()))
    shared = [s for s in pivot_sets if tags & set(s.overlap_tags)]
    quantities = frozenset(q for s in shared for q in s.quantities)
    if not {"ln_1e10_As", "n_s"} <= quantities:
        return None, frozenset()
    first = next(s for s in shared if "ln_1e10_As" in s.quantities)
    return float(first.pivot), quantities


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
    return CombinedLikelihood(gaussian, LowEllTemperature(low_sets[0], ell_range), tolerance,
                              allow_overlap=allow_overlap, half_width=half_width,
                              ell_range=ell_range)


def likelihood_from_sets(loaded: Sequence[Any], allow_overlap: bool = False, *,
                         tolerance: float = DEFAULT_TOLERANCE,
                         half_width: float = DEFAULT_HALF_WIDTH,
                         ell_range: tuple[int, int] | None = None) -> Any:
    """The likelihood of loaded sets: a :class:`GaussianLikelihood` for pivot sets alone, a
    :class:`CombinedLikelihood` as soon as a large-scale temperature set is among them."""
    pivot_sets = [s for s in loaded if isinstance(s, ConstraintSet)]
    others = [s for s in loaded if not isinstance(s, ConstraintSet)]
    if not others:
        if ell_range is not None:
            raise InputError("'likelihood.low_ell_range' applies only with a low-ell set (e.g. "
                             "sets = [..., \"planck2018_lowell_tt\"])")
        return GaussianLikelihood(pivot_sets, allow_overlap, tolerance=tolerance,
                                  half_width=half_width)
    return combined_likelihood(pivot_sets, others, allow_overlap, tolerance=tolerance,
                               half_width=half_width, ell_range=ell_range)


def single_set_likelihood(cset: Any, run_likelihood: Any = None) -> Any:
    """The likelihood of one set alone (a best fit rescored against it). A large-scale
    temperature set keeps the multipole range of ``run_likelihood`` when that scores the same
    set, else all of its multipoles."""
    ell_range = None
    if not isinstance(cset, ConstraintSet):
        low = getattr(run_likelihood, "low_ell", None)
        if low is not None and low.data.name == cset.name:
            ell_range = getattr(run_likelihood, "ell_range", None)
    return likelihood_from_sets([cset], tolerance=getattr(run_likelihood, "tolerance",
                                                          DEFAULT_TOLERANCE),
                                ell_range=ell_range)


def statistic_threshold(likelihood: Any, score: Score, p: float) -> float:
    """The value of a score's statistic at which its p-value is ``p`` (the 95% line of an
    exclusion map at p = 0.05): the chi-square quantile for dof = terms, or, with the
    large-scale temperature term, the quantile of the calibrated law of chi2_m + T."""
    if score.low_ell is None:
        from scipy.stats import chi2 as chi2_dist

        return float(chi2_dist.isf(p, score.dof))
    m = score.dof - len(score.low_ell.ells)
    return likelihood.low_ell.null(m).isf(p)
