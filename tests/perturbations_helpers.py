"""Shared fixtures for the perturbation tests: a quadratic potential and cached backgrounds."""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from bouncelike.perturbations.background import integrate_background
from bouncelike.units import critical_density


@dataclass(frozen=True)
class Quadratic:
    """V = m^2 phi^2 / 2 (test-local; the package registry lives in the background layer)."""

    mass: float

    def V(self, phi):
        return 0.5 * self.mass**2 * np.asarray(phi, dtype=float) ** 2

    def dV(self, phi):
        return self.mass**2 * np.asarray(phi, dtype=float)

    def d2V(self, phi):
        return self.mass**2 + 0.0 * np.asarray(phi, dtype=float)


@functools.lru_cache(maxsize=4)
def bounce_background(phi_b: float = 1.0, mass: float = 1.2e-6, past_density: float = 1e-11):
    rc = critical_density()
    pot = Quadratic(mass)
    phidot = math.sqrt(2 * (rc - float(pot.V(phi_b))))
    return integrate_background(pot, rc, phi_b, phidot, past_density=past_density)


@dataclass(frozen=True)
class Starobinsky:
    """V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi/M_Pl))^2, M_Pl reduced (physics notes s.2)."""

    M: float

    def _e(self, phi):
        mp = 1 / math.sqrt(8 * math.pi)
        return np.exp(-math.sqrt(2 / 3) * np.asarray(phi, dtype=float) / mp), mp

    def V(self, phi):
        e, mp = self._e(phi)
        return 0.75 * self.M**2 * mp**2 * (1 - e) ** 2

    def dV(self, phi):
        e, mp = self._e(phi)
        return 0.75 * self.M**2 * mp**2 * 2 * (1 - e) * e * math.sqrt(2 / 3) / mp

    def d2V(self, phi):
        e, mp = self._e(phi)
        c = math.sqrt(2 / 3) / mp
        return 0.75 * self.M**2 * mp**2 * 2 * c * c * (2 * e * e - e)
