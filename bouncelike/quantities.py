"""Declarations of the physical quantities shared by several layers: one name, unit, range and
label per quantity (see :class:`bouncelike.config.Parameter`).

A quantity that several models, configuration sections or prior files use is declared here once;
a quantity that belongs to one model is declared in that model's module. The names are the
spellings used everywhere: configuration keys, prior-file parameters, chain columns, figure
labels (``N_star`` for N_*, ``start_density`` for the density where the contracting branch
starts, ``log10_reheating_density`` for the reheating density, ...).

Ranges are the physically meaningful ones; the reason is carried by ``why`` and printed with
every out-of-range message. Where a range is a generous choice of ours rather than a law, the
text says so.

Pivot scale. :data:`PIVOT` = 0.05 Mpc^-1 is the one default pivot of the package (Planck 2018
convention, physics notes section 0); published constraint sets carry their own pivot.
"""

from __future__ import annotations

import math

from .config import Parameter

#: The default pivot scale k_* in Mpc^-1 (Planck 2018 convention; physics notes section 0).
PIVOT = 0.05

#: ln(1e10): ln(1e10 A_s) = ln A_s + LN_1E10.
LN_1E10 = math.log(1e10)

# -- the primordial spectra at a pivot -------------------------------------------------------

PIVOT_SCALE = Parameter(
    "pivot", "pivot wavenumber k_* at which the spectra are quoted", "Mpc^-1",
    1e-5, 1.0, why="a decade beyond the observable window 1e-4 - 0.2 Mpc^-1 on either side, "
    "physics notes section 5; a pivot elsewhere is not constrained by CMB data",
    label=r"k_*", default=PIVOT)
LN_AMPLITUDE = Parameter(
    "ln_1e10_As", "scalar amplitude at the pivot, ln(1e10 A_s)", "",
    -LN_1E10, LN_1E10, why="A_s between 1e-20 and 1: perturbation theory needs A_s << 1, and "
    "below 1e-20 (eleven decades under the measured 2.1e-9) no anisotropy is sourced; a "
    "generous window of ours",
    label=r"\ln(10^{10} A_s)")
AMPLITUDE = Parameter(
    "A_s", "scalar amplitude at the pivot", "", 1e-20, 1.0,
    why="perturbation theory needs A_s << 1; below 1e-20 no anisotropy is sourced (a generous "
    "window of ours)", label="A_s")
TILT = Parameter(
    "n_s", "scalar spectral index at the pivot", "", 0.0, 2.0,
    why="|n_s - 1| <= 1: a tilt of one changes P_s by seven decades across the observable "
    "window, far from any scale-invariant spectrum the data describe", label="n_s")
RUNNING = Parameter(
    "running", "running of the scalar index, dn_s/dln k, at the pivot", "", -1.0, 1.0,
    why="the expansion in ln(k/k_*) is used across the observable window, |ln(k/k_*)| < 7, "
    "where a larger running is no longer a small correction",
    label=r"\mathrm{d}n_s/\mathrm{d}\ln k")
RUNNING_OF_RUNNING = Parameter(
    "running_of_running", "running of the running, d^2 n_s/dln k^2, at the pivot", "", -1.0,
    1.0, why="as for the running", label=r"\mathrm{d}^2 n_s/\mathrm{d}\ln k^2")
TENSOR_RATIO = Parameter(
    "r", "tensor-to-scalar ratio P_t/P_s at the pivot", "", 0.0, 16.0,
    why="r = 16 epsilon_1 < 16 while inflation lasts, epsilon_1 < 1 at first order in slow "
    "roll",
    label="r")
TENSOR_TILT = Parameter(
    "n_t", "tensor spectral index at the pivot", "", -2.0, 2.0,
    why="n_t = -2 epsilon_1 > -2 in inflation; the same width on the blue side", label="n_t")

SPECTRAL = (LN_AMPLITUDE, TILT, RUNNING, RUNNING_OF_RUNNING, TENSOR_RATIO)

# -- reheating: N_* and the history that fixes it ---------------------------------------------

N_STAR = Parameter(
    "N_star", "e-folds from the exit of the pivot scale to the end of inflation, N_*",
    "e-folds", 1.0, 200.0, why="the pivot must leave the Hubble radius during inflation; no "
    "reheating history gives more than ~100 e-folds, Liddle & Leach PRD 68 103503, and 200 is "
    "a generous cap", label="N_*")
EQUATION_OF_STATE = Parameter(
    "equation_of_state", "mean equation of state w of the reheating era", "", -1.0 / 3.0, 1.0,
    lower_open=True, why="reheating is not inflation, w > -1/3, and w <= 1 by causality",
    label=r"w_\mathrm{reh}")
LOG10_REHEATING_DENSITY = Parameter(
    "log10_reheating_density", "log10 of the density rho_reh at the end of reheating",
    "log10 Planck density", -88.0, 0.0,
    why="below the Planck density and above ~1e-88, a reheating temperature above ~1 MeV "
    "before big-bang nucleosynthesis, common practice; also at most the density at the end of "
    "inflation, checked on each background", label=r"\log_{10}\rho_\mathrm{reh}")
THERMAL_DEGREES_OF_FREEDOM = Parameter(
    "thermal_degrees_of_freedom", "relativistic degrees of freedom g_th thermalised at the end "
    "of reheating (the term -(1/12) ln g_th of the N_* relation)", "", 1.0, 1e5,
    why="106.75, the default, has every Standard Model particle relativistic, Kolb & Turner "
    "ch. 3; 1e5 covers any extension", label=r"g_\mathrm{th}", default=106.75)
HUBBLE_CONSTANT = Parameter(
    "hubble_constant", "H_0, for a_0 H_0 in the N_* relation (default: astropy Planck18)",
    "km/s/Mpc", 20.0, 150.0, why="a generous window around every measurement (~67-73)",
    label="H_0")

REHEATING = (N_STAR, EQUATION_OF_STATE, LOG10_REHEATING_DENSITY, THERMAL_DEGREES_OF_FREEDOM)

# -- inflaton potentials ----------------------------------------------------------------------

_SUB_PLANCKIAN = ("an effective inflaton far below the Planck mass; the measured A_s = 2.1e-9 "
                  "asks for ~1e-6")
QUADRATIC_MASS = Parameter(
    "mass", "inflaton mass m of V = m^2 phi^2 / 2 (0: a free massless field, which never "
    "inflates)", "m_Pl", 0.0, 0.1, why=_SUB_PLANCKIAN, label=r"m/m_\mathrm{Pl}")
STAROBINSKY_MASS = Parameter(
    "mass", "mass scale M of V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi/M_Pl))^2 (its mass "
    "at the minimum)", "m_Pl", 0.0, 0.1, lower_open=True, why=_SUB_PLANCKIAN,
    label=r"M/m_\mathrm{Pl}")

# -- the bounce -------------------------------------------------------------------------------

BARBERO_IMMIRZI = Parameter(
    "gamma", "Barbero-Immirzi parameter; rho_c = sqrt(3)/(32 pi^2 gamma^3)", "", 0.0, 10.0,
    lower_open=True, upper_open=True,
    why="0.2375 from black-hole entropy counting, from memory; above 10 the bounce would sit "
    "below 5.5e-6 Planck densities, among the inflaton's energies", label=r"\gamma",
    default=0.2375)
CRITICAL_DENSITY = Parameter(
    "critical_density", "critical (maximum) density rho_c of the effective bounce",
    "Planck density", 1e-10, 1e6,
    why="the effective theories describe a bounce near the Planck density, rho_c = 0.40937 for "
    "gamma = 0.2375, Ashtekar & Singh 2011; below 1e-10 the bounce sits at the energy of the "
    "inflaton potentials and its time scales exceed any integration budget, above 1e6 the "
    "densities are far beyond the Planck scale the equations are written for",
    label=r"\rho_c")
START_DENSITY = Parameter(
    "start_density", "density rho_0 where the contracting branch starts (for a phase prior: "
    "the top of the rho_0 window)", "Planck density", 0.0, 1.0, lower_open=True,
    upper_open=True, why="the contracting branch starts below the critical density",
    label=r"\rho_0", default=1e-16)
START_DENSITY_DECADES = Parameter(
    "start_density_decades", "width in decades of the log-uniform rho_0 window below "
    "start_density (0: one fixed surface)", "decades", 0.0, 10.0,
    why="the distribution converges within two decades, physics notes section 2; ten is "
    "ample", label=r"\Delta\log_{10}\rho_0", default=2.0)
POTENTIAL_FRACTION = Parameter(
    "potential_fraction", "fraction of the bounce density in the potential, V(phi_B)/rho_c",
    "", 0.0, 1.0, why="rho = rho_c at the bounce and the kinetic energy is not negative",
    label=r"V_B/\rho_c")
LOG10_POTENTIAL_FRACTION = Parameter(
    "log10_potential_fraction", "log10 of the bounce potential fraction V(phi_B)/rho_c", "",
    -60.0, 0.0, upper_open=True, why="V_B < rho_c (a kinetic bounce); below 1e-60 the field "
    "is too close to the minimum to inflate at all", label=r"\log_{10}(V_B/\rho_c)")
N_INFLATION = Parameter(
    "N_inflation", "e-folds of inflation after the bounce", "e-folds", 1.0, 2000.0,
    lower_open=True, upper_open=True, why="the background is integrated up to a cap of 2000 "
    "inflationary e-folds", label=r"N_\mathrm{inf}")
N_BOUNCE_END = Parameter(
    "N_bounce_end", "e-folds from the bounce to the end of inflation", "e-folds",
    label=r"N_{B,\mathrm{end}}")
N_BOUNCE_PIVOT = Parameter(
    "N_B_star", "e-folds from the bounce to the exit of the pivot scale, N_B*", "e-folds",
    label=r"N_{B*}")
LOG10_BOUNCE_SCALE = Parameter(
    "log10_k_lqc", "log10 of the comoving bounce scale k_LQC", "log10 Mpc^-1", -300.0, 300.0,
    why="k_LQC must be a positive finite wavenumber", label=r"\log_{10}(k_\mathrm{LQC}/"
    r"\mathrm{Mpc}^{-1})")
WINDOW_IN_BOUNCE_UNITS = Parameter(
    "x_window_min", "the low end of the observable window in units of the bounce scale, "
    "1e-4 Mpc^-1 / k_LQC", "", label=r"k_\mathrm{min}/k_\mathrm{LQC}")
EPSILON_STAR = Parameter(
    "epsilon_star", "first Hubble-flow parameter -Hdot/H^2 at the exit of the pivot", "",
    label=r"\epsilon_*")
LOG10_CONFORMAL_DURATION = Parameter(
    "log10_conformal_duration", "log10 of D = k_LQC x conformal time from the bounce to the "
    "end of inflation (sets the frequency of the bounce features)", "", label=r"\log_{10} D")
CERTIFIED = Parameter(
    "certified", "1 when the whole observable window lies where the cached transfer is "
    "certified", "", label=r"\mathrm{certified}")


def bounce_scale(critical_density: float, potential_at_bounce: float = 0.0,
                 scale_factor: float = 1.0) -> float:
    """k_LQC = sqrt(a''/a) at the bounce = a_B sqrt(8 pi G (rho_c - V_B)), Planck units.

    The characteristic scale of the bounce (Agullo, Ashtekar & Nelson; physics notes,
    section 4): 3.2076 for a_B = 1, V_B = 0 and rho_c = 0.40937.
    """
    return scale_factor * math.sqrt(8.0 * math.pi * (critical_density - potential_at_bounce))


def ln_pivot_over_bounce_scale(n_bounce_pivot: float, hubble_at_exit: float,
                               critical_density: float, potential_at_bounce: float = 0.0
                               ) -> float:
    """ln(k_*/k_LQC) = N_B* + ln(H_* / sqrt(8 pi (rho_c - V_B))), independent of a_B.

    With a_* H_* = k_* (the pivot's exit) and a_* = a_B e^(N_B*) (physics notes, section 5).
    """
    return n_bounce_pivot + math.log(hubble_at_exit
                                     / bounce_scale(critical_density, potential_at_bounce))


def n_bounce_pivot(ln_pivot_over_k_lqc: float, hubble_at_exit: float, critical_density: float,
                   potential_at_bounce: float = 0.0) -> float:
    """N_B* = ln(k_*/k_LQC) - ln(H_* / sqrt(8 pi (rho_c - V_B))): the inverse of
    :func:`ln_pivot_over_bounce_scale` (physics notes, section 5)."""
    return ln_pivot_over_k_lqc - math.log(hubble_at_exit
                                          / bounce_scale(critical_density, potential_at_bounce))
