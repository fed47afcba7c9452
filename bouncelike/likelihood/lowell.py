"""The large-scale CMB temperature term: multipoles 2-29 scored from the primordial spectra.

How to use::

    from bouncelike.likelihood.lowell import LowEllTemperature
    term = LowEllTemperature.from_file("planck2018_lowell_tt")   # or a path to a set file
    d = term.predict(spectra)          # anchored D_ell in micro-K^2 (term.ells)
    t = term.chi2(d)                   # sum_ell -2 ln(L/L_max)
    p, bound = term.p_value(t)         # calibrated null distribution (not chi2 with 28 dof)
    s = term.score(spectra)            # per-multipole detail, pulls, anchoring errors

**Prediction (anchoring).** D_ell^model = D_ell^ref x K_ell[P_model] / K_ell[P_ref], with K_ell
the projection of :mod:`bouncelike.sky.projection` (Sachs-Wolfe + late ISW for P_s, tensor ISW
for P_t), D_ell^ref the published best-fit spectrum and P_ref its primordial power law (both
in the set file). What the projection leaves out -- early ISW, Doppler, the rise to the first
acoustic peak, reionisation -- cancels to first order for spectra that differ from P_ref
smoothly over each multipole's kernel (the unanchored projection of P_ref is within 3% of
D_ell^ref at ell = 2-10 and falls to -9% at ell = 15 and -31% at ell = 29).

**Anchoring error (estimate, per multipole).** The same anchoring done with a projection without
the late-ISW term gives D_ell^alt; the relative spread |D^alt/D^model - 1| is the error
anchoring makes when a kernel piece of the late ISW's size and shape is missing. The piece
actually missing has another size, so the spread is scaled by m_ell / i_ell, with i_ell = |1 -
K^SW_ell[P_ref]/K_ell[P_ref]| the late ISW's share (26% at ell = 2, 4.4% at 29) and m_ell =
max(|1 - K_ell[P_ref]/D_ell^ref|, ``MISSING_FLOOR``) the share of the published spectrum the
projection leaves out (measured -0.2..+2.9% at ell = 2-10, 31% at 29), floored at 3% (the
largest low-ell departure) because a net departure near zero can hide pieces that cancel. The
reference has no tensors, so the anchoring factor D^ref/K[P_ref] (1.00-1.44 over ell = 2-29),
fixed by scalar physics, also multiplies the tensor part; that part's share of D_ell times |1 -
K[P_ref]/D^ref| is added in quadrature. Zero for the reference itself; it grows with the size of
features under the kernels and with r. Listed per multipole in every score.

Measured anchoring-error estimates (per cent, ell = 2, 3, 4, 5, 10, 15, 20, 29) for the
dressed-metric bounce (remote-past state) of the fast transfer model, D = 10^3.7, r = 0.01:
k_LQC = 10^-3.5 Mpc^-1 (D_2 raised x1.59): 2.5, 1.2, 0.59, 0.31, 0.03, 0.08, 0.15, 0.26;
k_LQC = 10^-3 (D_2 x3.6): 4.5, 3.2, 2.5, 2.1, 0.89, 1.1, 0.83, 0.42; the forward-model example
examples/bounce_features_lowell.toml: 4.8, 3.3, 2.2, 1.3, 1.3, 2.0, 2.3, 3.6 (its aliased table
adds a sampling spread of 20, 17, 18, 18, 6, 4.3, 2, 0.4); a power law with r = 0.01:
0.18-0.26 at every ell. All far below the cosmic-variance widths of the data (26-60%).

**Likelihood.** Per multipole an inverse gamma (:mod:`.inverse_gamma`) fitted to the published
68% highest-density interval; the term's statistic is T = sum_ell nu_ell [s/D + ln(D/s) - 1].
Its null distribution is calibrated once (:mod:`.lowell_calibration`). Fitted to the Planck
2018 table (full list in the set file): nu_ell = 5.01, 7.14, 9.01, 11.04 at ell = 2-5, i.e.
2 ell + 1 within 2.1% (full-sky cosmic variance), then below it as a sky cut would make it
(19.56 of 21 at ell = 10, 48.95 of 59 at ell = 29); the fitted mode lands 0.14-0.55% below
the published maximum at ell >= 3 and 1.13% below at ell = 2.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError, NotEvaluable
from ..sky.projection import SkyProjection, load_projection
from ..spectra.oscillations import split_rows
from ..spectra.powerlaw import PowerLawSpectra
from .inverse_gamma import fit_inverse_gamma, minus_two_ln_ratio
from .lowell_calibration import NullDistribution, null_distribution
from .lowell_data import LowEllData

#: Floor of the share of D_ell the projection leaves out, in the anchoring-error estimate.
MISSING_FLOOR = 0.03
#: Largest share of a multipole's reference power that may come from wavenumbers where the
#: spectra are not a prediction (``unrepresented_below`` of a table); beyond it: not evaluable.
UNREPRESENTED_SHARE = 1e-3

ANCHORING_NOTE = (
    "large-scale temperature (ell {lo}-{hi}): D_ell = D_ell^bestfit x K_ell[P] / "
    "K_ell[P_bestfit], K_ell our Sachs-Wolfe + late-ISW (+ tensor ISW) projection, anchored to "
    "the published best-fit spectrum (arXiv:{arxiv}), so the early ISW, Doppler and acoustic "
    "terms it leaves out cancel to first order; per-multipole inverse-gamma likelihood fitted "
    "to the published 68% highest-density intervals; anchoring error estimated per multipole "
    "from the spread between anchorings with and without the late ISW, scaled to the size of "
    "the physics the projection leaves out")


@functools.lru_cache(maxsize=16)
def _fitted(lower: tuple[float, ...], upper: tuple[float, ...], probability: float,
            ells: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray]:
    nu, mode = [], []
    for ell, lo, hi in zip(ells, lower, upper, strict=True):
        n, s = fit_inverse_gamma(lo, hi, probability, where=f"multipole ell = {ell}")
        nu.append(n)
        mode.append(s)
    return np.array(nu), np.array(mode)


@dataclass(frozen=True)
class LowEllPrediction:
    """Anchored prediction (micro-K^2) and its error estimates, relative (see module doc)."""

    ells: np.ndarray
    dell: np.ndarray
    unanchored: np.ndarray
    anchoring_error: np.ndarray
    sampling_spread: np.ndarray | None = None


@dataclass(frozen=True)
class LowEllScore:
    """One spectrum scored by the large-scale temperature term."""

    set_name: str
    source: str
    ells: np.ndarray
    predicted: np.ndarray
    measured: np.ndarray
    lower_edge: np.ndarray
    upper_edge: np.ndarray
    nu: np.ndarray
    mode: np.ndarray
    chi2_terms: np.ndarray
    total: float
    reference_total: float
    anchoring_error: np.ndarray
    sampling_spread: np.ndarray | None = None
    notes: tuple[str, ...] = field(default=())
    p_value_alone: float = math.nan
    p_value_alone_is_bound: bool = False
    #: T of the power law of the pivot summary, subtracted in the log-likelihood when the pivot
    #: sets already hold the low multipoles' information on it (likelihood/combined.py)
    counterpart_total: float = math.nan

    @property
    def pulls(self) -> np.ndarray:
        """sign(D - mode) sqrt(-2 ln(L/L_max)) per multipole."""
        return np.sign(self.predicted - self.mode) * np.sqrt(self.chi2_terms)

    def largest_pulls(self, n: int = 5) -> np.ndarray:
        """Indices of the ``n`` multipoles with the largest |pull|, largest first."""
        return np.argsort(-np.abs(self.pulls), kind="stable")[:n]

    def terms(self) -> list[Any]:
        """One :class:`~.gaussian.Term` per multipole (quantity ``D_<ell>``)."""
        from .score import Term

        out = []
        for i, ell in enumerate(self.ells):
            lo, hi = float(self.lower_edge[i]), float(self.upper_edge[i])
            out.append(Term(
                quantity=f"D_{int(ell)}", predicted=float(self.predicted[i]),
                published=float(self.measured[i]), error_or_limit=0.5 * (hi - lo),
                kind="inverse_gamma", pull=float(self.pulls[i]),
                chi2=float(self.chi2_terms[i]), source=self.source, pivot=math.nan,
                set_name=self.set_name, ell=int(ell), interval_68=(lo, hi),
                nu=float(self.nu[i]), mode=float(self.mode[i]),
                anchoring_error=float(self.anchoring_error[i])))
        return out

    def as_dict(self) -> dict[str, Any]:
        return {
            "set": self.set_name, "source": self.source, "statistic": self.total,
            "statistic_definition": "sum over ell of nu_ell [s_ell/D_ell + ln(D_ell/s_ell) - 1]",
            "reference_statistic": self.reference_total,
            "p_value_alone": self.p_value_alone,
            "p_value_alone_is_bound": self.p_value_alone_is_bound,
            "difference_to_reference": self.total - self.reference_total,
            "counterpart_statistic": self.counterpart_total,
            "multipoles": [int(x) for x in self.ells],
            "anchoring_error": [float(x) for x in self.anchoring_error],
            "sampling_spread": (None if self.sampling_spread is None
                                else [float(x) for x in self.sampling_spread]),
            "largest_pulls": [f"D_{int(self.ells[i])}" for i in self.largest_pulls()],
            "notes": list(self.notes),
        }


class LowEllTemperature:
    """Large-scale temperature term for one low-ell set (see the module docstring).

    Parameters
    ----------
    data : LowEllData
    ell_range : (int, int) or None
        Inclusive range of multipoles to use (all of the file's by default); every multipole in
        it must be in the file.
    projection : SkyProjection or None
        The projection (default: the shipped one).
    """

    def __init__(self, data: LowEllData, ell_range: tuple[int, int] | None = None,
                 projection: SkyProjection | None = None):
        proj = load_projection() if projection is None else projection
        ells = data.ells
        if ell_range is not None:
            lo, hi = ell_range
            have = set(int(e) for e in ells)
            missing = [e for e in range(lo, hi + 1) if e not in have]
            if missing:
                raise InputError(
                    f"'likelihood.low_ell_range' = [{lo}, {hi}] asks for ell = {missing[0]}, "
                    f"which set '{data.name}' does not have (it has {int(ells[0])}-"
                    f"{int(ells[-1])})")
        sel = (np.ones(len(ells), bool) if ell_range is None
               else (ells >= ell_range[0]) & (ells <= ell_range[1]))
        proj_ells = [int(e) for e in proj.ells]
        for e in ells[sel]:
            if int(e) not in proj_ells:
                raise InputError(f"set '{data.name}': ell = {int(e)} is outside the "
                                 f"projection ({proj_ells[0]}-{proj_ells[-1]})")
        rows = np.array([proj_ells.index(int(e)) for e in ells[sel]])
        self.data = data
        self.projection = proj
        self.ells = np.asarray(ells[sel])
        self.measured = data.measured[sel]
        self.lower_edge = data.lower_edge[sel]
        self.upper_edge = data.upper_edge[sel]
        self.reference_dell = data.reference_dell[sel]
        try:
            self.nu, self.mode = _fitted(tuple(self.lower_edge), tuple(self.upper_edge),
                                         data.interval_probability,
                                         tuple(int(e) for e in self.ells))
        except InputError as exc:
            raise InputError(f"low-ell set file '{data.path or data.name}': {exc}") from None
        self._ws = np.ascontiguousarray(proj.scalar[rows])
        self._ws_sw = np.ascontiguousarray(proj.scalar_sachs_wolfe[rows])
        self._wt = np.ascontiguousarray(proj.tensor[rows])
        m = data.reference_model
        self.reference = PowerLawSpectra(m["ln_1e10_As"], m["n_s"], r=m["r"], pivot=m["pivot"],
                                         label="reference power law")
        ps, pt = proj.power_on_nodes(self.reference)
        self.reference_unanchored = self._ws @ ps + self._wt @ pt
        ref_sw = self._ws_sw @ ps + self._wt @ pt
        self._anchor = self.reference_dell / self.reference_unanchored
        self._anchor_sw = self.reference_dell / ref_sw
        missing = np.maximum(np.abs(1.0 - self.reference_unanchored / self.reference_dell),
                             MISSING_FLOOR)
        isw_share = np.abs(1.0 - ref_sw / self.reference_unanchored)
        self.anchoring_scale = missing / isw_share
        self.reference_total = self.chi2(self.reference_dell)
        # share of each multipole's reference power below each node (for unrepresented_below)
        c = self._ws * ps + self._wt * pt
        self._reference_share_below = np.cumsum(c, axis=1) / c.sum(axis=1, keepdims=True)

    # -- construction --------------------------------------------------------------------
    @classmethod
    def from_file(cls, name_or_path: Any, ell_range: tuple[int, int] | None = None
                  ) -> LowEllTemperature:
        """A shipped low-ell set by name, or a set file of kind "temperature_low_ell"."""
        from .sets import load_constraint_set

        data = load_constraint_set(name_or_path)
        if not isinstance(data, LowEllData):
            raise InputError(f"'{name_or_path}' is not a set of kind \"temperature_low_ell\"")
        return cls(data, ell_range)

    @property
    def name(self) -> str:
        return self.data.name

    @property
    def source(self) -> str:
        return self.data.source

    # -- evaluation ----------------------------------------------------------------------
    def _power(self, spectra: Any) -> tuple[np.ndarray, np.ndarray]:
        """P_s, P_t on the projection's nodes; NotEvaluable when more than
        UNREPRESENTED_SHARE of a multipole's power comes from where the spectra are not a
        prediction (their ``unrepresented_below``)."""
        below = getattr(spectra, "unrepresented_below", None)
        if below is not None:
            k0, why = below
            j = int(np.searchsorted(self.projection.k, k0))
            if j > 0:
                share = self._reference_share_below[:, j - 1]
                i = int(np.argmax(share))
                if share[i] > UNREPRESENTED_SHARE:
                    raise NotEvaluable(
                        f"large-scale temperature term: ell = {int(self.ells[i])} takes "
                        f"{share[i]:.2%} of its power from k < {k0:.3g} Mpc^-1, where the "
                        f"spectra are not a prediction ({why}); at most "
                        f"{UNREPRESENTED_SHARE:.1%} is allowed")
        return self.projection.power_on_nodes(spectra)

    def predict(self, spectra: Any) -> np.ndarray:
        """Anchored D_ell (micro-K^2) at :attr:`ells`."""
        ps, pt = self._power(spectra)
        return self._anchor * (self._ws @ ps + self._wt @ pt)

    def contributions(self, spectra: Any) -> np.ndarray:
        """Anchored contribution of each projection node (``projection.k``) to each D_ell
        (micro-K^2, rows :attr:`ells`; the rows sum to :meth:`predict`): where in k each
        multipole takes its power from."""
        ps, pt = self._power(spectra)
        return self._anchor[:, None] * (self._ws * ps + self._wt * pt)

    def prediction(self, spectra: Any, sampling: bool = True) -> LowEllPrediction:
        """Anchored D_ell with the anchoring-error estimate (and, for a plain table whose rows
        zigzag, the spread between projecting its even and its odd rows)."""
        ps, pt = self._power(spectra)
        tensor = self._wt @ pt
        raw = self._ws @ ps + tensor
        dell = self._anchor * raw
        alt = self._anchor_sw * (self._ws_sw @ ps + tensor)
        from_isw = np.abs(alt / dell - 1.0) * self.anchoring_scale
        from_tensors = np.abs(1.0 - 1.0 / self._anchor) * tensor / raw
        error = np.hypot(from_isw, from_tensors)
        spread = None
        halves = split_rows(spectra) if sampling else None
        if halves is not None and spectra.zigzag_rows.any():
            even, odd = (self.predict(h) for h in halves)
            spread = np.abs(even - odd) / (2.0 * dell)
        return LowEllPrediction(self.ells, dell, raw, error, spread)

    def chi2_terms(self, dell: np.ndarray) -> np.ndarray:
        """-2 ln(L/L_max) per multipole for predicted D_ell (micro-K^2)."""
        return minus_two_ln_ratio(dell, self.nu, self.mode)

    def chi2(self, dell: np.ndarray) -> float:
        """The term's statistic T = sum over multipoles of -2 ln(L/L_max)."""
        ratio = self.mode / np.asarray(dell, dtype=float)
        return float(np.dot(self.nu, ratio - np.log(ratio) - 1.0))

    def log_likelihood(self, spectra: Any) -> float:
        """-T/2 (up to a constant)."""
        return -0.5 * self.chi2(self.predict(spectra))

    def null(self, gaussian_terms: int = 0) -> NullDistribution:
        """Null distribution of T (+ chi2 of ``gaussian_terms`` Gaussian terms)."""
        return null_distribution(tuple(float(x) for x in self.nu), int(gaussian_terms))

    def p_value(self, statistic: float, gaussian_terms: int = 0) -> tuple[float, bool]:
        """(p, is_bound) of ``statistic`` under the calibrated null distribution."""
        return self.null(gaussian_terms).p_value(statistic)

    def score(self, spectra: Any) -> LowEllScore:
        """Per-multipole detail of one spectrum."""
        pred = self.prediction(spectra)
        terms = self.chi2_terms(pred.dell)
        arxiv = self.data.reference_citation.split("arXiv:")[-1].split(")")[0]
        notes = [ANCHORING_NOTE.format(lo=int(self.ells[0]), hi=int(self.ells[-1]), arxiv=arxiv),
                 f"{self.name}: {self.data.overlap_treatment}"]
        table_note = getattr(spectra, "oscillation_note", None)
        if callable(table_note) and table_note():
            notes.append(table_note())
        if pred.sampling_spread is not None:
            j = int(np.argmax(pred.sampling_spread))
            notes.append(
                f"sampling of the table: projecting its even and its odd rows separately "
                f"differs by up to {100 * pred.sampling_spread[j]:.2g}% (at ell = "
                f"{int(self.ells[j])}); the table does not resolve its oscillations, so its "
                "D_ell carry this noise")
        p_alone, bound = self.p_value(float(terms.sum()))
        return LowEllScore(
            p_value_alone=p_alone, p_value_alone_is_bound=bound,
            set_name=self.name, source=self.source, ells=self.ells, predicted=pred.dell,
            measured=self.measured, lower_edge=self.lower_edge, upper_edge=self.upper_edge,
            nu=self.nu, mode=self.mode, chi2_terms=terms, total=float(terms.sum()),
            reference_total=self.reference_total, anchoring_error=pred.anchoring_error,
            sampling_spread=pred.sampling_spread, notes=tuple(notes))
