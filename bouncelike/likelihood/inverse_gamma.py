"""Per-multipole likelihood of the large-scale temperature power: an inverse gamma.

For a full-sky, noise-free map the likelihood of the theory power D given the measured one is
(Hamimeche & Lewis 2008, arXiv:0801.0554, their full-sky exact form)

    L(D) ∝ D^(-nu/2) exp(-nu s / (2 D)),   -2 ln(L / L_max) = nu [s/D + ln(D/s) - 1],

with nu = 2 ell + 1 modes and s the measured power; its maximum is at D = s. With a flat prior
on D this is also the posterior: an inverse gamma with shape nu/2 - 1 and scale nu s/2
(normalisable for nu > 2). A real sky (mask, foregrounds, noise) is described here by an
effective nu_ell and s_ell, fitted to a published asymmetric interval read as the
highest-density interval of probability ``INTERVAL_PROBABILITY``.

In u = D/s the density depends on nu alone, so the fit is one-dimensional: the highest-density
interval in units of s, (u_lo(nu), u_hi(nu)), has equal density at both ends, i.e. equal
nu (1/u + ln u - 1) = c; with v = 1/u, v - ln v - 1 = c/nu gives v = -W(-e^(-1-c/nu)) on the two
real branches of the Lambert W function, and the level c is set so that the enclosed
probability is the target. nu follows from the published ratio of the upper to the lower edge,
and s = lower edge / u_lo.

"68%" is taken as 0.6827 = erf(1/sqrt(2)), the probability of +-1 sigma of a Gaussian, which is
what published "68%" error bars stand for (common practice). For the Planck 2018 low-ell table
the choice barely matters: 0.68 instead moves nu by < 1% and the mode by < 1e-4.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq
from scipy.special import gammaincc, lambertw

from ..errors import InputError

#: Probability of the published "68%" intervals: erf(1/sqrt(2)).
INTERVAL_PROBABILITY = math.erf(1.0 / math.sqrt(2.0))
#: Smallest nu allowed (the inverse gamma needs nu > 2 to be normalisable).
NU_MIN = 2.2
NU_MAX = 1.0e5


def minus_two_ln_ratio(d, nu, s) -> np.ndarray:
    """-2 ln(L(D)/L_max) = nu [s/D + ln(D/s) - 1] (elementwise; zero at D = s)."""
    d = np.asarray(d, dtype=float)
    ratio = np.asarray(s, dtype=float) / d
    return np.asarray(nu, dtype=float) * (ratio - np.log(ratio) - 1.0)


def cdf_in_units_of_mode(u, nu: float) -> np.ndarray:
    """P(D/s <= u) for the posterior above: inverse gamma (shape nu/2 - 1, scale nu/2)."""
    u = np.asarray(u, dtype=float)
    return gammaincc(0.5 * nu - 1.0, 0.5 * nu / u)


def equal_density_pair(level: float, nu: float) -> tuple[float, float]:
    """(u_lo, u_hi) around the mode u = 1 where -2 ln(L/L_max) = ``level``."""
    z = -math.exp(-1.0 - level / nu)
    v_small = -lambertw(z, 0).real     # v = 1/u <= 1: the upper edge
    v_large = -lambertw(z, -1).real    # v >= 1: the lower edge
    return 1.0 / v_large, 1.0 / v_small


def highest_density_interval(nu: float, probability: float = INTERVAL_PROBABILITY
                             ) -> tuple[float, float]:
    """Highest-density interval of D/s with the given probability, for one nu."""

    def excess(level: float) -> float:
        lo, hi = equal_density_pair(level, nu)
        return float(cdf_in_units_of_mode(hi, nu) - cdf_in_units_of_mode(lo, nu)) - probability

    level = brentq(excess, 1e-10, 40.0 * nu, xtol=1e-14, rtol=1e-13)
    return equal_density_pair(level, nu)


def fit_inverse_gamma(lower_edge: float, upper_edge: float,
                      probability: float = INTERVAL_PROBABILITY,
                      where: str = "") -> tuple[float, float]:
    """(nu, s) whose highest-density interval of ``probability`` is [lower_edge, upper_edge].

    Raises :class:`InputError` naming ``where`` when the interval is too wide for nu > 2.2 or
    too narrow for nu < 1e5.
    """
    if not (0 < lower_edge < upper_edge) or not math.isfinite(upper_edge):
        raise InputError(f"{where}: the 68% interval [{lower_edge:g}, {upper_edge:g}] must have "
                         "0 < lower edge < upper edge")
    target = math.log(upper_edge / lower_edge)

    def excess(nu: float) -> float:
        lo, hi = highest_density_interval(nu, probability)
        return math.log(hi / lo) - target

    if excess(NU_MIN) < 0 or excess(NU_MAX) > 0:
        raise InputError(
            f"{where}: the interval [{lower_edge:g}, {upper_edge:g}] cannot be the "
            f"{100 * probability:.2f}% highest-density interval of an inverse gamma with "
            f"{NU_MIN:g} < nu < {NU_MAX:g} (upper/lower edge ratio "
            f"{upper_edge / lower_edge:.4g})")
    nu = brentq(excess, NU_MIN, NU_MAX, xtol=1e-10, rtol=1e-12)
    lo, _ = highest_density_interval(nu, probability)
    return nu, lower_edge / lo
