"""Physical ranges of the background parameters, checked up front (one-line InputError).

* ``critical_density`` (Planck units): between 1e-10 and 1e6. The effective theories describe a
  bounce near the Planck density (rho_c = 0.409 for gamma = 0.2375, Ashtekar & Singh, Class.
  Quantum Grav. 28 (2011) 213001; rescaled by a condensate cosmology). Below 1e-10 the bounce
  would sit at or under the energy scale of the inflaton potentials (V ~ 1e-11 for m ~ 1e-6)
  and its time scales (~ rho_c^-1/2 Planck times) exceed any integration budget; above 1e6 the
  densities are far beyond the Planck scale the effective equations are written for.
* inflaton masses (``potential.mass``, m_Pl units): at most 0.1, an effective field far below
  the Planck mass (inflation needs m ~ 1e-6).
* ``potential_fraction`` V(phi_B)/rho_c at the bounce: in [0, 1].
* the Bianchi I shear: the initial shear density must leave the initial surface classical
  (rho + rho_sigma below 1% of rho_c), see :mod:`.bianchi`.
"""

from __future__ import annotations

import math

from ..errors import InputError

CRITICAL_DENSITY_RANGE = (1e-10, 1e6)
MAXIMUM_MASS = 0.1


def check_critical_density(value: float, key: str = "background.critical_density") -> float:
    """``value`` if it lies in :data:`CRITICAL_DENSITY_RANGE`, else an InputError naming ``key``."""
    lo, hi = CRITICAL_DENSITY_RANGE
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise InputError(f"'{key}' = {value!r} is not a number") from None
    if not (math.isfinite(value) and lo <= value <= hi):
        raise InputError(f"'{key}' = {value!r} is out of range; allowed: {lo:g} <= rho_c <= "
                         f"{hi:g} (Planck units; effective bounces near the Planck density)")
    return value


def check_mass(value: float, key: str = "potential.mass", zero: bool = True) -> float:
    """An inflaton mass in [0, 0.1] m_Pl ((0, 0.1] without ``zero``)."""
    ok = math.isfinite(value) and (value >= 0 if zero else value > 0) and value <= MAXIMUM_MASS
    if not ok:
        low = ">= 0" if zero else "> 0"
        raise InputError(f"'{key}' = {value!r} is out of range; allowed: {low} and <= "
                         f"{MAXIMUM_MASS:g} (m_Pl units; an inflaton far below the Planck mass)")
    return value


def check_potential_fraction(value: float,
                             key: str = "background.bounce.potential_fraction") -> float:
    if not (math.isfinite(value) and 0.0 <= value <= 1.0):
        raise InputError(f"'{key}' = {value!r} is out of range; allowed: >= 0 and <= 1 "
                         "(V(phi_B)/rho_c at the bounce)")
    return value
