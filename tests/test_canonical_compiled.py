"""The compiled canonical driver against the scipy-stepped reference driver (same equations,
same step control): right-hand sides, observables, residuals and e-folds for a few draws."""

from __future__ import annotations

import math

import numpy as np
import pytest

from bouncelike.background import canonical as cn
from bouncelike.background import canonical_kernels as ck
from bouncelike.background.asymmetric import AsymmetricDynamics
from bouncelike.background.bianchi import BianchiIDynamics
from bouncelike.background.condensate import CondensateDynamics
from bouncelike.background.efolds import PhasePrior, efolds_distribution
from bouncelike.background.initial import BounceStart, ContractingStart, IntegrationSettings
from bouncelike.background.potentials import Quadratic, Starobinsky
from bouncelike.units import critical_density

RHO_C = critical_density(0.2375)
POT = Quadratic(1.21e-6)


def _cases():
    bia = BianchiIDynamics(RHO_C, 1e-3, 40.0)
    asym = AsymmetricDynamics(RHO_C, 0.2375)
    cond = CondensateDynamics(RHO_C, rescale=0.7, condensate_term=3e-12)
    s_b = bia.system(POT)
    s_a = asym.system(POT)
    s_c = cond.system(POT)
    return [
        (ck.SYS_BIANCHI, np.array([RHO_C, s_b.gl]), s_b,
         bia.initial_state(POT, ContractingStart(1e-16, 0.7)), 0),
        (ck.SYS_ASYMMETRIC, np.array([RHO_C, 0.2375, s_a.gl, s_a.beta0]), s_a,
         asym.initial_state(POT, ContractingStart(1e-10, 0.4))[0], 0),
        (ck.SYS_LOOP, np.array([s_c.rho_c, s_c.q, s_c.ell]), s_c,
         cond.initial_state(POT, ContractingStart(1e-16, 0.3))[0], 1),
    ]


@pytest.mark.parametrize("case", range(3))
def test_compiled_equations_equal_python_systems(case):
    """Compiled right-hand side, observables and residual equal the Python systems'
    (bianchi.BianchiSystem, asymmetric.AsymmetricSystem, condensate.LoopSystem) in every phase."""
    code, prm, system, y0, ln_a_index = _cases()[case]
    kind, pp = cn.compiled_potential(POT)
    out, obs = np.empty(len(y0)), np.empty(ck.N_OBS)
    shifted = y0.copy()
    shifted[0] -= 0.5
    states = [(cn.PRE, y0), (cn.POST, shifted), (cn.LATE, y0)]
    if code == ck.SYS_BIANCHI:  # strongly anisotropic angles too (x_i - xbar ~ 0.1-0.3)
        strong = np.array([math.log(0.6), 0.3, -0.2, 0.0, 0.01, 2e-8])
        states += [(cn.PRE, strong), (cn.POST, strong)]
    for phase, y in states:
        ck.evaluate(code, prm, kind, pp, y, phase, out, obs)
        ref = system.rhs(y, phase)
        if code == ck.SYS_BIANCHI:
            # d/dt of the conserved differences: k (3H - sum), zero analytically; both sides
            # give round-off of the terms (size k / (gamma lambda)) only
            assert np.all(np.abs(out[1:3] - ref[1:3]) <= 1e-14 * np.abs(y[1:3]) / prm[1])
            out[1:3] = ref[1:3]
        np.testing.assert_allclose(out, ref, rtol=1e-12, atol=1e-300)
        np.testing.assert_allclose(obs, system.observe(y, phase), rtol=1e-12, atol=1e-300)
        assert ck.residual(code, prm, kind, pp, y, phase) == pytest.approx(
            system.constraint_residual(y, phase), rel=1e-6, abs=1e-15)


@pytest.mark.parametrize(
    "make, start",
    [
        (lambda e: BianchiIDynamics(RHO_C, 1e-3, 30.0, engine=e), ContractingStart(1e-16, 1.0)),
        (lambda e: BianchiIDynamics(RHO_C, 3e-2, 200.0, engine=e), ContractingStart(3e-17, 4.0)),
        (lambda e: AsymmetricDynamics(RHO_C, engine=e), ContractingStart(1e-10, 0.4)),
        (lambda e: AsymmetricDynamics(RHO_C, engine=e), BounceStart(1e-10, -1)),
        (lambda e: CondensateDynamics(RHO_C, condensate_term=3e-12, canonical_engine=e),
         ContractingStart(1e-16, 0.3)),
    ],
)
def test_compiled_driver_matches_scipy_reference(make, start):
    """Same steps and events as the scipy DOP853 driver; e-folds agree to the tolerance."""
    settings = IntegrationSettings()
    a = make("compiled").evolve(POT, start, settings)
    b = make("scipy").evolve(POT, start, settings)
    assert a.extras["engine"].startswith(("compiled", "canonical (compiled"))
    assert a.status == b.status == "inflated"
    assert a.extras["steps"] == b.extras["steps"]
    assert a.efolds.inflation == pytest.approx(b.efolds.inflation, rel=1e-8)
    assert a.efolds.bounce_to_inflation_start == pytest.approx(
        b.efolds.bounce_to_inflation_start, rel=1e-8, abs=1e-8)
    assert a.events.t_bounce == pytest.approx(b.events.t_bounce, rel=1e-10, abs=1e-12)
    assert a.max_constraint_residual == pytest.approx(b.max_constraint_residual, rel=0.5)
    # the summary path (no stored trajectory) gives the same numbers
    s = make("compiled").evolve_summary(POT, start, settings)
    assert s[ck.S_LNA_INF_END] - s[ck.S_LNA_INF_START] == pytest.approx(a.efolds.inflation,
                                                                         rel=1e-12)
    assert s[ck.S_MAX_RESIDUAL] == pytest.approx(a.max_constraint_residual, rel=1e-6)


def test_compiled_distribution_matches_scipy_and_other_potentials():
    """Bianchi I e-fold distribution through both drivers (a few draws), and a plateau
    potential through the compiled one (its kernel code is read by the compiled driver)."""
    prior = PhasePrior(1e-16, 1.0)
    dists = [efolds_distribution(BianchiIDynamics(RHO_C, 1e-3, engine=e), POT, prior, 4, seed=5,
                                 convergence_samples=0) for e in ("compiled", "scipy")]
    np.testing.assert_allclose(dists[0].samples, dists[1].samples, rtol=1e-8)
    assert list(dists[0].statuses) == list(dists[1].statuses)
    staro = Starobinsky(1.3e-5)
    start = ContractingStart(1e-14, 2.5)
    a = BianchiIDynamics(RHO_C, 1e-4, engine="compiled").evolve(staro, start)
    b = BianchiIDynamics(RHO_C, 1e-4, engine="scipy").evolve(staro, start)
    assert a.status == b.status
    if math.isfinite(b.efolds.inflation):
        assert a.efolds.inflation == pytest.approx(b.efolds.inflation, rel=1e-8)
