"""Oscillating spectra seen through a finite resolution in ln k: the period-mean protocol.

Bounce spectra carry oscillations in k (dressed metric: period pi k_LQC / D in k, D ~ 1e3-1e4,
i.e. ~1e-6-1e-5 Mpc^-1 for k_LQC ~ 1e-3 Mpc^-1) far finer than anything a projection onto the
sky or a fit of pivot numbers can resolve. Sampling them at a few hundred wavenumbers aliases
them. This module owns the rule by which consumers see such spectra.

**Protocol (optional).** A spectra object may define

    averaged_power(k, resolution) -> (P_s, P_t)

returning the spectra at comoving ``k`` (Mpc^-1) with every oscillation whose local period in
ln k is shorter than ``resolution`` replaced by its period mean (pointwise values where the
period is longer); ``resolution=None`` means the period mean wherever the object knows of
oscillations. Objects without the method are taken as free of unresolved oscillation and are
evaluated pointwise. :func:`averaged_power` applies this rule to any object;
:class:`PeriodMeanView` presents the period mean as a spectra object (for the pivot summaries).

:class:`~bouncelike.spectra.tabulated.TabulatedSpectra` implements it two ways:

* a table that carries its period means and local periods (``period_mean`` and
  ``oscillation_period``, given by the bounce transfer model and the bounce forward model,
  which know them exactly) uses the period mean where the period is shorter than
  max(``resolution``, 4 table spacings);
* any other table (a user's file) is inspected: where ln P zigzags --
  local extrema at two neighbouring rows, i.e. fewer than about 4 rows per period, with steps
  above ``ZIGZAG_FLOOR`` in ln P -- the table "shows unresolved oscillation"; those rows
  (the region grown by 2 rows each side, gaps of up to 4 rows closed) are replaced by the running
  mean of P over a triangular window in ln k of full width max(``resolution``,
  ``MIN_WINDOW_ROWS`` table spacings) (two passes of a top-hat of half that width: smoother
  than one top-hat, which matters for a projection that interpolates the result). A sampled
  oscillation cannot be told from its alias (Nyquist): an oscillation sampled at 4 or more rows
  per period is treated as resolved. What the running mean cannot remove is the sampling noise
  of an aliased table; :func:`split_rows` lets a consumer measure it (project the even and the
  odd rows separately).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

#: Steps of ln P below this are not counted as oscillation (round-off of printed tables).
ZIGZAG_FLOOR = 1e-3
#: The running mean of a zigzagging table spans at least this many rows.
MIN_WINDOW_ROWS = 8


def averaged_power(spectra: Any, k: np.ndarray, resolution: float | None
                   ) -> tuple[np.ndarray, np.ndarray]:
    """(P_s, P_t) at ``k`` as the protocol above defines them, for any spectra object."""
    method = getattr(spectra, "averaged_power", None)
    if callable(method):
        ps, pt = method(k, resolution)
    else:
        ps, pt = spectra.scalar(k), spectra.tensor(k)
    return np.asarray(ps, dtype=float), np.asarray(pt, dtype=float)


def knows_oscillations(spectra: Any) -> bool:
    """True when the object implements the period-mean protocol."""
    return callable(getattr(spectra, "averaged_power", None))


class PeriodMeanView:
    """The period mean of a spectra object, as a spectra object (``scalar``, ``tensor``).

    Passes ``k_min``, ``k_max``, ``extrapolate``, ``notes`` and ``label`` through, so that the
    pivot-summary fit clips its window to the table exactly as for the object itself.
    """

    def __init__(self, spectra: Any):
        self.spectra = spectra
        for name in ("k_min", "k_max", "extrapolate", "notes", "label"):
            if hasattr(spectra, name):
                setattr(self, name, getattr(spectra, name))

    def _both(self, k: Any) -> tuple[np.ndarray, np.ndarray]:
        # the summary fit asks for scalar(k) then tensor(k) with the same array: compute once
        last = self.__dict__.get("_last")
        if last is not None and last[0] is k:
            return last[1], last[2]
        kk = np.asarray(k, dtype=float)
        ps, pt = averaged_power(self.spectra, np.atleast_1d(kk), None)
        ps, pt = ps.reshape(kk.shape), pt.reshape(kk.shape)
        self._last = (k, ps, pt)
        return ps, pt

    def scalar(self, k: Any) -> np.ndarray:
        return self._both(k)[0]

    def tensor(self, k: Any) -> np.ndarray:
        return self._both(k)[1]

    def describe(self) -> dict:
        inner = getattr(self.spectra, "describe", None)
        return {"view": "period mean", **(inner() if callable(inner) else {})}


def zigzag_rows(ln_p: np.ndarray, floor: float = ZIGZAG_FLOOR) -> np.ndarray:
    """Rows of a table where ln P shows unresolved oscillation (see the module docstring)."""
    ln_p = np.asarray(ln_p, dtype=float)
    n = len(ln_p)
    mask = np.zeros(n, bool)
    if n < 4:
        return mask
    d = np.diff(ln_p)
    big = np.abs(d) > floor
    # extremum at row i (1..n-2): the steps on both sides have opposite signs and are big
    turn = np.zeros(n, bool)
    turn[1:-1] = (np.sign(d[:-1]) != np.sign(d[1:])) & big[:-1] & big[1:]
    seed = turn & (np.roll(turn, 1) | np.roll(turn, -1))
    seed[0] = seed[-1] = False
    if not seed.any():
        return mask
    idx = np.nonzero(seed)[0]
    # close gaps of up to 4 rows between seeds, then grow by 2 rows each side
    for a, b in zip(idx[:-1], idx[1:], strict=True):
        if b - a <= 5:
            mask[a:b + 1] = True
    mask[idx] = True
    grown = mask.copy()
    for shift in (1, 2):
        grown[shift:] |= mask[:-shift]
        grown[:-shift] |= mask[shift:]
    return grown


def running_mean(ln_k: np.ndarray, p: np.ndarray, rows: np.ndarray, width: float) -> np.ndarray:
    """P with the given rows replaced by its mean over a triangle of full ``width`` in ln k.

    Two passes of :func:`top_hat_mean` with half the width (only the given rows change).
    """
    half = 0.5 * width
    return top_hat_mean(ln_k, top_hat_mean(ln_k, p, rows, half), rows, half)


def top_hat_mean(ln_k: np.ndarray, p: np.ndarray, rows: np.ndarray, width: float
                 ) -> np.ndarray:
    """P with the given rows replaced by the mean of P over a top-hat of ``width`` in ln k.

    P is taken constant over the ln k span each row represents (half-way to its neighbours),
    and the window integrates those spans exactly, partial ones included, so that the result
    does not jump when a window edge crosses a row.
    """
    ln_k = np.asarray(ln_k, dtype=float)
    p = np.asarray(p, dtype=float)
    out = p.copy()
    if not rows.any():
        return out
    edges = np.concatenate([[ln_k[0]], 0.5 * (ln_k[1:] + ln_k[:-1]), [ln_k[-1]]])
    cum = np.concatenate([[0.0], np.cumsum(np.diff(edges) * p)])
    centre = ln_k[rows]
    lo = np.maximum(centre - 0.5 * width, edges[0])
    hi = np.minimum(centre + 0.5 * width, edges[-1])
    out[rows] = (np.interp(hi, edges, cum) - np.interp(lo, edges, cum)) / (hi - lo)
    return out


def window_width(ln_k: np.ndarray, rows: np.ndarray, resolution: float | None) -> float:
    """Width in ln k of the running mean: max(resolution, MIN_WINDOW_ROWS median spacings)."""
    spacing = np.diff(ln_k)
    inside = rows[1:] & rows[:-1]
    typical = float(np.median(spacing[inside])) if inside.any() else float(np.median(spacing))
    base = MIN_WINDOW_ROWS * typical
    return base if resolution is None or not math.isfinite(resolution) else max(resolution,
                                                                                 base)


def split_rows(spectra: Any) -> tuple[Any, Any] | None:
    """Two tables made of the even and of the odd rows of a plain table (None otherwise).

    Both keep the first and last row so that they cover the same range. Projecting both
    measures how much a result depends on where an aliased table happened to sample.
    """
    from .tabulated import TabulatedSpectra

    if not isinstance(spectra, TabulatedSpectra) or spectra.period_mean is not None:
        return None
    n = len(spectra.k)
    if n < 8:
        return None
    out = []
    for start in (0, 1):
        idx = np.unique(np.concatenate([[0], np.arange(start, n, 2), [n - 1]]))
        out.append(TabulatedSpectra(spectra.k[idx], spectra.scalar_values[idx],
                                    spectra.tensor_values[idx], label=spectra.label,
                                    extrapolate=spectra.extrapolate))
    return out[0], out[1]
