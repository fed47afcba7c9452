"""Validity flags of a bounce forward-model run: test field and trans-Planckian window modes.

Two assumptions underlie every bounce spectrum and are checked, flagged and stated with it
(never used to drop a point silently):

**Test field.** The perturbations are evolved on the effective background, whose own dynamics
ignores them: their energy density must stay far below the background's (Agullo, Ashtekar &
Nelson, Class. Quantum Grav. 30 (2013) 085014 and Phys. Rev. D 87 (2013) 043507 check it for
the dressed metric; from memory). Estimate used here, per field f (scalar: weight 1; tensor:
2 polarisations), from the Bogoliubov coefficients of each mode relative to the adiabatic
vacuum MATCH_EFOLDS = 3.5 e-folds after the bounce (the split of
:mod:`bouncelike.perturbations.transfer_decomposition`), where every mode of the feature range
oscillates inside the Hubble radius (W ~ k there):

    rho_exc(t_m) = (1 / (2 pi^2 a_m^4)) sum_f g_f int dk k^2 W_f(k) |beta_f(k)|^2

-- the energy density of the quanta above the adiabatic vacuum, i.e. the adiabatically
subtracted energy density of the excited modes (number density int d^3k/(2 pi)^3 |beta|^2 / a^3,
energy W/a per quantum: Birrell & Davies, Quantum Fields in Curved Space (1982) section 3.4;
from memory), integrated over the modes the spectrum integrates through the bounce (up to
its largest such k). Two ratios are reported:

* ``bounce_ratio`` = rho_exc(t_m) (a_m / a_B)^4 / rho_c: the created quanta referred back to
  the bounce as radiation, against the critical density (the comparison "at the bounce");
* ``matching_ratio`` = rho_exc(t_m) / rho(t_m): the same quanta against the background where
  they are defined (larger by ~(a_m/a_B)^2, the kinetic era diluting the background as a^-6
  and radiation as a^-4).

The test-field check passes when both are below ``TEST_FIELD_LIMIT`` = 0.1 (common practice:
"far below" taken as an order of magnitude). The integral stops at the largest k integrated;
where its integrand has not fallen below ``TOP_SHARE`` of its peak there (the deformed
algebra's Euclidean growth, modes beyond the e^600 cap), the ratios are lower bounds.
The accuracy of the integral is estimated by dropping every other mode (trapezoid in ln k).

**Trans-Planckian window modes.** A comoving k had the physical wavenumber k_phys = k / a_B at
the bounce (Planck units, G = c = hbar = 1); mapped through the bounce-to-Mpc scale of the run
(:class:`bouncelike.perturbations.mapping.ScaleMap`), the observable window's modes were
trans-Planckian at the bounce where k_phys > 1 (the reduced wavelength lambda/(2 pi) below the
Planck length; the trans-Planckian question of Martin & Brandenberger, Phys. Rev. D 63 (2001)
123501). Reported: k_phys at both window edges and the part of the window (in ln k) above 1.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np

from ..perturbations.mapping import OBSERVABLE_WINDOW

#: Both energy ratios must stay below this for the test-field check to pass.
TEST_FIELD_LIMIT = 0.1
#: Physical wavenumber at the bounce (Planck units) above which a mode is trans-Planckian.
PLANCK_WAVENUMBER = 1.0
#: The integral is a lower bound unless its integrand at the largest k has fallen below this
#: share of its peak.
TOP_SHARE = 1e-3
#: Degrees of freedom per field (tensor: two polarisations).
FIELD_WEIGHTS = {"scalar": 1.0, "tensor": 2.0}


@dataclass(frozen=True)
class Backreaction:
    """The test-field estimate (module docstring); ratios are lower bounds when ``bound``."""

    bounce_ratio: float
    matching_ratio: float
    k_max: float            # largest k in the integral (bounce units, a_B = 1)
    modes: int
    integral_error: float   # relative change with every other mode dropped
    bound: bool             # modes beyond the integral carry more (deformed-algebra cap)
    measured: bool = True

    @property
    def passes(self) -> bool:
        return (self.measured and not self.bound and self.bounce_ratio < TEST_FIELD_LIMIT
                and self.matching_ratio < TEST_FIELD_LIMIT)

    @property
    def status(self) -> str:
        if not self.measured:
            return "not measured"
        return "ok" if self.passes else "VIOLATED"

    def text(self) -> str:
        if not self.measured:
            return ("test field: not measured (no mode of the feature range reaches the "
                    "matching time)")
        rel = ">" if self.bound else "="
        return (f"test field: {self.status} - energy density of the quanta the bounce creates "
                f"(modes up to {self.k_max:.3g} a_B, adiabatic vacuum 3.5 e-folds after "
                f"the bounce) {rel} {_num(self.bounce_ratio)} rho_c referred to the bounce as "
                f"radiation, {rel} {_num(self.matching_ratio)} x the background density "
                f"where measured (limit {TEST_FIELD_LIMIT:g} for both"
                + ("" if self.bound else
                   f"; integral accurate to {_num(self.integral_error)}") + ")"
                + ("; modes above the largest k integrated carry more: lower bounds"
                   if self.bound else ""))


@dataclass(frozen=True)
class TransPlanckian:
    """Physical wavenumbers of the observable window's edges at the bounce (Planck units), as
    log10 (they reach 10^300 and beyond for bounces far below the window)."""

    log10_k_phys_low: float    # of the window's lowest k
    log10_k_phys_high: float   # of the window's highest k
    window: tuple[float, float]
    fraction: float            # part of the window (in ln k) with k_phys > PLANCK_WAVENUMBER
    log10_k_planck_mpc: float  # comoving k (Mpc^-1) with k_phys = PLANCK_WAVENUMBER there

    @property
    def flagged(self) -> bool:
        return self.fraction > 0

    @property
    def status(self) -> str:
        if self.fraction >= 1:
            return "ALL window modes"
        return f"{100 * self.fraction:.0f}% of the window" if self.flagged else "none"

    def text(self) -> str:
        lo, hi = self.window
        return (f"trans-Planckian at the bounce: {self.status} - k_phys = k/a_B = "
                f"{_pow10(self.log10_k_phys_low)} to {_pow10(self.log10_k_phys_high)} Planck "
                f"units for k = {lo:g}-{hi:g} Mpc^-1 (above {PLANCK_WAVENUMBER:g} for k > "
                f"{_pow10(self.log10_k_planck_mpc)} Mpc^-1)")


@dataclass(frozen=True)
class Validity:
    """Both flags of one run."""

    test_field: Backreaction
    trans_planckian: TransPlanckian

    def lines(self) -> list[str]:
        return [self.test_field.text(), self.trans_planckian.text()]

    def as_dict(self) -> dict[str, Any]:
        tf, tp = self.test_field, self.trans_planckian
        return {"test_field": {**asdict(tf), "status": tf.status, "passes": tf.passes,
                               "limit": TEST_FIELD_LIMIT},
                "trans_planckian": {**asdict(tp), "window": list(tp.window),
                                    "status": tp.status, "flagged": tp.flagged,
                                    "planck_wavenumber": PLANCK_WAVENUMBER}}


def _num(x: float) -> str:
    if not math.isfinite(x):
        return "inf" if x > 0 else "nan"
    return f"{x:.2g}" if 1e-3 <= abs(x) < 1e4 or x == 0 else f"{x:.1e}"


def excitation_energy(k: np.ndarray, omega: np.ndarray, beta2: np.ndarray) -> float:
    """(1/(2 pi^2)) int dk k^2 omega |beta|^2 by the trapezoid rule in ln k (comoving, a = 1).

    Infinite weights (overflowing |beta|^2) give inf."""
    k = np.asarray(k, dtype=float)
    if len(k) < 2:
        return 0.0
    with np.errstate(over="ignore", invalid="ignore"):
        f = k**3 * np.asarray(omega, dtype=float) * np.asarray(beta2, dtype=float)
        lk = np.log(k)
        total = float(np.sum(0.5 * (f[1:] + f[:-1]) * np.diff(lk)))
    return total / (2 * math.pi**2) if math.isfinite(total) else math.inf


def backreaction(tab: Any, k: np.ndarray, per_field: dict[str, tuple[np.ndarray, np.ndarray]],
               bound: bool, match_index: int) -> Backreaction:
    """The estimate of the module docstring from each field's (omega, |beta|^2) at ``k``
    (bounce units, a_B = 1) and the background node of the matching time."""
    if len(k) < 2:
        return Backreaction(math.nan, math.nan, math.nan, len(k), math.nan, bound, False)
    ib = tab.bounce_index()
    ln_ab = float(tab.ln_a[ib])
    total = half = 0.0
    for f, (omega, beta2) in per_field.items():
        g = FIELD_WEIGHTS[f]
        total += g * excitation_energy(k, omega, beta2)
        half += g * excitation_energy(k[::2], omega[::2], beta2[::2])
        with np.errstate(over="ignore", invalid="ignore"):
            integrand = k**3 * omega * beta2
        # still rising, or not yet fallen below TOP_SHARE of its peak at the largest k
        # integrated (the deformed algebra's Euclidean growth): more lies beyond
        bound = bound or not integrand[-1] <= TOP_SHARE * np.max(integrand)
    # comoving energy with a_B = 1 -> physical at the bounce: / a_B^4; at t_m: / a_m^4
    rho_bounce = total * math.exp(-4 * ln_ab)
    rho_m = total * math.exp(-4 * float(tab.ln_a[match_index]))
    with np.errstate(over="ignore", invalid="ignore"):
        err = abs(half / total - 1) if total > 0 and math.isfinite(total) else math.nan
    return Backreaction(rho_bounce / tab.critical_density, rho_m / float(tab.rho[match_index]),
                     float(k[-1] * math.exp(-ln_ab)), len(k), float(err), bound)


def trans_planckian(scales: Any, ln_a_bounce: float,
                    window: tuple[float, float] = OBSERVABLE_WINDOW) -> TransPlanckian:
    """Window edges at the bounce: k_phys = k_bounce / a_B with k_bounce = k_mpc / (Mpc^-1 per
    bounce unit) (:class:`~bouncelike.perturbations.mapping.ScaleMap`)."""
    lo, hi = window
    shift = -scales.ln_mpc_per_bounce_unit - ln_a_bounce  # ln(k_phys) = ln(k_mpc) + shift
    ln_lo, ln_hi = math.log(lo) + shift, math.log(hi) + shift
    ln_planck = math.log(PLANCK_WAVENUMBER)
    frac = min(max((ln_hi - ln_planck) / (ln_hi - ln_lo), 0.0), 1.0)
    ln10 = math.log(10.0)
    return TransPlanckian(ln_lo / ln10, ln_hi / ln10, (lo, hi), frac,
                          (ln_planck - shift) / ln10)


def _pow10(log10_x: float) -> str:
    """10^x as a number when it is moderate, else as '10^x'."""
    if -3 <= log10_x < 4:
        return f"{10**log10_x:.2g}"
    return f"10^{log10_x:.1f}"
