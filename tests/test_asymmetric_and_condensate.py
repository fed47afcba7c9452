"""Asymmetric-bounce and condensate dynamics against their published and closed-form limits."""

from __future__ import annotations

import math

import numpy as np
import pytest

from bouncelike.background.asymmetric import (
    AsymmetricDynamics,
    branch_hubble_squared,
    emergent_cosmological_constant,
    maximum_density,
    pre_bounce_newton_constant,
)
from bouncelike.background.condensate import CondensateDynamics
from bouncelike.background.initial import BounceStart, ContractingStart, IntegrationSettings
from bouncelike.background.isotropic import IsotropicDynamics
from bouncelike.background.potentials import Quadratic
from bouncelike.config import Table
from bouncelike.errors import InputError
from bouncelike.units import area_gap, critical_density

GAMMA = 0.2375
RHO_C = critical_density(GAMMA)
POT = Quadratic(1.21e-6)


@pytest.fixture(scope="module")
def asym():
    return AsymmetricDynamics(RHO_C, GAMMA).evolve(POT, ContractingStart(1e-10, 0.4))


def test_asymmetric_maximum_density(asym):
    """rho_max = rho_c / (4 (1 + gamma^2)) (Li, Singh & Wang, arXiv:1801.07313)."""
    assert asym.status == "inflated"
    rho_max = RHO_C / (4 * (1 + GAMMA**2))
    assert maximum_density(RHO_C, GAMMA) == pytest.approx(rho_max)
    assert asym.rho.max() == pytest.approx(rho_max, rel=1e-8)
    ib = np.argmin(np.abs(asym.t - asym.events.t_bounce))
    assert asym.rho[ib] == pytest.approx(rho_max, rel=1e-8)
    assert asym.max_constraint_residual < 1e-7


def test_asymmetric_post_bounce_branch_approaches_general_relativity(asym):
    """After the bounce H^2 follows the '+' branch and tends to (8 pi/3) rho (physics notes,
    section 3; Li, Singh & Wang, arXiv:1801.07313)."""
    post = asym.t > asym.events.t_bounce
    h2 = branch_hubble_squared(asym.rho[post], RHO_C, GAMMA, +1)
    np.testing.assert_allclose(asym.H[post] ** 2, h2, rtol=1e-6)
    low = post & (asym.rho < 1e-6 * RHO_C)
    assert low.sum() > 10
    ratio = asym.H[low] ** 2 / (8 * math.pi * asym.rho[low] / 3)
    assert np.max(np.abs(ratio - 1)) < 1e-4


def test_asymmetric_pre_bounce_branch_approaches_de_sitter(asym):
    """Before the bounce: '-' branch; as rho -> 0, H^2 -> Lambda_eff/3 with
    Lambda_eff = 3/(lambda^2 (1+gamma^2)^2), and H^2 - Lambda_eff/3 -> (8 pi G_eff/3) rho with
    G_eff = (1 - 5 gamma^2)/(1 + gamma^2) (both derived in bouncelike.background.asymmetric from
    the branch equation of Li, Singh & Wang, arXiv:1801.07313)."""
    pre = asym.t < asym.events.t_bounce
    h2 = branch_hubble_squared(asym.rho[pre], RHO_C, GAMMA, -1)
    np.testing.assert_allclose(asym.H[pre] ** 2, h2, rtol=1e-6)
    lam = math.sqrt(area_gap(GAMMA))
    lam_eff = 3 / (lam**2 * (1 + GAMMA**2) ** 2)
    assert emergent_cosmological_constant(RHO_C, GAMMA) == pytest.approx(lam_eff, rel=1e-12)
    assert asym.H[0] ** 2 == pytest.approx(lam_eff / 3, rel=1e-8)
    assert asym.H[0] < 0
    low = pre & (asym.rho < 1e-6 * RHO_C)
    assert low.sum() >= 3
    g_eff = (asym.H[low] ** 2 - lam_eff / 3) / (8 * math.pi * asym.rho[low] / 3)
    np.testing.assert_allclose(g_eff, pre_bounce_newton_constant(GAMMA), rtol=1e-3)


def test_asymmetric_describes_its_initial_data():
    text = AsymmetricDynamics().describe()["contracting_start"]
    assert "de Sitter" in text and "rho_0" in text


def test_rescaled_critical_density_massless_closed_form():
    """Massless field: a(t) = a_B (1 + 24 pi rho_c t^2)^(1/6) with the rescaled rho_c
    (Ashtekar & Singh, Class. Quantum Grav. 28 (2011) 213001), both engines."""
    for canonical in (False, True):
        dyn = CondensateDynamics(RHO_C, rescale=0.3, canonical=canonical)
        rho_c = 0.3 * RHO_C
        tr = dyn.evolve(Quadratic(0.0), BounceStart(0.0, 1), IntegrationSettings(max_time=50.0))
        assert tr.rho[0] == pytest.approx(rho_c, rel=1e-12)
        expected = tr.ln_a[0] + np.log1p(24 * math.pi * rho_c * tr.t**2) / 6
        np.testing.assert_allclose(tr.ln_a, expected, atol=1e-8)


def test_rescaled_critical_density_bounce_from_contracting_branch():
    """From the contracting branch the bounce happens at rho = rescale x rho_c and the
    canonical integrator agrees with the isotropic engine."""
    start = ContractingStart(1e-16, 1.3)
    a = CondensateDynamics(RHO_C, rescale=2.0).evolve(POT, start)
    b = CondensateDynamics(RHO_C, rescale=2.0, canonical=True).evolve(POT, start)
    for tr in (a, b):
        assert tr.dynamics == "condensate"
        assert tr.rho.max() == pytest.approx(2.0 * RHO_C, rel=1e-8)
    assert a.efolds.inflation == pytest.approx(b.efolds.inflation, rel=1e-7)
    iso = IsotropicDynamics(RHO_C).evolve(POT, start)
    assert abs(a.efolds.inflation - iso.efolds.inflation) > 1e-3  # the rescaling matters


def test_condensate_term_moves_the_bounce():
    """With H^2 = (8 pi/3) rho (1 - rho/rho_c + q/v) the bounce is at
    rho = rho_c (1 + q / v_B) (zero of the right-hand side)."""
    q = 3e-12  # relative to the initial surface; v_B ~ 1e-9 there, so q / v_B ~ 1e-3
    tr = CondensateDynamics(RHO_C, condensate_term=q).evolve(POT, ContractingStart(1e-16, 0.3))
    assert tr.status == "inflated"
    ib = np.argmin(np.abs(tr.t - tr.events.t_bounce))
    v_b = math.exp(3 * tr.ln_a[ib])
    assert q / v_b > 1e-4
    assert tr.rho[ib] == pytest.approx(RHO_C * (1 + q / v_b), rel=1e-7)
    assert tr.max_constraint_residual < 1e-7


def test_bad_configuration_is_one_line_error():
    with pytest.raises(InputError, match="rescale"):
        CondensateDynamics.from_config(
            Table({"rescale": -1.0}, "background.condensate", CondensateDynamics.CONFIG_KEYS),
            RHO_C)
    with pytest.raises(InputError, match="gamma"):
        AsymmetricDynamics.from_config(
            Table({"gamma": 0.0}, "background.asymmetric", AsymmetricDynamics.CONFIG_KEYS), RHO_C)
    with pytest.raises(InputError, match="density"):
        AsymmetricDynamics().evolve(POT, ContractingStart(0.05, 0.1))


def test_classical_start_matches_general_relativity():
    """Far from the bounce every dynamics is general relativity: from the same classical
    expanding datum the inflationary e-folds agree with the isotropic engine's GR run
    (slow roll would give about 2 pi phi^2 = 1608 for phi = 16; physics notes, section 1)."""
    from bouncelike.background.bianchi import BianchiIDynamics
    from bouncelike.background.initial import ClassicalStart

    start = ClassicalStart(16.0, 0.0)
    ref = IsotropicDynamics(RHO_C).evolve(POT, start)
    for dyn in (BianchiIDynamics(RHO_C), AsymmetricDynamics(RHO_C, GAMMA)):
        tr = dyn.evolve(POT, start)
        assert tr.status == ref.status == "no_bounce"
        assert tr.efolds.inflation == pytest.approx(ref.efolds.inflation, rel=1e-8)


def test_asymmetric_bounce_against_an_independent_integration():
    """Independent check (plain angle theta = lambda b instead of its logarithm, scipy's DOP853,
    no change of variables): Hamilton's equations of the asymmetric constraint (derived in
    bouncelike.background.asymmetric; Li, Singh & Wang, arXiv:1801.07313),
    thetadot = -4 pi gamma lambda phidot^2, H = sin 2theta [(1+g^2) cos 2theta - g^2] /
    (2 gamma lambda), from the bounce for 30 Planck times."""
    from scipy.integrate import solve_ivp

    tr = AsymmetricDynamics(RHO_C, GAMMA).evolve(
        POT, BounceStart(1e-10, 1), IntegrationSettings(max_time=30.0, dense_points=500))
    gl = math.sqrt(3 / (8 * math.pi * RHO_C))
    g2 = GAMMA**2
    theta_b = math.asin(math.sqrt(1 / (2 * (1 + g2))))

    def rhs(_t, y):
        theta, _, phi, phidot = y
        hub = math.sin(2 * theta) * ((1 + g2) * math.cos(2 * theta) - g2) / (2 * gl)
        return [-4 * math.pi * gl * phidot**2, hub, phidot,
                -3 * hub * phidot - float(POT.dV(phi))]

    sol = solve_ivp(rhs, (0.0, 30.0), [theta_b, 0.0, tr.phi[0], tr.phidot[0]], method="DOP853",
                    rtol=1e-12, atol=1e-14, t_eval=tr.t)
    np.testing.assert_allclose(tr.ln_a, sol.y[1], rtol=0, atol=1e-9)
    np.testing.assert_allclose(tr.phi, sol.y[2], rtol=0, atol=1e-10)
    hub = np.sin(2 * sol.y[0]) * ((1 + g2) * np.cos(2 * sol.y[0]) - g2) / (2 * gl)
    np.testing.assert_allclose(tr.H, hub, rtol=1e-7, atol=1e-9)


@pytest.mark.parametrize("dyn, start", [
    (AsymmetricDynamics(RHO_C, GAMMA), ContractingStart(1e-10, 0.4)),
    (CondensateDynamics(RHO_C, condensate_term=3e-12), ContractingStart(1e-16, 0.3)),
])
def test_efolds_converge_with_the_tolerance(dyn, start):
    """Tightening rtol tenfold moves the e-folds by far less than the tolerance scale
    (convergence; common practice)."""
    a = dyn.evolve_summary(POT, start, IntegrationSettings())
    b = dyn.evolve_summary(POT, start, IntegrationSettings(rtol=1e-11, atol=1e-14))
    assert a.status == b.status == "inflated"
    assert a.inflationary_efolds == pytest.approx(b.inflationary_efolds, rel=1e-8)
