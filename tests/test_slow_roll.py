"""Slow-roll predictions (one module: configurations and posterior runs) against the
published formulas and a numerical slow-roll integration of the potentials."""

import math

import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from bouncelike.models.registry import forward_model
from bouncelike.models.slowroll import slow_roll_spectra


@pytest.mark.parametrize("n", [50, 60])
def test_quadratic_slow_roll_formulas(n):
    # V = m^2 phi^2/2: n_s = 1 - 2/(N+1/2), r = 8/(N+1/2)
    # (Encyclopaedia Inflationaris, arXiv:1303.3787, large-field inflation with p = 2).
    s = slow_roll_spectra("quadratic", n, ln_1e10_As=3.044)
    assert s.n_s == pytest.approx(1 - 2 / (n + 0.5), abs=1e-14)
    assert s.r == pytest.approx(8 / (n + 0.5), abs=1e-14)
    assert s.tensor_tilt == pytest.approx(-s.r / 8)


def test_quadratic_n60_values():
    # n_s ~ 0.967 and r ~ 0.13 at N = 60 (project physics notes sec. 6; the same numbers follow
    # from Encyclopaedia Inflationaris, arXiv:1303.3787).
    s = slow_roll_spectra("quadratic", 60, ln_1e10_As=3.044)
    assert s.n_s == pytest.approx(0.967, abs=1e-3)
    assert s.r == pytest.approx(0.13, abs=5e-3)


def test_starobinsky_leading_order_formulas():
    # n_s = 1 - 2/N, r = 12/N^2 (Encyclopaedia Inflationaris, arXiv:1303.3787, Starobinsky model)
    s = slow_roll_spectra("starobinsky", 55, ln_1e10_As=3.044)
    assert s.n_s == pytest.approx(1 - 2 / 55, abs=1e-14)
    assert s.r == pytest.approx(12 / 55**2, abs=1e-14)


def _first_order_slow_roll(V, dV, d2V, phi_end_bracket, phi_star_bracket, n):
    """First-order slow roll from the potential (reduced Planck mass M = 1 here)."""
    eps = lambda p: 0.5 * (dV(p) / V(p)) ** 2  # noqa: E731
    eta = lambda p: d2V(p) / V(p)  # noqa: E731
    phi_end = brentq(lambda p: eps(p) - 1.0, *phi_end_bracket)
    efolds = lambda p: quad(lambda f: V(f) / dV(f), phi_end, p)[0]  # noqa: E731
    phi_star = brentq(lambda p: efolds(p) - n, *phi_star_bracket)
    e, h = eps(phi_star), eta(phi_star)
    return 1 - 6 * e + 2 * h, 16 * e, V(phi_star) / (24 * math.pi**2 * e)


def test_starobinsky_against_numerical_slow_roll():
    # Textbook first-order slow roll (n_s = 1 - 6 eps + 2 eta, r = 16 eps, with eps = 1 at the
    # end) applied numerically to the Starobinsky potential. The leading order in 1/N differs by
    # O(ln N / N^2) in n_s and by O(ln N / N) relative in r (about 13 % at N = 55: r is small
    # either way, well below every current limit).
    a = math.sqrt(2 / 3)
    V = lambda p: (1 - math.exp(-a * p)) ** 2  # noqa: E731
    dV = lambda p: 2 * a * math.exp(-a * p) * (1 - math.exp(-a * p))  # noqa: E731
    d2V = lambda p: 2 * a**2 * math.exp(-a * p) * (2 * math.exp(-a * p) - 1)  # noqa: E731
    ns, r, _ = _first_order_slow_roll(V, dV, d2V, (0.3, 3.0), (2.0, 10.0), 55)
    s = slow_roll_spectra("starobinsky", 55, ln_1e10_As=3.044)
    assert s.n_s == pytest.approx(ns, abs=2e-3)
    assert s.r == pytest.approx(r, rel=0.15)
    assert s.r > r  # the leading order overestimates r


def test_quadratic_amplitude_against_numerical_slow_roll():
    # A_s = V/(24 pi^2 M_Pl^4 eps) evaluated numerically from the potential (reduced Planck mass
    # M_Pl = 1 there) must equal the closed form used by the package (m given in m_Pl,
    # m/M_Pl = m sqrt(8 pi)).
    m = 1.2e-6
    m_red = m * math.sqrt(8 * math.pi)
    V = lambda p: 0.5 * m_red**2 * p**2  # noqa: E731
    dV = lambda p: m_red**2 * p  # noqa: E731
    d2V = lambda p: m_red**2 + 0 * p  # noqa: E731
    ns, r, a_s = _first_order_slow_roll(V, dV, d2V, (0.5, 3.0), (5.0, 30.0), 60)
    s = slow_roll_spectra("quadratic", 60, mass=m)
    assert s.A_s == pytest.approx(a_s, rel=1e-6)
    assert s.n_s == pytest.approx(ns, abs=1e-8)
    assert s.r == pytest.approx(r, rel=1e-6)


@pytest.mark.parametrize("n", [50, 60])
def test_quadratic_mass_from_amplitude(n):
    # A_s fixes m ~ 1.2-1.4e-6 m_Pl for N = 50-60 (project physics notes, section 6; from memory
    # there). Invert A_s = 2.1e-9 (Planck 2018 VI, arXiv:1807.06209: e^3.044/1e10).
    target = math.exp(3.044) * 1e-10
    m = brentq(lambda mm: slow_roll_spectra("quadratic", n, mass=mm).A_s - target, 1e-7, 1e-5)
    assert 1.1e-6 < m < 1.45e-6


def test_starobinsky_amplitude_closed_form():
    # A_s = V_0 N^2 / (18 pi^2 M_Pl^4) with M_Pl^4 = 1/(64 pi^2) in m_Pl units: A_s = 32 V_0 N^2/9
    # (Encyclopaedia Inflationaris, arXiv:1303.3787), with V_0 = (3/4) M^2 M_Pl^2 = 3 M^2/(32 pi)
    m = 2.6e-6
    v0 = 3 * m**2 / (32 * math.pi)
    s = slow_roll_spectra("starobinsky", 55, mass=m)
    assert s.A_s == pytest.approx(32 * v0 * 55**2 / 9, rel=1e-12)


@pytest.mark.parametrize("name", ["slow_roll_quadratic", "slow_roll_starobinsky"])
def test_sampled_mass_inverts_the_amplitude(name):
    # the derived mass of a posterior point gives back its A_s through
    # A_s = V_*/(24 pi^2 M_Pl^4 epsilon_1) (Encyclopaedia Inflationaris, arXiv:1303.3787);
    # physics notes s.6: A_s fixes m ~ 1.2-1.4e-6 m_Pl for N = 50-60 (quadratic)
    model = forward_model(name)
    point = {"N_star": 55.0, "ln_1e10_As": 3.044}
    d = model.derived(point)
    spectra = model.spectra(point)
    assert model.amplitude(d["mass"], 55.0) == pytest.approx(spectra.A_s, rel=1e-12)
    assert (d["n_s"], d["r"]) == (spectra.n_s, spectra.r)
    if name == "slow_roll_quadratic":
        assert 1.2e-6 < d["mass"] < 1.4e-6
    else:  # M ~ 2.6e-6 m_Pl normalises the plateau (examples/starobinsky_bounce_efolds.toml)
        assert 2.0e-6 < d["mass"] < 3.5e-6


@pytest.mark.parametrize("name, closed_form", [
    # m = sqrt(6 pi^2 A_s) M_Pl / (N_* + 1/2) and M = sqrt(24 pi^2 A_s) M_Pl / N_*
    # (A_s = V_*/(24 pi^2 M_Pl^4 epsilon_1) with the potentials' V_* and epsilon_1,
    # Encyclopaedia Inflationaris, arXiv:1303.3787; the module docstring), M_Pl = 1/sqrt(8 pi)
    ("slow_roll_quadratic", lambda a_s, n: math.sqrt(6 * math.pi**2 * a_s) / (n + 0.5)
     / math.sqrt(8 * math.pi)),
    ("slow_roll_starobinsky", lambda a_s, n: math.sqrt(24 * math.pi**2 * a_s) / n
     / math.sqrt(8 * math.pi)),
])
def test_mass_matches_the_closed_form(name, closed_form):
    model = forward_model(name)
    for n_star, a_s in ((50.0, 2.1e-9), (60.0, 1e-10)):
        assert model.mass(n_star, a_s) == pytest.approx(closed_form(a_s, n_star), rel=1e-12)
