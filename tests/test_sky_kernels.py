"""Late universe and line-of-sight kernels of the large-scale temperature projection."""

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.special import hyp2f1, lpmv, spherical_jn

from bouncelike.sky.cosmology import (
    growth_factor,
    planck18_late_universe,
    potential_growth,
    potential_growth_derivative,
)
from bouncelike.sky.kernels import (
    late_isw_transfer,
    sachs_wolfe_transfer,
    spherical_bessel,
    tensor_transfer,
)

ELLS = np.arange(2, 30)


def test_spherical_bessel_recurrence_matches_scipy():
    # reference library: scipy.special.spherical_jn, one call per multipole
    rng = np.random.default_rng(3)
    x = np.concatenate([np.geomspace(1e-3, 1.0, 50), rng.uniform(0, 3000, 2000)])
    ours = spherical_bessel(ELLS, x)
    ref = spherical_jn(ELLS[:, None], x[None, :])
    assert np.max(np.abs(ours - ref)) < 1e-13
    big = np.abs(ref) > 1e-8
    assert np.max(np.abs(ours - ref)[big] / np.abs(ref[big])) < 1e-9


def test_growth_factor_matches_hypergeometric_closed_form():
    # flat matter + Lambda: D(a) = a 2F1(1/3, 1; 11/6; -a^3 Omega_L / Omega_m) (closed form of
    # the growth integral, e.g. Dodelson & Schmidt 2nd ed. growth section; from memory)
    om = planck18_late_universe().omega_m
    a = np.array([1e-3, 0.05, 0.3, 0.7, 1.0])
    closed = a * hyp2f1(1 / 3, 1, 11 / 6, -a**3 * (1 - om) / om)
    np.testing.assert_allclose(growth_factor(a, om), closed, rtol=1e-12)


def test_potential_growth_limits_and_derivative():
    om = planck18_late_universe().omega_m
    # matter domination: g -> 1; today about 0.78 for Omega_m ~ 0.31 (growth suppression
    # factor ~ Omega_m^0.23 ... common practice; the closed form above is the real check)
    assert abs(potential_growth(1000.0, om) - 1) < 1e-8
    assert 0.75 < float(potential_growth(0.0, om)) < 0.81
    z = np.array([0.0, 0.4, 1.3, 4.0, 15.0])
    h = 1e-5
    numeric = (potential_growth(z + h, om) - potential_growth(np.maximum(z - h, 0), om)) / (
        (z + h) - np.maximum(z - h, 0))
    np.testing.assert_allclose(potential_growth_derivative(z, om), numeric, rtol=1e-5)


def test_last_scattering_distance():
    # physics notes section 7: chi_* ~ 13,880 Mpc with astropy Planck18; conformal age from
    # the same cosmology: eta_* ~ 280 Mpc (radiation included)
    u = planck18_late_universe()
    assert abs(u.chi_star / 13880 - 1) < 1e-3
    assert 270 < u.eta_star < 290
    assert u.t_cmb_uK == pytest.approx(2.7255e6)  # astropy Planck18.Tcmb0


@pytest.mark.parametrize("ell,k", [(2, 2e-4), (7, 1e-3), (20, 3e-3)])
def test_late_isw_against_independent_quadrature(ell, k):
    # independent route: scipy quad over redshift with astropy's comoving distance,
    # Theta_ISW = -(6/5) int dz (dg/dz) j_ell(k chi(z)) (physics notes section 7)
    u = planck18_late_universe()

    def integrand(z):
        chi = float(u.comoving_distance(z))
        return float(potential_growth_derivative(z, u.omega_m)) * float(spherical_jn(ell,
                                                                                    k * chi))

    ref = -1.2 * quad(integrand, 0.0, 30.0, limit=400, epsabs=1e-12, epsrel=1e-9)[0]
    ours = late_isw_transfer(np.arange(ell, ell + 1), np.array([k]), u)[0, 0]
    assert ours == pytest.approx(ref, rel=2e-5, abs=1e-9)


def test_kernels_converge_with_finer_quadrature():
    # halve the quadrature step: Theta changes by far less than the 1e-3 target
    u = planck18_late_universe()
    k = np.geomspace(1e-4, 0.02, 9)
    a = late_isw_transfer(ELLS, k, u)
    b = late_isw_transfer(ELLS, k, u, nodes_per_radian=2.0)
    scale = np.max(np.abs(sachs_wolfe_transfer(ELLS, k, u.chi_star)), axis=1, keepdims=True)
    assert np.max(np.abs(a - b) / scale) < 1e-7
    t1 = tensor_transfer(ELLS, k, u)
    t2 = tensor_transfer(ELLS, k, u, nodes_per_radian=2.0)
    assert np.max(np.abs(t1 - t2)) < 1e-7 * np.max(np.abs(t1))


def _brute_force_tensor(ell: int, k: float, universe) -> float:
    """|a_(ell 2)|^2 / (2 ell + 1) of a unit '+' tensor mode along z, by direct projection.

    Delta T/T(mu, phi) = -1/2 int deta h'(eta) (1 - mu^2) cos(2 phi) e^(i k chi mu) (Sachs &
    Wolfe 1967), h' from the matter-era mode 3 j_1(k eta)/(k eta) differentiated numerically;
    the eta integral by a dense trapezoid rule, the mu integral by Gauss-Legendre against the
    associated Legendre function of scipy, the phi integral of cos(2 phi) e^(-2 i phi) = pi.
    """
    eta = np.linspace(universe.eta_star, universe.eta0, 40001)
    x = k * eta
    h = 3 * spherical_jn(1, x) / x
    dh = np.gradient(h, eta, edge_order=2)
    mu, wmu = np.polynomial.legendre.leggauss(120)
    chi = universe.eta0 - eta
    phase = np.exp(1j * k * chi[None, :] * mu[:, None])
    line = np.trapezoid(dh[None, :] * phase, eta, axis=1)
    pattern = -0.5 * (1 - mu**2) * line
    norm = math.sqrt((2 * ell + 1) / (4 * math.pi) * math.factorial(ell - 2)
                     / math.factorial(ell + 2))
    a = norm * math.pi * np.sum(wmu * lpmv(2, ell, mu) * pattern)
    return abs(a) ** 2 / (2 * ell + 1)


@pytest.mark.parametrize("ell,k", [(2, 3e-4), (5, 6e-4), (10, 1e-3)])
def test_tensor_normalisation_two_quadratures(ell, k):
    # C_ell per ln k of a mode with <h_ij h^ij> = P_t per ln k (both polarisations, e:e = 2):
    # sum over polarisations and m = +-2 of |a|^2 x (P_t / 4) / (2 ell + 1), i.e.
    # P_t |a_(ell 2)|^2 / (2 ell + 1), must equal 4 pi P_t Theta_ell^T(k)^2 of the Bessel form
    # C_ell = (pi/4) (ell+2)!/(ell-2)! int dk/k P_t F_ell^2 (kernels.py docstring)
    u = planck18_late_universe()
    theta = tensor_transfer(np.arange(ell, ell + 1), np.array([k]), u)[0, 0]
    assert 4 * math.pi * theta**2 == pytest.approx(_brute_force_tensor(ell, k, u), rel=1e-6)
