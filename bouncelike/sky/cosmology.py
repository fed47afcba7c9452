"""The late universe seen by the largest-scale CMB temperature anisotropies.

Distances, conformal times and H(z) come from :data:`astropy.cosmology.Planck18` (flat, Planck
2018 TT,TE,EE+lowE+lensing+BAO parameters, with radiation and one massive neutrino); they are
converted to plain floats in Mpc here, at the edge, and nowhere else.

The Newtonian potential after last scattering evolves as Psi(k, eta) = Psi_MD(k) g(eta) with
g = D(a)/a, D the linear growth factor of a flat matter + Lambda universe (radiation neglected
after last scattering; Omega_m = Planck18.Om0 and Omega_Lambda = 1 - Omega_m):

    D(a) = (5 Omega_m / 2) E(a) int_0^a da' / (a' E(a'))^3,   E(a) = sqrt(Omega_m a^-3 + Omega_L)

normalised so that D -> a and g -> 1 deep in matter domination (e.g. Dodelson & Schmidt, Modern
Cosmology 2nd ed., growth-function section; the formula as in the project's physics notes,
section 7). With x = a s^2 the integral becomes 2 a^(5/2) int_0^1 s^4 (Omega_m + Omega_L a^3
s^6)^(-3/2) ds, a smooth integrand done by Gauss-Legendre quadrature.

The redshift of last scattering z_* is a published number and lives, with its citation, in
``data/last_scattering.toml``.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

import numpy as np
from scipy.integrate import quad

from ..config import Table, read_toml

_GL_S, _GL_W = np.polynomial.legendre.leggauss(48)
_GL_S = 0.5 * (_GL_S + 1.0)
_GL_W = 0.5 * _GL_W


def _growth_integral(a: np.ndarray, omega_m: float) -> np.ndarray:
    """int_0^a da' / (a' E(a'))^3 for flat matter + Lambda (Gauss-Legendre, 48 nodes)."""
    a = np.asarray(a, dtype=float)
    omega_l = 1.0 - omega_m
    s = _GL_S
    inner = s**4 * (omega_m + omega_l * a[..., None] ** 3 * s**6) ** -1.5
    return 2.0 * a**2.5 * np.sum(inner * _GL_W, axis=-1)


def _e_matter_lambda(a: np.ndarray, omega_m: float) -> np.ndarray:
    return np.sqrt(omega_m * a**-3.0 + (1.0 - omega_m))


def growth_factor(a, omega_m: float) -> np.ndarray:
    """Linear growth factor D(a) of flat matter + Lambda, D -> a in matter domination."""
    a = np.asarray(a, dtype=float)
    return 2.5 * omega_m * _e_matter_lambda(a, omega_m) * _growth_integral(a, omega_m)


def potential_growth(z, omega_m: float) -> np.ndarray:
    """g(z) = D(a)/a: the Newtonian potential in units of its matter-era value."""
    a = 1.0 / (1.0 + np.asarray(z, dtype=float))
    return growth_factor(a, omega_m) / a


def potential_growth_derivative(z, omega_m: float) -> np.ndarray:
    """dg/dz (analytic derivative of the growth formula; > 0 once Lambda matters)."""
    a = 1.0 / (1.0 + np.asarray(z, dtype=float))
    omega_l = 1.0 - omega_m
    e = _e_matter_lambda(a, omega_m)
    integral = _growth_integral(a, omega_m)
    de_da = -1.5 * omega_m * a**-4.0 / e
    dd_da = 2.5 * omega_m * (de_da * integral + e * a**1.5 * (omega_m + omega_l * a**3) ** -1.5)
    d = 2.5 * omega_m * e * integral
    dg_da = dd_da / a - d / a**2
    return -(a**2) * dg_da


@dataclass(frozen=True)
class LateUniverse:
    """Numbers of the late universe the projection needs, in Mpc (plain floats).

    ``chi_star``: comoving distance to last scattering; ``eta_star``: conformal time at last
    scattering (from the big bang, radiation included); ``eta0 = eta_star + chi_star`` today;
    ``hubble_distance`` c/H_0; ``omega_m`` for the growth; ``t_cmb_uK`` the CMB temperature in
    micro-kelvin; ``z_star`` and its ``z_star_source``.
    """

    omega_m: float
    hubble_distance: float
    z_star: float
    chi_star: float
    eta_star: float
    eta0: float
    t_cmb_uK: float
    z_star_source: str
    cosmology_name: str

    def efunc(self, z) -> np.ndarray:
        """E(z) = H(z)/H_0 of astropy's Planck18 (radiation and neutrinos included)."""
        from astropy.cosmology import Planck18

        return np.asarray(Planck18.efunc(np.asarray(z, dtype=float)), dtype=float)

    def comoving_distance(self, z) -> np.ndarray:
        """chi(z) in Mpc from astropy's Planck18."""
        from astropy.cosmology import Planck18

        return np.asarray(Planck18.comoving_distance(np.asarray(z, dtype=float)).to_value("Mpc"))

    def as_dict(self) -> dict:
        return {
            "cosmology": self.cosmology_name, "omega_m": self.omega_m,
            "hubble_distance_mpc": self.hubble_distance, "z_star": self.z_star,
            "z_star_source": self.z_star_source, "chi_star_mpc": self.chi_star,
            "eta_star_mpc": self.eta_star, "eta0_mpc": self.eta0, "t_cmb_uK": self.t_cmb_uK,
        }


def _last_scattering_file() -> Path:
    return Path(str(resources.files("bouncelike.sky") / "data" / "last_scattering.toml"))


@functools.lru_cache(maxsize=1)
def planck18_late_universe() -> LateUniverse:
    """The :class:`LateUniverse` of astropy's Planck18 and the shipped z_*."""
    from astropy.cosmology import Planck18

    raw = Table(read_toml(_last_scattering_file(), what="last-scattering file"), "",
                ("z_star", "citation", "arxiv", "table"))
    z_star = raw.positive("z_star")
    source = f"{raw.string('citation')} (arXiv:{raw.string('arxiv')}), {raw.string('table')}"
    d_h = float(Planck18.hubble_distance.to_value("Mpc"))
    chi_star = float(Planck18.comoving_distance(z_star).to_value("Mpc"))
    # eta_* = (c/H0) int_{z*}^inf dz / E(z), in u = ln(1+z); (1+z)/E ~ (1+z)^-1 in the radiation
    # era, so the integrand falls like e^-u and u <= ln(1+z_*) + 40 is complete to e^-40
    u_star = math.log1p(z_star)

    def integrand(u: float) -> float:
        return math.exp(u) / float(Planck18.efunc(math.expm1(u)))

    eta_star = d_h * quad(integrand, u_star, u_star + 40.0, limit=200, epsabs=0.0,
                          epsrel=1e-11)[0]
    return LateUniverse(
        omega_m=float(Planck18.Om0), hubble_distance=d_h, z_star=z_star, chi_star=chi_star,
        eta_star=eta_star, eta0=eta_star + chi_star,
        t_cmb_uK=float(Planck18.Tcmb0.to_value("K")) * 1e6, z_star_source=source,
        cosmology_name="astropy.cosmology.Planck18",
    )
