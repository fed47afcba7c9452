"""Transfer cache per potential family (quadratic, Starobinsky), its refusals, and the states set
around the bounce through the forward model, the cache and the fast model."""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
from perturbations_helpers import bounce_background

from bouncelike.errors import InputError, NotEvaluable
from bouncelike.models.bounce import PerturbationOptions, run_bounce
from bouncelike.models.reheating import Reheating
from bouncelike.perturbations.states import REMOTE_PAST_TOLERANCE
from bouncelike.perturbations.transfer import (
    FAMILIES,
    BounceSpectraModel,
    certificate,
    conformal_duration,
    decompose,
    load_transfer,
    quadratic_bounce,
    starobinsky_bounce,
)

P0 = {"ln_1e10_As": 3.044, "n_s": 0.965, "r": 0.14, "log10_k_lqc": -3.0}


def test_starobinsky_family_bounces_inflate_within_the_stated_range():
    # the family's bounces (phi_B < 0, phidot_B > 0, potentials.py Starobinsky) inflate for
    # 50-170 e-folds after the bounce over log10 x_V in [-8, -6.9] (measured 167 and 55 at
    # -8 and -7 for M = 2.5e-6); the field on the steep side at the bounce
    hi = starobinsky_bounce(2.5e-6, -8.0)
    lo = starobinsky_bounce(2.5e-6, -6.9)
    for tab in (hi, lo):
        assert tab.phi[tab.bounce_index()] < 0 and tab.phidot[tab.bounce_index()] > 0
        assert 45 < tab.info["efolds_to_inflation_end"] < 175
    assert hi.info["efolds_to_inflation_end"] > 2 * lo.info["efolds_to_inflation_end"]
    # D is set by the plateau (when the kinetic era ends), hardly by x_V: outside the
    # quadratic calibration (3e3-1.7e4), hence a table of its own
    d = [conformal_duration(t) for t in (hi, lo)]
    assert min(d) > 2e4 and abs(d[0] / d[1] - 1) < 0.05
    assert min(d) > load_transfer("dressed_metric", "remote_past").d_range[1]


def test_remote_past_state_is_not_set_in_the_starobinsky_infrared():
    # the contracting branch of these bounces leaves the kinetic era within ~1 e-fold (the
    # field climbs the steep side): modes below ~0.2 k_LQC are never adiabatic there, so the
    # remote-past state does not exist for them (states.py), while a state set around the
    # bounce sees only the bounce and agrees with the quadratic one (|alpha|, rho to 2e-3)
    tab = starobinsky_bounce(2.5e-6, -7.3)
    x = np.array([0.01, 0.05, 1.0])
    rp = decompose(tab, x, "scalar")
    assert rp.start_adiabaticity[0] > 10 * REMOTE_PAST_TOLERANCE
    assert rp.start_adiabaticity[-1] <= REMOTE_PAST_TOLERANCE
    table = load_transfer("dressed_metric", "remote_past", "starobinsky")
    assert 0.1 < table.x_state_min < 1.0
    quad = quadratic_bounce(1.2e-6, 1.2)
    for f in ("scalar", "tensor"):
        a = decompose(tab, x, f, state="non_oscillating")
        b = decompose(quad, x, f, state="non_oscillating")
        np.testing.assert_allclose(a.ln_alpha, b.ln_alpha, atol=2e-3)
        np.testing.assert_allclose(a.rho, b.rho, atol=2e-3)


@pytest.mark.parametrize("state", ["non_oscillating", "remote_past"])
def test_starobinsky_certificate_subset(state):
    # a small random subset of the certificate (the full one: transfer.py docstring): exact
    # modes on random Starobinsky bounces vs the cache fed D and the tilts, within 1%
    # pointwise; the remote-past state only where it is set (x >= the table's x_state_min)
    x_min = load_transfer("dressed_metric", state, "starobinsky").x_state_min
    c = certificate(1, 12, seed=29, state=state, family="starobinsky",
                    x_range=(x_min, 100.0))
    assert c["potential"] == "starobinsky" and c["points"]
    assert c["max_error"] <= 0.01


def test_fast_model_refusals_name_the_quantity_and_the_range():
    with pytest.raises(InputError, match=r"potential 'monomial' is not covered .*covered: "
                                         r"quadratic, starobinsky"):
        BounceSpectraModel(potential="monomial")
    m = BounceSpectraModel()
    lo, hi = m.table.d_range
    with pytest.raises(NotEvaluable, match=r"conformal duration D = .* outside the cached "
                                           r"range " + re.escape(f"{lo:.4g}-{hi:.4g}")):
        m.spectra({**P0, "log10_conformal_duration": math.log10(hi * 1.5)})
    with pytest.raises(NotEvaluable, match=r"n_s - 1 = 0.02 is outside the calibrated range"):
        m.spectra({**P0, "n_s": 1.02, "log10_conformal_duration": math.log10(lo * 1.5)})
    with pytest.raises(NotEvaluable, match=r"potential fraction V_B/rho_c = 1e-06 is outside "
                                           r"the cached range"):
        m.spectra({**P0, "log10_potential_fraction": -6.0})
    s = BounceSpectraModel(potential="starobinsky")
    with pytest.raises(NotEvaluable, match=r"below 0.363 k_LQC, where the remote-past state is "
                                           r"not set there"):
        # window from 1e-4 Mpc^-1 / k_LQC = 0.01 k_LQC: below where the remote-past state
        # exists on Starobinsky bounces
        s.spectra({**P0, "r": 0.004, "log10_k_lqc": -2.0})
    # the deformed algebra on Starobinsky bounces is represented only above 3 k_LQC
    d = BounceSpectraModel("deformed_algebra", potential="starobinsky")
    with pytest.raises(NotEvaluable, match=r"below 3 k_LQC, where deformed-algebra scalars grow"):
        d.spectra({**P0, "r": 0.004, "log10_k_lqc": -4.0})
    # inside everything: evaluable, certified
    ok = {**P0, "log10_conformal_duration": math.log10(math.sqrt(lo * hi)),
          "log10_potential_fraction": -11.3}
    assert m.derived(ok)["certified"] and np.all(m.spectra(ok).scalar(np.array([0.05])) > 0)


def test_new_states_through_forward_model_and_fast_model():
    # forward model (full mode integration, as `spectrum` and `score` run it) with the
    # non-oscillating state: a lower infrared than the remote-past state, the same UV
    tab = bounce_background()
    runs = {st: run_bounce(tab, PerturbationOptions(state=st, k_count=16), Reheating(N_star=55.0))
            for st in ("remote_past", "non_oscillating", "low_energy")}
    x = runs["remote_past"].spectrum.k / tab.k_lqc
    low = (x >= 0.01) & (x <= 0.03)
    for st in ("non_oscillating", "low_energy"):
        r = runs[st].spectrum.scalar / runs["remote_past"].spectrum.scalar
        assert np.median(r[low]) < 0.9
        np.testing.assert_allclose(r[x > 10], 1.0, rtol=1e-4)
    # the cached tables of both states exist for both families and the fast model uses them
    for st in ("non_oscillating", "low_energy"):
        for fam in FAMILIES:
            t = load_transfer("dressed_metric", st, fam)
            assert (t.state, t.family) == (st, fam) and t.x_state_min == pytest.approx(0.01)
        m = BounceSpectraModel(state=st)
        p = {**P0, "log10_conformal_duration": math.log10(
            math.sqrt(m.table.d_range[0] * m.table.d_range[1]))}
        assert m.derived(p)["certified"]
        k = np.geomspace(1e-4, 0.2, 50)
        rp = BounceSpectraModel().spectra(p).scalar(k)
        assert np.mean(m.spectra(p).scalar(k)[:10] / rp[:10]) < 0.9


def test_physical_model_with_a_window_state():
    from bouncelike.models.registry import forward_model

    point = {"log10_potential_fraction": math.log10(2.5e-12), "mass": 1.2e-6,
             "critical_density": 0.40937, "N_star": 55.0}
    model = forward_model("bounce_physical_dressed_metric_non_oscillating")
    d = model.derived(point)
    assert d["certified"] == 1.0
    assert model.spectra(point).scalar(np.array([0.05]))[0] > 0
