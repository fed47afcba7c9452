"""The power-law model: amplitude, tilt, running, running of running and r at a pivot.

Spectra: :class:`bouncelike.spectra.powerlaw.PowerLawSpectra` (the expansion in ln(k/k_*) is
stated there). The tensor tilt follows the single-field consistency relation n_t = -r/8 unless
a configuration gives it.

Configuration ``[power_law]`` (``[model] spectra = "power_law"``): one amplitude among
``ln_1e10_As`` and ``A_s``, ``n_s`` (required), ``running``, ``running_of_running``, ``r``
(default 0), ``n_t`` (a number, or ``"consistency"``, the default) and ``pivot`` (Mpc^-1,
default 0.05). Prior files give ``ln_1e10_As``, ``n_s``, ``running``, ``running_of_running``
and ``r`` (pivot 0.05 Mpc^-1); ``A_s`` and ``n_t`` are derived.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..config import Table
from ..errors import InputError
from ..quantities import (
    AMPLITUDE,
    LN_1E10,
    LN_AMPLITUDE,
    PIVOT,
    PIVOT_SCALE,
    RUNNING,
    RUNNING_OF_RUNNING,
    TENSOR_RATIO,
    TENSOR_TILT,
    TILT,
)
from ..spectra.powerlaw import PowerLawSpectra
from .base import ForwardModel

#: keys of ``[power_law]`` (the sampled parameters plus the configuration-only ones)
CONFIG_KEYS = ("ln_1e10_As", "A_s", "n_s", "running", "running_of_running", "r", "n_t",
               "pivot")


def amplitude_from_table(table: Table) -> float:
    """ln(1e10 A_s) from exactly one of the keys ``ln_1e10_As`` or ``A_s`` (each checked
    against its own declaration, so the message names the key the user wrote)."""
    given = [k for k in ("ln_1e10_As", "A_s") if k in table]
    if len(given) == 2:
        raise InputError(
            f"give only one of '{table.key('ln_1e10_As')}' and '{table.key('A_s')}', not both"
        )
    if not given:
        raise InputError(f"missing amplitude in [{table.where}]: give 'ln_1e10_As' (e.g. "
                         "3.044) or 'A_s' (e.g. 2.1e-9)")
    if given[0] == "ln_1e10_As":
        return LN_AMPLITUDE.read(table)
    return math.log(AMPLITUDE.read(table)) + LN_1E10


class PowerLawModel(ForwardModel):
    """Power-law scalar and tensor spectra (tensor tilt by consistency when sampled)."""

    name = "power_law"
    title = "Power-law scalar and tensor spectra"
    parameters = (LN_AMPLITUDE, TILT, RUNNING, RUNNING_OF_RUNNING, TENSOR_RATIO)
    derived_parameters = (AMPLITUDE, TENSOR_TILT)
    config_section = "power_law"

    def spectra(self, p: Mapping[str, float]) -> PowerLawSpectra:
        return PowerLawSpectra(ln_1e10_As=p["ln_1e10_As"], n_s=p["n_s"], running=p["running"],
                               running_of_running=p["running_of_running"], r=p["r"],
                               pivot=PIVOT)

    def derived(self, p: Mapping[str, float]) -> dict[str, float]:
        return {"A_s": math.exp(p["ln_1e10_As"]) * 1e-10, "n_t": -p["r"] / 8.0}

    def from_config(self, config: Table, base_dir: Path | None = None) -> PowerLawSpectra:
        table = config.table("power_law", CONFIG_KEYS, required=True)
        raw_nt = table.raw("n_t", "consistency")
        if isinstance(raw_nt, str):
            if raw_nt != "consistency":
                raise InputError(f"'{table.key('n_t')}' must be a number or \"consistency\", "
                                 f"got {raw_nt!r}")
            n_t = None
        else:
            n_t = TENSOR_TILT.read(table)
        return PowerLawSpectra(
            ln_1e10_As=amplitude_from_table(table),
            n_s=TILT.read(table),
            running=RUNNING.read(table, 0.0),
            running_of_running=RUNNING_OF_RUNNING.read(table, 0.0),
            r=TENSOR_RATIO.read(table, 0.0),
            n_t=n_t,
            pivot=PIVOT_SCALE.read(table),
        )


def power_law_spectra(**values: Any) -> PowerLawSpectra:
    """Shorthand used by the other models: :class:`PowerLawSpectra` at the default pivot."""
    return PowerLawSpectra(**{"pivot": PIVOT, **values})
