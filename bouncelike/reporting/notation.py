"""One name per quantity: the symbols and units every figure, table and text of a report uses.

Spectra are P_s (scalar, the comoving curvature perturbation) and P_t (tensor), as in the rest
of the package. Masses are in units of the Planck mass m_Pl (non-reduced, G = 1), densities in
m_Pl^4 (Planck units), comoving wavenumbers in Mpc^-1. A parameter the table below does not
know keeps the label of its prior file and is treated as dimensionless.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

PLANCK_MASS = r"m_\mathrm{Pl}"
#: name -> (symbol, unit) in mathtext, without dollar signs.
SYMBOLS: dict[str, tuple[str, str]] = {
    "ln_1e10_As": (r"\ln(10^{10} A_s)", ""),
    "A_s": ("A_s", ""),
    "n_s": ("n_s", ""),
    "r": ("r", ""),
    "n_t": ("n_t", ""),
    "running": (r"\mathrm{d}n_s/\mathrm{d}\ln k", ""),
    "running_of_running": (r"\mathrm{d}^2 n_s/\mathrm{d}\ln k^2", ""),
    "N_star": ("N_*", ""),
    "N_inflation": (r"N_\mathrm{inf}", ""),
    "N_bounce_end": (r"N_{B,\mathrm{end}}", ""),
    "N_B_star": (r"N_{B*}", ""),
    "log10_k_lqc": (r"\log_{10}(k_\mathrm{LQC}/\mathrm{Mpc}^{-1})", ""),
    "log10_potential_fraction": (r"\log_{10}(V_B/\rho_c)", ""),
    "critical_density": (r"\rho_c", PLANCK_MASS + "^4"),
    "equation_of_state": (r"w_\mathrm{reh}", ""),
    "log10_reheating_density": (r"\log_{10}(\rho_\mathrm{reh}/" + PLANCK_MASS + "^4)", ""),
    "epsilon_star": (r"\epsilon_*", ""),
    "x_window_min": (r"k_\mathrm{min}/k_\mathrm{LQC}", ""),
    "mass": ("m", PLANCK_MASS),
}
SCALAR_SPECTRUM = r"$\mathcal{P}_s(k)$"
TENSOR_SPECTRUM = r"$\mathcal{P}_t(k)$"
WAVENUMBER = r"$k\ [\mathrm{Mpc}^{-1}]$"


def symbol(name: str, prior_label: str = "") -> tuple[str, str]:
    """(symbol, unit) of a parameter (the prior's label for names the table lacks).

    The mass scale of a potential keeps the symbol its model gives it (m for m^2 phi^2, M for
    the plateau) and the unit m_Pl."""
    if name == "mass" and prior_label:
        head = prior_label.split("/")[0].strip()
        return (head or "m"), PLANCK_MASS
    if name in SYMBOLS:
        return SYMBOLS[name]
    return (prior_label or name.replace("_", r"\_")), ""


def scale_exponent(values: Any) -> int:
    """Power of ten to factor out of an axis (0 unless numbers are below 1e-3 or >= 1e4)."""
    x = np.asarray(values, dtype=float)
    x = np.abs(x[np.isfinite(x) & (x != 0)])
    if x.size == 0:
        return 0
    m = float(np.median(x))
    if 1e-3 <= m < 1e4:
        return 0
    return int(math.floor(math.log10(m)))


def axis_label(name: str, prior_label: str = "", exponent: int = 0) -> str:
    """'$m\\ [10^{-6}\\,m_\\mathrm{Pl}]$': symbol with the unit and any factored-out power."""
    sym, unit = symbol(name, prior_label)
    parts = []
    if exponent:
        parts.append(f"10^{{{exponent}}}")
    if unit:
        parts.append(unit)
    if not parts:
        return f"${sym}$"
    joined = r"\,".join(parts)
    return f"${sym}\\ [{joined}]$"


def inline(name: str, prior_label: str = "") -> str:
    """The symbol in mathtext, for titles and captions."""
    return f"${symbol(name, prior_label)[0]}$"


def model_title(prior: Any, model_name: str) -> str:
    """The human title of a run's model (its prior file's title, else the model name)."""
    return (getattr(prior, "title", "") or model_name.replace("_", " ")).strip()


def set_label(s: Any) -> str:
    """Short human title of a constraint set (object or its dictionary)."""
    if isinstance(s, dict):
        return s.get("label") or s.get("title") or s.get("name", "")
    return getattr(s, "short_title", "") or s.title
