"""The deformed algebra far above the bounce scale: capped powers and the tensor bound.

Deformed-algebra modes whose Euclidean growth exp(2 k int sqrt(-Omega) d eta) would exceed
e^600 (:data:`bouncelike.perturbations.transfer_model.CAP_EXPONENT`) are not integrated. Scalars
and tensors grow there with the same exponent (the same Omega k^2 term; scalars:
arXiv:1508.06786), so their ratio tends to r_std x e^Delta with Delta the measured prefactor
ratio of the cached transfer. The bounce model gives both as standard x e^600 x that ratio (a
common lower bound that keeps P_t/P_s right, :func:`capped_boost`), and its notes carry the
uncapped log-amplitude of the tensors at the pivot against the tensor bound
P_t < r_max x A_s (BK18 r limit x Planck 2018 A_s, shipped constraint sets,
:func:`deformed_uv_tensor_note`): the argument by which Bolliet, Barrau, Grain & Schander
exclude the deformed algebra with long inflation (arXiv:1510.08766, from memory). In the score
the exclusion shows through ln(1e10 A_s); the r term stays near the slow-roll value because
the growth rates are equal.
"""

from __future__ import annotations

import math

import numpy as np

from ..likelihood.sets import load_constraint_set
from ..perturbations.transfer import load_transfer
from ..perturbations.transfer_model import CAP_EXPONENT


def capped_boost() -> tuple[float, float]:
    """(scalar, tensor) factors of the standard powers for modes above the cap: e^600 and
    e^600 x the measured ultraviolet tensor/scalar ratio of the cached transfer."""
    boost_s = math.exp(CAP_EXPONENT)
    ratio = load_transfer("deformed_algebra", "remote_past").uv_tensor_scalar_log_ratio
    return boost_s, boost_s * math.exp(ratio)


def deformed_uv_tensor_note(ln_x_pivot: float, ln_pt_std: float, pivot: float) -> str:
    """Uncapped tensor amplitude at the pivot vs the published tensor bound (module doc)."""
    t = load_transfer("deformed_algebra", "remote_past")
    ln_growth = math.log(t.growth_per_x) + ln_x_pivot  # ln of growth x (k_*/k_LQC)
    ln_tt = (float(t.ln_mean_transfer(np.array([math.exp(ln_x_pivot)]))["tensor"][0])
             if ln_growth < 700 else math.inf)
    r_max = next(term.limit for term in load_constraint_set("bk18").terms
                 if term.quantity == "r")
    ln_as = next(term.mean for term in load_constraint_set("planck2018_base").terms
                 if term.quantity == "ln_1e10_As") - math.log(1e10)
    ln_bound = math.log(r_max) + ln_as
    if math.isfinite(ln_tt):
        amp = f"ln P_t = {ln_pt_std + ln_tt:.4g}"
        excess = f"e^{ln_pt_std + ln_tt - ln_bound:.4g}"
    else:
        lg = (math.log(t.growth_per_x) + ln_x_pivot) / math.log(10)
        amp = f"ln P_t ~ 10^{lg:.6g} (uncapped estimate; the scored spectra are capped)"
        excess = f"e^(10^{lg:.6g})"
    return (f"deformed algebra, tensor amplitude at k_* = {pivot:g} Mpc^-1 (k_*/k_LQC = "
            f"e^{ln_x_pivot:.6g}): {amp} from the Euclidean growth exp(2 k int sqrt(-Omega) "
            f"d eta), against the tensor bound P_t < r_max A_s = {r_max:g} x "
            f"{math.exp(ln_as):.3g} = {math.exp(ln_bound):.2g} (BK18 r limit x Planck 2018 A_s; "
            f"the argument of arXiv:1510.08766): excluded by the tensor amplitude, {excess} "
            f"above the bound. Scalars grow with the same exponent, so P_t/P_s = r_std x "
            f"e^{t.uv_tensor_scalar_log_ratio:.2f} stays near slow roll: in the score the "
            "exclusion appears through ln(1e10 A_s), not through r")
