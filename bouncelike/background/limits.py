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

from ..quantities import CRITICAL_DENSITY, POTENTIAL_FRACTION, QUADRATIC_MASS

#: the declared ranges (:mod:`bouncelike.quantities`, one declaration per quantity)
CRITICAL_DENSITY_RANGE = (CRITICAL_DENSITY.lower, CRITICAL_DENSITY.upper)
MAXIMUM_MASS = QUADRATIC_MASS.upper


def check_critical_density(value: float, key: str = "background.critical_density") -> float:
    """``value`` if it lies in the declared range, else an InputError naming ``key``."""
    return CRITICAL_DENSITY.check(value, key)


def check_mass(value: float, key: str = "potential.mass", zero: bool = True) -> float:
    """An inflaton mass in [0, 0.1] m_Pl ((0, 0.1] without ``zero``)."""
    return QUADRATIC_MASS.check(value, key, lower=None if zero else 0.0,
                                reason="" if zero else "a massless field never inflates")


def check_potential_fraction(value: float,
                             key: str = "background.bounce.potential_fraction") -> float:
    """V(phi_B)/rho_c at the bounce, in [0, 1]."""
    return POTENTIAL_FRACTION.check(value, key)
