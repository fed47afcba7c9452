"""Null distribution of the low-ell temperature statistic, and the combined p-value.

The statistic of the low-ell term is T = sum_ell nu_ell [s_ell/D_ell + ln(D_ell/s_ell) - 1]
(:mod:`.inverse_gamma`). It is not chi-square distributed with one degree of freedom per
multipole. If the model is true, the measured power scatters as s_ell = D_ell u_ell with
u_ell ~ chi2_(nu_ell) / nu_ell (cosmic variance of nu_ell effective modes; the same
approximation that defines the per-multipole likelihood), so

    T = sum_ell Y_ell,   Y_ell = nu_ell [u_ell - ln u_ell - 1],

whose distribution does not depend on the model. The distribution function of one Y is exact:
u - ln u - 1 = y/nu has the two roots u = -W(-e^(-1-y/nu)) (branches 0 and -1 of the Lambert W
function), so P(Y <= y) = G(u_hi) - G(u_lo) with G the gamma distribution function of u
(shape nu/2, scale 2/nu). :func:`null_distribution` bins each Y on a grid of step ``STEP``
(0.01), convolves the 28 binned laws by FFT once and caches the result; a Gaussian part with m
terms (the pivot constraints, chi2_m under the same hypothesis) is convolved in the same way.

Combined p-value: p = P(X >= t), X = chi2_m + T, t = the chi-square of the m Gaussian pivot
terms plus the observed T. It is deterministic (no random numbers); tests compare it with a
seeded simulation. p-values below ``P_FLOOR`` are reported as the bound p < P_FLOOR (round-off of
the FFT limits the far tail).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy.special import gammainc, lambertw
from scipy.stats import chi2 as chi2_dist

#: Grid step of the binned distributions.
STEP = 0.01
#: Largest value of the statistic represented on the grid (p there is far below P_FLOOR).
T_MAX = 400.0
#: Largest value of one multipole's Y represented (P(Y > 150) < 1e-30 for nu >= 2.2).
Y_MAX = 150.0
#: p-values below this are reported as a bound.
P_FLOOR = 1e-12


def _term_cdf(y: np.ndarray, nu: float) -> np.ndarray:
    """P(nu [u - ln u - 1] <= y) for u ~ chi2_nu / nu (exact, through Lambert W)."""
    y = np.asarray(y, dtype=float)
    # at y = 0 the two roots meet at u = 1 (branch point of W at -1/e): P = 0 exactly
    z = np.minimum(-np.exp(-1.0 - np.maximum(y, 1e-300) / nu), -1e-300)
    u_lo = -lambertw(z, 0).real
    u_hi = -lambertw(z, -1).real
    u_hi = np.where(np.isfinite(u_hi), u_hi, np.inf)
    # gamma distribution function of u with shape nu/2 and scale 2/nu
    g_hi = np.where(np.isfinite(u_hi), gammainc(0.5 * nu, 0.5 * nu * np.minimum(u_hi, 1e300)),
                    1.0)
    out = np.clip(g_hi - gammainc(0.5 * nu, 0.5 * nu * u_lo), 0.0, 1.0)
    return np.where(y > 0, out, 0.0)


def _binned(cdf_values: np.ndarray) -> np.ndarray:
    return np.maximum(np.diff(cdf_values), 0.0)


def _fft_convolve(a: np.ndarray, b: np.ndarray, n: int) -> np.ndarray:
    size = 1 << int(math.ceil(math.log2(len(a) + len(b) - 1)))
    out = np.fft.irfft(np.fft.rfft(a, size) * np.fft.rfft(b, size), size)[:n]
    return np.maximum(out, 0.0)


@dataclass(frozen=True)
class NullDistribution:
    """Binned law of the low-ell statistic T (plus ``gaussian_terms`` chi-square terms).

    ``mass[i]`` is the probability of the bin whose centre, after the convolution of
    ``n_parts`` binned laws each placed at its bin centre, is (i + n_parts/2) ``STEP``.
    """

    nus: tuple[float, ...]
    gaussian_terms: int
    mass: np.ndarray
    n_parts: int

    def values(self) -> np.ndarray:
        return (np.arange(len(self.mass)) + 0.5 * self.n_parts) * STEP

    def survival(self, t: float) -> float:
        """P(X >= t) (not floored)."""
        if not math.isfinite(t):
            return 0.0 if t > 0 else 1.0
        v = self.values()
        return float(np.sum(self.mass[v >= t]))

    def p_value(self, t: float) -> tuple[float, bool]:
        """(p, is_bound): p = P(X >= t), or (P_FLOOR, True) when below the floor."""
        if t > T_MAX:
            return P_FLOOR, True
        p = min(self.survival(t), 1.0)
        return (P_FLOOR, True) if p < P_FLOOR else (p, False)

    def isf(self, p: float) -> float:
        """The smallest grid value t with P(X >= t) <= p (the threshold at which a statistic
        is excluded at level p; exact to one grid step)."""
        v = self.values()
        tail = np.cumsum(self.mass[::-1])[::-1]  # P(X >= v_i)
        above = np.nonzero(tail <= p)[0]
        return float(v[above[0]]) if above.size else T_MAX

    @property
    def mean(self) -> float:
        return float(np.sum(self.mass * self.values()))


@functools.lru_cache(maxsize=32)
def null_distribution(nus: tuple[float, ...], gaussian_terms: int = 0) -> NullDistribution:
    """The law of sum_ell nu_ell [u - ln u - 1] (+ chi2 with ``gaussian_terms`` dof)."""
    n = int(round(T_MAX / STEP)) + 1
    edges = np.arange(n + 1) * STEP
    term_edges = edges[: int(round(Y_MAX / STEP)) + 2]
    total = None
    parts = 0
    for nu in nus:
        m = _binned(_term_cdf(term_edges, float(nu)))
        total = m if total is None else _fft_convolve(total, m, n)
        parts += 1
    if gaussian_terms > 0:
        m = _binned(chi2_dist.cdf(edges, gaussian_terms))
        total = m if total is None else _fft_convolve(total, m, n)
        parts += 1
    if total is None:
        total = np.zeros(n)
        total[0] = 1.0
    return NullDistribution(tuple(float(x) for x in nus), int(gaussian_terms), total, parts)


def simulate_statistic(nus, draws: int, seed: int, gaussian_terms: int = 0) -> np.ndarray:
    """Seeded simulation of X = chi2_m + sum nu [u - ln u - 1] (for checks of the binned law)."""
    rng = np.random.default_rng(seed)
    x = np.zeros(draws)
    for nu in nus:
        u = rng.chisquare(nu, draws) / nu
        x += nu * (u - np.log(u) - 1.0)
    if gaussian_terms:
        x += rng.chisquare(gaussian_terms, draws)
    return x
