"""A forward model with a region it cannot evaluate, for the report tests."""

from __future__ import annotations

from typing import Any

from config_texts import FIXED_HIGHER_ORDER

from bouncelike.errors import NotEvaluable
from bouncelike.models.powerlaw import PowerLawModel

#: Above this tilt the model has no prediction (a stand-in for a domain edge).
EDGE = 0.968


class EdgePowerLaw(PowerLawModel):
    """Power law that refuses n_s > EDGE as not evaluable."""

    name = "test_edge_power_law"

    def spectra(self, p: dict[str, float]) -> Any:
        if p["n_s"] > EDGE:
            raise NotEvaluable(f"no prediction above n_s = {EDGE} (test model edge)")
        return super().spectra(p)


PRIOR = """
[prior]
model = "test_edge_power_law"
title = "Power law with an edge"
[parameters.ln_1e10_As]
role = "sampled"
distribution = "uniform"
min = 2.9
max = 3.2
walkers_centre = 3.044
walkers_spread = 0.01
[parameters.n_s]
role = "sampled"
distribution = "uniform"
min = 0.90
max = 1.05
walkers_centre = 0.962
walkers_spread = 0.002
""" + FIXED_HIGHER_ORDER
