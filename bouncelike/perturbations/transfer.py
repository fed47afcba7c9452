"""Cached transfer of the bounce: ratio of bounce to standard spectra, with an error certificate.

What the transfer depends on (measured, tests/test_perturbation_transfer.py)
-----------------------------------------------------------------------------
Shortly after the bounce (at ln(a/a_B) = ``MATCH_EFOLDS`` = 3.5, still in the kinetic era for
every inflaton mass ~1e-6 of interest) each mode is a combination alpha f + beta f* of the
adiabatic positive- and negative-frequency solutions. alpha(x) and beta(x), x = k/k_LQC, are set
by the bounce alone: near the bounce the potential is a fraction ~1e-11 of rho_c, so every such
background is the massless bounce there and |beta/alpha| agrees between backgrounds to 1e-5
(quadratic family; for the remote-past state on Starobinsky bounces the contracting history
enters too, see "Potential families" below).
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

The cache (``data/transfer_<prescription>_<state>[_<potential>].npz``, 124-199 kB each, ten
tables, 1.7 MB) holds ln|alpha|, ln rho and theta on X_GRID (401 points over 0.01-100) x the D
of the calibration backgrounds of one potential family (:mod:`.transfer_backgrounds`;
quadratic: phi_B = 1.2, masses 4.5e-7-6.5e-6, D = 3.1e3-1.7e4; Starobinsky: V_B = 10^-7.3
rho_c, M = 1.5e-6-4e-6, D = 2.3e4-4.5e4), interpolated linearly in (ln x, ln D), and for the
dressed metric the tilt correction above (tilt rows: phi_B = 0.7, 1.8, 2.5; Starobinsky
log10(V_B/rho_c) = -8, -7.6, -6.9). Tables: dressed metric x {remote_past, bounce_adiabatic4,
non_oscillating, low_energy} and deformed algebra x remote_past, for each family. Rebuild all
with ``python3 -m bouncelike.perturbations.transfer`` (23 min on one core: 22-100 s per
remote-past, fourth-order or deformed-algebra table, 213-294 s for the two states set around
the bounce, whose window construction costs more per mode). The remote-past state is set per
mode where rate/W <= 0.05 (:mod:`.states`; the calibration backgrounds reach down to
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

Potential families and what they change (measured)
---------------------------------------------------
On Starobinsky bounces (the plateau Planck allows; the field on the steep side at the bounce,
V_B/rho_c = 1e-8-1.3e-7 for 50-170 e-folds to the end of inflation) three things differ from
the quadratic family. (1) D is 2.3e4-4.5e4, set by the plateau height (the kinetic era ends
when rho falls to ~V_inf), hardly by V_B (31912 and 31783 at 10^-7.2 and 10^-7.6, M = 2.5e-6):
outside the quadratic calibration, hence a table of its own. (2) The remote-past state is not
set below 0.363 k_LQC: the contracting branch leaves the kinetic era within ~1 e-fold (the
field climbs the steep side backwards in time) and modes below ~0.2-0.4 k_LQC are never
adiabatic in it (minimum rate/W 1.4 at 0.01, 0.07 at 0.26 k_LQC; integrating further back,
to 1e-20 Planck units, only lowers that edge to ~0.15 k_LQC). The fast model refuses windows
reaching below it (FLOOR_REASONS). (3) theta at small x differs at equal D (-1.880 against
-1.818 rad at 0.01 k_LQC between Starobinsky and quadratic remote-past rows of D ~ 3.2e4). A
state set around the bounce sees only the bounce: |alpha| and rho of the non-oscillating state
agree between the families to 2e-3 down to 0.01 k_LQC; the state of low energy, whose energy
includes a^2 U, feels the steep side inside its window below ~0.1 k_LQC.
The other shipped potentials (monomial, linear) have no table; the fast model refuses them.

Measured accuracy (``bouncelike transfer-check --backgrounds 6 --points 60 --seed 11``, max
relative error at 360 random points; pointwise / of the period-averaged T; quadratic family
unless stated):

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
(All three with ``--backgrounds 6 --seed 11``, after the remote-past start was made per mode,
and the same again after the rebuild with the families: remote past 0.50% / 2e-5, fourth-order
0.50% / 2e-5, deformed algebra period mean 2e-5-7e-5 below 1 k_LQC, 1.4e-4 at 0.3-1,
7e-4 at 3-10, 1.3e-3 at 10-30, 4.4e-3 at 30-100 k_LQC.)
* dressed metric, non-oscillating state: 0.01-0.03 k_LQC 0.68% / 0.28%; 0.03-0.1: 0.61% /
  0.25%; 0.1-0.3: 0.47% / 0.25%; 0.3-1: 0.58% / 0.23%; 1-3: 0.20% / 0.047%; 3-10: 1.4e-4;
  above 10: < 6e-7. Certified 0.01-100 and above, pointwise. The period mean is what depends
  on the background here (|alpha|, rho carry the window's small dependence on V_B), not theta.
* dressed metric, state of low energy: 0.01-0.03 0.48% / 0.26%; 0.03-0.1: 0.26% / 0.23%;
  0.1-0.3: 0.27% / 0.15%; 0.3-1: 0.12% / 0.094%; 1-3: 0.046%; 3-10: 5.6e-5; above 10:
  < 6e-7. Certified 0.01-100 and above, pointwise.
* Starobinsky (``--potential starobinsky``): remote past (``--x-min 0.363``) 0.3-1 k_LQC
  0.33% / 6.9e-5, 1-3: 0.19%, 3-10: 8.6e-5, above 10: < 6e-6: certified from 0.363 k_LQC,
  pointwise. Fourth-order state (``--x-min 0.363``): the same below 3 k_LQC, 3-10: 1.3%
  pointwise (where the switch to the truncated series falls, which moves with V_B) / 1.4e-4:
  certified from 0.363 for the period mean. Non-oscillating state: 0.01-0.03 0.53% / 0.39%;
  0.03-0.1: 0.46% / 0.39%; 0.1-0.3: 0.37% / 0.35%; 0.3-1: 0.45% / 0.33%; 1-3: 0.17%; 3-10:
  2.1e-4; above 10: < 4e-7: certified from 0.01, pointwise. State of low energy: 0.01-0.03
  6.8% / 6.9% and 0.03-0.1 1.2% / 1.2% (the state feels the steep side there), 0.1-0.3 0.26%,
  0.3-1 0.18%, 1-3 0.058%, 3-10 4.1e-5: certified from 0.1. Deformed algebra (``--x-min
  0.363``): period mean <= 1.1e-4 at 3-10, 4.5e-4 at 10-30, 2.1e-3 at 30-100; below 3 k_LQC
  the scalars of the steepest bounce (V_B ~ 1e-7 rho_c) grow by up to e^380 at 0.4-1.5 k_LQC
  (exact integration; not investigated further): certified 3-100, refused below.
* The tilts the Starobinsky rows span: n_s - 1 = -0.064 to -0.012, n_t = -0.0016 to -5e-5
  (quadratic: -0.048 to -0.014 and -0.027 to -0.0073); a D or tilt outside its family's range
  is refused by the fast model, not clipped.
Above the grid the dressed-metric T is 1 (rho < 1e-12 there); the deformed-algebra ln T
continues linearly in x with the WKB growth rate 2 k_LQC int sqrt(-Omega) d eta of the
Euclidean phase (1.5942 per unit x; the exact slope between 60 and 100 k_LQC is 1.5945).

:func:`certificate` draws random backgrounds of a family (quadratic: mass and phi_B;
Starobinsky: mass and log10 V_B/rho_c) and random x in x_min-100, integrates the modes exactly
and reports the maximum relative error of T, both pointwise and relative to the local mean
|alpha|^2 (1 + rho^2) (the power averaged over one oscillation period, which is what any
smoothing over Delta ln k >> pi/(x D) sees).
:class:`BounceSpectraModel` evaluates a power law times T in well under a millisecond.

Modules: :mod:`.transfer_decomposition` (exact alpha, rho, theta of one background),
:mod:`.transfer_backgrounds` (families of calibration and certificate backgrounds),
:mod:`.transfer_table` (TransferTable, build/load, CERTIFIED_RANGES), :mod:`.transfer_certificate`,
:mod:`.transfer_model` (BounceSpectraModel), :mod:`.transfer_dense` (figure spectra). This module
re-exports their public names.
"""

from __future__ import annotations

from .transfer_backgrounds import FAMILIES, REFUSED_POTENTIALS, starobinsky_bounce
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
    SHIPPED_TABLES,
    TILT_PHI_B,
    UV_ANCHOR,
    TransferTable,
    build_transfer,
    certified_ranges,
    load_transfer,
    main,
    table_path,
)

__all__ = [
    "CALIBRATION_MASSES", "CALIBRATION_PHI_B", "CAP_EXPONENT", "CERTIFIED_RANGES", "DATA", "FIELDS",
    "FAMILIES", "MATCH_EFOLDS", "REFUSED_POTENTIALS", "SHIPPED_TABLES", "TILT_PHI_B", "UV_ANCHOR",
    "X_GRID", "BounceSpectraModel", "Decomposition", "TransferTable", "_theta", "_tilt",
    "_tilt_basis", "build_transfer", "certificate", "certified_ranges", "conformal_duration",
    "decompose", "dense_spectrum", "load_transfer", "main", "quadratic_bounce",
    "starobinsky_bounce", "table_path",
]

if __name__ == "__main__":  # pragma: no cover
    main()
