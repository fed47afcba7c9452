"""The table view of the engine (what the perturbations read): the remote past by time
reversal, the one end of inflation, convergence of the view."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.interpolate import CubicSpline

from bouncelike.background.initial import ContractingStart, IntegrationSettings
from bouncelike.background.isotropic import IsotropicDynamics
from bouncelike.background.potentials import Quadratic, Starobinsky
from bouncelike.background.table import table_from_state
from bouncelike.perturbations.transfer import conformal_duration
from bouncelike.units import critical_density

RHO_C = critical_density()


def test_massless_bounce_table_on_both_sides_of_the_bounce():
    # a(t) = a_B (1 + 24 pi rho_c t^2)^(1/6), rho = rho_c (a_B/a)^6, exact for a massless field
    # (Ashtekar & Singh, Class. Quantum Grav. 28 (2011) 213001): the past (time reversal of the
    # engine's forward run) and the future, to 1e-8
    tab = table_from_state(Quadratic(0.0), RHO_C, 0.0, math.sqrt(2 * RHO_C), past_density=1e-4,
                           max_time=50.0)
    assert tab.t[0] < -10 and tab.t[-1] == pytest.approx(50.0)
    exact = np.log1p(24 * math.pi * RHO_C * tab.t**2) / 6
    np.testing.assert_allclose(tab.ln_a, exact, rtol=0, atol=1e-8)
    rho = RHO_C * np.exp(-6 * exact)
    np.testing.assert_allclose(tab.rho, rho, rtol=1e-7)
    h = 8 * math.pi * RHO_C * tab.t / (1 + 24 * math.pi * RHO_C * tab.t**2)
    np.testing.assert_allclose(tab.H, h, rtol=1e-6, atol=1e-9)
    assert tab.rho[0] == pytest.approx(1e-4, rel=1e-9)  # the past ends at past_density
    assert np.all(tab.phidot > 0)  # time reversal flips phidot back


def test_symmetric_bounce_is_mirrored_by_time_reversal():
    # For V(-phi) = V(phi) the solution through phi_B = 0 is odd in phi and even in a under
    # t -> -t (the equations of physics notes s.1 are invariant under t -> -t, phi -> -phi):
    # the past built by time reversal must mirror the future, here to the contracting branch's
    # density 1e-20 (far past, as the remote-past states need)
    pot = Quadratic(1.2e-6)
    tab = table_from_state(pot, RHO_C, 0.0, math.sqrt(2 * RHO_C), past_density=1e-20,
                           extra_efolds=0.0)
    assert tab.rho[0] == pytest.approx(1e-20, rel=1e-9)
    past = tab.t < 0
    t_p = -tab.t[past][::-1]
    future = (tab.t >= t_p[0]) & (tab.t <= t_p[-1])
    tf = tab.t[future]
    for name, parity in (("ln_a", 1), ("phi", -1), ("H", -1), ("phidot", 1)):
        mirror = parity * CubicSpline(t_p, getattr(tab, name)[past][::-1])(tf)
        scale = np.max(np.abs(getattr(tab, name)[future]))
        assert np.max(np.abs(getattr(tab, name)[future] - mirror)) < 1e-7 * scale


def test_table_end_of_inflation_is_the_longest_phase():
    # One definition (bouncelike.background.problem): the end of the longest accelerated,
    # potential-dominated phase. A Starobinsky field thrown at its steep wall accelerates
    # briefly before the plateau inflation (physics notes s.2; Linsefors & Barrau 2013): the
    # table of that bounce ends inflation where the engine does, after the plateau phase.
    pot = Starobinsky(2.6e-6)
    start = ContractingStart(1e-16, 3 * math.pi / 4)
    dyn = IsotropicDynamics(RHO_C)
    tr = dyn.evolve(pot, start, IntegrationSettings(dense_points=20000))
    assert tr.extras["accelerated_phases"] >= 2
    tab = dyn.table(pot, start, extra_efolds=1.0)
    n_table = tab.efolds_bounce_to_end
    assert n_table == pytest.approx(tr.efolds.bounce_to_inflation_end, abs=1e-6)
    i = tab.inflation_end_index()
    eps = -tab.Hdot[i] / tab.H[i] ** 2
    assert eps == pytest.approx(1.0, abs=1e-6)
    # a little beyond the end: 1 e-fold or 3 / H_end Planck times, whichever comes first
    i_end = tab.inflation_end_index()
    beyond = max(tab.ln_a[-1] - tab.ln_a_inflation_end,
                 (tab.t[-1] - tab.t[i_end]) * tab.H[i_end] / 3.0)
    assert beyond == pytest.approx(1.0, abs=1e-9)


def test_table_converges_with_grid_and_tolerance():
    # doubling the clock grid and tightening the tolerance tenfold leave the bounce scale and
    # the conformal duration D = k_LQC (eta_end - eta_B) unchanged (common practice)
    pot = Quadratic(1.5e-6)
    phidot = math.sqrt(2 * (RHO_C - float(pot.V(1.3))))
    base = table_from_state(pot, RHO_C, 1.3, phidot, past_density=1e-11)
    dense = table_from_state(pot, RHO_C, 1.3, phidot, past_density=1e-11, points_per_unit=120.0)
    tight = table_from_state(pot, RHO_C, 1.3, phidot, past_density=1e-11, rtol=1e-12)
    d0 = conformal_duration(base)
    assert conformal_duration(dense) == pytest.approx(d0, rel=1e-7)
    assert conformal_duration(tight) == pytest.approx(d0, rel=1e-8)
    assert tight.k_lqc == pytest.approx(base.k_lqc, rel=1e-12)
    assert tight.efolds_bounce_to_end == pytest.approx(base.efolds_bounce_to_end, abs=1e-7)


def test_bounce_table_against_an_independent_integration():
    # Independent check (own variables, scipy's DOP853, no constraint-keeping modes): from the
    # bounce, (ln a, H, phi, phidot) with the Raychaudhuri equation for 30 Planck times, where
    # the drift of an evolved H is still far below the tolerance (physics notes s.1 pitfall)
    pot = Quadratic(1.2e-6)
    phi_b = 1.0
    phidot_b = math.sqrt(2 * (RHO_C - float(pot.V(phi_b))))
    tab = table_from_state(pot, RHO_C, phi_b, phidot_b, past_density=1e-4, extra_efolds=0.0)

    def rhs(_t, y):
        lna, H, phi, phidot = y
        rho = 0.5 * phidot**2 + float(pot.V(phi))
        return [H, -4 * math.pi * phidot**2 * (1 - 2 * rho / RHO_C), phidot,
                -3 * H * phidot - float(pot.dV(phi))]

    for sign in (1.0, -1.0):  # future, and the past integrated backwards
        sel = (sign * tab.t > 0) & (sign * tab.t < 30.0)
        sol = solve_ivp(rhs, (0.0, sign * 30.0), [0.0, 0.0, phi_b, phidot_b], method="DOP853",
                        rtol=1e-12, atol=1e-14, t_eval=tab.t[sel][::int(sign)])
        ref = sol.y[:, ::int(sign)]
        np.testing.assert_allclose(tab.ln_a[sel], ref[0], rtol=0, atol=1e-8)
        np.testing.assert_allclose(tab.H[sel], ref[1], rtol=1e-7, atol=1e-9)
        np.testing.assert_allclose(tab.phi[sel], ref[2], rtol=0, atol=1e-9)
