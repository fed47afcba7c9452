"""Power-law primordial spectra with running and running of running.

The scalar and tensor power spectra are expanded in x = ln(k / k_*) around the pivot k_*::

    ln P_s(k) = ln A_s + (n_s - 1) x + alpha x^2 / 2 + beta x^3 / 6
    ln P_t(k) = ln(r A_s) + n_t x

with alpha = dn_s/dln k (``running``) and beta = d^2 n_s/dln k^2 (``running_of_running``).
``n_t = None`` means the single-field consistency relation n_t = -r/8 at the pivot. Comoving
wavenumbers are in Mpc^-1; astropy quantities are accepted.

:meth:`PowerLawSpectra.summary_at` re-expands the same spectra exactly at another pivot (the
cubic in x is re-centred; the tensor spectrum is a pure power law, so its tilt is unchanged and
r becomes P_t(k_1)/P_s(k_1)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..errors import InputError
from ..quantities import PIVOT
from ..units import wavenumber_in_mpc
from .summary import DEFAULT_TOLERANCE, PivotSummary


def _finite(name: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating, np.integer)):
        raise InputError(f"'{name}' must be a number, got {value!r}")
    value = float(value)
    if not math.isfinite(value):
        raise InputError(f"'{name}' must be a finite number, got {value!r}")
    return value


def reexpand(
    ln_1e10_As: float,
    n_s: float,
    running: float,
    running_of_running: float,
    r: float,
    n_t: float,
    x1: float,
) -> tuple[float, float, float, float, float]:
    """Exact re-expansion of the power-law coefficients at x1 = ln(k_1 / k_*).

    Returns ``(ln_1e10_As, n_s, running, running_of_running, r)`` at the new pivot. Pure
    floating-point arithmetic (no numpy) so that the likelihood fast path stays cheap.
    """
    ns1 = n_s - 1.0
    ln_ps = ns1 * x1 + 0.5 * running * x1 * x1 + running_of_running * x1 * x1 * x1 / 6.0
    new_ns = 1.0 + ns1 + running * x1 + 0.5 * running_of_running * x1 * x1
    new_run = running + running_of_running * x1
    new_r = r * math.exp(n_t * x1 - ln_ps) if r > 0.0 else 0.0
    return ln_1e10_As + ln_ps, new_ns, new_run, running_of_running, new_r


@dataclass(frozen=True)
class PowerLawSpectra:
    """Scalar and tensor power-law spectra at a pivot.

    Parameters
    ----------
    ln_1e10_As : float
        ln(10^10 A_s), the scalar amplitude at the pivot.
    n_s, running, running_of_running : float
        Scalar tilt, its first and second derivatives with respect to ln k at the pivot.
    r : float
        Tensor-to-scalar ratio at the pivot (>= 0).
    n_t : float or None
        Tensor tilt; None applies the consistency relation n_t = -r/8.
    pivot : float
        Pivot wavenumber k_* in Mpc^-1 (> 0).
    label, notes :
        Free text carried to reports (``notes`` are printed by ``bouncelike score``).

    Examples
    --------
    >>> p = PowerLawSpectra(3.044, 0.9649, r=0.01)
    >>> round(p.tensor_tilt, 6)
    -0.00125
    >>> float(p.scalar(0.05)) == p.A_s
    True
    """

    ln_1e10_As: float
    n_s: float
    running: float = 0.0
    running_of_running: float = 0.0
    r: float = 0.0
    n_t: float | None = None
    pivot: float = PIVOT
    label: str = "power law"
    notes: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        for name in ("ln_1e10_As", "n_s", "running", "running_of_running", "r", "pivot"):
            object.__setattr__(self, name, _finite(name, getattr(self, name)))
        if self.n_t is not None:
            object.__setattr__(self, "n_t", _finite("n_t", self.n_t))
        if self.r < 0.0:
            raise InputError(f"'r' = {self.r:g} is out of range; allowed: >= 0")
        if self.pivot <= 0.0:
            raise InputError(f"'pivot' = {self.pivot:g} is out of range; allowed: > 0 (Mpc^-1)")
        object.__setattr__(self, "notes", tuple(str(n) for n in self.notes))

    # -- derived numbers -------------------------------------------------------------------
    @property
    def A_s(self) -> float:
        """Scalar amplitude A_s at the pivot."""
        return math.exp(self.ln_1e10_As) * 1e-10

    @property
    def tensor_tilt(self) -> float:
        """n_t, from the consistency relation -r/8 when not given."""
        return -self.r / 8.0 if self.n_t is None else self.n_t

    # -- spectra ---------------------------------------------------------------------------
    def _x(self, k: Any) -> np.ndarray:
        k = wavenumber_in_mpc(k)
        if np.any(~(k > 0)):
            raise InputError("wavenumbers k must be positive and finite (Mpc^-1)")
        return np.log(k / self.pivot)

    def scalar(self, k: Any) -> np.ndarray:
        """P_s(k) for comoving k in Mpc^-1 (array or astropy Quantity)."""
        x = self._x(k)
        # x * x * x, not x**3: numpy's power of negative bases takes a slow path (~100x)
        x2 = x * x
        ln_p = (self.n_s - 1.0) * x + 0.5 * self.running * x2
        if self.running_of_running:
            ln_p = ln_p + self.running_of_running * x2 * x / 6.0
        return self.A_s * np.exp(ln_p)

    def tensor(self, k: Any) -> np.ndarray:
        """P_t(k) = r A_s (k/k_*)^n_t for comoving k in Mpc^-1."""
        x = self._x(k)
        return self.r * self.A_s * np.exp(self.tensor_tilt * x)

    # -- pivot handling --------------------------------------------------------------------
    def coefficients_at(self, pivot: float) -> tuple[float, float, float, float, float]:
        """``(ln_1e10_As, n_s, running, running_of_running, r)`` exactly at ``pivot``."""
        if pivot == self.pivot:
            return (self.ln_1e10_As, self.n_s, self.running, self.running_of_running, self.r)
        return reexpand(
            self.ln_1e10_As,
            self.n_s,
            self.running,
            self.running_of_running,
            self.r,
            self.tensor_tilt,
            math.log(pivot / self.pivot),
        )

    def at_pivot(self, pivot: float) -> PowerLawSpectra:
        """The same spectra described at another pivot (the tensor tilt is kept explicit)."""
        pivot = _finite("pivot", pivot)
        if pivot <= 0:
            raise InputError(f"'pivot' = {pivot:g} is out of range; allowed: > 0 (Mpc^-1)")
        ln_as, n_s, run, runrun, r = self.coefficients_at(pivot)
        return replace(
            self,
            ln_1e10_As=ln_as,
            n_s=n_s,
            running=run,
            running_of_running=runrun,
            r=r,
            n_t=self.tensor_tilt,
            pivot=pivot,
        )

    def summary_at(self, pivot: float):
        """Exact :class:`~bouncelike.spectra.summary.PivotSummary` at ``pivot`` (no fit)."""
        moved = self.at_pivot(pivot)
        return PivotSummary(
            pivot=moved.pivot,
            ln_1e10_As=moved.ln_1e10_As,
            n_s=moved.n_s,
            running=moved.running,
            running_of_running=moved.running_of_running,
            r=moved.r,
            fit_rms=0.0,
            fit_ok=True,
            tolerance=DEFAULT_TOLERANCE,
            window=None,
            n_t=moved.tensor_tilt,
            method="exact",
        )

    def describe(self) -> dict[str, Any]:
        numbers = ("ln_1e10_As", "n_s", "running", "running_of_running", "r")
        return {"model": "power_law", **{q: getattr(self, q) for q in numbers},
                "n_t": self.tensor_tilt, "n_t_from_consistency": self.n_t is None,
                "pivot": self.pivot, "label": self.label}
