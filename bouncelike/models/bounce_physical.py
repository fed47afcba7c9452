"""Bounce models in physical parameters, background included: the one chain
background -> e-folds -> N_* -> N_B* -> k_LQC -> pivot spectrum -> transfer.

One evaluation goes, for V = m^2 phi^2 / 2 or the Starobinsky plateau
V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi/M_Pl))^2 on the effective isotropic bounce (every
shipped potential with a transfer cache, :mod:`bouncelike.perturbations.transfer_backgrounds`):

1. background: the engine from the bounce, x_V = V(phi_B)/rho_c (phidot > 0; m^2 phi^2:
   phi_B > 0; Starobinsky: phi_B < 0, the field climbing the steep side towards the plateau --
   the only bounces with 50-170 e-folds to the end of inflation, transfer_backgrounds.py), to
   the end of inflation, read through its table view (:mod:`.inflation_search`; for a given
   N_inflation the potential fraction is found there by a secant search). A background that
   fails or does not inflate, whose inflation does not end (2000 e-fold cap), or that
   inflates for fewer e-folds after the bounce than N_* raises
   :class:`~bouncelike.errors.NumericalFailure`
   (log-likelihood -inf, reason counted); a mass or critical density outside its declared
   range is an :class:`~bouncelike.errors.InputError`;
2. e-folds: bounce -> end of inflation, N_* given or from the reheating history
   (:mod:`.reheating`, the Liddle & Leach relation), and N_B* = (bounce -> end) - N_* with the
   comoving bounce scale k_LQC in Mpc^-1 (:func:`bouncelike.perturbations.mapping.scale_map`;
   physics notes, section 5);
3. the standard (no-bounce) spectrum at the pivot's exit k_* = a_* H_*, at next-to-leading
   order in the Hubble-flow parameters (Stewart & Lyth; :mod:`.pivot`);
4. spectra: that power law times the cached transfer of the bounce
   (:class:`bouncelike.perturbations.transfer_model.BounceSpectraModel` of the potential's
   family), handed the power-law numbers, log10 k_LQC, the bounce potential fraction and any
   background quantity its ``parameter_names`` ask for (the conformal duration of the
   bounce-to-end stretch, ``log10_conformal_duration``). A background the cache does not cover
   (its D, tilts or x_V outside the calibrated ranges, a window below where the state is set)
   is not evaluable.

Parameters (a prior file gives each as sampled or fixed; a configuration gives them in
``[bounce_physical]`` and ``[reheating]``)
-----------------------------------------------------------------------------------------
background (exactly one)  ``log10_potential_fraction``  log10 V(phi_B)/rho_c
                          ``N_inflation``  inflationary e-folds; this is what a prior from
                          the oscillation phase of the contracting branch constrains
                          (``efolds_from_phase``)
inflaton                  ``mass`` (m_Pl units): m of m^2 phi^2, M of the Starobinsky plateau
bounce                    ``critical_density`` (Planck units; 0.40937 for gamma = 0.2375)
reheating (one choice)    ``N_star``, or ``equation_of_state`` w and ``log10_reheating_density``
                          (log10 rho_reh, Planck units) and optionally
                          ``thermal_degrees_of_freedom``

Derived (stored with the samples when the prior lists them): ``N_inflation`` or
``log10_potential_fraction`` (whichever is not sampled), ``N_bounce_end`` (e-folds bounce -> end
of inflation), ``N_star`` (when reheating fixes it), ``N_B_star``, ``log10_k_lqc``,
``ln_1e10_As``, ``A_s``, ``n_s``, ``r``, ``epsilon_star``, ``x_window_min`` and ``certified``
(1 where the cached transfer is certified over the observable window).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ..background.limits import check_critical_density, check_mass
from ..background.potentials import Quadratic, Starobinsky
from ..config import Table, read_parameters
from ..errors import InputError, NumericalFailure
from ..perturbations.mapping import scale_map
from ..perturbations.transfer import conformal_duration
from ..perturbations.transfer_model import BounceSpectraModel
from ..quantities import (
    AMPLITUDE,
    CERTIFIED,
    CRITICAL_DENSITY,
    EPSILON_STAR,
    LN_AMPLITUDE,
    LOG10_BOUNCE_SCALE,
    LOG10_CONFORMAL_DURATION,
    LOG10_POTENTIAL_FRACTION,
    N_BOUNCE_END,
    N_BOUNCE_PIVOT,
    N_INFLATION,
    N_STAR,
    PIVOT,
    QUADRATIC_MASS,
    REHEATING,
    STAROBINSKY_MASS,
    TENSOR_RATIO,
    TILT,
    WINDOW_IN_BOUNCE_UNITS,
)
from .base import ForwardModel, evaluate_at
from .inflation_search import bounce_background, dynamics_for, potential_fraction_for
from .pivot import pivot_observables
from .reheating import Reheating, check_choice
from .variants import family_variants

BACKGROUND_CHOICES = ("log10_potential_fraction", "N_inflation")
#: fast-model parameters this module supplies itself
_SUPPLIED = ("ln_1e10_As", "n_s", "r", "log10_k_lqc")


class _PhysicalBounce(ForwardModel):
    """The bounce in physical parameters (module docstring), one subclass per variant."""

    prescription = ""
    state = "remote_past"
    #: the potential (its transfer-cache family) and the side of the field at the bounce
    potential: Any = Quadratic
    field_sign = 1
    parameters = (LOG10_POTENTIAL_FRACTION, N_INFLATION, QUADRATIC_MASS, CRITICAL_DENSITY,
                  *REHEATING)
    optional_parameter_names = ("log10_potential_fraction", "N_inflation",
                                *(p.name for p in REHEATING))
    derived_parameters = (LOG10_POTENTIAL_FRACTION, N_INFLATION, N_BOUNCE_END, N_STAR,
                          N_BOUNCE_PIVOT, LOG10_BOUNCE_SCALE, LOG10_CONFORMAL_DURATION,
                          LN_AMPLITUDE, AMPLITUDE, TILT, TENSOR_RATIO, EPSILON_STAR,
                          WINDOW_IN_BOUNCE_UNITS, CERTIFIED)

    config_section = "bounce_physical"

    def from_config(self, config: Table, base_dir: Path | None = None) -> Any:
        """``[bounce_physical]`` gives the background (``log10_potential_fraction`` or
        ``N_inflation``), ``mass`` and ``critical_density``; ``[reheating]`` gives N_* or the
        reheating history, with the same keys as a prior file."""
        own = self.parameters[:4]
        table = config.table("bounce_physical", [q.name for q in own], required=True)
        given = [q.name for q in own[:2] if q.name in table]
        if len(given) != 1:  # named as the configuration spells it (check_prior: prior files)
            raise InputError("[bounce_physical] needs exactly one of "
                             "'bounce_physical.log10_potential_fraction' or "
                             f"'bounce_physical.N_inflation'; got {', '.join(given) or 'neither'}")
        values = read_parameters(table, own[2:])
        values.update(read_parameters(table, own[:2], present_only=True))
        reheating = config.table("reheating", [q.name for q in REHEATING], required=True)
        values.update(read_parameters(reheating, REHEATING, present_only=True))
        self.check_prior(values)
        where = {k: "reheating" if k in reheating.data else "bounce_physical" for k in values}
        return evaluate_at(self, values, where)

    def __init__(self) -> None:
        self._fast_model: Any = None
        self._last: tuple[Any, dict[str, float]] | None = None

    # -- prior checks ---------------------------------------------------------------------
    def check_prior(self, names: Any) -> None:
        """The prior gives exactly one background choice and one reheating choice."""
        names = set(names)
        bg = [n for n in BACKGROUND_CHOICES if n in names]
        if len(bg) != 1:
            raise InputError(f"model '{self.name}' needs exactly one of [parameters."
                             "log10_potential_fraction] or [parameters.N_inflation] (sampled "
                             f"or fixed); got {', '.join(bg) or 'neither'}")
        check_choice(names, f"model '{self.name}'")

    # -- evaluation -----------------------------------------------------------------------
    def _fast(self) -> Any:
        if self._fast_model is None:
            self._fast_model = BounceSpectraModel(prescription=self.prescription, pivot=PIVOT,
                                                  state=self.state,
                                                  potential=self.potential.name)
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
        mass = check_mass(float(p["mass"]), "mass", zero=False)
        rho_c = check_critical_density(p["critical_density"], "critical_density")
        pot = self.potential(mass=mass)
        dyn = dynamics_for(rho_c)
        if "N_inflation" in p:
            lx = potential_fraction_for(dyn, pot, p["N_inflation"], self.field_sign)
        else:
            lx = p["log10_potential_fraction"]
        tab = bounce_background(dyn, pot, lx, self.field_sign)
        if "N_star" in p:
            n_star = p["N_star"]
        else:
            n_star = Reheating.from_values(p).n_star(tab)
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


class _Plateau:
    """The Starobinsky plateau: the field on the steep side at the bounce (phi_B < 0)
    climbing towards the plateau (transfer_backgrounds.py: the only such bounces with 50-170
    e-folds to the end of inflation); cache family "starobinsky" (x_V = 1e-8 to 10^-6.9, M =
    1.5e-6 to 4e-6)."""

    potential = Starobinsky
    field_sign = -1
    parameters = (LOG10_POTENTIAL_FRACTION, N_INFLATION, STAROBINSKY_MASS, CRITICAL_DENSITY,
                  *REHEATING)


class _PhysicalBounceStarobinsky(_Plateau, _PhysicalBounce):
    """The bounce in physical parameters on the Starobinsky plateau. Caches: remote-past state
    not set below 0.363 k_LQC on these bounces (a window or a large-scale term reaching there
    is not evaluable); non-oscillating state certified from 0.01 k_LQC, state of low energy
    from 0.1 k_LQC; deformed algebra cached from 3 k_LQC only."""


#: the registry's physical-parameter bounce models, one per perturbation variant
PHYSICAL_BOUNCE_MODELS = (
    *family_variants(_PhysicalBounce, "bounce_physical_{}", "Bounce in physical parameters, {}"),
    *family_variants(_PhysicalBounceStarobinsky, "bounce_physical_{}_starobinsky",
                     "Bounce in physical parameters, Starobinsky plateau, {}"),
)
