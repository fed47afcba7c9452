"""Slow-roll predictions of two inflaton potentials at N_* e-folds before the end of inflation.

N_* counts the e-folds between the moment the pivot scale k_* left the Hubble radius and the end
of inflation (epsilon_1 = 1). M_Pl below is the *reduced* Planck mass, M_Pl = m_Pl / sqrt(8 pi)
(:data:`bouncelike.units.REDUCED_PLANCK_MASS`); masses and energy densities are given in units of
the non-reduced Planck mass m_Pl = 1 (Planck units, G = c = hbar = 1).

Formulas (Martin, Ringeval & Vennin, "Encyclopaedia Inflationaris", arXiv:1303.3787; the
project's physics notes, section 6), with Ntilde = N_* + 1/2 for the quadratic potential:

``quadratic``   V = m^2 phi^2 / 2 (exact first-order slow roll with epsilon_1 = 1 at the end)
                n_s = 1 - 2/Ntilde,  r = 8/Ntilde,  epsilon_1 = 1/(2 Ntilde),
                V_* = 2 m^2 M_Pl^2 Ntilde
``starobinsky`` V = V_0 (1 - exp(-sqrt(2/3) phi / M_Pl))^2 (leading order in 1/N_*)
                n_s = 1 - 2/N_*,  r = 12/N_*^2,  epsilon_1 = 3/(4 N_*^2),  V_* = V_0

For Starobinsky the leading order differs from first-order slow roll evaluated exactly on the
potential by O(ln N / N^2) in n_s and by O(ln N / N) in r (r is about 13 % high at N_* = 55;
checked in tests/test_spectra.py), irrelevant against current limits on r.

The running follows from d ln k = -dN_* (k_* grows as N_* falls): dn_s/dln k = -dn_s/dN_*,
giving -2/Ntilde^2 (quadratic) and -2/N_*^2 (Starobinsky); the running of running is
-4/Ntilde^3 and -4/N_*^3. The tensor tilt follows the consistency relation n_t = -r/8.

Amplitude: either given (``ln_1e10_As`` or ``A_s``), or derived from the potential's scale
parameter through the standard first-order slow-roll result

    A_s = V_* / (24 pi^2 M_Pl^4 epsilon_1)

which gives A_s = m^2 Ntilde^2 / (6 pi^2 M_Pl^2) for the quadratic potential and
A_s = V_0 N_*^2 / (18 pi^2 M_Pl^4) for Starobinsky.

``[slow_roll]`` keys: ``potential`` ("quadratic" or "starobinsky"), ``efolds`` (N_*, between 1
and 200), one amplitude among ``ln_1e10_As``, ``A_s``, ``mass`` (quadratic only, m in m_Pl) and
``vacuum_energy`` (Starobinsky only, V_0 in m_Pl^4), and ``pivot`` (k_* in Mpc^-1, default 0.05).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..config import Table
from ..errors import InputError
from ..units import REDUCED_PLANCK_MASS
from .powerlaw import DEFAULT_PIVOT, PowerLawSpectra

SLOW_ROLL_KEYS = (
    "potential",
    "efolds",
    "ln_1e10_As",
    "A_s",
    "mass",
    "vacuum_energy",
    "pivot",
)

_MPL2 = REDUCED_PLANCK_MASS**2
_MPL4 = REDUCED_PLANCK_MASS**4


@dataclass(frozen=True)
class SlowRollObservables:
    """First-order slow-roll observables at N_* e-folds for a unit potential scale."""

    efolds: float
    n_s: float
    running: float
    running_of_running: float
    r: float
    epsilon1: float


class Quadratic:
    """V = m^2 phi^2 / 2; scale parameter ``mass`` (m in units of m_Pl)."""

    NAME = "quadratic"
    SCALE_KEY = "mass"
    FORMULA = "V = m^2 phi^2 / 2"

    @staticmethod
    def observables(efolds: float) -> SlowRollObservables:
        nt = efolds + 0.5
        return SlowRollObservables(
            efolds=efolds,
            n_s=1.0 - 2.0 / nt,
            running=-2.0 / nt**2,
            running_of_running=-4.0 / nt**3,
            r=8.0 / nt,
            epsilon1=1.0 / (2.0 * nt),
        )

    @staticmethod
    def amplitude(scale: float, efolds: float) -> float:
        """A_s = V_*/(24 pi^2 M_Pl^4 eps_1) with V_* = 2 m^2 M_Pl^2 (N_* + 1/2)."""
        nt = efolds + 0.5
        v_star = 2.0 * scale**2 * _MPL2 * nt
        return v_star / (24.0 * math.pi**2 * _MPL4 * Quadratic.observables(efolds).epsilon1)


class Starobinsky:
    """V = V_0 (1 - exp(-sqrt(2/3) phi/M_Pl))^2; scale parameter ``vacuum_energy`` (V_0, m_Pl^4)."""

    NAME = "starobinsky"
    SCALE_KEY = "vacuum_energy"
    FORMULA = "V = V_0 (1 - exp(-sqrt(2/3) phi / M_Pl))^2"

    @staticmethod
    def observables(efolds: float) -> SlowRollObservables:
        n = efolds
        return SlowRollObservables(
            efolds=efolds,
            n_s=1.0 - 2.0 / n,
            running=-2.0 / n**2,
            running_of_running=-4.0 / n**3,
            r=12.0 / n**2,
            epsilon1=3.0 / (4.0 * n**2),
        )

    @staticmethod
    def amplitude(scale: float, efolds: float) -> float:
        """A_s = V_0/(24 pi^2 M_Pl^4 eps_1) at leading order (V_* = V_0)."""
        return scale / (24.0 * math.pi**2 * _MPL4 * Starobinsky.observables(efolds).epsilon1)


SLOW_ROLL_POTENTIALS = {cls.NAME: cls for cls in (Quadratic, Starobinsky)}


def slow_roll_spectra(
    potential: str,
    efolds: float,
    *,
    ln_1e10_As: float | None = None,
    scale: float | None = None,
    pivot: float = DEFAULT_PIVOT,
) -> PowerLawSpectra:
    """Power-law spectra predicted by ``potential`` at ``efolds`` e-folds.

    Give exactly one of ``ln_1e10_As`` and ``scale`` (the potential's scale parameter: m for
    quadratic, V_0 for Starobinsky, Planck units with m_Pl = 1).
    """
    if potential not in SLOW_ROLL_POTENTIALS:
        raise InputError(
            f"slow-roll potential '{potential}' is not known; allowed: "
            f"{', '.join(sorted(SLOW_ROLL_POTENTIALS))}"
        )
    if not (math.isfinite(efolds) and 1.0 <= efolds <= 200.0):
        raise InputError(f"'efolds' = {efolds!r} is out of range; allowed: >= 1 and <= 200")
    if (ln_1e10_As is None) == (scale is None):
        raise InputError("give exactly one of ln_1e10_As and the potential's scale parameter")
    pot = SLOW_ROLL_POTENTIALS[potential]
    obs = pot.observables(efolds)
    notes = [
        f"slow roll, {pot.FORMULA}, N_* = {efolds:g} e-folds at k_* = {pivot:g} Mpc^-1 "
        "(Encyclopaedia Inflationaris, arXiv:1303.3787)"
    ]
    if scale is not None:
        if not (math.isfinite(scale) and scale > 0):
            raise InputError(f"'{pot.SCALE_KEY}' must be > 0, got {scale!r}")
        a_s = pot.amplitude(scale, efolds)
        ln_1e10_As = math.log(1e10 * a_s)
        notes.append(
            f"A_s = V_*/(24 pi^2 M_Pl^4 epsilon_1) = {a_s:.4g} from {pot.SCALE_KEY} = {scale:.4g} "
            "(reduced Planck mass M_Pl)"
        )
    return PowerLawSpectra(
        ln_1e10_As=ln_1e10_As,
        n_s=obs.n_s,
        running=obs.running,
        running_of_running=obs.running_of_running,
        r=obs.r,
        n_t=None,
        pivot=pivot,
        label=f"{potential} slow roll, N_* = {efolds:g}",
        notes=tuple(notes),
    )


def slow_roll_from_config(config: Table) -> PowerLawSpectra:
    """Build the spectra of the ``[slow_roll]`` table of a run configuration."""
    table = config.table("slow_roll", SLOW_ROLL_KEYS, required=True)
    name = table.string("potential", choices=SLOW_ROLL_POTENTIALS)
    pot = SLOW_ROLL_POTENTIALS[name]
    efolds = table.number("efolds", minimum=1.0, maximum=200.0)
    pivot = table.positive("pivot", DEFAULT_PIVOT)
    wrong_scale = [c.SCALE_KEY for c in SLOW_ROLL_POTENTIALS.values() if c is not pot]
    for key in wrong_scale:
        if key in table:
            raise InputError(
                f"'{table.key(key)}' does not apply to potential '{name}'; "
                f"its scale parameter is '{pot.SCALE_KEY}'"
            )
    given = [k for k in ("ln_1e10_As", "A_s", pot.SCALE_KEY) if k in table]
    if len(given) != 1:
        raise InputError(
            f"[slow_roll] needs exactly one amplitude among 'ln_1e10_As', 'A_s' and "
            f"'{pot.SCALE_KEY}' (got {len(given)})"
        )
    if given[0] == "ln_1e10_As":
        return slow_roll_spectra(name, efolds, ln_1e10_As=table.number("ln_1e10_As"), pivot=pivot)
    if given[0] == "A_s":
        a_s = table.positive("A_s", what="a positive amplitude")
        return slow_roll_spectra(name, efolds, ln_1e10_As=math.log(1e10 * a_s), pivot=pivot)
    scale = table.positive(pot.SCALE_KEY)
    return slow_roll_spectra(name, efolds, scale=scale, pivot=pivot)
