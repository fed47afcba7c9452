"""Bounce models for sampling in physical parameters, background included.

One evaluation goes, for V = m^2 phi^2 / 2 or the Starobinsky plateau
V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi/M_Pl))^2 on the effective isotropic bounce (every
shipped potential with a transfer cache, :mod:`bouncelike.perturbations.transfer_backgrounds`):

1. background: the engine (:class:`bouncelike.background.isotropic.IsotropicDynamics`) from
   the bounce, :class:`~bouncelike.background.initial.BounceStart` with the potential fraction
   x_V = V(phi_B)/rho_c (phidot > 0; m^2 phi^2: phi_B > 0; Starobinsky: phi_B < 0, the field
   climbing the steep side towards the plateau -- the only bounces with 50-170 e-folds to the
   end of inflation, see transfer_backgrounds.py), to the end of inflation, read through its
   table view
   (:class:`bouncelike.background.table.BackgroundTable`, the one the spectra read). A
   background that fails or does not inflate, whose inflation does not end (2000 e-fold cap),
   or that inflates for fewer e-folds after the bounce than N_* raises
   :class:`~bouncelike.errors.NumericalFailure` (log-likelihood -inf, reason counted); a mass or
   critical density outside its physical range (:mod:`bouncelike.background.limits`) is an
   :class:`~bouncelike.errors.InputError`;
2. e-folds: bounce -> end of inflation, N_* from the parameters or from the reheating history
   (Liddle & Leach estimate, :func:`bouncelike.perturbations.mapping.liddle_leach_n_star`), and
   N_B* = (bounce -> end) - N_* with the comoving bounce scale k_LQC in Mpc^-1
   (:func:`bouncelike.perturbations.mapping.scale_map`; physics notes, section 5);
3. the standard (no-bounce) spectrum at the pivot's exit k_* = a_* H_*, read off the trajectory
   with the Hubble-flow parameters eps = -Hdot/H^2, eta = -phiddot/(H phidot) (Stewart & Lyth,
   Phys. Lett. B 302 (1993) 171, in the form of Lidsey et al., Rev. Mod. Phys. 69 (1997) 373,
   from memory; Planck units, m_Pl = 1, C = -2 + ln 2 + gamma_E):

       P_s = [1 - (2C + 1) eps + C eta]^2 H^4 / (4 pi^2 phidot^2)
       P_t = [1 - (C + 1) eps]^2 16 H^2 / pi
       n_s - 1 = 2 eta - 4 eps,   r = P_t / P_s  (tensor tilt by consistency, -r/8);

   running is not carried (second order in slow roll, ~ -7e-4 for this potential);
4. spectra: that power law times the cached transfer of the bounce through
   :class:`bouncelike.perturbations.transfer.BounceSpectraModel` of the potential's family
   (its public ``spectra`` and ``derived``), handing it the power-law numbers, log10 k_LQC, the
   potential fraction and any background quantity its ``parameter_names`` ask for (the
   conformal duration of the bounce-to-end stretch, ``log10_conformal_duration``, when the
   cache depends on it). A background the cache does not cover (its D, tilts or x_V outside
   the calibrated ranges, a window below where the state is set) is not evaluable.

Parameters (a prior file gives each as sampled or fixed)
--------------------------------------------------------
background (exactly one)  ``log10_potential_fraction``  log10 V(phi_B)/rho_c
                          ``N_inflation``  inflationary e-folds; the potential fraction is found
                          by a secant search (a few background runs); this is what a prior from
                          the oscillation phase of the contracting branch constrains
                          (``efolds_from_phase``)
inflaton                  ``mass`` (m_Pl units): m of m^2 phi^2, M of the Starobinsky plateau
bounce                    ``critical_density`` (Planck units; 0.40937 for gamma = 0.2375)
reheating (one choice)    ``N_star``, or ``equation_of_state`` w and ``log10_reheating_density``
                          (log10 rho_reh, Planck units)

Derived (stored with the samples when the prior lists them): ``N_inflation`` or
``log10_potential_fraction`` (whichever is not sampled), ``N_bounce_end`` (e-folds bounce -> end
of inflation), ``N_star`` (when reheating fixes it), ``N_B_star``, ``log10_k_lqc``,
``ln_1e10_As``, ``A_s``, ``n_s``, ``r``, ``epsilon_star``, ``x_window_min`` and ``certified``
(1 where the cached transfer is certified over the observable window).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import InputError, NumericalFailure

PIVOT = 0.05
#: C = -2 + ln 2 + Euler's gamma (Stewart & Lyth 1993)
C_SL = -2.0 + math.log(2.0) + 0.5772156649015329
BACKGROUND_CHOICES = ("log10_potential_fraction", "N_inflation")
REHEATING_KEYS = ("N_star", "equation_of_state", "log10_reheating_density")
#: fast-model parameters this module supplies itself
_SUPPLIED = ("ln_1e10_As", "n_s", "r", "log10_k_lqc")


class _PhysicalBounce:
    prescription = ""
    state = "remote_past"
    #: the potential family (transfer cache) and the side of the field at the bounce
    potential = "quadratic"
    field_sign = 1
    parameter_names = ("log10_potential_fraction", "N_inflation", "mass", "critical_density",
                       "N_star", "equation_of_state", "log10_reheating_density")
    optional_parameter_names = ("log10_potential_fraction", "N_inflation", "N_star",
                                "equation_of_state", "log10_reheating_density")
    derived_names = ("log10_potential_fraction", "N_inflation", "N_bounce_end", "N_star",
                     "N_B_star", "log10_k_lqc", "log10_conformal_duration", "ln_1e10_As",
                     "A_s", "n_s", "r", "epsilon_star", "x_window_min", "certified")
    labels = {
        "log10_potential_fraction": r"\log_{10}(V_B/\rho_c)", "N_inflation": r"N_\mathrm{inf}",
        "mass": r"m/m_\mathrm{Pl}", "critical_density": r"\rho_c", "N_star": "N_*",
        "equation_of_state": r"w_\mathrm{reh}",
        "log10_reheating_density": r"\log_{10}\rho_\mathrm{reh}",
        "N_bounce_end": r"N_{B,\mathrm{end}}", "N_B_star": r"N_{B*}",
        "log10_k_lqc": r"\log_{10}(k_\mathrm{LQC}/\mathrm{Mpc}^{-1})",
        "log10_conformal_duration": r"\log_{10} D", "ln_1e10_As": r"\ln(10^{10} A_s)",
        "A_s": "A_s", "n_s": "n_s", "r": "r", "epsilon_star": r"\epsilon_*",
        "x_window_min": r"k_\mathrm{min}/k_\mathrm{LQC}", "certified": r"\mathrm{certified}",
    }

    def __init__(self) -> None:
        self._fast_model: Any = None
        self._last: tuple[Any, dict[str, float]] | None = None

    def __getstate__(self) -> dict[str, Any]:
        return {}  # workers rebuild the cached transfer

    def __setstate__(self, state: dict[str, Any]) -> None:
        self._fast_model = None
        self._last = None

    # -- prior checks ---------------------------------------------------------------------
    def check_prior(self, names: Any) -> None:
        """The prior gives exactly one background choice and one reheating choice."""
        names = set(names)
        bg = [n for n in BACKGROUND_CHOICES if n in names]
        if len(bg) != 1:
            raise InputError(f"model '{self.name}' needs exactly one of [parameters."
                             "log10_potential_fraction] or [parameters.N_inflation] (sampled "
                             f"or fixed); got {', '.join(bg) or 'neither'}")
        reh = [n for n in REHEATING_KEYS if n in names]
        if reh not in (["N_star"], ["equation_of_state", "log10_reheating_density"]):
            raise InputError(f"model '{self.name}' needs [parameters.N_star], or both "
                             "[parameters.equation_of_state] and "
                             "[parameters.log10_reheating_density]; got "
                             f"{', '.join(reh) or 'none'}")

    # -- evaluation -----------------------------------------------------------------------
    def _fast(self) -> Any:
        if self._fast_model is None:
            from ..perturbations.transfer import BounceSpectraModel

            self._fast_model = BounceSpectraModel(prescription=self.prescription, pivot=PIVOT,
                                                  state=self.state, potential=self.potential)
        return self._fast_model

    def spectra(self, p: dict[str, float]) -> Any:
        fast_params, _ = self._evaluate(p)
        return self._fast().spectra(fast_params)

    def derived(self, p: dict[str, float]) -> dict[str, float]:
        return dict(self._evaluate(p)[1])

    def _evaluate(self, p: dict[str, float]) -> tuple[dict[str, float], dict[str, float]]:
        key = tuple(sorted(p.items()))
        if self._last is not None and self._last[0] == key:
            return self._last[1]
        out = self._compute(p)
        self._last = (key, out)
        return out

    def _compute(self, p: dict[str, float]) -> tuple[dict[str, float], dict[str, float]]:
        from ..background.limits import check_critical_density, check_mass
        from ..background.potentials import POTENTIALS
        from ..perturbations.mapping import liddle_leach_n_star, scale_map

        mass = check_mass(float(p["mass"]), "mass", zero=False)
        rho_c = check_critical_density(p["critical_density"], "critical_density")
        pot = POTENTIALS[self.potential](mass=mass)
        dyn = _dynamics(rho_c)
        if "N_inflation" in p:
            lx = _potential_fraction_for(dyn, pot, p["N_inflation"], self.field_sign)
        else:
            lx = p["log10_potential_fraction"]
        tab = _background(dyn, pot, lx, self.field_sign)
        if "N_star" in p:
            n_star = p["N_star"]
        else:
            n_star = liddle_leach_n_star(tab, p["equation_of_state"],
                                         10.0 ** p["log10_reheating_density"], PIVOT)
        n_be = tab.efolds_bounce_to_end
        if not n_star < n_be:
            raise NumericalFailure(f"too little inflation: {n_be:.3g} e-folds from the bounce to "
                                   f"the end of inflation, not more than N_* = {n_star:.3g}")
        sm = scale_map(tab, n_star, PIVOT)
        obs = pivot_observables(tab, sm.ln_a_pivot)
        log10_k = float(sm.ln_k_lqc_mpc) / math.log(10.0)
        fast_params = {"ln_1e10_As": obs["ln_1e10_As"], "n_s": obs["n_s"], "r": obs["r"],
                       "log10_k_lqc": log10_k, "log10_potential_fraction": lx}
        extra = [n for n in self._fast().parameter_names if n not in _SUPPLIED]
        log10_d = math.nan
        for name in extra:
            if name == "log10_conformal_duration":
                from ..perturbations.transfer import conformal_duration

                log10_d = math.log10(conformal_duration(tab))
                fast_params[name] = log10_d
            else:  # pragma: no cover - a new cache dependence needs its glue here
                raise NumericalFailure(f"the bounce transfer asks for '{name}', which the "
                                       "physical model does not supply")
        fd = self._fast().derived(fast_params)
        derived = {
            "log10_potential_fraction": lx,
            "N_inflation": tab.summary.inflationary_efolds,
            "N_bounce_end": n_be,
            "N_star": n_star, "N_B_star": sm.n_bounce_pivot, "log10_k_lqc": log10_k,
            "log10_conformal_duration": log10_d,
            "ln_1e10_As": obs["ln_1e10_As"], "A_s": obs["A_s"], "n_s": obs["n_s"],
            "r": obs["r"], "epsilon_star": obs["epsilon"],
            "x_window_min": float(fd["x_window_min"]), "certified": float(bool(fd["certified"])),
        }
        return fast_params, derived


class PhysicalBounceDressedMetric(_PhysicalBounce):
    name = "bounce_physical_dressed_metric"
    prescription = "dressed_metric"


class PhysicalBounceDeformedAlgebra(_PhysicalBounce):
    name = "bounce_physical_deformed_algebra"
    prescription = "deformed_algebra"


class PhysicalBounceNonOscillating(PhysicalBounceDressedMetric):
    """Non-oscillating vacuum set around the bounce (perturbations/states_window.py)."""

    name = "bounce_physical_dressed_metric_non_oscillating"
    state = "non_oscillating"


class PhysicalBounceLowEnergy(PhysicalBounceDressedMetric):
    """State of low energy set around the bounce (perturbations/states_window.py)."""

    name = "bounce_physical_dressed_metric_low_energy"
    state = "low_energy"


class PhysicalBounceStarobinsky(PhysicalBounceDressedMetric):
    """Starobinsky plateau, remote-past state (not set below 0.363 k_LQC on these bounces: a
    window or a large-scale term reaching there is not evaluable)."""

    name = "bounce_physical_dressed_metric_starobinsky"
    potential = "starobinsky"
    field_sign = -1
    labels = {**_PhysicalBounce.labels, "mass": r"M/m_\mathrm{Pl}"}


class PhysicalBounceStarobinskyNonOscillating(PhysicalBounceStarobinsky):
    """Starobinsky plateau, non-oscillating vacuum set around the bounce (certified from
    0.01 k_LQC on these bounces)."""

    name = "bounce_physical_dressed_metric_non_oscillating_starobinsky"
    state = "non_oscillating"


class PhysicalBounceStarobinskyLowEnergy(PhysicalBounceStarobinsky):
    """Starobinsky plateau, state of low energy set around the bounce (certified from
    0.1 k_LQC on these bounces)."""

    name = "bounce_physical_dressed_metric_low_energy_starobinsky"
    state = "low_energy"


class PhysicalBounceStarobinskyDeformedAlgebra(PhysicalBounceStarobinsky):
    """Starobinsky plateau, deformed-algebra modes (cached from 3 k_LQC only on these
    bounces)."""

    name = "bounce_physical_deformed_algebra_starobinsky"
    prescription = "deformed_algebra"


_DYNAMICS: dict[float, Any] = {}


def _dynamics(rho_c: float) -> Any:
    from ..background.isotropic import IsotropicDynamics

    if rho_c not in _DYNAMICS:
        if len(_DYNAMICS) > 64:
            _DYNAMICS.clear()
        _DYNAMICS[rho_c] = IsotropicDynamics(rho_c)
    return _DYNAMICS[rho_c]


def _settings() -> Any:
    from ..background.initial import IntegrationSettings

    # an inflationary cap far above any window placement
    return IntegrationSettings(dense_points=0, max_inflation_efolds=2000.0)


def _background(dyn: Any, pot: Any, log10_fraction: float, field_sign: int = 1) -> Any:
    """The table view from the bounce to the end of inflation; NumericalFailure unless
    inflation starts and ends."""
    from ..background.initial import BounceStart

    if not log10_fraction < 0:
        raise InputError(f"'log10_potential_fraction' = {log10_fraction:g} is out of range; "
                         "allowed: < 0")
    tab = dyn.table(pot, BounceStart(10.0 ** log10_fraction, 1, field_sign), extra_efolds=0.0,
                    settings=_settings())
    if tab.summary.status != "inflated":
        raise NumericalFailure(f"background {tab.summary.status}: {tab.summary.message}")
    return tab


def _inflation_efolds(dyn: Any, pot: Any, log10_fraction: float, field_sign: int = 1) -> float:
    from ..background.initial import BounceStart

    s = dyn.evolve_summary(pot, BounceStart(10.0 ** log10_fraction, 1, field_sign), _settings())
    return s.inflationary_efolds


#: first guess of the search (only its speed depends on it): log10 x_V as a cubic in ln N,
#: fitted to engine runs with m = 1.2e-6 and rho_c = 0.40937 over N = 58-580 (to 0.02 in
#: log10 x_V), moved to other m and rho_c at fixed x_V rho_c / m^2 (fixed phi_B; ~3% in N)
_GUESS_CUBIC = (0.09624572, -1.69551587, 10.56438882, -33.35804853)
_GUESS_REF = (1.2e-6, 0.40937)
#: the same for the Starobinsky plateau (phi_B < 0): log10 x_V linear in ln N through the
#: engine runs N = 162 at 1e-8 and 50.2 at 1e-7 (M = 2.5e-6, rho_c = 0.40937)
_GUESS_STAROBINSKY = (-0.8547, -3.6473)


def _first_guess(pot: Any, rc: float, ln_t: float) -> tuple[float, float]:
    """(log10 x_V, d ln N / d log10 x_V) to start the search from."""
    if getattr(pot, "name", "") == "starobinsky":
        return float(np.polyval(_GUESS_STAROBINSKY, ln_t)), 1.0 / _GUESS_STAROBINSKY[0]
    m_ref, rc_ref = _GUESS_REF
    x0 = (float(np.polyval(_GUESS_CUBIC, ln_t)) + 2 * math.log10(float(pot.mass) / m_ref)
          - math.log10(rc / rc_ref))
    return x0, 1.0 / max(float(np.polyval(np.polyder(_GUESS_CUBIC), ln_t)), 1e-3)


def _potential_fraction_for(dyn: Any, pot: Any, n_target: float, field_sign: int = 1,
                            tol: float = 5e-4) -> float:
    """log10 x_V giving ``n_target`` inflationary e-folds (secant in ln N vs log10 x_V), to
    ``tol`` in ln N (0.07 e-folds at N = 140; the stored N_inflation is the exact count of the
    background used).

    Deterministic: the result depends on (N, m, rho_c) only, never on earlier evaluations, so
    chains do not depend on the pool or on the order of evaluation. N grows monotonically with
    x_V over the inflating range (m^2 phi^2; for the Starobinsky bounces with phi_B < 0 it falls
    with x_V: the slope's sign is read off the first two runs).
    """
    if not n_target > 1:
        raise InputError(f"'N_inflation' = {n_target:g} is out of range; allowed: > 1")
    ln_t = math.log(n_target)
    x0, slope0 = _first_guess(pot, float(dyn.critical_density), ln_t)
    x0 = min(x0, -1e-3)
    increasing = slope0 > 0

    def f(lx: float) -> float:
        return math.log(max(_inflation_efolds(dyn, pot, lx, field_sign), 1e-3)) - ln_t

    f0 = f(x0)
    if abs(f0) < tol:
        return x0
    x1 = min(x0 - f0 / slope0, -1e-6)
    f1 = f(x1)
    for _ in range(30):
        if abs(f1) < tol:
            return x1
        slope = (f1 - f0) / (x1 - x0) if x1 != x0 else 0.0
        if (slope > 0) == increasing and slope != 0:
            step = -f1 / slope
        else:  # a flat or wrong-signed secant: a fixed step towards the target
            step = 0.3 * (-1 if (f1 > 0) == increasing else 1)
        x0, f0 = x1, f1
        x1 = min(x1 + max(min(step, 2.0), -2.0), -1e-6)
        f1 = f(x1)
    raise NumericalFailure(f"no potential fraction gives N_inflation = {n_target:g}")


def pivot_observables(tab: Any, ln_a_pivot: float) -> dict[str, float]:
    """Standard spectra at the pivot's exit (ln a = ``ln_a_pivot``, after the bounce)."""
    ib = tab.bounce_index() if tab.has_bounce else 0
    ln_a = tab.ln_a[ib + 1:]
    order = np.argsort(ln_a)
    la = ln_a[order]

    def at(arr: np.ndarray) -> float:
        return float(np.interp(ln_a_pivot, la, np.asarray(arr)[ib + 1:][order]))

    H, Hdot, phidot, phiddot = at(tab.H), at(tab.Hdot), at(tab.phidot), at(tab.phiddot)
    if not (H > 0 and phidot != 0):
        raise NumericalFailure("pivot exit outside the inflationary stretch")
    eps = -Hdot / H**2
    eta = -phiddot / (H * phidot)
    if not 0 < eps < 1:
        raise NumericalFailure(f"pivot exit not during inflation (epsilon_H = {eps:.3g})")
    p_s = (1 - (2 * C_SL + 1) * eps + C_SL * eta) ** 2 * H**4 / (4 * math.pi**2 * phidot**2)
    p_t = (1 - (C_SL + 1) * eps) ** 2 * 16 * H**2 / math.pi
    return {"A_s": p_s, "ln_1e10_As": math.log(1e10 * p_s), "n_s": 1 + 2 * eta - 4 * eps,
            "r": p_t / p_s, "epsilon": eps, "H": H}
