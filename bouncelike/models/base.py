"""What every forward model is: declared parameters in, a spectra object and derived numbers out.

A forward model maps its parameters to primordial spectra (:mod:`bouncelike.spectra`: any object
with ``.scalar(k)`` and ``.tensor(k)`` in Mpc^-1). It declares its parameters once, as
:class:`bouncelike.config.Parameter` objects (name, unit, allowed range and why, meaning, plot
label), and every route reads those declarations:

* a configuration (``[model] spectra = "<name>"``, ``bouncelike score``): :meth:`from_config`
  reads the values from the model's section (:attr:`config_section`), validated against the
  declarations, and evaluates the spectra once;
* a prior file (``[prior] model = "<name>"``, ``bouncelike sample``): the prior's parameters must
  be declared by the model and their ranges must lie inside the declared ones
  (:func:`bouncelike.sampling.priors.load_prior`); labels come from the declarations.

Models are small, immutable and picklable (they travel to worker processes and MPI ranks); a
cache they keep is rebuilt in each worker. A point the model cannot evaluate raises
:class:`~bouncelike.errors.NumericalFailure` (the sampler records log-likelihood -inf and the
reason; a configuration gets one line naming the values and the physical reason); a point
outside a declared range raises :class:`~bouncelike.errors.InputError`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any, ClassVar

from ..config import Parameter, Table, check_parameters, names_of, read_parameters
from ..errors import InputError, NumericalFailure


class ForwardModel:
    """Base of every registered forward model (see the module docstring)."""

    #: registry name (configurations and prior files select the model by it)
    name: ClassVar[str] = ""
    #: one line for listings
    title: ClassVar[str] = ""
    #: the parameters a prior file gives (sampled or fixed) and a configuration sets
    parameters: ClassVar[tuple[Parameter, ...]] = ()
    #: the numbers :meth:`derived` returns (stored with the samples)
    derived_parameters: ClassVar[tuple[Parameter, ...]] = ()
    #: parameters a prior may leave out (the model's :meth:`check_prior` says which choices)
    optional_parameter_names: ClassVar[tuple[str, ...]] = ()
    #: section of a run configuration holding the parameter values (None: cannot be read)
    config_section: ClassVar[str | None] = None

    # -- declarations --------------------------------------------------------------------
    @property
    def parameter_names(self) -> tuple[str, ...]:
        return names_of(self.parameters)

    @property
    def derived_names(self) -> tuple[str, ...]:
        return names_of(self.derived_parameters)

    @property
    def labels(self) -> dict[str, str]:
        """LaTeX labels of every parameter and derived number."""
        return {p.name: p.tex for p in (*self.parameters, *self.derived_parameters)}

    def declaration(self, name: str) -> Parameter:
        for p in (*self.parameters, *self.derived_parameters):
            if p.name == name:
                return p
        raise KeyError(name)

    def check(self, values: Mapping[str, Any], where: str = "") -> None:
        """Refuse values outside the declared ranges (the message names ``where.name``)."""
        check_parameters(values, self.parameters, where)

    def check_prior(self, names: Iterable[str]) -> None:
        """Raise InputError unless ``names`` (the non-derived prior parameters) is a valid
        choice; the default accepts any set the prior loader accepted."""

    # -- evaluation ----------------------------------------------------------------------
    def spectra(self, params: Mapping[str, float]) -> Any:
        raise NotImplementedError

    def derived(self, params: Mapping[str, float]) -> dict[str, float]:
        return {}

    def from_config(self, config: Table, base_dir: Path | None = None) -> Any:
        """The spectra at the values of the model's configuration section."""
        if self.config_section is None:
            raise InputError(f"model '{self.name}' cannot be evaluated from a configuration")
        table = config.table(self.config_section, self.parameter_names, required=True)
        optional = set(self.optional_parameter_names)
        values = read_parameters(table, [p for p in self.parameters if p.name not in optional])
        values.update(read_parameters(table, [p for p in self.parameters if p.name in optional],
                                      present_only=True))
        self.check_prior(values)
        return evaluate_at(self, values, self.config_section)


def evaluate_at(model: ForwardModel, values: Mapping[str, Any],
                where: str | Mapping[str, str]) -> Any:
    """``model.spectra(values)`` for one configured point: a numerical failure (or a point
    the model cannot evaluate) keeps its kind and becomes one line naming the values given
    (``where``: their section, or a section per key) and the physical reason."""
    section = (lambda k: where) if isinstance(where, str) else where.get
    try:
        return model.spectra(values)
    except InputError as exc:  # refused on evaluation: the keys as the configuration has them
        message = str(exc)
        for k in values:
            message = message.replace(f"'{k}'", f"'{section(k)}.{k}'")
        raise InputError(message) from None
    except NumericalFailure as exc:
        given = ", ".join(f"{section(k)}.{k} = {v:g}" if isinstance(v, float)
                          else f"{section(k)}.{k} = {v}" for k, v in values.items())
        raise type(exc)(f"model '{model.name}' cannot be evaluated at {given}: {exc}") from None
