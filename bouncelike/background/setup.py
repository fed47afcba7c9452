"""Build the background of a run from its configuration: dynamics, potential, initial data.

Configuration (all keys optional except the potential and the chosen start's required keys)::

    [potential]
    name = "quadratic"
    mass = 1.21e-6                 # m_Pl units

    [background]
    dynamics = "isotropic"         # isotropic | condensate | bianchi_i | asymmetric
    gamma = 0.2375                 # Barbero-Immirzi parameter -> rho_c = sqrt(3)/(32 pi^2 gamma^3)
    # critical_density = 0.41      # or rho_c directly (Planck units); not together with gamma
    start = "contracting"          # contracting | bounce | classical

    [background.contracting]
    start_density = 1e-16          # rho_0 (Planck units), must be < rho_c
    phase = 0.0                    # delta (radians): energy angle of the oscillation

    [background.bounce]
    potential_fraction = 1e-11     # V(phi_B) / rho_c in [0, 1]
    phidot_sign = 1                # +1 or -1
    field_sign = 0                 # sign of phi_B: +1, -1, or 0 = that of phidot (the field
                                   # on the side it is thrown up); a Starobinsky bounce that
                                   # climbs the steep side towards the plateau: -1

    [background.classical]
    phi = 3.0                      # m_Pl units
    phidot = 0.0

    [background.integration]
    rtol = 1e-10
    atol = 1e-13
    max_inflation_efolds = 1e4
    max_time = 1e12                # Planck times
    dense_points = 2000
    max_steps = 3000000            # budget of accepted steps per integration
    max_seconds = 300              # wall-clock budget per integration

    [background.<dynamics name>]   # keys of that dynamics (its CONFIG_KEYS)
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..config import Table
from ..errors import InputError
from ..quantities import BARBERO_IMMIRZI, CRITICAL_DENSITY, POTENTIAL_FRACTION, START_DENSITY
from ..units import critical_density as critical_density_from_gamma
from .dynamics import DYNAMICS_REGISTRY, dynamics_class
from .initial import BounceStart, ClassicalStart, ContractingStart, IntegrationSettings
from .potentials import potential_from_config

STARTS = ("contracting", "bounce", "classical")
BACKGROUND_KEYS = ("dynamics", "gamma", "critical_density", "start", "bounce", "contracting",
                   "classical", "integration")


@dataclass(frozen=True)
class BackgroundSetup:
    """What evolving one background needs: ``dynamics.evolve(potential, initial, settings)``."""

    dynamics: Any
    potential: Any
    initial: Any
    settings: IntegrationSettings

    @property
    def critical_density(self) -> float:
        return float(getattr(self.dynamics, "critical_density", math.nan))

    def evolve(self) -> Any:
        """Evolve the configured initial datum (a :class:`BackgroundTrajectory`)."""
        return self.dynamics.evolve(self.potential, self.initial, self.settings)

    def describe(self) -> dict[str, Any]:
        return {
            "dynamics": self.dynamics.describe(),
            "potential": {"name": self.potential.name, **self.potential.parameters},
            "initial": {"type": type(self.initial).__name__, **self.initial.__dict__},
            "settings": self.settings.as_dict(),
        }


def critical_density_from_config(table: Table) -> float:
    """rho_c from ``gamma`` or ``critical_density`` of ``[background]`` (not both)."""
    if "gamma" in table and "critical_density" in table:
        raise InputError(
            "give either 'background.gamma' or 'background.critical_density', not both"
        )
    if "critical_density" in table:
        return CRITICAL_DENSITY.read(table)
    return CRITICAL_DENSITY.check(critical_density_from_gamma(BARBERO_IMMIRZI.read(table)),
                                  table.key("gamma") + " -> rho_c")


def settings_from_config(table: Table) -> IntegrationSettings:
    """``[background.integration]`` -> :class:`IntegrationSettings`."""
    sub = table.table("integration", tuple(IntegrationSettings.__dataclass_fields__))
    d = IntegrationSettings()
    return IntegrationSettings(
        rtol=sub.number("rtol", d.rtol, minimum=1e-14, maximum=1e-3),
        atol=sub.number("atol", d.atol, minimum=1e-20, maximum=1e-3),
        max_inflation_efolds=sub.number("max_inflation_efolds", d.max_inflation_efolds,
                                        minimum=1.0, maximum=1e7),
        max_time=sub.number("max_time", d.max_time, minimum=0.0, exclusive_minimum=True),
        dense_points=sub.integer("dense_points", d.dense_points, minimum=0, maximum=10**7),
        max_steps=sub.integer("max_steps", d.max_steps, minimum=100, maximum=10**9),
        max_seconds=sub.number("max_seconds", d.max_seconds, minimum=0.0, maximum=1e6,
                               exclusive_minimum=True),
    )


def initial_from_config(table: Table, start: str, critical_density: float) -> Any:
    """The initial datum of the chosen ``start`` from its sub-table."""
    if start == "contracting":
        sub = table.table("contracting", ("start_density", "phase"))
        density = START_DENSITY.read(sub, upper=critical_density,
                                     reason="the contracting branch starts below the critical "
                                     f"density rho_c = {critical_density:.5g}")
        return ContractingStart(density, sub.number("phase", 0.0))
    if start == "bounce":
        sub = table.table("bounce", ("potential_fraction", "phidot_sign", "field_sign"))
        sign = sub.integer("phidot_sign", 1)
        if sign not in (-1, 1):
            raise InputError(f"'background.bounce.phidot_sign' = {sign} is not allowed; "
                             "allowed: 1, -1")
        side = sub.integer("field_sign", 0)
        if side not in (-1, 0, 1):
            raise InputError(f"'background.bounce.field_sign' = {side} is not allowed; "
                             "allowed: 1, -1, 0 (the sign of phidot)")
        return BounceStart(POTENTIAL_FRACTION.read(sub), sign, side)
    sub = table.table("classical", ("phi", "phidot"))
    return ClassicalStart(sub.number("phi"), sub.number("phidot", 0.0))


def background_from_config(config: Table) -> BackgroundSetup:
    """Build the :class:`BackgroundSetup` of a run configuration (top-level :class:`Table`)."""
    raw = config.raw("background", {}) if isinstance(config, Table) else {}
    if raw is None:
        raw = {}
    if not isinstance(raw, dict):
        raise InputError("[background] must be a table of keys")
    name = raw.get("dynamics", "isotropic")
    if not isinstance(name, str) or name not in DYNAMICS_REGISTRY:
        raise InputError(
            f"'background.dynamics' = {name!r} is not known; allowed: "
            + ", ".join(sorted(DYNAMICS_REGISTRY))
        )
    table = Table(raw, "background", BACKGROUND_KEYS + (name,))
    rho_c = critical_density_from_config(table)
    start = table.string("start", "contracting", choices=STARTS)
    for other in STARTS:
        if other != start and other in table:
            raise InputError(
                f"[background.{other}] given but 'background.start' = '{start}'; "
                f"allowed sub-table for this start: [background.{start}]"
            )
    try:
        cls = dynamics_class(name)
    except ImportError:
        raise InputError(
            f"'background.dynamics' = '{name}' is not available in this installation"
        ) from None
    sub = table.table(name, getattr(cls, "CONFIG_KEYS", ()))
    dynamics = cls.from_config(sub, rho_c)
    potential = potential_from_config(config)
    return BackgroundSetup(
        dynamics=dynamics,
        potential=potential,
        initial=initial_from_config(table, start, rho_c),
        settings=settings_from_config(table),
    )
