"""Line-of-sight temperature transfer functions Theta_ell(k) at the largest scales.

With P(k) the dimensionless primordial power spectrum of a field, its temperature multipoles are

    C_ell = 4 pi int dk/k P(k) Theta_ell(k)^2,   D_ell = ell (ell + 1) C_ell T_CMB^2 / (2 pi).

**Scalars** (per unit comoving curvature R, P = P_s; physics notes section 7). After last
scattering the Newtonian potential is Psi = Psi_MD g(eta) with Psi_MD = -(3/5) R and g from
:mod:`.cosmology`; the Sachs-Wolfe term (Theta + Psi at last scattering = Psi/3) plus the
integrated Sachs-Wolfe term 2 int deta Psi' give, up to an overall sign C_ell does not see,

    Theta_ell(k) = (1/5) g_* j_ell(k chi_*) + (6/5) int_0^chi_* dchi (dg/deta) j_ell(k chi),

chi = eta_0 - eta the comoving distance, dg/deta = -(H/c) dg/dz < 0 once Lambda matters, so the
two pieces of one mode have opposite signs (Sachs & Wolfe 1967; Dodelson & Schmidt, Modern
Cosmology 2nd ed., anisotropy chapters). g_* = 1 to 1e-9 (radiation is neglected after last
scattering: the early ISW effect, the Doppler term and the acoustic rise are left out; the
anchoring of :mod:`.projection` cancels them to first order). The late-ISW integral runs over
0 <= z <= 30 (1 - g(30) = 1.4e-5), Gauss-Legendre panels in chi.

**Tensors** (P = P_t with <h_ij h^ij> = int dk/k P_t, two polarisations; the standard
convention in which P_t/P_s = r). A tensor mode changes the photon temperature by
-1/2 int deta h'_ij n^i n^j (Sachs & Wolfe 1967). With the matter-era mode
h(k, eta) = h_prim 3 j_1(k eta)/(k eta) (used from last scattering to today; the late Lambda
era is not followed for tensors), projecting the m = +-2 pattern (1 - mu^2) e^(+-2 i phi)
e^(i x mu) on spherical harmonics (int dmu P_ell^2(mu) (1 - mu^2) e^(i x mu) =
2 i^ell (ell+2)!/(ell-2)! j_ell(x)/x^2 up to sign) and summing both polarisations gives

    C_ell^T = (pi/4) (ell+2)!/(ell-2)! int dk/k P_t(k) F_ell(k)^2,
    F_ell(k) = int_eta_*^eta_0 deta dh/deta(k, eta) j_ell(k chi)/(k chi)^2 ,

i.e. Theta_ell^T = (1/4) sqrt((ell+2)!/(ell-2)!) F_ell in the form above, with
dh/deta = -3 k j_2(k eta)/(k eta) (e.g. Pritchard & Kamionkowski 2005, Ann. Phys. 318, 2;
from memory). The normalisation is checked against an independent brute-force projection of
the mode's sky pattern in tests/test_sky_kernels.py.

Spherical Bessel functions: :func:`spherical_bessel` takes j_(L+1) and j_L from
:func:`scipy.special.spherical_jn` and recurs downwards (stable: j_ell grows towards lower ell
where ell > x, neutral where ell < x), about ten times cheaper than one call per multipole.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.interpolate import PchipInterpolator
from scipy.special import spherical_jn

from .cosmology import LateUniverse, potential_growth_derivative

#: Upper redshift of the late-ISW integral (1 - g < 1.4e-5 beyond).
ISW_Z_MAX = 30.0
_GL_X, _GL_W = np.polynomial.legendre.leggauss(8)


def spherical_bessel(ells: np.ndarray, x: np.ndarray) -> np.ndarray:
    """j_ell(x) for consecutive integers ``ells`` (shape (len(ells), *x.shape)); x >= 0."""
    ells = np.asarray(ells, dtype=int)
    if ells.ndim != 1 or len(ells) == 0 or np.any(np.diff(ells) != 1) or ells[0] < 0:
        raise ValueError("ells must be consecutive non-negative integers")
    x = np.asarray(x, dtype=float)
    top = int(ells[-1])
    out = np.empty((len(ells), *x.shape))
    upper = spherical_jn(top + 1, x)
    current = spherical_jn(top, x)
    out[-1] = current
    positive = x > 0
    inv = np.where(positive, 1.0 / np.where(positive, x, 1.0), 0.0)
    for i, ell in enumerate(range(top, int(ells[0]), -1)):
        lower = (2 * ell + 1) * inv * current - upper
        upper, current = current, lower
        out[-2 - i] = current
    if ells[0] == 0:
        out[0] = np.where(positive, out[0], 1.0)
    return out


def _panels(lo: float, hi: float, width: float, min_panels: int = 16) -> tuple[np.ndarray,
                                                                                  np.ndarray]:
    """Gauss-Legendre nodes and weights (8 per panel) on [lo, hi], panels <= ``width``."""
    n = max(min_panels, int(math.ceil((hi - lo) / width)))
    edges = np.linspace(lo, hi, n + 1)
    half = 0.5 * np.diff(edges)
    mid = 0.5 * (edges[1:] + edges[:-1])
    nodes = (mid[:, None] + half[:, None] * _GL_X).ravel()
    weights = (half[:, None] * _GL_W).ravel()
    return nodes, weights


def _distance_to_redshift(universe: LateUniverse, z_max: float) -> PchipInterpolator:
    z = np.expm1(np.linspace(0.0, math.log1p(z_max), 4001))
    return PchipInterpolator(universe.comoving_distance(z), z)


def sachs_wolfe_transfer(ells: np.ndarray, k: np.ndarray, chi_star: float) -> np.ndarray:
    """(1/5) j_ell(k chi_*): the Sachs-Wolfe part of Theta_ell(k) per unit R (g_* = 1)."""
    return 0.2 * spherical_bessel(ells, np.asarray(k, dtype=float) * chi_star)


def _blocks(k: np.ndarray, size: int = 64):
    order = np.argsort(k)
    for start in range(0, len(k), size):
        yield order[start:start + size]


def late_isw_transfer(ells: np.ndarray, k: np.ndarray, universe: LateUniverse,
                      nodes_per_radian: float = 1.0, z_max: float = ISW_Z_MAX) -> np.ndarray:
    """(6/5) int_0^chi(z_max) dchi (dg/deta) j_ell(k chi) (per unit R; negative weight).

    Gauss-Legendre panels in chi no wider than 1/(nodes_per_radian k) for each block of k
    (8 nodes per panel, so about 8 nodes per radian of k chi at the default).
    """
    k = np.asarray(k, dtype=float)
    chi_max = float(universe.comoving_distance(z_max))
    z_of_chi = _distance_to_redshift(universe, z_max)
    out = np.empty((len(ells), len(k)))
    for idx in _blocks(k):
        width = 1.0 / (nodes_per_radian * max(float(k[idx].max()), 1e-12))
        chi, w = _panels(0.0, chi_max, width)
        z = z_of_chi(chi)
        # dg/deta = -(dz/dchi) dg/dz = -(E(z)/D_H) dg/dz
        dg_deta = -universe.efunc(z) / universe.hubble_distance * potential_growth_derivative(
            z, universe.omega_m)
        jl = spherical_bessel(ells, k[idx][:, None] * chi[None, :])
        out[:, idx] = 1.2 * jl @ (w * dg_deta)
    return out


def scalar_transfer(ells: np.ndarray, k: np.ndarray, universe: LateUniverse,
                    isw: bool = True) -> np.ndarray:
    """Theta_ell(k) for scalars: Sachs-Wolfe plus (``isw``) the late ISW term."""
    out = sachs_wolfe_transfer(ells, k, universe.chi_star)
    if isw:
        out = out + late_isw_transfer(ells, k, universe)
    return out


def spin2_factor(ells: np.ndarray) -> np.ndarray:
    """sqrt((ell+2)!/(ell-2)!) = sqrt((ell+2)(ell+1) ell (ell-1))."""
    ell = np.asarray(ells, dtype=float)
    return np.sqrt((ell + 2) * (ell + 1) * ell * (ell - 1))


def tensor_transfer(ells: np.ndarray, k: np.ndarray, universe: LateUniverse,
                    nodes_per_radian: float = 1.0) -> np.ndarray:
    """Theta_ell^T(k) = (1/4) sqrt((ell+2)!/(ell-2)!) F_ell(k) (see the module docstring).

    F_ell(k) = -3 int_eta_*^eta_0 deta k j_2(k eta)/(k eta) j_ell(k chi)/(k chi)^2 with
    Gauss-Legendre panels in eta no wider than 1/(nodes_per_radian k) per block of k.
    """
    k = np.asarray(k, dtype=float)
    ells = np.asarray(ells, dtype=int)
    if ells[0] < 2:
        raise ValueError("tensor multipoles start at ell = 2")
    out = np.empty((len(ells), len(k)))
    for idx in _blocks(k):
        width = 1.0 / (nodes_per_radian * max(float(k[idx].max()), 1e-12))
        eta, w = _panels(universe.eta_star, universe.eta0, width)
        kk = k[idx][:, None]
        u = kk * eta[None, :]
        x = kk * (universe.eta0 - eta)[None, :]
        dh = -3.0 * kk * spherical_jn(2, u) / u
        jl = spherical_bessel(ells, x) / x**2
        out[:, idx] = np.einsum("lkn,kn->lk", jl, dh * w[None, :])
    return 0.25 * spin2_factor(ells)[:, None] * out


def dell_prefactor(ells: np.ndarray, t_cmb_uK: float) -> np.ndarray:
    """D_ell per unit int dln k P Theta^2: 4 pi ell (ell+1) T_CMB^2 / (2 pi) = 2 ell (ell+1) T^2."""
    ell = np.asarray(ells, dtype=float)
    return 2.0 * ell * (ell + 1.0) * t_cmb_uK**2
