"""Gaussian likelihood of primordial spectra given published constraint sets.

Model: the spectra are reduced to the quantities each set constrains at the set's own pivot
(:func:`bouncelike.spectra.summary.summarize`). Each set contributes

* for Gaussian terms, (x - mean)^T C^-1 (x - mean) with C diagonal (sigma^2) unless the set file
  lists correlations;
* for an upper limit on r >= 0, (r / sigma)^2 with sigma = limit / Phi^-1((1 + c)/2) -- a
  half-Gaussian in r >= 0 centred on 0 whose confidence-c point is the published limit
  (sigma = limit / 1.959964 for c = 0.95). This approximation is stated in every report.

Sets are independent of each other (block-diagonal covariance). The log-likelihood is
-chi2/2 up to an additive constant. Two sets that constrain the same quantity from overlapping
data (shared ``overlap`` tags) are refused unless ``allow_overlap`` is set, because combining
them would count the same data twice.

Verdict rule: p = P(chi2_dof > chi2) from the chi-square distribution with dof = number of terms
(:func:`scipy.stats.chi2.sf`). Excluded at 99.7 % if p < 0.003, excluded at 95 % if p < 0.05,
otherwise allowed.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

import numpy as np
from scipy.stats import chi2 as chi2_dist

from ..config import Table
from ..errors import InputError, NumericalFailure
from ..spectra.powerlaw import PowerLawSpectra, reexpand
from ..spectra.summary import DEFAULT_HALF_WIDTH, DEFAULT_TOLERANCE, PivotSummary, summarize
from .bounds import BOUNDED_QUANTITIES, spectra_cap
from .score import VERDICT_RULE, Score, Term, verdict_from_p
from .sets import QUANTITIES, QUANTITY_LABELS, ConstraintSet, load_constraint_set

#: Sets used when a configuration names none.
DEFAULT_SETS = ("planck2018_base", "bk18")
LIKELIHOOD_KEYS = ("sets", "files", "allow_overlap", "fit_tolerance", "fit_half_width",
                   "low_ell_range")

_Q_INDEX = {q: i for i, q in enumerate(QUANTITIES)}


def check_overlap(sets: Sequence[ConstraintSet], allow_overlap: bool = False) -> list[str]:
    """Refuse duplicate sets, and overlapping ones unless allowed; return notes on overlaps."""
    notes = []
    for a, b in itertools.combinations(sets, 2):
        if a.name == b.name:
            raise InputError(f"constraint set '{a.name}' is listed twice in [likelihood]")
        shared_q = sorted(set(a.quantities) & set(b.quantities))
        shared_tags = sorted(set(a.overlap_tags) & set(b.overlap_tags))
        if shared_q and shared_tags:
            text = (
                f"constraint sets '{a.name}' and '{b.name}' both constrain "
                f"{', '.join(shared_q)} from overlapping data ({', '.join(shared_tags)})"
            )
            if not allow_overlap:
                raise InputError(
                    f"{text}; use one of them, or set [likelihood] allow_overlap = true to "
                    "combine them anyway (double counting)"
                )
            notes.append(f"{text}: combined on request (allow_overlap), data counted twice")
    return notes


class GaussianLikelihood:
    """Gaussian likelihood over the summary quantities constrained by ``sets``.

    Parameters
    ----------
    sets : sequence of ConstraintSet
    allow_overlap : bool
        Combine sets that constrain the same quantity from overlapping data.
    tolerance, half_width : float
        Fit settings of :func:`~bouncelike.spectra.summary.summarize` for spectra without an
        exact re-expansion.
    """

    def __init__(
        self,
        sets: Sequence[ConstraintSet],
        allow_overlap: bool = False,
        *,
        tolerance: float = DEFAULT_TOLERANCE,
        half_width: float = DEFAULT_HALF_WIDTH,
    ):
        sets = tuple(sets)
        if not sets:
            raise InputError("no constraint sets chosen; give [likelihood] sets or files")
        for s in sets:
            if not isinstance(s, ConstraintSet):
                raise InputError(
                    f"constraint set '{s.name}' is not a set of pivot constraints; combine it "
                    "through likelihood_from_config or bouncelike.likelihood.combined")
        self._overlap_notes = tuple(check_overlap(sets, allow_overlap))
        self._sets = sets
        self.allow_overlap = bool(allow_overlap)
        self.tolerance = float(tolerance)
        self.half_width = float(half_width)
        self._pivots = tuple(sorted({s.pivot for s in sets}))
        pivot_index = {p: i for i, p in enumerate(self._pivots)}
        # Precomputed terms: diagonal ones as (pivot index, quantity index, mean, 1/sigma);
        # correlated blocks as (pivot index, quantity indices, means, inverse covariance).
        diag: list[tuple[int, int, float, float]] = []
        blocks: list[tuple[int, tuple[int, ...], tuple[float, ...], np.ndarray]] = []
        self._set_inverse: dict[str, np.ndarray] = {}
        for s in sets:
            pi = pivot_index[s.pivot]
            correlated = {q for a, b, _ in s.correlations for q in (a, b)}
            block_terms = [t for t in s.terms if t.quantity in correlated]
            for t in s.terms:
                if t.quantity not in correlated:
                    diag.append((pi, _Q_INDEX[t.quantity], t.mean, 1.0 / t.sigma))
            if block_terms:
                names = [t.quantity for t in block_terms]
                sig = np.array([t.sigma for t in block_terms])
                corr = np.eye(len(names))
                for a, b, rho in s.correlations:
                    i, j = names.index(a), names.index(b)
                    corr[i, j] = corr[j, i] = rho
                cov = corr * np.outer(sig, sig)
                try:
                    np.linalg.cholesky(cov)
                except np.linalg.LinAlgError:
                    raise InputError(
                        f"constraint set '{s.name}': the correlations do not form a positive "
                        "definite covariance"
                    ) from None
                inv = np.linalg.inv(cov)
                self._set_inverse[s.name] = inv
                blocks.append(
                    (pi, tuple(_Q_INDEX[q] for q in names),
                     tuple(t.mean for t in block_terms), inv)
                )
        self._diag = tuple(diag)
        self._blocks = tuple(blocks)
        self._dof = sum(len(s.terms) for s in sets)

    # -- construction --------------------------------------------------------------------
    @classmethod
    def from_names(
        cls, names: Iterable[str | Path], allow_overlap: bool = False, **kwargs: Any
    ) -> GaussianLikelihood:
        """Shipped set names and/or paths of set files."""
        return cls([load_constraint_set(n) for n in names], allow_overlap, **kwargs)

    @property
    def sets(self) -> tuple[ConstraintSet, ...]:
        return self._sets

    @property
    def pivots(self) -> tuple[float, ...]:
        return self._pivots

    @property
    def dof(self) -> int:
        return self._dof

    # -- evaluation ----------------------------------------------------------------------
    def summaries(self, spectra: Any) -> tuple[PivotSummary, ...]:
        """One :class:`PivotSummary` per distinct pivot of the sets (sorted by pivot)."""
        return tuple(
            summarize(spectra, p, half_width=self.half_width, tolerance=self.tolerance)
            for p in self._pivots
        )

    def _values(self, spectra: Any) -> list[tuple[float, ...]]:
        if type(spectra) is PowerLawSpectra:  # analytic re-expansion, no numpy
            base = (spectra.ln_1e10_As, spectra.n_s, spectra.running,
                    spectra.running_of_running, spectra.r)
            nt = spectra.tensor_tilt
            k0 = spectra.pivot
            return [
                base if p == k0 else reexpand(*base, nt, math.log(p / k0)) for p in self._pivots
            ]
        return [
            tuple(s.value(q) for q in QUANTITIES) for s in self.summaries(spectra)
        ]

    def _chi2(self, values: Sequence[Sequence[float]]) -> float:
        total = 0.0
        for pi, qi, mean, inv_sigma in self._diag:
            d = (values[pi][qi] - mean) * inv_sigma
            total += d * d
        for pi, qis, means, inv in self._blocks:
            d = np.array([values[pi][q] - m for q, m in zip(qis, means, strict=True)])
            total += float(d @ inv @ d)
        return total

    def log_likelihood(self, spectra: Any) -> float:
        """-chi2/2 (up to a constant); -inf when the prediction is not finite.

        Fast path for :class:`PowerLawSpectra`: analytic re-expansion at each pivot and
        precomputed means and inverse errors, no array work. Other spectra go through
        :func:`~bouncelike.spectra.summary.summarize`; the fit quality is not checked here (it is
        reported by :meth:`score`), so a sampler over featured spectra should check it itself.
        Raises :class:`~bouncelike.errors.NumericalFailure` when the spectra are not positive.
        """
        chi2 = self._chi2(self._values(spectra))
        if chi2 != chi2 or chi2 == math.inf:
            return -math.inf
        return -0.5 * chi2

    def score(self, spectra: Any) -> Score:
        """Full score with per-term pulls, p-value, verdict, notes and fit quality."""
        summaries = self.summaries(spectra)
        by_pivot = dict(zip(self._pivots, summaries, strict=True))
        cap = spectra_cap(spectra)
        terms: list[Term] = []
        total = 0.0
        for s in self._sets:
            summ = by_pivot[s.pivot]
            predicted = {t.quantity: summ.value(t.quantity) for t in s.terms}
            for q, v in predicted.items():
                if not math.isfinite(v):
                    raise NumericalFailure(
                        f"predicted {q} at k = {s.pivot:g} Mpc^-1 is not finite ({v!r})"
                    )
            correlated = [q for a, b, _ in s.correlations for q in (a, b)]
            names = [t.quantity for t in s.terms if t.quantity in correlated]
            contrib: dict[str, float] = {}
            if names:
                block_terms = [t for t in s.terms if t.quantity in names]
                d = np.array([predicted[t.quantity] - t.mean for t in block_terms])
                c = d * (self._set_inverse[s.name] @ d)
                contrib = {t.quantity: float(ci) for t, ci in zip(block_terms, c, strict=True)}
            for t in s.terms:
                pred = predicted[t.quantity]
                pull = (pred - t.mean) / t.sigma
                c2 = contrib.get(t.quantity, pull * pull)
                total += c2
                terms.append(
                    Term(
                        quantity=t.quantity,
                        predicted=pred,
                        published=t.mean if t.kind == "gaussian" else t.limit,
                        error_or_limit=t.sigma if t.kind == "gaussian" else t.limit,
                        kind=t.kind,
                        pull=pull,
                        chi2=c2,
                        source=s.source,
                        pivot=s.pivot,
                        sigma=t.sigma,
                        confidence=t.confidence,
                        set_name=s.name,
                        bound="lower" if cap and t.quantity in BOUNDED_QUANTITIES else "",
                    )
                )
        dof = len(terms)
        p_value = float(chi2_dist.sf(total, dof))
        verdict, level = verdict_from_p(p_value)
        if cap and verdict == "allowed":  # chi2 is a lower bound: allowed cannot be concluded
            verdict = "undetermined"
        fit_quality = tuple(
            {
                "pivot": sm.pivot,
                "method": sm.method,
                "fit_rms": sm.fit_rms,
                "tolerance": sm.tolerance,
                "fit_ok": sm.fit_ok,
                "window": list(sm.window) if sm.window is not None else None,
                "period_mean": sm.period_mean,
            }
            for sm in summaries
        )
        return Score(
            chi2=total,
            dof=dof,
            p_value=p_value,
            verdict=verdict,
            excluded_at=level,
            log_likelihood=-0.5 * total,
            terms=tuple(terms),
            notes=tuple(self.notes(spectra, summaries)),
            fit_quality=fit_quality,
            sets=tuple(s.name for s in self._sets),
            summaries=summaries,
            cap=cap,
        )

    def notes(self, spectra: Any, summaries: Sequence[PivotSummary],
              rule: str | None = VERDICT_RULE, fit_warnings: bool = True,
              other_terms: bool = False) -> list[str]:
        """Notes printed under a score (fit warnings, forecasts, treatments, ``rule``);
        ``other_terms``: a term outside these sets also scores the spectra."""
        notes = [str(n) for n in getattr(spectra, "notes", ()) or ()]
        for sm in summaries:
            if fit_warnings and not sm.fit_ok:
                notes.append(
                    f"WARNING: fit quality failed at k = {sm.pivot:g} Mpc^-1: the spectra depart "
                    f"from the cubic in ln k by rms {sm.fit_rms:.3g} in ln P (tolerance "
                    f"{sm.tolerance:g}); the summary numbers and this verdict do not represent "
                    "the featured spectrum faithfully"
                )
        for s in self._sets:
            if s.is_forecast:
                notes.append(f"{s.name} is a FORECAST, not a measurement")
            if s.upper_limit_treatment:
                notes.append(f"{s.name}: {s.upper_limit_treatment}")
            if s.correlation_note:
                notes.append(f"{s.name}: {s.correlation_note}")
        notes.extend(self._overlap_notes)
        notes.extend(unconstrained_notes(self._sets, summaries, other_terms))
        if rule:
            notes.append("sets are treated as independent of each other; " + rule)
        return notes


def unconstrained_notes(sets: Sequence[ConstraintSet], summaries: Sequence[PivotSummary],
                        other_terms: bool = False) -> list[str]:
    """One note per quantity the spectra carry (non-zero) that no chosen set constrains: the
    verdict says nothing about it (``other_terms``: only those terms see it)."""
    constrained = {t.quantity for s in sets for t in s.terms}
    names = ", ".join(s.name for s in sets)
    notes = []
    for q in QUANTITIES:
        if q in constrained or not summaries:
            continue
        value = summaries[0].value(q)
        if value != 0 and math.isfinite(value):
            notes.append(f"{QUANTITY_LABELS[q]} = {value:.4g} (k = {summaries[0].pivot:g} "
                         f"Mpc^-1) is not constrained by the chosen sets ({names}): "
                         + ("only the other terms of the score see it" if other_terms else
                            "the verdict says nothing about it"))
    return notes


def likelihood_from_config(config: Table, base_dir: str | Path | None = None) -> Any:
    """Build the likelihood from ``[likelihood]`` of a run configuration.

    Returns a :class:`GaussianLikelihood`, or a :class:`~.combined.CombinedLikelihood` when a
    set of the large-scale temperature kind is listed (shipped ``planck2018_lowell_tt`` or a
    user's file); ``low_ell_range = [lo, hi]`` then restricts its multipoles (default: all of
    the file's).

    Keys: ``sets`` (shipped set names; default ``["planck2018_base", "bk18"]`` when neither
    ``sets`` nor ``files`` is given), ``files`` (paths of user set files; relative paths are
    taken relative to ``base_dir`` -- the configuration's folder when the caller knows it --
    else to the working directory), ``allow_overlap`` (default false), ``fit_tolerance``
    (default 0.01) and ``fit_half_width`` (default 2.0, in ln k) for spectra that need the
    polynomial summary fit.
    """
    table = config.table("likelihood", LIKELIHOOD_KEYS)
    has_any = "sets" in table or "files" in table
    names: list[str | Path] = list(table.strings("sets", list(DEFAULT_SETS) if not has_any
                                                 else []))
    for f in table.strings("files", []):
        path = Path(f)
        if not path.is_absolute() and base_dir is not None:
            path = Path(base_dir) / path
        if not path.is_file():
            state = "is a folder" if path.is_dir() else "does not exist"
            raise InputError(f"'likelihood.files': set file '{f}' {state} (expected a TOML "
                             "set file)")
        names.append(path)
    allow = table.boolean("allow_overlap", False)
    tol = table.positive("fit_tolerance", DEFAULT_TOLERANCE)
    half = table.positive("fit_half_width", DEFAULT_HALF_WIDTH, maximum=10.0)
    loaded = [load_constraint_set(n) for n in names]
    from .combined import likelihood_from_sets

    return likelihood_from_sets(loaded, allow, tolerance=tol, half_width=half,
                                ell_range=_ell_range(table))


def _ell_range(table: Table) -> tuple[int, int] | None:
    if "low_ell_range" not in table:
        return None
    raw = table.raw("low_ell_range")
    if (not isinstance(raw, list) or len(raw) != 2
            or not all(isinstance(v, int) and not isinstance(v, bool) for v in raw)
            or raw[0] > raw[1]):
        raise InputError(f"'{table.key('low_ell_range')}' must be [lowest, highest] multipole "
                         f"(integers, lowest <= highest), got {raw!r}")
    return int(raw[0]), int(raw[1])
