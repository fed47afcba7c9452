"""Power-law, tabulated and slow-roll spectra against analytic results."""

import math

import numpy as np
import pytest
from astropy import units as u
from scipy.integrate import quad
from scipy.optimize import brentq

from bouncelike.errors import InputError
from bouncelike.spectra import PowerLawSpectra, TabulatedSpectra
from bouncelike.spectra.slowroll import slow_roll_spectra

K = np.logspace(-4, 0, 57)


def test_power_law_scalar_and_tensor_definition():
    # P_s = A_s (k/k_*)^(n_s - 1 + alpha/2 ln(k/k_*) + beta/6 ln^2(k/k_*)), P_t = r A_s (k/k_*)^n_t
    # (definition used by Planck 2018 X, arXiv:1807.06211, Sect. 2; section from memory).
    p = PowerLawSpectra(3.044, 0.9649, running=-0.01, running_of_running=0.02, r=0.05, n_t=0.1)
    x = np.log(K / 0.05)
    a_s = math.exp(3.044) * 1e-10
    expected = a_s * (K / 0.05) ** (0.9649 - 1 - 0.01 / 2 * x + 0.02 / 6 * x**2)
    np.testing.assert_allclose(p.scalar(K), expected, rtol=1e-13)
    np.testing.assert_allclose(p.tensor(K), 0.05 * a_s * (K / 0.05) ** 0.1, rtol=1e-13)
    assert p.A_s == pytest.approx(2.0989e-9, rel=1e-4)  # e^3.044 / 1e10 (arithmetic)


def test_consistency_relation_default():
    # single-field consistency relation n_t = -r/8 (textbook slow roll; physics notes sec. 6)
    p = PowerLawSpectra(3.0, 0.96, r=0.08)
    assert p.tensor_tilt == pytest.approx(-0.01)
    ratio = p.tensor(K) / p.scalar(K)
    np.testing.assert_allclose(ratio, 0.08 * (K / 0.05) ** (-0.01 - (0.96 - 1)), rtol=1e-12)


def test_astropy_quantities_accepted():
    p = PowerLawSpectra(3.044, 0.9649, r=0.01)
    k_kpc = (K / u.Mpc).to(1 / u.kpc)
    np.testing.assert_allclose(p.scalar(k_kpc), p.scalar(K), rtol=1e-12)
    np.testing.assert_allclose(p.tensor(k_kpc), p.tensor(K), rtol=1e-12)


def test_reexpansion_describes_the_same_function():
    p = PowerLawSpectra(3.1, 0.97, running=-0.02, running_of_running=0.01, r=0.03)
    q = p.at_pivot(0.002)
    np.testing.assert_allclose(q.scalar(K), p.scalar(K), rtol=1e-12)
    np.testing.assert_allclose(q.tensor(K), p.tensor(K), rtol=1e-12)
    back = q.at_pivot(0.05)
    assert back.n_s == pytest.approx(0.97, abs=1e-13)
    assert back.r == pytest.approx(0.03, rel=1e-12)


def test_reexpansion_of_pure_power_law_is_textbook():
    # For a pure power law, A_s(k1) = A_s(k0) (k1/k0)^(n_s-1) and r(k1) = r(k0)(k1/k0)^(n_t-n_s+1).
    p = PowerLawSpectra(3.044, 0.9649, r=0.05)
    s = p.summary_at(0.002)
    x = math.log(0.002 / 0.05)
    assert s.ln_1e10_As == pytest.approx(3.044 + (0.9649 - 1) * x, abs=1e-12)
    assert s.n_s == pytest.approx(0.9649, abs=1e-14)
    assert s.r == pytest.approx(0.05 * math.exp((-0.05 / 8 - 0.9649 + 1) * x), rel=1e-12)


@pytest.mark.parametrize(
    "kwargs",
    [dict(r=-0.01), dict(pivot=0.0), dict(n_s=float("nan")), dict(running=float("inf"))],
)
def test_power_law_rejects_bad_parameters(kwargs):
    base = dict(ln_1e10_As=3.0, n_s=0.96)
    base.update(kwargs)
    with pytest.raises(InputError):
        PowerLawSpectra(**base)


def test_tabulated_power_law_is_exact_in_log_log():
    # log-log linear interpolation reproduces a pure power law exactly.
    p = PowerLawSpectra(3.044, 0.9649, r=0.02)
    grid = np.logspace(-5, 1, 40)
    t = TabulatedSpectra(grid, p.scalar(grid), p.tensor(grid), label="table")
    np.testing.assert_allclose(t.scalar(K), p.scalar(K), rtol=1e-12)
    np.testing.assert_allclose(t.tensor(K), p.tensor(K), rtol=1e-12)
    assert t.k_min == pytest.approx(1e-5) and t.k_max == pytest.approx(10.0)
    assert float(t.scalar(0.05)) == pytest.approx(p.A_s, rel=1e-12)


def test_tabulated_refuses_to_extrapolate_and_names_range():
    grid = np.logspace(-3, -1, 10)
    t = TabulatedSpectra(grid, np.full(10, 2e-9), np.zeros(10))
    with pytest.raises(InputError, match=r"outside the tabulated range \[0.001, 0.1\]"):
        t.scalar([0.5])
    loose = TabulatedSpectra(grid, 2e-9 * (grid / 0.01) ** -0.04, np.zeros(10), extrapolate=True)
    assert float(loose.scalar(1.0)) == pytest.approx(2e-9 * 100**-0.04, rel=1e-10)
    assert any("extrapolated" in n for n in loose.notes)
    np.testing.assert_array_equal(t.tensor(grid), 0.0)


@pytest.mark.parametrize(
    "k,ps,pt",
    [
        ([1e-3, 1e-3, 1e-1], [1, 1, 1], [0, 0, 0]),  # not increasing
        ([1e-3, 1e-2], [1, -1], [0, 0]),  # negative scalar
        ([1e-3, 1e-2], [1, 1], [1, 0]),  # tensor partly zero
        ([1e-3, 1e-2], [1, np.nan], [0, 0]),  # NaN
        ([1e-3, 1e-2, 1e-1], [1, 1], [0, 0]),  # length mismatch
    ],
)
def test_tabulated_validation(k, ps, pt):
    with pytest.raises(InputError):
        TabulatedSpectra(k, ps, pt)


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
    s = slow_roll_spectra("quadratic", 60, scale=m)
    assert s.A_s == pytest.approx(a_s, rel=1e-6)
    assert s.n_s == pytest.approx(ns, abs=1e-8)
    assert s.r == pytest.approx(r, rel=1e-6)


@pytest.mark.parametrize("n", [50, 60])
def test_quadratic_mass_from_amplitude(n):
    # A_s fixes m ~ 1.2-1.4e-6 m_Pl for N = 50-60 (project physics notes, section 6; from memory
    # there). Invert A_s = 2.1e-9 (Planck 2018 VI, arXiv:1807.06209: e^3.044/1e10).
    target = math.exp(3.044) * 1e-10
    m = brentq(lambda mm: slow_roll_spectra("quadratic", n, scale=mm).A_s - target, 1e-7, 1e-5)
    assert 1.1e-6 < m < 1.45e-6


def test_starobinsky_amplitude_closed_form():
    # A_s = V_0 N^2 / (18 pi^2 M_Pl^4) with M_Pl^4 = 1/(64 pi^2) in m_Pl units: A_s = 32 V_0 N^2/9.
    s = slow_roll_spectra("starobinsky", 55, scale=1e-12)
    assert s.A_s == pytest.approx(32 * 1e-12 * 55**2 / 9, rel=1e-12)
