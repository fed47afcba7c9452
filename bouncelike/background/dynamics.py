"""Registry of effective background dynamics, selected by name in ``[background] dynamics``.

A dynamics is a small immutable object with

* ``NAME``: its registry name;
* ``CONFIG_PARAMETERS``: the declarations (:class:`bouncelike.config.Parameter`) of the keys of
  its own sub-table ``[background.<NAME>]``, and ``CONFIG_KEYS``, their names;
* ``from_config(table, critical_density)`` (classmethod): build it from that sub-table
  (:class:`bouncelike.config.Table`) and the critical density set in ``[background]``;
* ``evolve(potential, initial, settings) -> BackgroundTrajectory``: evolve one initial datum
  (:mod:`bouncelike.background.initial`), never raising for a physical outcome (no inflation,
  e-fold cap): those are statuses of the result;
* ``evolve_summary(potential, initial, settings) -> RunSummary``: the same run without the
  trajectory, and ``evolve_summaries(potential, initials, settings)`` for many initial data
  in one compiled loop (what e-fold distributions read);
* ``describe() -> dict``: parameters and conventions for reports (including how a
  :class:`~bouncelike.background.initial.ContractingStart` is interpreted by this dynamics).

Modules are imported lazily so that ``bouncelike --help`` stays fast.
"""

from __future__ import annotations

import importlib
from typing import Any

from ..errors import InputError

#: name -> "module:Class" inside bouncelike.background
DYNAMICS_REGISTRY: dict[str, str] = {
    "isotropic": "isotropic:IsotropicDynamics",
    "condensate": "condensate:CondensateDynamics",
    "bianchi_i": "bianchi:BianchiIDynamics",
    "asymmetric": "asymmetric:AsymmetricDynamics",
}


def dynamics_class(name: str) -> Any:
    """The class registered under ``name``; an unknown name is an :class:`InputError`."""
    if name not in DYNAMICS_REGISTRY:
        raise InputError(
            f"'background.dynamics' = '{name}' is not known; allowed: "
            + ", ".join(sorted(DYNAMICS_REGISTRY))
        )
    module, cls = DYNAMICS_REGISTRY[name].split(":")
    return getattr(importlib.import_module(f"{__package__}.{module}"), cls)
