"""Units and fundamental constants.

Internally everything is in Planck units with G = c = hbar = 1: the (non-reduced) Planck mass
m_Pl = 1/sqrt(G) = 1, the Planck length l_Pl = 1 and the Planck density is 1. The *reduced*
Planck mass is M_Pl = m_Pl / sqrt(8 pi) ~ 0.1995 in these units. Docstrings say which of the two
they mean. Physical units (GeV, Mpc^-1, seconds) appear only at the edges and are converted
with :mod:`astropy.constants` and :mod:`astropy.units`.

Loop quantum cosmology conventions (Ashtekar & Singh, "Loop quantum cosmology: a status
report", Class. Quantum Grav. 28 (2011) 213001):

* Barbero–Immirzi parameter gamma = 0.2375 (the common choice from black-hole entropy
  counting; from memory).
* Area gap Delta = 4 sqrt(3) pi gamma l_Pl^2 and lambda = sqrt(Delta).
* Critical density rho_c = 3 / (8 pi G gamma^2 Delta) = sqrt(3) / (32 pi^2 gamma^3) ~ 0.40937.
  The earliest improved-dynamics papers used an area gap of 2 sqrt(3) pi gamma, giving
  rho_c ~ 0.82; this package uses the 0.41 convention throughout.
"""

from __future__ import annotations

import math

import numpy as np

#: Default Barbero–Immirzi parameter (black-hole entropy counting; from memory).
IMMIRZI_DEFAULT = 0.2375

#: Reduced Planck mass in units of the Planck mass, M_Pl / m_Pl = 1/sqrt(8 pi).
REDUCED_PLANCK_MASS = 1.0 / math.sqrt(8.0 * math.pi)


def area_gap(gamma: float = IMMIRZI_DEFAULT) -> float:
    """Area gap Delta = 4 sqrt(3) pi gamma (Planck units, l_Pl = 1)."""
    return 4.0 * math.sqrt(3.0) * math.pi * gamma


def critical_density(gamma: float = IMMIRZI_DEFAULT) -> float:
    """Critical density rho_c = 3/(8 pi gamma^2 Delta) = sqrt(3)/(32 pi^2 gamma^3), Planck units."""
    return 3.0 / (8.0 * math.pi * gamma**2 * area_gap(gamma))


def planck_mass_gev() -> float:
    """Non-reduced Planck mass m_Pl = sqrt(hbar c / G) in GeV (astropy constants)."""
    from astropy import constants as const
    from astropy import units as u

    m = np.sqrt(const.hbar * const.c / const.G)
    return float((m * const.c**2).to(u.GeV).value)


def planck_length_mpc() -> float:
    """Planck length l_Pl = sqrt(hbar G / c^3) in Mpc (astropy constants)."""
    from astropy import constants as const
    from astropy import units as u

    return float(np.sqrt(const.hbar * const.G / const.c**3).to(u.Mpc).value)


def hubble_radius_wavenumber(h0_km_s_mpc: float | None = None) -> float:
    """a_0 H_0 / c in Mpc^-1. Default H_0 from astropy's Planck 2018 realisation."""
    from astropy import constants as const
    from astropy import units as u

    if h0_km_s_mpc is None:
        from astropy.cosmology import Planck18

        h0 = Planck18.H0
    else:
        h0 = h0_km_s_mpc * u.km / u.s / u.Mpc
    return float((h0 / const.c).to(1 / u.Mpc).value)


def wavenumber_in_mpc(k: object) -> np.ndarray:
    """Accept comoving wavenumbers as plain numbers (Mpc^-1) or astropy quantities."""
    if hasattr(k, "to_value"):  # only quantities: the import below costs ~0.1 ms per call
        try:
            from astropy import units as u

            if isinstance(k, u.Quantity):
                return np.asarray(k.to_value(1 / u.Mpc), dtype=float)
        except ImportError:  # pragma: no cover
            pass
    return np.asarray(k, dtype=float)
