"""Potentials: derivatives, closed forms, inversion and configuration errors."""

import math

import numpy as np
import pytest

from bouncelike.background.potentials import (
    POTENTIALS,
    Linear,
    Monomial,
    Quadratic,
    Starobinsky,
    invert_potential,
    potential_from_config,
)
from bouncelike.config import Table
from bouncelike.errors import InputError
from bouncelike.units import REDUCED_PLANCK_MASS

ALL = [
    Quadratic(1.21e-6),
    Starobinsky(2.6e-6),
    Monomial(1e-11, 2 / 3, smoothing=1e-3),
    Monomial(1e-11, 4 / 3, smoothing=1e-3),
    Linear(slope=1e-11, smoothing=1e-3),
]


@pytest.mark.parametrize("pot", ALL, ids=lambda p: f"{p.name}")
def test_derivatives_match_finite_differences(pot):
    # central differences (textbook numerical analysis): O(h^2) error
    phi = np.array([-3.0, -0.7, 0.05, 0.4, 2.5, 5.0])
    h = 1e-5
    dv = (pot.V(phi + h) - pot.V(phi - h)) / (2 * h)
    d2v = (pot.dV(phi + h) - pot.dV(phi - h)) / (2 * h)
    np.testing.assert_allclose(pot.dV(phi), dv, rtol=1e-7, atol=1e-22)
    np.testing.assert_allclose(pot.d2V(phi), d2v, rtol=1e-6, atol=1e-20)


def test_starobinsky_closed_form_and_mass():
    # V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi / M_Pl))^2, reduced M_Pl = m_Pl / sqrt(8 pi)
    # (Starobinsky model in the Einstein frame; Martin, Ringeval & Vennin, arXiv:1303.3787)
    M = 2.6e-6
    mpl = 1 / math.sqrt(8 * math.pi)
    assert REDUCED_PLANCK_MASS == pytest.approx(mpl, rel=1e-15)
    pot = Starobinsky(M)
    phi = np.array([-1.0, 0.3, 1.0, 4.0])
    direct = 0.75 * M**2 * mpl**2 * (1 - np.exp(-math.sqrt(2 / 3) * phi / mpl)) ** 2
    np.testing.assert_allclose(pot.V(phi), direct, rtol=1e-13)
    # mass at the minimum: V''(0) = M^2 (Taylor expansion, re-derived in potentials.py)
    assert float(pot.d2V(0.0)) == pytest.approx(M**2, rel=1e-13)
    # plateau height V_inf = (3/4) M^2 M_Pl^2
    assert float(pot.V(60.0)) == pytest.approx(pot.plateau, rel=1e-12)


def test_monomial_smoothing_is_small_away_from_zero():
    # relative deviation bounded by (s/phi)^p + (p/2)(s/phi)^2 (module notes)
    pot = Monomial(2.0, 2 / 3, smoothing=1e-9)
    phi = np.array([0.5, 3.0])
    bound = (1e-9 / phi) ** (2 / 3) + (1 / 3) * (1e-9 / phi) ** 2
    assert np.all(np.abs(pot.V(phi) / (2.0 * phi ** (2 / 3)) - 1) <= bound * (1 + 1e-6))
    assert float(pot.V(0.0)) == 0.0
    assert np.isfinite(pot.d2V(0.0))


@pytest.mark.parametrize("pot", ALL, ids=lambda p: f"{p.name}")
@pytest.mark.parametrize("sign", [1.0, -1.0])
def test_field_inversion(pot, sign):
    target = 1e-14
    phi = pot.field_at(target, sign)
    assert math.copysign(1.0, phi) == sign
    assert float(pot.V(phi)) == pytest.approx(target, rel=1e-9)
    # generic bisection agrees with the closed-form inverse
    assert invert_potential(pot, target, sign) == pytest.approx(phi, rel=1e-9)


class _Cosh:
    """A user potential V = A (cosh(phi) - 1) for the custom path."""

    def __init__(self, scale=1e-12):
        self.scale = scale

    def V(self, phi):
        return self.scale * (np.cosh(phi) - 1.0)

    def dV(self, phi):
        return self.scale * np.sinh(phi)

    def d2V(self, phi):
        return self.scale * np.cosh(phi)


COSH = _Cosh()


def _config(**potential):
    return Table({"potential": potential}, "", ("potential",))


def test_from_config_builds_each_potential():
    assert potential_from_config(_config(name="quadratic", mass=1e-6)) == Quadratic(1e-6)
    assert potential_from_config(_config(name="starobinsky", mass=2e-6)) == Starobinsky(2e-6)
    mono = potential_from_config(_config(name="monomial", amplitude=1e-11, power=1.5))
    assert mono.power == 1.5 and mono.smoothing == 1e-10
    lin = potential_from_config(_config(name="linear", slope=3e-12))
    assert lin.parameters == {"slope": 3e-12, "smoothing": 1e-10}
    assert set(POTENTIALS) == {"quadratic", "starobinsky", "monomial", "linear"}


@pytest.mark.parametrize(
    "potential, key",
    [
        ({"name": "quartic"}, "potential.name"),
        ({"mass": 1e-6}, "potential.name"),
        ({"name": "quadratic"}, "potential.mass"),
        ({"name": "quadratic", "mass": -1.0}, "potential.mass"),
        ({"name": "quadratic", "mass": 1e-6, "power": 2}, "potential.power"),
        ({"name": "starobinsky", "mass": 0.0}, "potential.mass"),
        ({"name": "monomial", "amplitude": 1e-11, "power": 0.0}, "potential.power"),
        ({"name": "monomial", "amplitude": 1e-11, "power": 1, "smoothing": 0}, "smoothing"),
        ({"name": "linear", "slope": "steep"}, "potential.slope"),
        ({"name": "custom", "object": "os.path"}, "potential.name"),
        ({"name": "custom", "object": "no_such_module_xyz:V"}, "potential.name"),
    ],
)
def test_bad_potential_config_names_the_key(potential, key):
    with pytest.raises(InputError, match=key.replace(".", r"\.")):
        potential_from_config(_config(**potential))
