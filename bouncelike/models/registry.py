"""The one registry of forward models, for configurations and posterior runs alike.

A configuration selects a model with ``[model] spectra = "<name>"`` (``bouncelike score``,
``bouncelike spectrum``) and gives its parameter values in the model's section; a prior file
selects it with ``[prior] model = "<name>"`` (``bouncelike sample``). Both look the name up
in :data:`MODELS`. The classes are imported here by plain import statements: a configuration
names a model, it never chooses code to import. The bounce families (numba kernels, the
perturbation stack) are imported when a name outside the light models is first asked for, so
scoring a power law or slow roll does not load them.

========================================  ====================================================
``power_law``                             power-law spectra (``[power_law]``)
``slow_roll_quadratic``                   slow roll of m^2 phi^2 / 2 (``[slow_roll]``)
``slow_roll_starobinsky``                 slow roll of the Starobinsky plateau (``[slow_roll]``)
``bounce``                                the full bounce forward model: background, exact mode
                                          integration, mapping to Mpc^-1 (``[potential]``,
                                          ``[background]``, ``[perturbations]``,
                                          ``[reheating]``); too slow to sample
``bounce_dressed_metric``,                power law times the cached transfer of the bounce
``bounce_deformed_algebra``,              (``[bounce_transfer]``); the last two: other
``bounce_dressed_metric_non_oscillating``, states set around the bounce
``bounce_dressed_metric_low_energy``
``bounce_physical_dressed_metric``,       background -> e-folds -> N_* -> N_B* -> k_LQC ->
``bounce_physical_deformed_algebra``,     pivot spectrum (Stewart-Lyth) -> cached transfer
``bounce_physical_dressed_metric_non_oscillating``, ``..._low_energy``; each also on the
``..._starobinsky``                       Starobinsky plateau (``bounce_physical_*_starobinsky``)
``table``                                 spectra read from a CSV file (``[table] file``,
                                          relative to the configuration's folder); scored only
========================================  ====================================================
"""

from __future__ import annotations

from collections.abc import Iterator, MutableMapping
from pathlib import Path
from typing import Any

from ..config import Table
from ..errors import InputError
from ..spectra.table_file import table_spectra_from_config
from .base import ForwardModel
from .powerlaw import PowerLawModel
from .slowroll import QuadraticSlowRoll, StarobinskySlowRoll


class TableModel(ForwardModel):
    """Spectra computed elsewhere, read from the CSV file of ``[table] file``
    (:mod:`bouncelike.spectra.table_file`); relative paths are taken against the
    configuration's folder."""

    name = "table"
    title = "Spectra read from a CSV table"
    samplable = False

    def from_config(self, config: Table, base_dir: Path | None = None) -> Any:
        return table_spectra_from_config(config, base_dir=base_dir)


def _bounce_families() -> tuple[type[ForwardModel], ...]:
    """The bounce models (heavy: numba kernels and the perturbation stack)."""
    from .bounce import BounceModel
    from .bounce_physical import PHYSICAL_BOUNCE_MODELS
    from .bounce_transfer import BOUNCE_TRANSFER_MODELS

    return (BounceModel, *BOUNCE_TRANSFER_MODELS, *PHYSICAL_BOUNCE_MODELS)


class ModelRegistry(MutableMapping):
    """Every forward model by its name; the bounce families load on first need."""

    def __init__(self) -> None:
        self._models: dict[str, type[ForwardModel]] = {cls.name: cls for cls in (
            PowerLawModel, QuadraticSlowRoll, StarobinskySlowRoll, TableModel)}
        self._complete = False

    def _all(self) -> dict[str, type[ForwardModel]]:
        if not self._complete:
            light = list(self._models.items())
            self._models = {cls.name: cls for cls in _bounce_families()}
            self._models.update(light)
            self._complete = True
        return self._models

    def __getitem__(self, name: str) -> type[ForwardModel]:
        if name in self._models:
            return self._models[name]
        return self._all()[name]

    def __contains__(self, name: object) -> bool:
        return name in self._models or name in self._all()

    def __setitem__(self, name: str, cls: type[ForwardModel]) -> None:
        self._all()[name] = cls

    def __delitem__(self, name: str) -> None:
        del self._all()[name]

    def __iter__(self) -> Iterator[str]:
        return iter(self._all())

    def __len__(self) -> int:
        return len(self._all())


#: every forward model by its name
MODELS = ModelRegistry()



def samplable_models() -> tuple[str, ...]:
    """The models a prior file may name (the others are evaluated from a configuration only)."""
    return tuple(name for name, cls in MODELS.items() if getattr(cls, "samplable", True))


_OLD_NAMES = {"slow_roll": "'slow_roll_quadratic' or 'slow_roll_starobinsky' (the potential "
                           "is part of the model name; drop 'slow_roll.potential')"}


def forward_model(name: str, where: str = "model", sampled: bool = False) -> ForwardModel:
    """A new instance of the model registered under ``name`` (``where`` names the key in
    messages; ``sampled``: the model must be one a prior file may name)."""
    if name in _OLD_NAMES:
        raise InputError(f"'{where}' = '{name}' was renamed {_OLD_NAMES[name]}")
    known = name in MODELS and (not sampled or getattr(MODELS[name], "samplable", True))
    if not known:
        allowed = samplable_models() if sampled else tuple(MODELS)
        extra = ("; 'bounce' integrates the modes exactly and is too slow to sample: use "
                 "bounce_physical_dressed_metric" if name == "bounce" else "")
        raise InputError(f"'{where}' = '{name}' is not known; allowed: "
                         f"{', '.join(sorted(allowed))}{extra}")
    return MODELS[name]()


def spectra_from_config(config: Table, base_dir: str | Path | None = None) -> Any:
    """The spectra object a run configuration asks for (``[model] spectra = ...``);
    ``base_dir``: the configuration's folder, against which file names in it are taken (the
    working directory when None)."""
    model = config.table("model", ("spectra",), required=True)
    name = model.string("spectra")
    return forward_model(name, "model.spectra").from_config(
        config, base_dir=None if base_dir is None else Path(base_dir))
