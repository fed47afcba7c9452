"""Checks of the unit conventions against published values and astropy."""

import math

import pytest

from bouncelike import units


def test_critical_density_convention():
    # rho_c = sqrt(3)/(32 pi^2 gamma^3) ~ 0.41 for gamma = 0.2375
    # (Ashtekar & Singh, Class. Quantum Grav. 28 (2011) 213001).
    rho_c = units.critical_density(0.2375)
    assert rho_c == pytest.approx(math.sqrt(3) / (32 * math.pi**2 * 0.2375**3), rel=1e-14)
    assert rho_c == pytest.approx(0.40937, abs=5e-5)


def test_reduced_planck_mass_from_astropy():
    # M_Pl = m_Pl / sqrt(8 pi) ~ 2.435e18 GeV (textbook value of the reduced Planck mass).
    assert units.planck_mass_gev() * units.REDUCED_PLANCK_MASS == pytest.approx(2.435e18, rel=1e-3)


def test_hubble_wavenumber_planck18():
    # a_0 H_0 / c ~ 2.25e-4 Mpc^-1 for H_0 = 67.4 km/s/Mpc (Planck 2018 VI, arXiv:1807.06209).
    assert units.hubble_radius_wavenumber(67.4) == pytest.approx(2.248e-4, rel=2e-3)
    # astropy's Planck 2018 realisation has H_0 = 67.66 km/s/Mpc.
    assert units.hubble_radius_wavenumber() == pytest.approx(67.66 / 299792.458, rel=1e-6)
