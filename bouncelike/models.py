"""Registry of forward models that produce primordial spectra, selected by ``[model] spectra``.

Each entry is "module:function" where ``function(config: Table) -> PrimordialSpectra`` builds
the spectra object (:mod:`bouncelike.spectra`) from a whole run configuration (the top-level
:class:`bouncelike.config.Table`). Modules are imported lazily. Models that read files named
in the configuration (``table``) also receive the configuration's folder, against which
relative paths are taken.
"""

from __future__ import annotations

import importlib
from pathlib import Path
from typing import Any

from .config import Table

MODEL_REGISTRY: dict[str, str] = {
    "power_law": "bouncelike.spectra.powerlaw:power_law_from_config",
    "slow_roll": "bouncelike.spectra.slowroll:slow_roll_from_config",
    "bounce": "bouncelike.perturbations.forward:bounce_spectra_from_config",
    "table": "bouncelike.spectra.table_file:table_spectra_from_config",
}
#: Models whose builder takes ``base_dir`` (the configuration's folder) as well.
READS_FILES = frozenset({"table"})


def spectra_from_config(config: Table, base_dir: str | Path | None = None) -> Any:
    """Build the primordial spectra object a run configuration asks for.

    ``base_dir``: the configuration file's folder (relative file names in the configuration
    are taken against it; the working directory when None).
    """
    model = config.table("model", ("spectra",), required=True)
    name = model.string("spectra", choices=MODEL_REGISTRY)
    module, func = MODEL_REGISTRY[name].split(":")
    builder = getattr(importlib.import_module(module), func)
    if name in READS_FILES:
        return builder(config, base_dir=base_dir)
    return builder(config)
