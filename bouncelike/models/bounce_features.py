"""What the sky sees of the bounce features: period means and envelopes of the forward model.

The modes integrated through the bounce split exactly as (:mod:`bouncelike.perturbations.
transfer_decomposition`)

    P(k) = P_std(k) |alpha|^2 |1 + rho e^(i phi)|^2,   phi = 2 x D - pi + tilt pi/2 + theta(x),

with P_std, |alpha|, rho = |beta/alpha| and theta smooth in k and the fast phase 2 x D
(x = k/k_LQC, D = k_LQC x conformal time from the bounce to the end of inflation, ~1e3-1e4):
the features oscillate with period pi/D in x, i.e. pi k_LQC / D in k (~3e-6 Mpc^-1 for the
shipped featured example) and pi/(x D) in ln k. Averaged over that period,

    <P> = P_std (|alpha|^2 + |beta|^2) = P_std |alpha|^2 (1 + rho^2)        (period mean)

and P swings between the envelopes P_std |alpha|^2 (1 -+ rho)^2. This is the honest reading of
a table whose rows are further apart than the period: its pointwise values sample the fast
phase at random (aliasing). The forward model therefore carries, per row, the period mean,
the envelopes and the period in ln k; consumers apply the period-mean protocol of
:mod:`bouncelike.spectra.oscillations` (a row shows the period mean where its period is shorter
than ``RESOLVED_ROWS`` = 4 row spacings of the table, :mod:`bouncelike.spectra.tabulated`).

Criterion for the sky: the finest structure of the large-scale projection kernels is
pi/chi_* ~ 2.3e-4 Mpc^-1 (:mod:`bouncelike.sky.projection`), and the pivot constraints come from
multipoles whose kernels are wider still. Where the period in k is below
``SKY_FRACTION`` = 0.1 of that, the sky sees only the period mean (the neglected correlation is
of order the ratio, :mod:`bouncelike.sky.projection`); above it the period mean is an
approximation and a note says so.

Modes the decomposition cannot split (no oscillation at the matching time, or started late
inside the Hubble radius during inflation, where the bounce leaves them untouched) keep their
pointwise values, with no period (inf).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..perturbations.transfer_decomposition import (
    FIELDS,
    Decomposition,
    conformal_duration,
    decompose,
    matching_frequency2,
    matching_index,
)
from ..perturbations.transfer_dense import period_mean
from .bounce_validity import Backreaction, backreaction

#: Periods below this fraction of the sky's resolution are seen only through their mean.
SKY_FRACTION = 0.1


def sky_resolution_k() -> float:
    """pi / chi_* in Mpc^-1 (chi_* ~13.9 Gpc of the shipped projection,
    :func:`bouncelike.sky.projection.load_projection`): the finest structure of its kernels."""
    from ..sky.projection import load_projection

    return math.pi / load_projection().universe["chi_star_mpc"]


@dataclass(frozen=True, eq=False)
class Features:
    """Period means, envelopes and periods of one run on its k grid (bounce units)."""

    mean: dict[str, np.ndarray]         # per field, period mean (pointwise where no period)
    low: dict[str, np.ndarray]          # lower envelope P_std |alpha|^2 (1 - rho)^2
    high: dict[str, np.ndarray]         # upper envelope P_std |alpha|^2 (1 + rho)^2
    period: np.ndarray                  # period in ln k (inf: none known)
    duration: float                     # D
    decompositions: dict[str, Decomposition] | None
    backreaction: Backreaction

    def select(self, rows: np.ndarray) -> Features:
        """The same on a subset of the rows."""
        return Features({f: v[rows] for f, v in self.mean.items()},
                        {f: v[rows] for f, v in self.low.items()},
                        {f: v[rows] for f, v in self.high.items()}, self.period[rows],
                        self.duration, self.decompositions, self.backreaction)

    def period_k(self, k_lqc_mpc: float) -> float:
        """The period in k (Mpc^-1): pi k_LQC / D."""
        return math.pi * k_lqc_mpc / self.duration if self.duration > 0 else math.inf

    def sky_note(self, k_lqc_mpc: float) -> str:
        """Whether the sky resolves the oscillations (criterion of the module docstring)."""
        if self.decompositions is None:
            return ""
        pk = self.period_k(k_lqc_mpc)
        sky = sky_resolution_k()
        ratio = pk / sky
        head = (f"feature oscillations: period pi k_LQC/D = {pk:.2g} Mpc^-1 in k (D = "
                f"{self.duration:.4g}), {ratio:.2g} of the finest structure the sky resolves "
                f"(pi/chi_* = {sky:.2g} Mpc^-1)")
        if ratio < SKY_FRACTION:
            return (head + f" (below {SKY_FRACTION:g}): the sky sees their period mean "
                    "P_std (|alpha|^2 + |beta|^2), which scoring, the table and the figure use "
                    "where the rows cannot resolve them")
        return (head + f" (above {SKY_FRACTION:g}): the sky partly resolves them; the period "
                "mean used for scoring is an approximation there")


def feature_decomposition(tab: Any, k: np.ndarray, modes: dict[str, Any], opts: Any,
                          bogoliubov: Any, full_table: Any) -> tuple[np.ndarray,
                                                                     dict[str, Decomposition]]:
    """Decompose the modes ``k`` (bounce units) on ``tab`` (``modes``: the ModeResult per
    field when they are already integrated, reused; None: integrate them); returns the mask
    of the decomposed modes and the decompositions. ``full_table``: the run's whole
    background (for D)."""
    x = np.asarray(k, dtype=float) / tab.k_lqc
    ok = np.ones(len(x), bool)
    for f in FIELDS:
        with np.errstate(invalid="ignore"):
            ok &= matching_frequency2(tab, x, f, opts.prescription, opts.sign_convention,
                                      opts.switch_density) > 0
    if ok.sum() < 2:
        return ok & False, {}
    duration = (conformal_duration(full_table) if np.isfinite(full_table.t_inflation_end)
                else math.nan)
    solver = {"step": opts.step, "adiabatic_ratio": opts.adiabatic_ratio,
              "freeze": opts.freeze}
    decs = {}
    for f in FIELDS:
        full = None if modes is None else _subset(modes[f], ok)
        decs[f] = decompose(tab, x[ok], f, opts.prescription, opts.state,
                            sign_convention=opts.sign_convention, solver_options=solver,
                            bogoliubov=bogoliubov, switch_density=opts.switch_density,
                            full=full, duration=duration)
    return ok, decs


def _subset(result: Any, mask: np.ndarray) -> Any:
    """The ModeResult fields decompose reads (power, start_adiabaticity) for ``mask``."""
    from types import SimpleNamespace

    return SimpleNamespace(power=np.asarray(result.power)[mask],
                           start_adiabaticity=np.asarray(result.start_adiabaticity)[mask])


def run_features(tab: Any, full_table: Any, k_all: np.ndarray, through: np.ndarray,
                 powers: dict[str, np.ndarray], modes: dict[str, Any], opts: Any,
                 bogoliubov: Any, capped: bool) -> Features:
    """Period means, envelopes and periods on the run's grid ``k_all`` (bounce units);
    ``through``: the modes integrated through the bounce (``modes`` holds their results);
    ``powers``: P_s, P_t on the whole grid; ``capped``: modes beyond the integral grow past
    the e^600 cap (deformed algebra)."""
    k_through = k_all[through]
    ok, decs = feature_decomposition(tab, k_through, modes, opts, bogoliubov, full_table)
    mean = {f: np.array(powers[f], dtype=float) for f in FIELDS}
    low = {f: np.array(powers[f], dtype=float) for f in FIELDS}
    high = {f: np.array(powers[f], dtype=float) for f in FIELDS}
    period = np.full(len(k_all), math.inf)
    rows = np.nonzero(through)[0][ok]
    if not decs:
        br = Backreaction(math.nan, math.nan, math.nan, 0, math.nan, capped, False)
        return Features(mean, low, high, period, math.nan, None, br)
    duration = decs["scalar"].duration
    for f in FIELDS:
        with np.errstate(over="ignore"):
            mean[f][rows], low[f][rows], high[f][rows] = period_mean(decs[f], decs[f].x)
    period[rows] = math.pi / (decs["scalar"].x * duration)
    per_field = {f: (decs[f].omega, decs[f].beta2) for f in FIELDS}
    br = backreaction(tab, k_through[ok], per_field, capped, matching_index(tab))
    return Features(mean, low, high, period, duration, decs, br)


def plateau_features(tab: Any, opts: Any, spectrum: Any) -> Features:
    """Inflation outlasting the background (:mod:`.bounce_plateau`): the window modes are
    standard (no features, no period); the test-field estimate from the modes of the feature
    range integrated on the bounce background up to the matching time and beyond."""
    from ..perturbations.prescriptions import euclidean_growth_rate
    from ..perturbations.states import Bogoliubov
    from ..perturbations.transfer_model import CAP_EXPONENT

    x = np.geomspace(opts.k_min, opts.k_max, opts.k_count)
    capped = False
    if opts.prescription == "deformed_algebra":
        keep = euclidean_growth_rate(tab) * x * tab.k_lqc <= CAP_EXPONENT
        capped = not keep.all()
        x = x[keep]
    tab = tab.section(0, freeze_index(tab, float(x.max() * tab.k_lqc), opts.freeze)
                      if len(x) else len(tab.t) - 1)
    bog = (Bogoliubov(opts.bogoliubov_beta, opts.bogoliubov_scale * tab.k_lqc,
                      opts.bogoliubov_phase) if opts.bogoliubov_beta > 0 else None)
    powers = {"scalar": np.asarray(spectrum.scalar, float),
              "tensor": np.asarray(spectrum.tensor, float)}
    period = np.full(len(powers["scalar"]), math.inf)
    same = {f: v.copy() for f, v in powers.items()}
    ok, decs = feature_decomposition(tab, x * tab.k_lqc, None, opts, bog, tab)
    if not decs:
        br = Backreaction(math.nan, math.nan, math.nan, 0, math.nan, capped, False)
    else:
        br = backreaction(tab, x[ok] * tab.k_lqc, {f: (decs[f].omega, decs[f].beta2)
                                                   for f in FIELDS}, capped,
                          matching_index(tab))
    return Features(same, {f: v.copy() for f, v in powers.items()},
                    {f: v.copy() for f, v in powers.items()}, period, math.nan, None, br)


def freeze_index(tab: Any, k_max: float, freeze: float) -> int:
    """The first node after the minimum of aH past the bounce where k_max/(aH) < freeze / e
    (the table's end if none): a section up to it holds every mode up to k_max frozen."""
    ln_ah = tab.ln_a + np.log(np.maximum(tab.H, 1e-300))
    post = np.arange(len(tab.t)) > tab.bounce_index()
    i_infl = int(np.nonzero(post)[0][np.argmin(ln_ah[post])])
    cut = np.nonzero(ln_ah[i_infl:] >= math.log(k_max) - math.log(freeze) + 1)[0]
    return min(i_infl + int(cut[0]) + 1, len(tab.t) - 1) if len(cut) else len(tab.t) - 1


def exact_powers(run: Any, k: np.ndarray) -> dict[str, np.ndarray]:
    """P_s, P_t of the modes ``k`` (bounce units) integrated exactly through the bounce with
    the run's options (e.g. to check a reconstruction between the rows)."""
    from ..perturbations.spectra import bounce_spectra
    from ..perturbations.states import Bogoliubov

    o = run.options
    bog = (Bogoliubov(o.bogoliubov_beta, o.bogoliubov_scale * run.table.k_lqc,
                      o.bogoliubov_phase) if o.bogoliubov_beta > 0 else None)
    tab = run.table.section(0, freeze_index(run.table, float(np.max(k)), o.freeze))
    sp = bounce_spectra(tab, np.asarray(k, dtype=float), prescription=o.prescription,
                        state=o.state, sign_convention=o.sign_convention, bogoliubov=bog,
                        step=o.step, adiabatic_ratio=o.adiabatic_ratio, freeze=o.freeze,
                        switch_density=o.switch_density)
    return {"scalar": sp.scalar, "tensor": sp.tensor}
