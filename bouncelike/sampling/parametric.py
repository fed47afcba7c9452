"""Parametric models for posterior sampling: parameters -> spectra object, plus derived numbers.

A parametric model is an object with

``name``              registry name
``parameter_names``   the parameters a prior file must give (sampled or fixed)
``derived_names``     numbers :meth:`derived` returns (stored with the samples)
``labels``            LaTeX labels of all of them (prior files may override)
``spectra(params)``   a spectra object (:mod:`bouncelike.spectra`) the likelihood scores
``derived(params)``   dict of derived numbers

Models must be cheap to construct, immutable and picklable (they travel to worker processes
and MPI ranks). A failure of the forward model raises
:class:`~bouncelike.errors.NumericalFailure` (or :class:`~bouncelike.errors.InputError` for a
parameter outside the model's domain); the driver turns it into a log-likelihood of -inf and
counts the reason.

Optional: ``optional_parameter_names`` (parameters a prior may leave out) and
``check_prior(names)`` (raises InputError unless the given parameter names form a valid
choice), as the physical bounce models (:mod:`bouncelike.sampling.bounce_physical`) use them.

Registering a model: add ``name -> "module:factory"`` to :data:`PARAMETRIC_MODELS`, where
``factory()`` returns the model object, and ship a prior file naming it in ``priors/``. The
bounce models wrap the perturbations package's fast evaluator (``BounceSpectraModel``: a power
law times the cached transfer of the bounce) in both prescriptions.
"""

from __future__ import annotations

import importlib
import math
from typing import Any

from ..errors import InputError

#: Pivot wavenumber (Mpc^-1) at which the slow-roll models quote N_* and the amplitude.
PIVOT = 0.05
#: Reduced Planck mass in units of the Planck mass m_Pl = 1 (M_Pl = m_Pl / sqrt(8 pi)).
_REDUCED = 1.0 / math.sqrt(8.0 * math.pi)


def _power_law(**kw: Any) -> Any:
    from ..spectra.powerlaw import PowerLawSpectra

    return PowerLawSpectra(**kw)


class PowerLawModel:
    """Power-law scalar and tensor spectra at k_* = 0.05 Mpc^-1 (tensor tilt by consistency)."""

    name = "power_law"
    parameter_names = ("ln_1e10_As", "n_s", "running", "running_of_running", "r")
    derived_names = ("A_s", "n_t")
    labels = {
        "ln_1e10_As": r"\ln(10^{10} A_s)", "n_s": "n_s",
        "running": r"\mathrm{d}n_s/\mathrm{d}\ln k",
        "running_of_running": r"\mathrm{d}^2 n_s/\mathrm{d}\ln k^2", "r": "r",
        "A_s": "A_s", "n_t": "n_t",
    }

    def spectra(self, p: dict[str, float]) -> Any:
        return _power_law(ln_1e10_As=p["ln_1e10_As"], n_s=p["n_s"], running=p["running"],
                          running_of_running=p["running_of_running"], r=p["r"], pivot=PIVOT)

    def derived(self, p: dict[str, float]) -> dict[str, float]:
        return {"A_s": math.exp(p["ln_1e10_As"]) * 1e-10, "n_t": -p["r"] / 8.0}


class _SlowRoll:
    """Leading-order slow roll at N_* e-folds before the end of inflation (pivot 0.05 Mpc^-1).

    Parameters: ``N_star`` and ``ln_1e10_As`` (the amplitude fixes the potential's scale,
    reported as a derived parameter). Subclasses give n_s(N), r(N), running(N) and the scale.
    """

    parameter_names = ("N_star", "ln_1e10_As")
    derived_names = ("n_s", "r", "running", "mass")

    def _check(self, p: dict[str, float]) -> float:
        n = p["N_star"]
        if not n > 1.0:
            raise InputError(f"'N_star' = {n:g} is out of range; allowed: > 1")
        return n

    def spectra(self, p: dict[str, float]) -> Any:
        n = self._check(p)
        ns, r, run = self.observables(n)
        return _power_law(ln_1e10_As=p["ln_1e10_As"], n_s=ns, running=run, r=r, pivot=PIVOT)

    def derived(self, p: dict[str, float]) -> dict[str, float]:
        n = self._check(p)
        ns, r, run = self.observables(n)
        a_s = math.exp(p["ln_1e10_As"]) * 1e-10
        return {"n_s": ns, "r": r, "running": run, "mass": self.mass(n, a_s)}


class QuadraticSlowRoll(_SlowRoll):
    """V = m^2 phi^2 / 2.

    n_s = 1 - 2/(N + 1/2), r = 8/(N + 1/2) (Martin, Ringeval & Vennin, "Encyclopaedia
    Inflationaris", arXiv:1303.3787, large-field inflation with p = 2, phi_end^2 = 2 M_Pl^2);
    running = dn_s/dln k = -2/(N + 1/2)^2 at leading order (dN/dln k = -1). The mass follows
    from A_s = V/(24 pi^2 eps M_Pl^4) = m^2 (N + 1/2)^2 / (6 pi^2 M_Pl^2) and is reported in
    units of the Planck mass m_Pl = 1.
    """

    name = "slow_roll_quadratic"
    labels = {"N_star": "N_*", "ln_1e10_As": r"\ln(10^{10} A_s)", "n_s": "n_s", "r": "r",
              "running": r"\mathrm{d}n_s/\mathrm{d}\ln k", "mass": r"m/m_\mathrm{Pl}"}

    @staticmethod
    def observables(n: float) -> tuple[float, float, float]:
        m = n + 0.5
        return 1.0 - 2.0 / m, 8.0 / m, -2.0 / (m * m)

    @staticmethod
    def mass(n: float, a_s: float) -> float:
        return math.sqrt(6.0 * math.pi**2 * a_s) / (n + 0.5) * _REDUCED


class StarobinskySlowRoll(_SlowRoll):
    """V = (3/4) M^2 M_Pl^2 (1 - exp(-sqrt(2/3) phi / M_Pl))^2.

    n_s = 1 - 2/N, r = 12/N^2 at leading order in 1/N (Encyclopaedia Inflationaris,
    arXiv:1303.3787); running = -2/N^2. With eps = 3/(4 N^2) and V ~ (3/4) M^2 M_Pl^2,
    A_s = M^2 N^2 / (24 pi^2 M_Pl^2); M is reported in units of m_Pl = 1.
    """

    name = "slow_roll_starobinsky"
    labels = {"N_star": "N_*", "ln_1e10_As": r"\ln(10^{10} A_s)", "n_s": "n_s", "r": "r",
              "running": r"\mathrm{d}n_s/\mathrm{d}\ln k", "mass": r"M/m_\mathrm{Pl}"}

    @staticmethod
    def observables(n: float) -> tuple[float, float, float]:
        return 1.0 - 2.0 / n, 12.0 / (n * n), -2.0 / (n * n)

    @staticmethod
    def mass(n: float, a_s: float) -> float:
        return math.sqrt(24.0 * math.pi**2 * a_s) / n * _REDUCED


class _BounceTransfer:
    """Bounce spectra for sampling: a standard power law times the cached transfer of the
    bounce, T(k / k_LQC), of the perturbations package (:class:`bouncelike.perturbations.
    transfer.BounceSpectraModel`, modes from the remote contracting past).

    Parameters: ``ln_1e10_As``, ``n_s``, ``r`` (the slow-roll part at k_* = 0.05 Mpc^-1),
    ``log10_k_lqc`` (the comoving bounce scale in Mpc^-1) and ``critical_density`` (Planck
    units; enters only the derived e-folds). Derived:

    ``N_B_star``      e-folds from the bounce to the exit of the pivot scale,
                      N_B* = ln(k_* / k_LQC) - ln(H_* / sqrt(8 pi rho_c)) (physics notes,
                      section 5, with V_B << rho_c), H_* from the tensor amplitude
                      P_t = r A_s = 16 H_*^2 / pi (Planck units, de Sitter; same notes,
                      section 4); NaN for r = 0
    ``x_window_min``  1e-4 Mpc^-1 / k_LQC, the window's lower end in units of the bounce scale
    ``certified``     1 when the whole window lies where the cached transfer is certified
    """

    prescription = ""
    state = "remote_past"
    parameter_names = ("ln_1e10_As", "n_s", "r", "log10_k_lqc", "critical_density")
    derived_names = ("N_B_star", "x_window_min", "certified")
    labels = {"ln_1e10_As": r"\ln(10^{10} A_s)", "n_s": "n_s", "r": "r",
              "log10_k_lqc": r"\log_{10}(k_\mathrm{LQC}/\mathrm{Mpc}^{-1})",
              "critical_density": r"\rho_c", "N_B_star": r"N_{B*}",
              "x_window_min": r"k_\mathrm{min}/k_\mathrm{LQC}", "certified": "certified"}

    def __init__(self) -> None:
        self._model: Any = None

    def __getstate__(self) -> dict[str, Any]:
        return {}  # workers rebuild the cached transfer (read from the shipped table)

    def __setstate__(self, state: dict[str, Any]) -> None:
        self._model = None

    def _fast(self) -> Any:
        if self._model is None:
            try:
                from ..perturbations.transfer import BounceSpectraModel
            except ImportError:
                raise InputError(
                    f"model '{self.name}' needs bouncelike.perturbations.transfer"
                    ".BounceSpectraModel, which this build does not have") from None
            self._model = BounceSpectraModel(prescription=self.prescription, pivot=PIVOT,
                                             state=self.state)
        return self._model

    def spectra(self, p: dict[str, float]) -> Any:
        return self._fast().spectra(p)

    def derived(self, p: dict[str, float]) -> dict[str, float]:
        d = self._fast().derived(p)
        a_s = math.exp(p["ln_1e10_As"]) * 1e-10
        if p["r"] > 0:
            hubble = math.sqrt(math.pi * a_s * p["r"] / 16.0)
            n_b = (math.log(PIVOT) - p["log10_k_lqc"] * math.log(10.0)
                   - math.log(hubble / math.sqrt(8.0 * math.pi * p["critical_density"])))
        else:
            n_b = math.nan
        return {"N_B_star": n_b, "x_window_min": float(d["x_window_min"]),
                "certified": float(bool(d["certified"]))}


class BounceDressedMetric(_BounceTransfer):
    name = "bounce_dressed_metric"
    prescription = "dressed_metric"


class BounceDeformedAlgebra(_BounceTransfer):
    name = "bounce_deformed_algebra"
    prescription = "deformed_algebra"


class BounceDressedMetricNonOscillating(BounceDressedMetric):
    """Non-oscillating vacuum set around the bounce (perturbations/states_window.py)."""

    name = "bounce_dressed_metric_non_oscillating"
    state = "non_oscillating"


class BounceDressedMetricLowEnergy(BounceDressedMetric):
    """State of low energy set around the bounce (perturbations/states_window.py)."""

    name = "bounce_dressed_metric_low_energy"
    state = "low_energy"


#: name -> "module:factory"; factory() returns the model object.
PARAMETRIC_MODELS: dict[str, str] = {
    "power_law": "bouncelike.sampling.parametric:PowerLawModel",
    "slow_roll_quadratic": "bouncelike.sampling.parametric:QuadraticSlowRoll",
    "slow_roll_starobinsky": "bouncelike.sampling.parametric:StarobinskySlowRoll",
    "bounce_dressed_metric": "bouncelike.sampling.parametric:BounceDressedMetric",
    "bounce_deformed_algebra": "bouncelike.sampling.parametric:BounceDeformedAlgebra",
    "bounce_dressed_metric_non_oscillating":
        "bouncelike.sampling.parametric:BounceDressedMetricNonOscillating",
    "bounce_dressed_metric_low_energy":
        "bouncelike.sampling.parametric:BounceDressedMetricLowEnergy",
    "bounce_physical_dressed_metric":
        "bouncelike.sampling.bounce_physical:PhysicalBounceDressedMetric",
    "bounce_physical_deformed_algebra":
        "bouncelike.sampling.bounce_physical:PhysicalBounceDeformedAlgebra",
    "bounce_physical_dressed_metric_non_oscillating":
        "bouncelike.sampling.bounce_physical:PhysicalBounceNonOscillating",
    "bounce_physical_dressed_metric_low_energy":
        "bouncelike.sampling.bounce_physical:PhysicalBounceLowEnergy",
    "bounce_physical_dressed_metric_starobinsky":
        "bouncelike.sampling.bounce_physical:PhysicalBounceStarobinsky",
    "bounce_physical_dressed_metric_non_oscillating_starobinsky":
        "bouncelike.sampling.bounce_physical:PhysicalBounceStarobinskyNonOscillating",
    "bounce_physical_dressed_metric_low_energy_starobinsky":
        "bouncelike.sampling.bounce_physical:PhysicalBounceStarobinskyLowEnergy",
    "bounce_physical_deformed_algebra_starobinsky":
        "bouncelike.sampling.bounce_physical:PhysicalBounceStarobinskyDeformedAlgebra",
}


def model_prior(model: Any, path: Any) -> Any:
    """Load and validate the prior file ``path`` for ``model`` (its optional parameters and
    its own check included)."""
    from .priors import load_prior

    prior = load_prior(path, model.parameter_names, model.derived_names,
                       optional_parameters=getattr(model, "optional_parameter_names", ()))
    check_model_prior(model, prior)
    return prior


def check_model_prior(model: Any, prior: Any) -> None:
    check = getattr(model, "check_prior", None)
    if check is not None:
        check(tuple(p.name for p in prior.parameters if p.role != "derived"))


def parametric_model(name: str) -> Any:
    """The parametric model registered under ``name``."""
    if name not in PARAMETRIC_MODELS:
        raise InputError(f"parametric model '{name}' is not known; allowed: "
                         f"{', '.join(sorted(PARAMETRIC_MODELS))}")
    module, attr = PARAMETRIC_MODELS[name].split(":")
    return getattr(importlib.import_module(module), attr)()
