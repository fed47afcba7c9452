"""Cached transfer of the bounce: ratio of bounce to standard spectra, with an error certificate.

What the transfer depends on (measured, tests/test_perturbation_transfer.py)
-----------------------------------------------------------------------------
Shortly after the bounce (at ln(a/a_B) = ``MATCH_EFOLDS`` = 3.5, still in the kinetic era for
every inflaton mass ~1e-6 of interest) each mode is a combination alpha f + beta f* of the
adiabatic positive- and negative-frequency solutions. alpha(x) and beta(x), x = k/k_LQC, are set
by the bounce alone: near the bounce the potential is a fraction ~1e-11 of rho_c, so every such
background is the massless bounce there and |beta/alpha| agrees between backgrounds to 1e-5.
Both pieces then evolve with the *same* background-dependent mode X_+ (the adiabatic vacuum
started there, whose freeze-out power is the standard spectrum P_std of that inflation) and its
conjugate, so exactly

    T = P / P_std = |alpha|^2 |1 + rho e^{i phi}|^2,   rho = |beta/alpha|,
    phi = arg(beta/alpha) - 2 arg X_+(freeze-out).

The freeze-out phase of a de Sitter-like mode started as e^{-ik eta} is -k (eta_end - eta) +
(nu - 1/2) pi/2 (Hankel-function asymptotics, textbook), nu - 3/2 = -tilt/2 with tilt = n_s - 1
(scalars) or n_t (tensors). Hence

    phi = 2 x D - pi + tilt pi/2 + theta(x, D),    D = k_LQC (eta_end - eta_B),

with D the conformal time from the bounce to the end of inflation in units of 1/k_LQC (it sets
the oscillation frequency of the features: one period is Delta x = pi/D, with D ~ 3e3-1e4 for
masses 1e-6-4e-6 and phi_B in 0.7-2.5) and theta a slowly varying residual phase. theta depends
on x and, for x below ~0.3, on how the kinetic era turns into inflation; that is measured to be
mostly a function of D again (D ~ 1.8 / (aH)_min in units of k_LQC: the same transition), so
the cache tabulates theta on a 2-D grid in (ln x, ln D). At equal D, backgrounds with another
phi_B differ in theta by up to ~7e-3 rad below 0.1 k_LQC (measured), and that difference is
carried by the tilt of the same background: the dressed-metric caches add a least-squares
correction sum_i c_i(x) b_i(dt, ln D), dt = tilt - tilt0(D) (tilt0: the phi_B = 1.2 rows;
basis in :func:`_tilt_basis`), fitted on 27 further backgrounds (phi_B = 0.7, 1.8, 2.5 at the
calibration masses, those with D inside the calibrated range); the tilt is clipped to the
calibrated range (scalar -0.048 to -0.014, tensor -0.024 to -0.007). The background enters the
fast model through D and the tilts only.

Where ln x is finer than the tabulation, theta also carried a ripple of ~1e-3 rad at the
fast frequency when the modes were matched at 3 e-folds: the second-order adiabatic basis
there is not exact for k (eta_m - eta_B) ~ 5 (x = 0.01), so X_+ holds a small negative-frequency
part. Matching at 3.5 e-folds removes it (measured ripple < 2e-6 rad at 4 e-folds).

The cache (``data/transfer_<prescription>_<state>.npz``, ~150-200 kB each) holds
ln|alpha|, ln rho and theta on X_GRID (401 points over 0.01-100) x the D of nine calibration
backgrounds (phi_B = 1.2, masses 4.5e-7-6.5e-6: D = 3.1e3-1.7e4), interpolated linearly in
(ln x, ln D), and for the dressed metric the tilt correction above. Rebuild it with
``python3 -m bouncelike.perturbations.transfer`` (~1 min per dressed-metric table, ~20 s for
the deformed algebra, on one core). The remote-past state is set per mode where
rate/W <= 0.05 (:mod:`.states`; the calibration backgrounds reach down to
:func:`.states.remote_past_density` of x = 0.01, ~1.2e-12 Planck units): every calibration and
certificate background reaches that tolerance for x >= 0.01 within its kinetic contracting era
(measured minimum rate/W at x = 0.01: 0.007-0.048 for masses 4.5e-7-6.5e-6), and the spectra
do not depend on how far back the table starts (1e-11, 1e-13, 1e-15 agree to 2e-6 in ln T;
before, the state sat at the table's first node and T(0.01) went from 47 to 1.9e3). The
state is the adiabatic vacuum of the kinetic contracting era: its infrared is universal
(period-averaged T at 0.01 k_LQC 23.996 for m = 1.2e-6 and 23.997 for 4e-6); the earlier
contracting history (a potential-dominated contraction and field oscillations further back,
where modes below ~k_LQC are not adiabatic) is not part of it. Certified in x >= 0.01 for
masses up to 6.5e-6 (the minimum rate/W grows ~m^(2/3)/x: for heavier fields or x < 0.01 the
forward model notes modes that do not reach the tolerance).

Measured accuracy (``bouncelike transfer-check --backgrounds 6 --seed 11``, max relative error
at 360 random points; pointwise / of the period-averaged T):

* dressed metric, remote past (state set per mode where rate/W <= 0.05, classical sign
  convention): 0.01-0.03 k_LQC 0.50% / 7e-4; 0.03-0.1: 0.49% / 3e-4; 0.1-0.3: 0.09%;
  0.3-1: 0.06%; 1-3: 0.013%; 3-10: 7e-5; above 10: < 3e-6; period mean <= 2e-5 everywhere.
  Target met pointwise everywhere. The tightest points are the deepest troughs below
  0.1 k_LQC (|1 + rho e^{i phi}|^2 ~ 3e-3 at rho ~ 0.95), where a phase error dphi gives a
  relative error ~ dphi/(1 - rho): 1% there needs theta to ~5e-4 rad; the remaining error is
  the tilt correction's residual.
* deformed algebra (``--prescription deformed_algebra``): period mean <= 0.03% below 3 k_LQC,
  <= 0.3% at 3-10 (0.29% with ``--seed 5``), <= 0.08% at 10-100 (0.16% with ``--seed 5``):
  CERTIFIED_RANGES covers 0.01-100. Pointwise relative to the period mean <= 0.8% at 0.01-30
  k_LQC except 0.3-1 (1.5%), and up to 2 at 30-100 (phase of the fast oscillation, 2 x D ~ 1e6
  rad there); pointwise 1.5-4% below 3 k_LQC (11% at 0.01-0.03 with ``--seed 5``) and
  unbounded above near the nodes of the full-depth oscillations (rho -> 1). Target met for the
  period mean only. (No tilt correction of theta.) The exact integrations behind the cache
  are converged: the step includes the Airy rate of the turning points Omega = 0 and WKB jumps
  stay off them (modes.py); ln T at 100 k_LQC agrees between all 18 backgrounds checked to
  1e-5 relative (it scattered by 4-7% before, e^50-e^160 exponents differing by 1-3% per
  background, set by where the steps fell), and ln(T_t/T_s) at 100 k_LQC is 0.004-0.006 on
  every calibration row (it ranged from -0.9 to +8.5). ln|alpha| - growth x/2 is what is
  interpolated in ln x (ln T is linear in x there).
* dressed metric, 4th-order adiabatic state at the bounce (the truncated series where it exists
  there, above ~3.8 k_LQC; the remote-past state below, :mod:`.states`): the same as the
  remote past below 3 k_LQC (identical state), 3-10: 1.1e-5, above 10: < 6e-7. The mean
  transfer is smooth in k across the switch (largest second difference of its log on 61
  points over 1-10 k_LQC: 1.4e-3; 0.17 in the previous cache, whose state switched to W = k
  at the bounce near 2.4 k_LQC: mean T 1.076, 1.047, 1.009 at 2.5, 2.6, 2.8 k_LQC, now
  1.0052, 1.0040, 1.0023). CERTIFIED_RANGES covers 0.01-100 and above.
(All three with ``--backgrounds 6 --seed 11``, after the remote-past start was made per mode.
The deformed algebra with it: period mean <= 2e-5-7e-5 below 1 k_LQC, 1.4e-4 at 0.3-1,
7e-4 at 3-10, 1.3e-3 at 10-30, 4.4e-3 at 30-100 k_LQC.)
Above the grid the dressed-metric T is 1 (rho < 1e-12 there); the deformed-algebra ln T
continues linearly in x with the WKB growth rate 2 k_LQC int sqrt(-Omega) d eta of the
Euclidean phase (1.5942 per unit x; the exact slope between 60 and 100 k_LQC is 1.5945).

:func:`certificate` draws random backgrounds (quadratic inflaton, mass and phi_B) and random x
in 0.01-100, integrates the modes exactly and reports the maximum relative error of T, both
pointwise and relative to the local mean |alpha|^2 (1 + rho^2) (the power averaged over one
oscillation period, which is what any smoothing over Delta ln k >> pi/(x D) sees).
:class:`BounceSpectraModel` evaluates a power law times T in well under a millisecond.

Modules: :mod:`.transfer_decomposition` (exact alpha, rho, theta of one background),
:mod:`.transfer_table` (TransferTable, build/load, CERTIFIED_RANGES), :mod:`.transfer_certificate`,
:mod:`.transfer_model` (BounceSpectraModel), :mod:`.transfer_dense` (figure spectra). This module
re-exports their public names.
"""

from __future__ import annotations

from .transfer_certificate import certificate
from .transfer_decomposition import (
    FIELDS,
    MATCH_EFOLDS,
    X_GRID,
    Decomposition,
    _theta,
    _tilt,
    _tilt_basis,
    conformal_duration,
    decompose,
    quadratic_bounce,
)
from .transfer_dense import dense_spectrum
from .transfer_model import CAP_EXPONENT, BounceSpectraModel
from .transfer_table import (
    CALIBRATION_MASSES,
    CALIBRATION_PHI_B,
    CERTIFIED_RANGES,
    DATA,
    TILT_PHI_B,
    UV_ANCHOR,
    TransferTable,
    build_transfer,
    load_transfer,
    main,
)

__all__ = [
    "CALIBRATION_MASSES", "CALIBRATION_PHI_B", "CAP_EXPONENT", "CERTIFIED_RANGES", "DATA", "FIELDS",
    "MATCH_EFOLDS", "TILT_PHI_B", "UV_ANCHOR", "X_GRID", "BounceSpectraModel", "Decomposition",
    "TransferTable", "_theta", "_tilt", "_tilt_basis", "build_transfer", "certificate",
    "conformal_duration", "decompose", "dense_spectrum", "load_transfer", "main",
    "quadratic_bounce",
]

if __name__ == "__main__":  # pragma: no cover
    main()
