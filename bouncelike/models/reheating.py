"""Reheating: N_* given, or fixed by the reheating history. One schema for configurations and
prior files.

The e-folds N_* between the exit of the pivot scale and the end of inflation either are given
(``N_star``) or follow from the reheating history, a mean equation of state w
(``equation_of_state``) until the density ``10^log10_reheating_density`` (Planck units), where
``thermal_degrees_of_freedom`` g_th are thermalised (default 106.75), through the Liddle &
Leach relation solved on the background
(:func:`bouncelike.perturbations.mapping.liddle_leach_n_star`, the one implementation of it).

The same keys are used by ``[reheating]`` in a run configuration and by the
``[parameters.<name>]`` tables of a prior file (declared in :mod:`bouncelike.quantities`)::

    [reheating]
    N_star = 55.0                       # or, instead:
    # equation_of_state = 0.0           # w in (-1/3, 1]
    # log10_reheating_density = -20.0   # log10 rho_reh (Planck units)
    # thermal_degrees_of_freedom = 106.75  # g_th (with the history only)
    pivot = 0.05                        # configuration only: k_* in Mpc^-1
    hubble_constant = 67.66             # configuration only: H_0 in km/s/Mpc (default: Planck18)
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from ..config import Table
from ..errors import InputError
from ..perturbations.mapping import liddle_leach_n_star
from ..quantities import (
    EQUATION_OF_STATE,
    HUBBLE_CONSTANT,
    LOG10_REHEATING_DENSITY,
    N_STAR,
    PIVOT,
    PIVOT_SCALE,
    REHEATING,
    THERMAL_DEGREES_OF_FREEDOM,
)

#: keys of ``[reheating]`` in a configuration (the prior-file parameters plus the settings)
CONFIG_KEYS = (*(p.name for p in REHEATING), PIVOT_SCALE.name, HUBBLE_CONSTANT.name)
_HISTORY = ("equation_of_state", "log10_reheating_density")
_G_TH = "thermal_degrees_of_freedom"


def check_choice(names: Iterable[str], where: str) -> None:
    """Exactly one reheating choice among ``names``: N_star, or both history keys (and
    optionally g_th)."""
    given = [n for n in (p.name for p in REHEATING) if n in set(names)]
    if given not in (["N_star"], list(_HISTORY), [*_HISTORY, _G_TH]):
        raise InputError(f"{where} needs 'N_star', or both 'equation_of_state' and "
                         f"'log10_reheating_density' (and optionally '{_G_TH}'); got "
                         f"{', '.join(given) or 'none'}")


@dataclass(frozen=True)
class Reheating:
    """N_* given (``N_star``) or the history (w, log10 rho_reh) that fixes it."""

    N_star: float | None = None
    equation_of_state: float | None = None
    log10_reheating_density: float | None = None
    thermal_degrees_of_freedom: float = THERMAL_DEGREES_OF_FREEDOM.default
    pivot: float = PIVOT
    hubble_constant: float | None = None

    @classmethod
    def from_values(cls, values: Mapping[str, Any], **settings: Any) -> Reheating:
        """From a dict holding exactly one choice (e.g. the parameters of a sampled point)."""
        return cls(**{k: values[k] for k in (p.name for p in REHEATING) if k in values},
                   **settings)

    @classmethod
    def from_table(cls, table: Table) -> Reheating:
        """From ``[reheating]`` (values validated against the declarations)."""
        check_choice(table.data, f"[{table.where}]")
        hubble = HUBBLE_CONSTANT.read(table) if "hubble_constant" in table else None
        pivot = PIVOT_SCALE.read(table)
        if "N_star" in table:
            return cls(N_star=N_STAR.read(table), pivot=pivot, hubble_constant=hubble)
        return cls(equation_of_state=EQUATION_OF_STATE.read(table),
                   log10_reheating_density=LOG10_REHEATING_DENSITY.read(table),
                   thermal_degrees_of_freedom=THERMAL_DEGREES_OF_FREEDOM.read(table),
                   pivot=pivot, hubble_constant=hubble)

    @property
    def given(self) -> bool:
        """True when N_* is given rather than fixed by the history."""
        return self.N_star is not None

    def n_star(self, tab: Any) -> float:
        """N_* on the background table ``tab`` (given, or solved by Liddle & Leach)."""
        if self.N_star is not None:
            return float(self.N_star)
        return liddle_leach_n_star(tab, self.equation_of_state,
                                   10.0 ** self.log10_reheating_density, self.pivot,
                                   self.hubble_constant, self.thermal_degrees_of_freedom)


def reheating_from_config(config: Table) -> Reheating:
    """``[reheating]`` of a run configuration (required)."""
    return Reheating.from_table(config.table("reheating", CONFIG_KEYS, required=True))
