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
