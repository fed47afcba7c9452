"""Families of bounce backgrounds behind the transfer cache: calibration rows and certificates.

A family is one inflaton potential with a two-parameter set of bounces, (p, q):

* ``quadratic`` -- V = m^2 phi^2/2, p = m, q = phi_B (phidot_B > 0); potential fraction at the
  bounce x_V = m^2 phi_B^2/(2 rho_c). Calibration rows phi_B = 1.2, m = 4.5e-7-6.5e-6 (the D
  grid); tilt rows phi_B = 0.7, 1.8, 2.5; certificate m log-uniform in 1e-6-4e-6, phi_B uniform
  in 0.7-2.5.
* ``starobinsky`` -- V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi/M_Pl))^2 (potentials.py),
  p = M, q = log10 x_V. Bounces with 50-170 e-folds from the bounce to the end of inflation
  exist only with the field on the steep side (phi_B < 0) moving towards the plateau
  (phidot_B > 0): the kinetic era after the bounce carries the field ~0.49 m_Pl per e-fold
  (dphi/dln a = sqrt(3/4pi)) over ~4-5 e-folds, so a field starting on the plateau side with
  phidot_B > 0 lands so high that inflation lasts > 3000 e-folds, and one moving away from the
  plateau does not inflate (measured, M = 2.5e-6). N_end(x_V) for M = 2.5e-6: 515 at 1e-9,
  167 at 1e-8, 95 at 10^-7.5, 55 at 1e-7, 32 at 10^-6.5. The window of the brief (pivot at
  N_* 50-60, bounce within ~20 e-folds of it) is x_V ~ 10^-7.5-10^-6.9; the family covers
  log10 x_V in [-8, -6.9] (N_end ~ 50-170) and M in 1.5e-6-4e-6 (A_s fixes M ~ 2.5e-6 for
  N_* = 55, Martin, Ringeval & Vennin arXiv:1303.3787 slow-roll relations, physics notes s.6).
  Calibration rows log10 x_V = -7.3, M = 1.5e-6-4e-6 (D = 2.4e4-4.8e4); tilt rows -8.0, -7.6,
  -6.9; certificate M log-uniform in 1.6e-6-3.8e-6, log10 x_V uniform in [-8, -6.9].

The other shipped potentials (``monomial``, ``linear``) have no family: their transition from
the kinetic era into inflation (which sets theta, and for the remote-past state the contracting
history) was not calibrated, and the fast model refuses them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .transfer_decomposition import X_GRID, quadratic_bounce


def starobinsky_bounce(mass: float, log10_fraction: float, past_density: float | None = None):
    """Bounce of the Starobinsky potential with V_B = 10^log10_fraction rho_c, phi_B < 0 (the
    steep side) and phidot_B > 0 (towards the plateau); contracting branch as in
    :func:`.transfer_decomposition.quadratic_bounce`."""
    from ..background.potentials import Starobinsky
    from ..units import critical_density
    from .background import integrate_background
    from .states import remote_past_density

    rc = critical_density()
    if past_density is None:
        past_density = remote_past_density(float(X_GRID[0]), rc)
    pot = Starobinsky(mass=mass)
    phi_b = pot.field_at(10.0**log10_fraction * rc, -1.0)
    return integrate_background(pot, rc, phi_b, math.sqrt(2 * (rc - float(pot.V(phi_b)))),
                                past_density=past_density, max_efolds=3000.0)


@dataclass(frozen=True)
class BackgroundFamily:
    """Calibration rows (p, q) along the conformal duration D, tilt rows, certificate box."""

    name: str
    parameters: tuple[str, str]
    calibration: tuple[tuple[float, float], ...]
    tilt_rows: tuple[tuple[float, float], ...]
    certificate_p: tuple[float, float]     # log-uniform
    certificate_q: tuple[float, float]     # uniform

    def background(self, p: float, q: float, past_density: float | None = None):
        if self.name == "quadratic":
            return quadratic_bounce(p, q, past_density)
        return starobinsky_bounce(p, q, past_density)

    def potential_fraction(self, p: float, q: float) -> float:
        """V_B/rho_c of the bounce (p, q)."""
        if self.name == "quadratic":
            from ..units import critical_density

            return 0.5 * p * p * q * q / critical_density()
        return 10.0**q

    def fraction_range(self) -> tuple[float, float]:
        """V_B/rho_c spanned by the calibration and tilt rows (the certificate box lies
        inside): the range the cache covers."""
        xs = [self.potential_fraction(p, q) for p, q in (*self.calibration, *self.tilt_rows)]
        return min(xs), max(xs)

    def draw(self, rng: np.random.Generator) -> tuple[float, float]:
        lo, hi = self.certificate_p
        return (float(np.exp(rng.uniform(math.log(lo), math.log(hi)))),
                float(rng.uniform(*self.certificate_q)))


FAMILIES = {
    "quadratic": BackgroundFamily(
        "quadratic", ("mass", "phi_B"),
        tuple((float(m), 1.2) for m in np.geomspace(0.45e-6, 6.5e-6, 9)),
        tuple((float(m), pb) for pb in (0.7, 1.8, 2.5) for m in np.geomspace(0.45e-6, 6.5e-6, 9)),
        (1e-6, 4e-6), (0.7, 2.5)),
    "starobinsky": BackgroundFamily(
        "starobinsky", ("mass", "log10_potential_fraction"),
        tuple((float(m), -7.3) for m in np.geomspace(1.5e-6, 4e-6, 7)),
        tuple((float(m), lf) for lf in (-8.0, -7.6, -6.9) for m in np.geomspace(1.5e-6, 4e-6, 7)),
        (1.6e-6, 3.8e-6), (-8.0, -6.9)),
}
#: shipped potentials without a cache, and why
REFUSED_POTENTIALS = {
    "monomial": "its kinetic-to-inflation transition (which sets the residual phase theta) "
                "was not calibrated",
    "linear": "its kinetic-to-inflation transition (which sets the residual phase theta) was "
              "not calibrated",
}


def family(name: str) -> BackgroundFamily:
    if name in FAMILIES:
        return FAMILIES[name]
    why = REFUSED_POTENTIALS.get(name, "it is not a shipped potential with a calibrated cache")
    raise InputError(f"bounce transfer cache: potential '{name}' is not covered ({why}); "
                     f"covered: {', '.join(FAMILIES)}")
