"""The bounce model in physical parameters on the Starobinsky plateau."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize

from bouncelike.background.initial import BounceStart
from bouncelike.background.isotropic import IsotropicDynamics
from bouncelike.background.potentials import Starobinsky
from bouncelike.config import Table
from bouncelike.errors import InputError, NotEvaluable
from bouncelike.models.registry import forward_model
from bouncelike.spectra.summary import summarize

RHO_C = 0.40937  # gamma = 0.2375 (physics notes, section 0)
# our own scenario: the bounce ~9 e-folds beyond the window (N_B* ~ 30)
POINT = {"log10_potential_fraction": -7.4, "mass": 2.45e-6, "critical_density": RHO_C,
         "N_star": 55.0}
FULL = f"""
[model]
spectra = "bounce"
[potential]
name = "starobinsky"
mass = 2.45e-6
[background]
dynamics = "isotropic"
start = "bounce"
critical_density = {RHO_C}
[background.bounce]
potential_fraction = {10 ** -7.4!r}
phidot_sign = 1
field_sign = -1
[perturbations]
prescription = "dressed_metric"
state = "non_oscillating"
[reheating]
N_star = 55.0
"""


@pytest.fixture(scope="module")
def model():
    return forward_model("bounce_physical_dressed_metric_non_oscillating_starobinsky")


def test_the_field_climbs_the_steep_side():
    pot = Starobinsky(mass=2.45e-6)
    phi, phidot = IsotropicDynamics(RHO_C).bounce_state(pot, BounceStart(1e-7, 1, -1))
    assert phi < 0 < phidot
    assert float(pot.V(phi)) == pytest.approx(1e-7 * RHO_C, rel=1e-10)
    assert phidot == pytest.approx(math.sqrt(2 * RHO_C * (1 - 1e-7)), rel=1e-12)
    # the default keeps the field on the side it is thrown up (the plateau side, where
    # V < V_inf = 1.8e-13 only)
    phi_up, _ = IsotropicDynamics(RHO_C).bounce_state(pot, BounceStart(1e-14, 1))
    assert phi_up > 0


def test_field_sign_in_a_configuration():
    from bouncelike.background.setup import background_from_config

    def config(side):
        return Table({"potential": {"name": "starobinsky", "mass": 2.45e-6},
                      "background": {"dynamics": "isotropic", "start": "bounce",
                                     "critical_density": RHO_C,
                                     "bounce": {"potential_fraction": 1e-7,
                                                "field_sign": side}}},
                     "", ("potential", "background"))

    assert background_from_config(config(-1)).initial.field_side == -1.0
    with pytest.raises(InputError, match="background.bounce.field_sign"):
        background_from_config(config(2))


def test_reproduces_full_forward_model_at_the_pivot(tmp_path, model):
    """Physical model (engine background, Stewart-Lyth pivot spectrum, cached transfer) against
    the full forward model (background and exact mode integration) of the same bounce.
    Tolerances as for m^2 phi^2 (tests/test_sampling_bounce_physical.py): 0.005 in
    ln(1e10 A_s) and 0.001 in n_s are 0.36 and 0.24 of the Planck 2018 errors
    (arXiv:1807.06209); 1% in r. Measured: 5e-4, 5e-4, 5e-4 (relative)."""
    from bouncelike.config import load_run_config
    from bouncelike.models import spectra_from_config
    from bouncelike.models.bounce import run_from_config

    cfg = tmp_path / "full.toml"
    cfg.write_text(FULL)
    config = load_run_config(cfg)
    full = summarize(spectra_from_config(config), 0.05)
    fast = summarize(model.spectra(POINT), 0.05)
    assert abs(fast.ln_1e10_As - full.ln_1e10_As) < 0.005
    assert abs(fast.n_s - full.n_s) < 1e-3
    assert abs(fast.r / full.r - 1) < 0.01
    derived = model.derived(POINT)
    scales = run_from_config(config).scales
    assert abs(derived["N_B_star"] - scales.n_bounce_pivot) < 0.02
    assert abs(derived["log10_k_lqc"] - scales.ln_k_lqc_mpc / math.log(10)) < 0.01
    assert derived["certified"] == 1.0


def _slow_roll(mass: float, n_star: float) -> tuple[float, float, float]:
    """First-order slow roll of V = (3/4) M^2 M_Pl^2 (1 - e^(-sqrt(2/3) phi/M_Pl))^2, computed
    here from the potential (textbook: N = int V/V' dphi / M_Pl^2 from the end, eps_V = 1, to
    phi_*; A_s = V / (24 pi^2 eps_V M_Pl^4), n_s = 1 - 6 eps_V + 2 eta_V, r = 16 eps_V)."""
    mpl = 1.0 / math.sqrt(8 * math.pi)
    pot = Starobinsky(mass=mass)

    def eps(phi):
        return 0.5 * mpl**2 * (float(pot.dV(phi)) / float(pot.V(phi))) ** 2

    phi_end = optimize.brentq(lambda p: eps(p) - 1.0, 0.01, 2.0)

    def efolds(phi):
        return integrate.quad(lambda p: float(pot.V(p)) / float(pot.dV(p)), phi_end, phi)[0] \
            / mpl**2

    phi_star = optimize.brentq(lambda p: efolds(p) - n_star, phi_end, 10.0)
    e, v = eps(phi_star), float(pot.V(phi_star))
    eta = mpl**2 * float(pot.d2V(phi_star)) / v
    return math.log(1e10 * v / (24 * math.pi**2 * e * mpl**4)), 1 - 6 * e + 2 * eta, 16 * e


def test_pivot_observables_against_slow_roll_of_the_potential(model):
    # the leading-order forms n_s ~ 1 - 2/N, r ~ 12/N^2 (Encyclopaedia Inflationaris,
    # arXiv:1303.3787) and the first-order slow roll of the potential itself (textbook,
    # computed in _slow_roll); the model uses next-order Stewart & Lyth at the exact exit, so
    # ln A_s differs at O(eps, eta) ~ 1-2%
    d = model.derived(POINT)
    ln_as, ns, r = _slow_roll(POINT["mass"], POINT["N_star"])
    assert abs(d["n_s"] - ns) < 1e-3
    assert abs(d["r"] / r - 1) < 0.03
    assert abs(d["ln_1e10_As"] - ln_as) < 0.03
    assert abs(d["n_s"] - (1 - 2 / 55)) < 2e-3 and abs(d["r"] / (12 / 55**2) - 1) < 0.15


def test_bounce_scale_spans_the_window_over_the_prior(model):
    """The shipped prior puts the bounce from inside the window to ~20 e-folds beyond: physics
    notes, section 5: ln(k_* / k_LQC) = N_B* + ln(H_* / sqrt(8 pi rho_c)) (V_B << rho_c)."""
    n, k = [], []
    for lx in (-7.5, -7.2):
        d = model.derived({**POINT, "log10_potential_fraction": lx})
        n.append(d["N_B_star"])
        k.append(d["log10_k_lqc"])
        h = math.sqrt(math.pi * d["A_s"] * d["r"] / 16)  # P_t = 16 H^2/pi (notes, section 4)
        # the pivot's H from the tensor amplitude (Stewart-Lyth's O(eps) correction aside)
        expect = math.log(0.05) - d["N_B_star"] - math.log(h / math.sqrt(8 * math.pi * RHO_C))
        assert d["log10_k_lqc"] * math.log(10) == pytest.approx(expect, abs=0.02)
    assert n[1] < 15.0 and n[0] > 38.0           # inside the window ... ~20 e-folds beyond
    assert k[1] > math.log10(0.05) and k[0] < -12.0


def test_inflationary_efolds_search_on_the_plateau(model):
    m = forward_model("bounce_physical_dressed_metric_non_oscillating_starobinsky")
    p = {"N_inflation": 80.0, "mass": 2.45e-6, "critical_density": RHO_C, "N_star": 55.0}
    d = m.derived(p)
    assert d["N_inflation"] == pytest.approx(80.0, abs=0.1)
    direct = model.derived({**POINT, "log10_potential_fraction": d["log10_potential_fraction"]})
    assert direct["N_inflation"] == pytest.approx(d["N_inflation"], abs=1e-9)


def test_remote_past_state_not_evaluable_near_the_window():
    m = forward_model("bounce_physical_dressed_metric_starobinsky")
    assert np.isfinite(m.spectra(POINT).scalar(np.array([0.05]))[0])
    with pytest.raises(NotEvaluable, match="remote-past state is not set"):
        m.spectra({**POINT, "log10_potential_fraction": -7.2})
