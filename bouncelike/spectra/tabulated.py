"""Tabulated primordial spectra with log-log interpolation.

A forward model (for example the bounce) produces P_s and P_t on a grid of comoving wavenumbers
in Mpc^-1. :class:`TabulatedSpectra` interpolates ln P linearly in ln k. Outside the table it
refuses (``InputError`` naming the table range) unless constructed with ``extrapolate=True``,
in which case the end segments are continued as power laws and a note says so.

Oscillations the table cannot resolve are handled by the period-mean protocol of
:mod:`.oscillations` (:meth:`TabulatedSpectra.averaged_power`): a table may carry its period
means and the local period of its oscillations (``period_mean``, ``oscillation_period``);
otherwise rows where ln P zigzags are replaced by a running mean.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError
from ..units import wavenumber_in_mpc

#: An oscillation is resolved by a table that holds at least this many rows per period
#: (Nyquist needs 2; 4 keeps its shape).
RESOLVED_ROWS = 4.0


def _as_positive_array(name: str, values: Any, allow_zero: bool) -> np.ndarray:
    arr = np.array(wavenumber_in_mpc(values) if name == "k" else values, dtype=float)
    if arr.ndim != 1:
        raise InputError(f"tabulated '{name}' must be a one-dimensional array")
    if not np.all(np.isfinite(arr)):
        raise InputError(f"tabulated '{name}' must contain finite numbers only")
    bad = arr < 0 if allow_zero else arr <= 0
    if np.any(bad):
        allowed = ">= 0" if allow_zero else "> 0"
        raise InputError(f"tabulated '{name}' must be {allowed} everywhere")
    return arr


@dataclass(frozen=True, eq=False)
class TabulatedSpectra:
    """Spectra given on a table of comoving wavenumbers.

    Parameters
    ----------
    k : array
        Strictly increasing comoving wavenumbers in Mpc^-1 (or an astropy Quantity), at least 2.
    scalar, tensor : array
        P_s(k) > 0 and P_t(k) (> 0 everywhere, or identically zero for no tensors).
    notes : tuple of str
        Remarks printed under the score table (e.g. where the bounce scale falls).
    label : str
        Short description of the model that produced the table.
    extrapolate : bool
        Continue the end segments as power laws outside the table instead of refusing.
    period_mean : (array, array) or None
        P_s and P_t averaged over the local oscillation period, on the same ``k`` (optional).
    oscillation_period : array or None
        Local period of the oscillations in ln k on the same ``k`` (inf where there are none);
        used with ``period_mean``.
    unrepresented_below : (float, str) or None
        (k in Mpc^-1, why): below this k the table's values are not a prediction of the model
        (e.g. a state not set there). Consumers that read the spectra there (the large-scale
        temperature term) refuse them as not evaluable; the values are kept for display.
    """

    k: np.ndarray
    scalar_values: np.ndarray
    tensor_values: np.ndarray
    notes: tuple[str, ...] = field(default=())
    label: str = ""
    extrapolate: bool = False
    period_mean: tuple[np.ndarray, np.ndarray] | None = None
    oscillation_period: np.ndarray | None = None
    unrepresented_below: tuple[float, str] | None = None

    def __init__(
        self,
        k: Any,
        scalar: Any,
        tensor: Any,
        notes: tuple[str, ...] | list[str] = (),
        label: str = "",
        extrapolate: bool = False,
        period_mean: tuple[Any, Any] | None = None,
        oscillation_period: Any = None,
        unrepresented_below: tuple[float, str] | None = None,
    ):
        k_arr = _as_positive_array("k", k, allow_zero=False)
        ps = _as_positive_array("scalar", scalar, allow_zero=False)
        pt = _as_positive_array("tensor", tensor, allow_zero=True)
        if k_arr.size < 2:
            raise InputError("tabulated 'k' needs at least 2 wavenumbers")
        if ps.shape != k_arr.shape or pt.shape != k_arr.shape:
            raise InputError(
                f"tabulated 'scalar' and 'tensor' must have the same length as 'k' ({k_arr.size})"
            )
        if np.any(np.diff(k_arr) <= 0):
            raise InputError("tabulated 'k' must be strictly increasing")
        if np.any(pt == 0) and not np.all(pt == 0):
            raise InputError("tabulated 'tensor' must be > 0 everywhere or identically zero")
        notes = tuple(str(n) for n in notes)
        if extrapolate:
            notes = notes + (
                f"spectra extrapolated as power laws outside the table "
                f"[{k_arr[0]:.3g}, {k_arr[-1]:.3g}] Mpc^-1",
            )
        for name, arr in (("k", k_arr), ("scalar_values", ps), ("tensor_values", pt)):
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)
        object.__setattr__(self, "notes", notes)
        object.__setattr__(self, "label", str(label))
        object.__setattr__(self, "extrapolate", bool(extrapolate))
        object.__setattr__(self, "_ln_k", np.log(k_arr))
        object.__setattr__(self, "_ln_ps", np.log(ps))
        zero_t = bool(np.all(pt == 0))
        object.__setattr__(self, "_ln_pt", None if zero_t else np.log(pt))
        mean = None
        if period_mean is not None:
            ms = _as_positive_array("period_mean scalar", period_mean[0], allow_zero=False)
            mt = _as_positive_array("period_mean tensor", period_mean[1], allow_zero=True)
            if ms.shape != k_arr.shape or mt.shape != k_arr.shape:
                raise InputError("tabulated 'period_mean' must have the same length as 'k'")
            for arr in (ms, mt):
                arr.setflags(write=False)
            mean = (ms, mt)
        period = None
        if oscillation_period is not None:
            period = np.array(oscillation_period, dtype=float)
            if period.shape != k_arr.shape or np.any(~(period > 0)):
                raise InputError("tabulated 'oscillation_period' must be > 0 (inf for none), "
                                 "one value per 'k'")
            period.setflags(write=False)
        object.__setattr__(self, "period_mean", mean)
        object.__setattr__(self, "oscillation_period", period)
        object.__setattr__(self, "_smoothed", {})
        if unrepresented_below is not None:
            unrepresented_below = (float(unrepresented_below[0]), str(unrepresented_below[1]))
        object.__setattr__(self, "unrepresented_below", unrepresented_below)

    @property
    def k_min(self) -> float:
        return float(self.k[0])

    @property
    def k_max(self) -> float:
        return float(self.k[-1])

    @property
    def has_tensors(self) -> bool:
        return self._ln_pt is not None

    def _ln_k_query(self, k: Any) -> np.ndarray:
        kq = wavenumber_in_mpc(k)
        if np.any(~(kq > 0)):
            raise InputError("wavenumbers k must be positive and finite (Mpc^-1)")
        ln_kq = np.log(kq)
        if not self.extrapolate:
            # a relative slack of 1e-12 absorbs rounding at the table edges
            lo, hi = self._ln_k[0] - 1e-12, self._ln_k[-1] + 1e-12
            if np.any(ln_kq < lo) or np.any(ln_kq > hi):
                raise InputError(
                    f"k outside the tabulated range [{self.k_min:.4g}, {self.k_max:.4g}] Mpc^-1 "
                    f"(requested {float(np.min(kq)):.4g}..{float(np.max(kq)):.4g}); "
                    "extend the table or construct with extrapolate=True"
                )
        return ln_kq

    def _interp(self, ln_kq: np.ndarray, ln_p: np.ndarray) -> np.ndarray:
        x, y = self._ln_k, ln_p
        out = np.interp(ln_kq, x, y)
        if self.extrapolate:
            lo = ln_kq < x[0]
            hi = ln_kq > x[-1]
            if np.any(lo):
                slope = (y[1] - y[0]) / (x[1] - x[0])
                out[lo] = y[0] + slope * (ln_kq[lo] - x[0])
            if np.any(hi):
                slope = (y[-1] - y[-2]) / (x[-1] - x[-2])
                out[hi] = y[-1] + slope * (ln_kq[hi] - x[-1])
        return np.exp(out)

    def scalar(self, k: Any) -> np.ndarray:
        """P_s(k), log-log interpolated, for comoving k in Mpc^-1."""
        ln_kq = np.atleast_1d(self._ln_k_query(k)).astype(float)
        out = self._interp(ln_kq, self._ln_ps)
        return out.reshape(np.shape(wavenumber_in_mpc(k)))

    def tensor(self, k: Any) -> np.ndarray:
        """P_t(k), log-log interpolated (zeros when the table has no tensors)."""
        ln_kq = np.atleast_1d(self._ln_k_query(k)).astype(float)
        if self._ln_pt is None:
            out = np.zeros_like(ln_kq)
        else:
            out = self._interp(ln_kq, self._ln_pt)
        return out.reshape(np.shape(wavenumber_in_mpc(k)))

    # -- period-mean protocol (see oscillations.py) ----------------------------------------
    def _log_interp(self, ln_kq: np.ndarray, values: np.ndarray) -> np.ndarray:
        if np.all(values == 0):
            return np.zeros_like(ln_kq)
        return self._interp(ln_kq, np.log(values))

    @property
    def zigzag_rows(self) -> np.ndarray:
        """Rows where the table shows unresolved oscillation (plain tables; see oscillations)."""
        from .oscillations import zigzag_rows

        rows = self.__dict__.get("_zigzag")
        if rows is None:
            rows = zigzag_rows(self._ln_ps)
            if self._ln_pt is not None:
                rows = rows | zigzag_rows(self._ln_pt)
            rows.setflags(write=False)
            object.__setattr__(self, "_zigzag", rows)
        return rows

    def smoothed_table(self, resolution: float | None) -> tuple[np.ndarray, np.ndarray, float]:
        """(P_s, P_t, width): the table with its zigzag rows replaced by their running mean."""
        from .oscillations import running_mean, window_width

        rows = self.zigzag_rows
        width = window_width(self._ln_k, rows, resolution)
        key = round(width, 12)
        if key not in self._smoothed:
            ps = running_mean(self._ln_k, self.scalar_values, rows, width)
            pt = running_mean(self._ln_k, self.tensor_values, rows, width)
            self._smoothed[key] = (ps, pt)
        ps, pt = self._smoothed[key]
        return ps, pt, width

    def averaged_power(self, k: Any, resolution: float | None) -> tuple[np.ndarray, np.ndarray]:
        """(P_s, P_t) at k with oscillations shorter than ``resolution`` (in ln k) averaged.

        With ``period_mean``: the period mean where the local period is shorter than
        max(resolution, RESOLVED_ROWS table spacings) (everywhere for ``resolution=None``), the
        table elsewhere. Without: the zigzag rows replaced by their running mean (see
        :mod:`.oscillations`).
        """
        ln_kq = np.atleast_1d(self._ln_k_query(k)).astype(float)
        if self.period_mean is None:
            if not self.zigzag_rows.any():
                return self._interp(ln_kq, self._ln_ps), self._log_interp(
                    ln_kq, self.tensor_values)
            ps, pt, _ = self.smoothed_table(resolution)
            return self._interp(ln_kq, np.log(ps)), self._log_interp(ln_kq, pt)
        logs = self._mean_logs()
        mean_s = self._interp(ln_kq, logs["scalar"])
        mean_t = (np.zeros_like(ln_kq) if logs["tensor"] is None
                  else self._interp(ln_kq, logs["tensor"]))
        if resolution is None or logs["period"] is None:
            if resolution is None:
                return mean_s, mean_t
            return self._interp(ln_kq, self._ln_ps), self._log_interp(ln_kq, self.tensor_values)
        average = self._average_mask(ln_kq, resolution)
        if average.all():
            return mean_s, mean_t
        point_s = self._interp(ln_kq, self._ln_ps)
        point_t = self._log_interp(ln_kq, self.tensor_values)
        return np.where(average, mean_s, point_s), np.where(average, mean_t, point_t)

    def _average_mask(self, ln_kq: np.ndarray, resolution: float) -> np.ndarray:
        """Where the local period is shorter than max(resolution, RESOLVED_ROWS spacings)."""
        logs = self._mean_logs()
        ln_period = np.interp(ln_kq, self._ln_k, logs["period"])
        ln_local = np.interp(ln_kq, logs["mid"], logs["spacing"])
        floor = math.log(resolution) if resolution > 0 else -math.inf
        return ln_period < np.maximum(floor, math.log(RESOLVED_ROWS) + ln_local)

    def period_mean_rows(self) -> np.ndarray:
        """Per row: True where its oscillation period is shorter than RESOLVED_ROWS row
        spacings (the table cannot show it; :meth:`averaged_power` with any resolution gives
        the period mean there). All False without ``period_mean`` and periods."""
        if self.period_mean is None or self.oscillation_period is None:
            return np.zeros(len(self.k), bool)
        return self._average_mask(self._ln_k, 0.0)

    def _mean_logs(self) -> dict:
        """ln of the period means, of the periods and of the row spacings (computed once)."""
        logs = self.__dict__.get("_logs")
        if logs is None:
            mt = self.period_mean[1]
            logs = {"scalar": np.log(self.period_mean[0]),
                    "tensor": None if np.all(mt == 0) else np.log(mt),
                    "period": (None if self.oscillation_period is None
                               else np.log(self.oscillation_period)),
                    "mid": 0.5 * (self._ln_k[1:] + self._ln_k[:-1]),
                    "spacing": np.log(np.diff(self._ln_k))}
            object.__setattr__(self, "_logs", logs)
        return logs

    def oscillation_note(self) -> str:
        """One line saying where a plain table was found to zigzag ("" when it does not)."""
        if self.period_mean is not None or not self.zigzag_rows.any():
            return ""
        rows = np.nonzero(self.zigzag_rows)[0]
        _, _, width = self.smoothed_table(None)
        return (f"the spectra table shows unresolved oscillation (ln P zigzags: fewer than ~4 "
                f"rows per period) in {len(rows)} of {len(self.k)} rows between k = "
                f"{self.k[rows[0]]:.3g} and {self.k[rows[-1]]:.3g} Mpc^-1; there P is replaced "
                f"by its running mean over a triangle {width:.3g} wide in ln k (the table's own "
                "sampling noise remains)")

    def describe(self) -> dict[str, Any]:
        return {
            "model": "tabulated",
            "label": self.label,
            "k_min": self.k_min,
            "k_max": self.k_max,
            "points": int(self.k.size),
            "extrapolate": self.extrapolate,
        }
