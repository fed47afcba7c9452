"""Bianchi I effective dynamics: Hamilton's equations, isotropic and classical limits,
conserved quantities, bounded expansion and shear, effect of shear on the e-fold distribution."""

from __future__ import annotations

import math

import numpy as np
import pytest

from bouncelike.background import canonical as cn
from bouncelike.background import systems
from bouncelike.background.bianchi import BianchiIDynamics
from bouncelike.background.efolds import PhasePrior, efolds_distribution
from bouncelike.background.initial import ContractingStart, IntegrationSettings
from bouncelike.background.isotropic import IsotropicDynamics
from bouncelike.background.potentials import Quadratic
from bouncelike.errors import InputError
from bouncelike.units import area_gap, critical_density

GAMMA = 0.2375
DELTA = area_gap(GAMMA)
RHO_C = critical_density(GAMMA)
MASS = 1.21e-6  # Linsefors & Barrau, Phys. Rev. D 87 (2013) 123509
POT = Quadratic(MASS)


@pytest.fixture(scope="module")
def sheared():
    """One strongly sheared trajectory (bounce triggered by shear)."""
    return BianchiIDynamics(RHO_C, shear_ratio=1e-2, direction=30.0).evolve(
        POT, ContractingStart(1e-16, 0.3), IntegrationSettings()
    )


def _constraint(c, p, phi, p_phi, V):
    """C of Ashtekar & Wilson-Ewing, arXiv:0903.3397 (lapse 1, G = 1)."""
    v = math.sqrt(p[0] * p[1] * p[2])
    mu = [math.sqrt(DELTA * p[0] / (p[1] * p[2])), math.sqrt(DELTA * p[1] / (p[0] * p[2])),
          math.sqrt(DELTA * p[2] / (p[0] * p[1]))]
    s = [math.sin(mu[i] * c[i]) for i in range(3)]
    grav = -(v / (8 * math.pi * GAMMA**2 * DELTA)) * (s[0] * s[1] + s[1] * s[2] + s[2] * s[0])
    return grav + p_phi**2 / (2 * v) + v * V(phi)


def test_hamilton_equations_match_the_constraint_by_finite_differences():
    """The compiled Bianchi I system (directional rates, mean-angle rate, expansion, conserved
    differences) equals Hamilton's equations of C in (c_i, p_i) with {c_i, p_j} =
    8 pi gamma delta_ij (Ashtekar & Wilson-Ewing, arXiv:0903.3397), taken by finite
    differences of the constraint; and d/dt (c_i p_i - c_j p_j) = 0."""
    rng = np.random.default_rng(3)
    V = lambda x: 0.3 * x**2  # noqa: E731  (compiled: quadratic kernel with m^2 = 0.6)
    kind, pp = 0, (0.6, 0.0, 0.0, 0.0)
    gl = GAMMA * math.sqrt(DELTA)
    prm = (RHO_C, gl, 0.0, 0.0)
    for _ in range(3):
        p = rng.uniform(0.5, 2.0, 3) * 50.0
        c = rng.uniform(0.1, 1.2, 3) / np.array(
            [math.sqrt(DELTA * p[0] / (p[1] * p[2])), math.sqrt(DELTA * p[1] / (p[0] * p[2])),
             math.sqrt(DELTA * p[2] / (p[0] * p[1]))])
        phi, p_phi = 0.4, 3.0
        h = 1e-6
        dC_dc = np.zeros(3)
        dC_dp = np.zeros(3)
        for i in range(3):
            e = np.zeros(3)
            e[i] = h * abs(c[i])
            dC_dc[i] = (_constraint(c + e, p, phi, p_phi, V)
                        - _constraint(c - e, p, phi, p_phi, V)) / (2 * e[i])
            e = np.zeros(3)
            e[i] = h * p[i]
            dC_dp[i] = (_constraint(c, p + e, phi, p_phi, V)
                        - _constraint(c, p - e, phi, p_phi, V)) / (2 * e[i])
        pdot = -8 * math.pi * GAMMA * dC_dc
        cdot = 8 * math.pi * GAMMA * dC_dp
        # directional Hubble rates from pdot: pdot_1/p_1 = H_2 + H_3
        lp = pdot / p
        H_fd = 0.5 * (lp.sum() - 2 * lp)
        v = math.sqrt(np.prod(p))
        mu = np.sqrt(DELTA) * p / v
        x = mu * c
        xdot_fd = mu * cdot - x * H_fd  # mudot_i / mu_i = -H_i
        # the engine's state after the bounce: [ln xbar, k12, k23, ln a, phi, phidot], v = a^3
        xbar = x.mean()
        y = np.array([math.log(xbar), (x[0] - x[1]) * v, (x[1] - x[2]) * v, math.log(v) / 3,
                      phi, p_phi / v])
        rates, obs = np.empty(6), np.empty(systems.N_OBS)
        systems.evaluate(systems.SYS_BIANCHI, prm, kind, pp, y, cn.POST, rates, obs)
        aniso = np.empty((1, 4))
        systems.anisotropy_many(prm, kind, pp, y[None, :], np.array([cn.POST]), aniso)
        np.testing.assert_allclose(aniso[0, :3], H_fd, rtol=1e-6)
        assert rates[3] == pytest.approx(H_fd.mean(), rel=1e-6)  # d ln a / dt = mean H
        assert obs[systems.HUB] == pytest.approx(H_fd.mean(), rel=1e-6)
        assert rates[0] == pytest.approx(xdot_fd.mean() / xbar, rel=1e-5)  # d ln xbar / dt
        # k_ij = (x_i - x_j) v is conserved: the compiled rates are round-off of k / (gamma lambda)
        assert np.all(np.abs(rates[1:3]) <= 1e-12 * np.abs(y[1:3]) / gl)
        # Klein-Gordon: phiddot = -3 H phidot - V'
        assert rates[5] == pytest.approx(-3 * H_fd.mean() * p_phi / v - 0.6 * phi, rel=1e-6)
        # c_i p_i - c_j p_j conserved
        d12 = cdot[0] * p[0] + c[0] * pdot[0] - cdot[1] * p[1] - c[1] * pdot[1]
        assert abs(d12) < 1e-5 * abs(cdot[0] * p[0])


def test_isotropic_limit_reproduces_isotropic_engine():
    """Equal directional data: same trajectory and e-folds as the isotropic engine (physics
    notes, section 1), to the integration tolerance."""
    settings = IntegrationSettings()
    start = ContractingStart(1e-16, 2.0)
    iso = IsotropicDynamics(RHO_C).evolve(POT, start, settings)
    bia = BianchiIDynamics(RHO_C).evolve(POT, start, settings)
    assert bia.status == iso.status == "inflated"
    assert bia.efolds.inflation == pytest.approx(iso.efolds.inflation, rel=1e-7)
    assert bia.efolds.bounce_to_inflation_start == pytest.approx(
        iso.efolds.bounce_to_inflation_start, rel=1e-7)
    assert bia.events.t_bounce == pytest.approx(iso.events.t_bounce, rel=1e-9)
    # compared at this run's own (step) samples around the bounce, the isotropic engine's
    # densely sampled trajectory interpolated there
    sel = np.abs(bia.t - bia.events.t_bounce) < 50.0
    assert sel.sum() > 10
    dt = bia.t[sel] - bia.events.t_bounce
    ref = iso.state_at(iso.events.t_bounce + dt)
    # atol: t ~ 2e7 is resolved to ~4e-9 in double precision and Hdot ~ 20 at the bounce
    np.testing.assert_allclose(bia.H[sel], ref["H"], rtol=1e-6, atol=1e-7)
    np.testing.assert_allclose(bia.ln_a[sel] - bia.events.ln_a_bounce,
                               ref["ln_a"] - iso.events.ln_a_bounce, atol=1e-7)
    assert np.max(bia.extras["sigma2"]) < 1e-30  # round-off only
    assert bia.extras["bounce_trigger"] == "matter"


def test_classical_limit_shear_decays_as_a_minus_six_and_friedmann_holds(sheared):
    """Far from the bounce sigma^2 ~ a^-6 and H^2 = (8 pi/3) rho + sigma^2/6 (Ashtekar &
    Wilson-Ewing, arXiv:0903.3397)."""
    tr = sheared
    assert tr.status == "inflated"
    far = tr.rho < 1e-8 * RHO_C
    pre = far & (tr.t < tr.events.t_bounce)
    # after the bounce sigma^2 ~ a^-6 soon drops below the smallest double (ln a grows by ~150)
    post = far & (tr.t > tr.events.t_bounce) & (tr.extras["sigma2"] > 1e-250)
    for sel in (pre, post):
        assert sel.sum() > 20
        s2a6 = tr.extras["sigma2"][sel] * np.exp(6 * tr.ln_a[sel])
        assert np.ptp(s2a6) / np.mean(s2a6) < 1e-4
        friedmann = (8 * math.pi / 3) * tr.rho[sel] + tr.extras["sigma2"][sel] / 6
        np.testing.assert_allclose(tr.H[sel] ** 2, friedmann, rtol=1e-6)


def test_conserved_differences_and_constraint(sheared):
    """c_i p_i - c_j p_j are constants of motion; the constraint residual is small."""
    assert sheared.extras["conserved_difference_drift"] < 1e-10
    assert sheared.max_constraint_residual < 1e-7
    assert sheared.extras["bounce_trigger"] == "shear"
    assert sheared.extras["bounce_density_ratio"] < 0.5


@pytest.mark.parametrize("shear_ratio, direction", [(0.0, 0.0), (1e-3, 0.0), (1.0, 75.0)])
def test_expansion_and_shear_bounded(shear_ratio, direction, sheared):
    """|theta| = 3|H| <= 3/(2 gamma lambda) and sigma^2 <= 10.125/(3 gamma^2 Delta) (Corichi &
    Singh, arXiv:0905.4949; bound values from memory, the sigma^2 bound re-derived as the
    maximum of sum (H_i - H)^2 over the angles)."""
    tr = BianchiIDynamics(RHO_C, shear_ratio, direction).evolve(
        POT, ContractingStart(1e-16, 1.0), IntegrationSettings(max_time=3e7)
    )
    lam = math.sqrt(DELTA)
    assert np.max(np.abs(3 * tr.H)) <= 3 / (2 * GAMMA * lam) * (1 + 1e-9)
    bound = 10.125 / (3 * GAMMA**2 * DELTA)
    assert np.max(tr.extras["sigma2"]) <= bound * (1 + 1e-9)
    assert np.isfinite(tr.events.t_bounce)
    if shear_ratio >= 1.0:
        assert np.max(sheared.extras["sigma2"]) > 0.5 * bound


def test_growing_shear_moves_distribution_to_fewer_efolds():
    """Linsefors & Barrau, Class. Quantum Grav. 32 (2015) 035010 (qualitative)."""
    prior = PhasePrior(density=1e-16, decades=1.0)
    medians = []
    for ratio in (0.0, 1e-4, 1e-2):
        d = efolds_distribution(BianchiIDynamics(RHO_C, ratio), POT, prior, 6, seed=2,
                                convergence_samples=0)
        assert d.status_counts["failed"] == 0
        medians.append(d.median)
    assert medians[0] > medians[1] > medians[2]
    assert medians[0] > 100 and medians[2] < 80


def test_bad_input_is_one_line_error():
    with pytest.raises(InputError, match="shear_ratio"):
        BianchiIDynamics(RHO_C, shear_ratio=-1.0)
    with pytest.raises(InputError, match="contracting"):
        BianchiIDynamics(RHO_C).evolve(POT, cn.ContractingStart(0.1, 0.0))
    # a shear density beyond 1% of rho_c on the reference surface is not a classical start
    # (it once hung the compiled integration): refused with the allowed range
    with pytest.raises(InputError, match=r"shear_ratio.*allowed: >= 0 and < 4\.09\d*e\+13"):
        BianchiIDynamics(RHO_C, shear_ratio=1e100)
    with pytest.raises(InputError, match="shear_ratio.*initial density"):
        BianchiIDynamics(RHO_C, shear_ratio=1e10).evolve(POT, cn.ContractingStart(1e-13, 0.0))


def test_efolds_converge_with_the_tolerance():
    """Tightening rtol tenfold moves the e-folds by far less than the tolerance scale
    (convergence; common practice), with and without shear."""
    for ratio in (0.0, 1e-3):
        dyn = BianchiIDynamics(RHO_C, ratio, 30.0)
        start = ContractingStart(1e-16, 1.0)
        a = dyn.evolve_summary(POT, start, IntegrationSettings())
        b = dyn.evolve_summary(POT, start, IntegrationSettings(rtol=1e-11, atol=1e-14))
        assert a.status == b.status == "inflated"
        assert a.inflationary_efolds == pytest.approx(b.inflationary_efolds, rel=1e-8)
        assert a.events.t_bounce == pytest.approx(b.events.t_bounce, rel=1e-9)


def test_python_potential_runs_the_same_engine():
    """A potential registered from Python (no compiled kernel) runs the same solver uncompiled:
    same e-folds as the compiled quadratic potential."""
    from bouncelike.background.potentials import CustomPotential

    class Quad:
        def V(self, phi):
            return 0.5e-4 * np.asarray(phi) ** 2

        def dV(self, phi):
            return 1e-4 * np.asarray(phi)

        def d2V(self, phi):
            return np.full_like(np.asarray(phi, dtype=float), 1e-4)

    dyn = BianchiIDynamics(RHO_C, shear_ratio=1e-14)
    start = ContractingStart(1e-4, 1.0)
    fast = dyn.evolve_summary(Quadratic(1e-2), start)
    slow = dyn.evolve_summary(CustomPotential(Quad(), "test:Quad"), start)
    assert fast.engine == "compiled" and slow.engine == "python"
    assert slow.status == fast.status == "inflated"
    assert slow.inflationary_efolds == pytest.approx(fast.inflationary_efolds, rel=1e-12)
