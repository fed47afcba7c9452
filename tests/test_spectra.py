"""Power-law and tabulated spectra against analytic results."""

import math

import numpy as np
import pytest
from astropy import units as u

from bouncelike.errors import InputError
from bouncelike.spectra import PowerLawSpectra, TabulatedSpectra

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
