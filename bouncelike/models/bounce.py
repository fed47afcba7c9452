"""The bounce forward model: configuration -> background -> modes -> spectra in Mpc^-1
(``[model] spectra = "bounce"``).

``[perturbations]`` keys (all optional):

=====================  ==========================================================================
prescription           "dressed_metric" (default) | "deformed_algebra"
state                  "remote_past" (default) | "bounce_adiabatic4" | "non_oscillating" |
                       "low_energy" (states.py; the last three dressed metric only)
sign_convention        "classical" (default, s = sign(phidot H)) | "fixed_slow_roll" (s held at
                       its slow-roll value: the printed s = -1); see prescriptions.py
k_min, k_max           feature range in units of k_LQC (default 0.01, 100)
k_count                wavenumbers over [k_min, k_max] (default 120); 40 more cover the
                       observable window 1e-5-1 Mpc^-1 when it lies outside that range
bogoliubov_beta        beta_0 of a Bogoliubov rotation (default 0: none)
bogoliubov_scale       k_beta in units of k_LQC (default 1)
bogoliubov_phase       theta (radians, default 0)
past_density           density (Planck units) down to which the contracting branch is integrated
                       (default: from k_min, states.remote_past_density); each mode's state is
                       set in it where rate/W <= 0.05 (states.py), not at this density
freeze                 k/(aH) at which modes are read off (default 1e-3)
adiabatic_ratio        W / rate above which a stretch is adiabatic (default 40)
step                   integrator step x frequency (default 0.08)
switch_density         deformed-algebra scalars: regular variables where rho > this x rho_c
=====================  ==========================================================================

``[reheating]`` (:mod:`bouncelike.models.reheating`): ``N_star`` (e-folds from the pivot's exit
to the end of inflation), or ``equation_of_state`` w and ``log10_reheating_density`` (log10
rho_reh, Planck units) for the Liddle & Leach estimate, with ``thermal_degrees_of_freedom``
g_th (default 106.75, see :mod:`bouncelike.perturbations.mapping`); ``pivot`` (Mpc^-1,
default 0.05);
``hubble_constant`` (km/s/Mpc, default Planck 2018).

Each run also carries the period means, envelopes and periods of its features
(:mod:`.bounce_features`: what the sky and a table of rows can see of oscillations finer than
both) and its validity flags (:mod:`.bounce_validity`: test field, trans-Planckian window
modes); :class:`BounceTable` presents them as spectra with the period-mean protocol.
Deformed-algebra modes above the e^600 cap and the tensor bound: :mod:`.bounce_ultraviolet`.
Inflation outlasting the background's e-fold cap (plateaus): :mod:`.bounce_plateau`.
A failure of the model at a configured point (no inflation, a window the modes cannot reach)
is not evaluable, one line naming the configured values and the physical reason.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from ..background.initial import BounceStart
from ..background.setup import background_from_config
from ..background.table import BackgroundTable, table_from_state
from ..config import Parameter, Table
from ..errors import InputError, NotEvaluable, NumericalFailure
from ..perturbations.mapping import WINDOW_GRID, ScaleMap, scale_map
from ..perturbations.modes import ModeSolver
from ..perturbations.prescriptions import (
    DEFAULT_SIGN_CONVENTION,
    PRESCRIPTIONS,
    SIGN_CONVENTIONS,
    euclidean_growth_rate,
    mode_system,
)
from ..perturbations.spectra import BounceSpectrum, bounce_spectra
from ..perturbations.states import (
    REMOTE_PAST_TOLERANCE,
    STATES,
    Bogoliubov,
    make_state,
    remote_past_density,
)
from ..perturbations.transfer_model import CAP_EXPONENT
from ..spectra.tabulated import TabulatedSpectra
from .base import ForwardModel
from .bounce_features import Features, freeze_index, plateau_features, run_features
from .bounce_plateau import plateau_window
from .bounce_ultraviolet import capped_boost, deformed_uv_tensor_note
from .bounce_validity import Validity, trans_planckian
from .reheating import Reheating, reheating_from_config

#: the options of ``[perturbations]``, declared once (module docstring)
PERTURBATION_OPTIONS = (
    Parameter("prescription", "mode equations through the bounce", kind="string",
              choices=tuple(PRESCRIPTIONS), default="dressed_metric"),
    Parameter("state", "initial state of the modes", kind="string", choices=tuple(STATES),
              default="remote_past"),
    Parameter("sign_convention", "sign s of the dressed-metric scalar potential",
              kind="string", choices=tuple(SIGN_CONVENTIONS), default=DEFAULT_SIGN_CONVENTION),
    Parameter("k_min", "low end of the feature range", "k_LQC", 1e-4, 1e4,
              why="the cached and integrated states are set for modes down to ~0.01 k_LQC; "
              "a decade and more below, the remote contracting branch no longer holds them; "
              "above 1e4 k_LQC the bounce leaves every mode untouched", default=0.01),
    Parameter("k_max", "high end of the feature range", "k_LQC", 1e-4, 1e4,
              why="above ~10 k_LQC the bounce leaves the modes untouched (dressed-metric "
              "transfer 1 to 1e-12 above 100 k_LQC); 1e4 is far beyond", default=100.0),
    Parameter("k_count", "wavenumbers integrated over [k_min, k_max]", "", 4, 4000,
              kind="integer", why="the cost grows in proportion (about a second per hundred "
              "modes); 4000 resolves eight decades at 500 per decade", default=120),
    Parameter("bogoliubov_beta", "beta_0 of a Bogoliubov rotation of the state", "", 0.0, 100.0,
              why="the power grows by 1 + 2 |beta|^2 on average; beyond 100 it is 2e4 times the "
              "vacuum, far outside any spectrum the data allow", default=0.0),
    Parameter("bogoliubov_scale", "k_beta of the rotation", "k_LQC", 0.0, 1e4,
              lower_open=True, why="a scale among the modes the bounce can touch",
              default=1.0),
    Parameter("bogoliubov_phase", "phase theta of the rotation", "radians", default=0.0),
    Parameter("past_density", "density down to which the contracting branch is integrated "
              "(default: from k_min)", "Planck density", 0.0, 1e-2, lower_open=True,
              why="far below the critical density 0.41, where the modes are set in the "
              "contracting branch"),
    Parameter("freeze", "k/(aH) at which modes are read off", "", 1e-8, 0.1,
              why="modes must be well outside the Hubble radius, and not so far that the "
              "integration is wasted", default=1e-3),
    Parameter("adiabatic_ratio", "W / rate above which a stretch is adiabatic", "", 5.0, None,
              why="a WKB jump below ratio 5 loses accuracy", default=40.0),
    Parameter("step", "integrator step x frequency", "", 1e-3, 0.5,
              why="the symplectic step is stable and accurate to 1e-6 below 0.5", default=0.08),
    Parameter("switch_density", "deformed-algebra scalars: regular variables where rho > this "
              "x rho_c", "rho_c", 1e-12, 0.1, why="the regular variables are needed near the "
              "bounce and valid while rho << rho_c is not yet reached", default=1e-4),
)
PERTURBATION_KEYS = tuple(p.name for p in PERTURBATION_OPTIONS)


@dataclass(frozen=True)
class PerturbationOptions:
    prescription: str = "dressed_metric"
    state: str = "remote_past"
    sign_convention: str = DEFAULT_SIGN_CONVENTION
    k_min: float = 0.01
    k_max: float = 100.0
    k_count: int = 120
    bogoliubov_beta: float = 0.0
    bogoliubov_scale: float = 1.0
    bogoliubov_phase: float = 0.0
    past_density: float | None = None
    freeze: float = 1e-3
    adiabatic_ratio: float = 40.0
    step: float = 0.08
    switch_density: float = 1e-4

    @classmethod
    def from_table(cls, t: Table) -> PerturbationOptions:
        # past_density has no fixed default: absent, it follows from k_min
        opts = cls(**{p.name: p.read(t) for p in PERTURBATION_OPTIONS
                      if p.name != "past_density" or p.name in t})
        if opts.k_max <= opts.k_min:
            raise InputError(f"'perturbations.k_max' = {opts.k_max:g} must exceed "
                             f"'perturbations.k_min' = {opts.k_min:g}")
        return opts


@dataclass(frozen=True)
class BounceRun:
    """Everything computed for one bounce configuration.

    ``features``: period means, envelopes and periods per row (:mod:`.bounce_features`);
    ``validity``: the test-field and trans-Planckian flags (:mod:`.bounce_validity`).
    """

    table: BackgroundTable
    spectrum: BounceSpectrum
    scales: ScaleMap
    k_mpc: np.ndarray
    notes: tuple[str, ...]
    features: Features | None = None
    validity: Validity | None = None
    options: PerturbationOptions | None = None


def run_bounce(tab: BackgroundTable, opts: PerturbationOptions, reheating: Reheating,
               potential: Any = None, show_progress: bool = False) -> BounceRun:
    """Spectra of one background in bounce units and in Mpc^-1; N_* from ``reheating``."""
    if not np.isfinite(tab.t_inflation_end):
        run = BounceRun(*plateau_window(tab, potential, opts, reheating))
        feats = plateau_features(tab, opts, run.spectrum)
        return replace(run, features=feats, validity=Validity(
            feats.backreaction, trans_planckian(run.scales, tab.ln_a_bounce)), options=opts)
    n_star = reheating.n_star(tab)
    pivot = reheating.pivot
    sm = scale_map(tab, n_star, pivot)
    k_lqc = tab.k_lqc
    ln_feat = np.log(np.geomspace(opts.k_min, opts.k_max, opts.k_count) * k_lqc)
    lo, hi, n = WINDOW_GRID
    ln_win = np.log(np.geomspace(lo, hi, n)) - sm.ln_mpc_per_bounce_unit
    ln_kb = np.unique(np.concatenate([ln_feat, ln_win[(ln_win < ln_feat[0])
                                                      | (ln_win > ln_feat[-1])]]))
    notes = []
    rate = euclidean_growth_rate(tab) if opts.prescription == "deformed_algebra" else 0.0
    ln_aH = tab.ln_a + np.log(np.maximum(tab.H, 1e-300))
    post = np.arange(len(tab.t)) > tab.bounce_index()
    i_infl = int(np.nonzero(post)[0][np.argmin(ln_aH[post])])
    # modes through the bounce: a = e^{ln a} stays finite and no e^600 growth
    through = (ln_kb - math.log(opts.freeze) + 2 < 600) & (rate * np.exp(np.minimum(
        ln_kb, 600)) <= CAP_EXPONENT)
    if opts.prescription == "deformed_algebra":
        through &= ln_kb <= ln_feat[-1] + 2
    scal, tens = np.empty(len(ln_kb)), np.empty(len(ln_kb))
    bog = (Bogoliubov(opts.bogoliubov_beta, opts.bogoliubov_scale * k_lqc,
                      opts.bogoliubov_phase) if opts.bogoliubov_beta > 0 else None)
    kw = {"state": opts.state, "sign_convention": opts.sign_convention, "bogoliubov": bog,
          "step": opts.step, "adiabatic_ratio": opts.adiabatic_ratio, "freeze": opts.freeze,
          "switch_density": opts.switch_density}
    ftab = tab.section(0, freeze_index(tab, float(np.exp(ln_kb[through].max())), opts.freeze))
    sp = bounce_spectra(ftab, np.exp(ln_kb[through]), prescription=opts.prescription,
                        show_progress=show_progress, **kw)
    scal[through], tens[through] = sp.scalar, sp.tensor
    if opts.prescription == "dressed_metric":
        # show what the sign ambiguity of the regular potential does (physics notes s.4)
        other = next(c for c in SIGN_CONVENTIONS if c != opts.sign_convention)
        alt = ModeSolver(mode_system(ftab, "scalar", opts.prescription, other,
                                     opts.switch_density), step=opts.step,
                         adiabatic_ratio=opts.adiabatic_ratio, freeze=opts.freeze).solve(
            np.exp(ln_kb[through]), make_state(opts.state, bog))
        dev = np.abs(alt.power / sp.scalar - 1)
        j = int(np.argmax(dev))
        notes.append(f"sign convention: '{other}' instead of '{opts.sign_convention}' changes "
                     f"P_s by up to {dev[j]:.2%} (at k = {np.exp(ln_kb[through][j]) / k_lqc:.3g}"
                     " k_LQC); tensors do not depend on it")
    late = ~through
    if late.any():
        # far-ultraviolet modes: started late inside the Hubble radius during inflation on a
        # section of the background with a renormalised scale factor (standard evolution)
        i0 = np.nonzero((np.arange(len(tab.t)) >= i_infl)
                        & (ln_aH >= ln_kb[late].min() - math.log(10 * opts.adiabatic_ratio)))[0]
        i1 = np.nonzero(ln_aH >= ln_kb[late].max() - math.log(opts.freeze) + 1)[0]
        if len(i0) == 0 or len(i1) == 0 or i0[0] == i_infl:
            raise NotEvaluable("the observable window cannot be reached on this background: "
                               "inflation after the bounce is too short for its modes to "
                               "start inside the Hubble radius and freeze out before it ends")
        shift = -float(tab.ln_a[i0[0]])
        stab = tab.section(int(i0[0]), int(i1[0]), shift)
        std = bounce_spectra(stab, np.exp(ln_kb[late] + shift), prescription="dressed_metric",
                             **{**kw, "state": "remote_past", "bogoliubov": None,
                                "sign_convention": "classical"})
        boost_s, boost_t = (capped_boost() if opts.prescription == "deformed_algebra"
                            else (1.0, 1.0))
        scal[late], tens[late] = std.scalar * boost_s, std.tensor * boost_t
        if opts.prescription == "deformed_algebra":
            notes.append(f"deformed algebra: {int(late.sum())} modes above "
                         f"k = {math.exp(ln_kb[late].min()) / k_lqc:.3g} k_LQC grow by more "
                         "than e^600 in the Euclidean phase; both powers are given as the "
                         "standard ones x e^600 x their measured ultraviolet ratio, a lower "
                         "bound")
            ln_x_piv = math.log(pivot) - sm.ln_k_lqc_mpc
            if ln_x_piv > float(ln_kb[through].max() - math.log(k_lqc)):
                ln_k_late = ln_kb[late] + sm.ln_mpc_per_bounce_unit
                notes.append(deformed_uv_tensor_note(ln_x_piv, float(np.interp(
                    math.log(pivot), ln_k_late, np.log(std.tensor))), pivot))
        else:
            notes.append(f"{int(late.sum())} modes above {math.exp(ln_kb[late].min()) / k_lqc:.3g}"
                         " k_LQC were started inside the Hubble radius during inflation "
                         "(adiabatic vacuum; the bounce leaves them untouched)")
    kb = np.exp(np.minimum(ln_kb, 700))
    feats = run_features(ftab, tab, kb, through, {"scalar": scal, "tensor": tens},
                         {"scalar": sp.scalar_modes, "tensor": sp.tensor_modes}, opts,
                         bog, capped=bool(late.any())
                         and opts.prescription == "deformed_algebra")
    ad = np.concatenate([sp.scalar_modes.start_adiabaticity, sp.tensor_modes.start_adiabaticity])
    ad = ad[np.isfinite(ad)]
    if len(ad):
        tol = REMOTE_PAST_TOLERANCE
        bad = ad > tol
        who = ("remote-past state" if opts.state == "remote_past" else
               f"{len(ad) // 2} modes without a fourth-order adiabatic state at the bounce "
               "(below ~3.8 k_LQC) take the remote-past state")
        notes.append(f"{who}: each mode set at the latest time before the bounce "
                     f"where background rate / mode frequency <= {tol:g} (contracting branch "
                     f"integrated down to rho = {tab.rho[0]:.2g}, Planck units)"
                     + (f"; {int(bad.sum())} modes never reach it (rate/frequency down to "
                        f"{ad[bad].min():.2g} only): their state depends on the contracting "
                        "history and is not the adiabatic vacuum (uncertified)" if bad.any()
                        else ""))
    notes.append(f"Wronskian conserved to {sp.max_wronskian_error:.1e} (relative to its "
                 "round-off floor)")
    notes = [sm.bounce_scale_note(), *sp.notes, *notes]
    if opts.prescription == "deformed_algebra":
        notes.append("deformed-algebra scalars: regular variables (R, s = p - k^2 g R) near "
                     "the bounce, Q with Omega k^2 and the classical potential where rho < "
                     f"{opts.switch_density:g} rho_c")
    k_mpc = np.exp(ln_kb + sm.ln_mpc_per_bounce_unit)
    keep = k_mpc > 1e-250
    if not keep.all():
        notes.append(f"{int((~keep).sum())} wavenumbers below 1e-250 Mpc^-1 dropped from the "
                     "table")
    spectrum = BounceSpectrum(kb[keep], scal[keep], tens[keep], k_lqc, opts.prescription,
                              opts.state, sp.sign_convention, sp.scalar_modes, sp.tensor_modes,
                              sp.notes, sp.settings)
    sky = feats.sky_note(sm.k_lqc_mpc)
    if sky:
        notes.append(sky)
    validity = Validity(feats.backreaction, trans_planckian(sm, tab.ln_a_bounce))
    return BounceRun(tab, spectrum, sm, k_mpc[keep], tuple(notes), feats.select(keep),
                     validity, opts)


def _background(config: Table, past_density: float | None,
                k_min: float = 0.01) -> tuple[BackgroundTable, list[str], Any]:
    """The background engine's table through the bounce of the configured background."""
    setup = background_from_config(config)
    name = getattr(setup.dynamics, "NAME", "")
    if name != "isotropic":
        raise InputError(f"'background.dynamics' = '{name}' is not supported by the bounce "
                         "model; allowed: isotropic (modes live on the isotropic effective "
                         "background)")
    pot = setup.potential
    rc = float(setup.dynamics.critical_density)
    notes = []
    init = setup.initial
    if isinstance(init, BounceStart):
        phi_b, phidot_b = setup.dynamics.bounce_state(pot, init)
    else:
        run = setup.dynamics.evolve_summary(pot, init, setup.settings)
        if not np.isfinite(run.events.t_bounce):
            raise NotEvaluable(f"the background has no bounce ({run.message})")
        phi_b = run.phi_bounce
        phidot_b = math.copysign(math.sqrt(max(2 * (rc - float(pot.V(phi_b))), 0.0)),
                                 run.phidot_bounce)
        notes.append(f"bounce state taken from the isotropic engine run (status {run.status})")
    if past_density is None:
        past_density = remote_past_density(k_min, rc)
    tab = table_from_state(pot, rc, phi_b, phidot_b, past_density=past_density,
                               max_efolds=3000.0, settings=setup.settings)
    return tab, notes, pot


class BounceTable(TabulatedSpectra):
    """The forward model's spectra in Mpc^-1 with their period means and periods (the
    period-mean protocol) and the run's validity flags (``validity``, in ``describe()``)."""

    def __init__(self, run: BounceRun):
        f = run.features
        mean = None if f is None else (f.mean["scalar"], f.mean["tensor"])
        super().__init__(run.k_mpc, run.spectrum.scalar, run.spectrum.tensor, notes=run.notes,
                         label=f"bounce ({run.spectrum.prescription})", period_mean=mean,
                         oscillation_period=None if f is None else f.period)
        object.__setattr__(self, "validity", run.validity)

    def describe(self) -> dict[str, Any]:
        out = super().describe()
        if self.validity is not None:
            out["validity"] = self.validity.as_dict()
        return out


def bounce_spectra_from_config(config: Table) -> BounceTable:
    """``[model] spectra = "bounce"``: the spectra of :func:`run_from_config`."""
    return BounceTable(run_from_config(config))


def run_from_config(config: Table, show_progress: bool = False) -> BounceRun:
    """Background, modes and mapping of a run configuration (module docstring)."""
    opts = PerturbationOptions.from_table(config.table("perturbations", PERTURBATION_KEYS))
    reheating = reheating_from_config(config)
    tab, notes, pot = _background(config, opts.past_density, opts.k_min)
    run = run_bounce(tab, opts, reheating, potential=pot, show_progress=show_progress)
    return replace(run, notes=(*run.notes, *notes))


class BounceModel(ForwardModel):
    """The full forward model of a bounce configuration (``[model] spectra = "bounce"``):
    background through the bounce, modes integrated exactly, spectra in Mpc^-1. Minutes per
    point: it is scored, not sampled; posterior runs use the ``bounce_physical_*`` models,
    which reproduce it at the pivot through the certified transfer."""

    name = "bounce"
    title = "Bounce: background, exact modes, mapping to Mpc^-1"
    samplable = False

    def from_config(self, config: Table, base_dir: Path | None = None) -> Any:
        try:
            with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
                return bounce_spectra_from_config(config)
        except NumericalFailure as exc:  # keeps its kind (exit code 1), gains the values
            raise type(exc)(f"model 'bounce' cannot be evaluated at "
                            f"{configured_values(config)}: {exc}") from None


def configured_values(config: Table) -> str:
    """The physical inputs of a bounce configuration as ``key = value`` text (for messages)."""
    items = []
    for section, sub in (("potential", None), ("background", "bounce"),
                         ("background", "contracting"), ("background", "classical"),
                         ("reheating", None)):
        table = config.raw(section, {}) or {}
        if sub is not None:
            table = table.get(sub, {}) if isinstance(table, dict) else {}
        where = f"{section}.{sub}" if sub else section
        if isinstance(table, dict):
            items += [f"{where}.{k} = {v:g}" if isinstance(v, float) else f"{where}.{k} = {v}"
                      for k, v in table.items() if not isinstance(v, dict)]
    return ", ".join(items) or "the defaults"
