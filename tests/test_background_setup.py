"""Configuration of the background: dynamics, critical density, starts, integration settings."""

import math

import pytest

from bouncelike.background.initial import BounceStart, ClassicalStart, ContractingStart
from bouncelike.background.isotropic import IsotropicDynamics
from bouncelike.background.setup import background_from_config
from bouncelike.config import TOP_LEVEL_SECTIONS, Table
from bouncelike.errors import InputError


def _cfg(background=None, potential=None):
    data = {"potential": potential or {"name": "quadratic", "mass": 1.21e-6}}
    if background is not None:
        data["background"] = background
    return Table(data, "", TOP_LEVEL_SECTIONS)


def test_defaults():
    setup = background_from_config(_cfg())
    assert isinstance(setup.dynamics, IsotropicDynamics)
    # rho_c = sqrt(3)/(32 pi^2 gamma^3) with gamma = 0.2375 (Ashtekar & Singh 2011)
    assert setup.critical_density == pytest.approx(0.40937, abs=5e-5)
    assert setup.initial == ContractingStart(1e-16, 0.0)
    assert setup.settings.rtol == 1e-10


def test_gamma_critical_density_and_starts():
    s = background_from_config(_cfg({"gamma": 0.5}))
    assert s.critical_density == pytest.approx(math.sqrt(3) / (32 * math.pi**2 * 0.125))
    s = background_from_config(_cfg({"critical_density": 0.82, "start": "bounce",
                                     "bounce": {"potential_fraction": 1e-10, "phidot_sign": -1}}))
    assert s.critical_density == 0.82
    assert s.initial == BounceStart(1e-10, -1)
    s = background_from_config(_cfg({"start": "classical", "classical": {"phi": 3.0},
                                     "integration": {"rtol": 1e-9, "dense_points": 10}}))
    assert s.initial == ClassicalStart(3.0, 0.0)
    assert s.settings.rtol == 1e-9 and s.settings.dense_points == 10
    tr = s.evolve()
    assert tr.status == "no_bounce" and tr.efolds.inflation > 50


@pytest.mark.parametrize(
    "background, key",
    [
        ({"dynamics": "loopy"}, "background.dynamics"),
        ({"gamma": 0.2, "critical_density": 0.4}, "background.gamma"),
        ({"gamma": -1.0}, "background.gamma"),
        ({"critical_density": 0.0}, "background.critical_density"),
        ({"start": "sideways"}, "background.start"),
        ({"start": "bounce"}, "background.bounce.potential_fraction"),
        ({"start": "bounce", "bounce": {"potential_fraction": 2.0}},
         "background.bounce.potential_fraction"),
        ({"start": "bounce", "bounce": {"potential_fraction": 0.1, "phidot_sign": 0}},
         "background.bounce.phidot_sign"),
        ({"contracting": {"start_density": 1.0}}, "background.contracting.start_density"),
        ({"contracting": {"start_density": 1e-16, "phase": "x"}},
         "background.contracting.phase"),
        ({"classical": {"phi": 3.0}}, "background.classical"),
        ({"integration": {"rtol": 0.5}}, "background.integration.rtol"),
        ({"integration": {"step": 0.5}}, "background.integration.step"),
        ({"isotropic": {"anything": 1}}, "background.isotropic.anything"),
        ({"bianchi_i": {}}, "background.bianchi_i"),
    ],
)
def test_bad_background_config(background, key):
    with pytest.raises(InputError, match=key.replace(".", r"\.")):
        background_from_config(_cfg(background))
