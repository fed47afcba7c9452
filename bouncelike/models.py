"""Registry of forward models that produce primordial spectra, selected by ``[model] spectra``.

Each entry is "module:function" where ``function(config: Table) -> PrimordialSpectra`` builds
the spectra object (:mod:`bouncelike.spectra`) from a whole run configuration (the top-level
:class:`bouncelike.config.Table`). Modules are imported lazily.
"""

from __future__ import annotations

import importlib
from typing import Any

from .config import Table

MODEL_REGISTRY: dict[str, str] = {
    "power_law": "bouncelike.spectra.powerlaw:power_law_from_config",
    "slow_roll": "bouncelike.spectra.slowroll:slow_roll_from_config",
    "bounce": "bouncelike.perturbations.forward:bounce_spectra_from_config",
}


def spectra_from_config(config: Table) -> Any:
    """Build the primordial spectra object a run configuration asks for."""
    model = config.table("model", ("spectra",), required=True)
    name = model.string("spectra", choices=MODEL_REGISTRY)
    module, func = MODEL_REGISTRY[name].split(":")
    return getattr(importlib.import_module(module), func)(config)
