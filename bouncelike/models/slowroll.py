"""Slow-roll predictions of two inflaton potentials at N_* e-folds before the end of inflation.

N_* (``N_star``) counts the e-folds between the moment the pivot scale k_* left the Hubble
radius and the end of inflation (epsilon_1 = 1). M_Pl below is the *reduced* Planck mass,
M_Pl = m_Pl / sqrt(8 pi) (:data:`bouncelike.units.REDUCED_PLANCK_MASS`); masses and energy
densities are in units of the non-reduced Planck mass m_Pl = 1 (Planck units, G = c = hbar = 1).

Formulas (Martin, Ringeval & Vennin, "Encyclopaedia Inflationaris", arXiv:1303.3787; the
project's physics notes, section 6), with Ntilde = N_* + 1/2 for the quadratic potential:

``quadratic``   V = m^2 phi^2 / 2 (large-field inflation with p = 2, exact first-order slow
                roll with epsilon_1 = 1 at the end, phi_end^2 = 2 M_Pl^2)
                n_s = 1 - 2/Ntilde,  r = 8/Ntilde,  epsilon_1 = 1/(2 Ntilde),
                V_* = 2 m^2 M_Pl^2 Ntilde
``starobinsky`` V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi / M_Pl))^2 (leading order in 1/N_*;
                the same potential and mass M as ``[potential] name = "starobinsky"``)
                n_s = 1 - 2/N_*,  r = 12/N_*^2,  epsilon_1 = 3/(4 N_*^2),
                V_* = V_0 = (3/4) M^2 M_Pl^2

For Starobinsky the leading order differs from first-order slow roll evaluated exactly on the
potential by O(ln N / N^2) in n_s and by O(ln N / N) in r (r is about 13 % high at N_* = 55;
checked in tests/test_slow_roll.py), irrelevant against current limits on r.

The running follows from d ln k = -dN_* (k_* grows as N_* falls): dn_s/dln k = -dn_s/dN_*,
giving -2/Ntilde^2 (quadratic) and -2/N_*^2 (Starobinsky); the running of running is
-4/Ntilde^3 and -4/N_*^3. The tensor tilt follows the consistency relation n_t = -r/8.

Amplitude and mass: the standard first-order slow-roll result

    A_s = V_* / (24 pi^2 M_Pl^4 epsilon_1)

gives A_s = m^2 Ntilde^2 / (6 pi^2 M_Pl^2) for the quadratic potential and
A_s = V_0 N_*^2 / (18 pi^2 M_Pl^4) = M^2 N_*^2 / (24 pi^2 M_Pl^2) for Starobinsky. A prior
samples (N_*, ln(1e10 A_s)) and derives the mass; a configuration may give the mass instead
of the amplitude.

Configuration ``[slow_roll]`` (``[model] spectra = "slow_roll_quadratic"`` or
``"slow_roll_starobinsky"``): ``N_star``, one amplitude among ``ln_1e10_As``, ``A_s`` and
``mass``, and ``pivot`` (k_* in Mpc^-1, default 0.05).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import ClassVar

from ..config import Parameter, Table
from ..errors import InputError
from ..quantities import (
    AMPLITUDE,
    LN_1E10,
    LN_AMPLITUDE,
    N_STAR,
    PIVOT,
    PIVOT_SCALE,
    QUADRATIC_MASS,
    RUNNING,
    RUNNING_OF_RUNNING,
    STAROBINSKY_MASS,
    TENSOR_RATIO,
    TILT,
)
from ..spectra.powerlaw import PowerLawSpectra
from ..units import REDUCED_PLANCK_MASS
from .base import ForwardModel
from .powerlaw import amplitude_from_table

_MPL2 = REDUCED_PLANCK_MASS**2
_MPL4 = REDUCED_PLANCK_MASS**4


@dataclass(frozen=True)
class SlowRollObservables:
    """First-order slow-roll observables at N_* e-folds."""

    N_star: float
    n_s: float
    running: float
    running_of_running: float
    r: float
    epsilon1: float


class SlowRollModel(ForwardModel):
    """Slow roll of one potential: parameters ``N_star`` and ``ln_1e10_As`` (pivot 0.05
    Mpc^-1); the amplitude fixes the potential's mass, reported as a derived number."""

    potential: ClassVar[str] = ""
    formula: ClassVar[str] = ""
    mass_parameter: ClassVar[Parameter]
    parameters = (N_STAR, LN_AMPLITUDE)
    config_section = "slow_roll"

    # -- the formulas (module docstring) ------------------------------------------------
    @staticmethod
    def observables(n_star: float) -> SlowRollObservables:
        raise NotImplementedError

    @staticmethod
    def pivot_potential(mass: float, n_star: float) -> float:
        """V_* (Planck units) when the pivot leaves the Hubble radius, N_* e-folds before the
        end."""
        raise NotImplementedError

    def __init_subclass__(cls, **kwargs: object) -> None:
        super().__init_subclass__(**kwargs)
        cls.derived_parameters = (TILT, TENSOR_RATIO, RUNNING, RUNNING_OF_RUNNING,
                                  cls.mass_parameter)

    @classmethod
    def amplitude(cls, mass: float, n_star: float) -> float:
        """A_s = V_*/(24 pi^2 M_Pl^4 epsilon_1) (module docstring)."""
        return cls.pivot_potential(mass, n_star) / (
            24.0 * math.pi**2 * _MPL4 * cls.observables(n_star).epsilon1)

    @classmethod
    def mass(cls, n_star: float, a_s: float) -> float:
        """The potential's mass (m_Pl units) that gives A_s at N_*: both potentials scale as
        V proportional to mass^2, so A_s = mass^2 x A_s(mass = 1)."""
        return math.sqrt(a_s / cls.amplitude(1.0, n_star))

    # -- evaluation ----------------------------------------------------------------------
    def _observables(self, p: Mapping[str, float]) -> SlowRollObservables:
        n = p["N_star"]
        if not N_STAR.lower <= n <= N_STAR.upper:
            N_STAR.check(n)
        return self.observables(n)

    def spectra(self, p: Mapping[str, float], pivot: float = PIVOT,
                notes: tuple[str, ...] = ()) -> PowerLawSpectra:
        obs = self._observables(p)
        return PowerLawSpectra(
            ln_1e10_As=p["ln_1e10_As"], n_s=obs.n_s, running=obs.running,
            running_of_running=obs.running_of_running, r=obs.r, n_t=None, pivot=pivot,
            label=f"{self.potential} slow roll, N_* = {obs.N_star:g}",
            notes=(f"slow roll, {self.formula}, N_* = {obs.N_star:g} e-folds at k_* = "
                   f"{pivot:g} Mpc^-1 (Encyclopaedia Inflationaris, arXiv:1303.3787)", *notes))

    def derived(self, p: Mapping[str, float]) -> dict[str, float]:
        obs = self._observables(p)
        a_s = math.exp(p["ln_1e10_As"]) * 1e-10
        return {"n_s": obs.n_s, "r": obs.r, "running": obs.running,
                "running_of_running": obs.running_of_running,
                "mass": self.mass(obs.N_star, a_s)}

    def from_config(self, config: Table, base_dir: Path | None = None) -> PowerLawSpectra:
        table = config.table("slow_roll", ("N_star", "ln_1e10_As", "A_s", "mass", "pivot"),
                             required=True)
        n_star = N_STAR.read(table)
        pivot = PIVOT_SCALE.read(table)
        given = [k for k in ("ln_1e10_As", "A_s", "mass") if k in table]
        if len(given) != 1:
            raise InputError(f"[slow_roll] needs exactly one amplitude among 'ln_1e10_As', "
                             f"'A_s' and 'mass' (got {', '.join(given) or 'none'})")
        if given[0] != "mass":
            ln_as = amplitude_from_table(table)
            return self.spectra({"N_star": n_star, "ln_1e10_As": ln_as}, pivot)
        mass = self.mass_parameter.read(table)
        a_s = self.amplitude(mass, n_star)
        if not a_s <= AMPLITUDE.upper:
            raise InputError(f"'{table.key('mass')}' = {mass:g} gives A_s = {a_s:.3g} at "
                             f"N_* = {n_star:g}, above 1: the perturbations would not be small "
                             f"(allowed: A_s <= 1, i.e. mass <= "
                             f"{self.mass(n_star, 1.0):.3g} here)")
        note = (f"A_s = V_*/(24 pi^2 M_Pl^4 epsilon_1) = {a_s:.4g} from mass = {mass:.4g} "
                "(reduced Planck mass M_Pl)")
        return self.spectra({"N_star": n_star, "ln_1e10_As": math.log(a_s) + LN_1E10},
                            pivot, (note,))


class QuadraticSlowRoll(SlowRollModel):
    """V = m^2 phi^2 / 2 (module docstring)."""

    name = "slow_roll_quadratic"
    title = "Quadratic potential, slow roll"
    potential = "quadratic"
    formula = "V = m^2 phi^2 / 2"
    mass_parameter = QUADRATIC_MASS

    @staticmethod
    def observables(n_star: float) -> SlowRollObservables:
        nt = n_star + 0.5
        return SlowRollObservables(N_star=n_star, n_s=1.0 - 2.0 / nt, running=-2.0 / nt**2,
                                   running_of_running=-4.0 / nt**3, r=8.0 / nt,
                                   epsilon1=1.0 / (2.0 * nt))

    @staticmethod
    def pivot_potential(mass: float, n_star: float) -> float:
        """V_* = 2 m^2 M_Pl^2 (N_* + 1/2); A_s then gives m = sqrt(6 pi^2 A_s) M_Pl / Ntilde."""
        return 2.0 * mass**2 * _MPL2 * (n_star + 0.5)


class StarobinskySlowRoll(SlowRollModel):
    """V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi / M_Pl))^2 (module docstring)."""

    name = "slow_roll_starobinsky"
    title = "Starobinsky potential, slow roll"
    potential = "starobinsky"
    formula = "V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi / M_Pl))^2"
    mass_parameter = STAROBINSKY_MASS

    @staticmethod
    def observables(n_star: float) -> SlowRollObservables:
        n = n_star
        return SlowRollObservables(N_star=n, n_s=1.0 - 2.0 / n, running=-2.0 / n**2,
                                   running_of_running=-4.0 / n**3, r=12.0 / n**2,
                                   epsilon1=3.0 / (4.0 * n**2))

    @staticmethod
    def pivot_potential(mass: float, n_star: float) -> float:
        """V_* = V_0 = (3/4) M^2 M_Pl^2 at leading order; A_s then gives
        M = sqrt(24 pi^2 A_s) M_Pl / N_*."""
        return 0.75 * mass**2 * _MPL2


#: the slow-roll models by potential name
SLOW_ROLL_MODELS = {cls.potential: cls for cls in (QuadraticSlowRoll, StarobinskySlowRoll)}


def slow_roll_spectra(potential: str, n_star: float, *, ln_1e10_As: float | None = None,
                      mass: float | None = None, pivot: float = PIVOT) -> PowerLawSpectra:
    """Power-law spectra predicted by ``potential`` at N_* = ``n_star``, from exactly one of
    ``ln_1e10_As`` and the potential's ``mass`` (m_Pl units)."""
    if potential not in SLOW_ROLL_MODELS:
        raise InputError(f"slow-roll potential '{potential}' is not known; allowed: "
                         f"{', '.join(sorted(SLOW_ROLL_MODELS))}")
    if (ln_1e10_As is None) == (mass is None):
        raise InputError("give exactly one of ln_1e10_As and mass")
    values: dict = {"N_star": n_star, "pivot": pivot}
    values["ln_1e10_As" if mass is None else "mass"] = mass if ln_1e10_As is None else (
        ln_1e10_As)
    config = Table({"slow_roll": values}, "", ("slow_roll",))
    return SLOW_ROLL_MODELS[potential]().from_config(config)
