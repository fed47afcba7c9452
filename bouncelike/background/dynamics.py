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

from collections.abc import Callable
from typing import Any

from ..errors import InputError


def _isotropic() -> Any:
    from .isotropic import IsotropicDynamics

    return IsotropicDynamics


def _condensate() -> Any:
    from .condensate import CondensateDynamics

    return CondensateDynamics


def _bianchi_i() -> Any:
    from .bianchi import BianchiIDynamics

    return BianchiIDynamics


def _asymmetric() -> Any:
    from .asymmetric import AsymmetricDynamics

    return AsymmetricDynamics


#: name -> loader of the class (plain imports, done on first use: a configuration selects a
#: name from this fixed table and never names a module)
DYNAMICS_REGISTRY: dict[str, Callable[[], Any]] = {
    "isotropic": _isotropic,
    "condensate": _condensate,
    "bianchi_i": _bianchi_i,
    "asymmetric": _asymmetric,
}


def dynamics_class(name: str) -> Any:
    """The class registered under ``name``; an unknown name is an :class:`InputError`."""
    if name not in DYNAMICS_REGISTRY:
        raise InputError(
            f"'background.dynamics' = '{name}' is not known; allowed: "
            + ", ".join(sorted(DYNAMICS_REGISTRY))
        )
    return DYNAMICS_REGISTRY[name]()
