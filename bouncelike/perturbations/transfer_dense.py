"""Densely sampled bounce spectra of one background, for figures.

The features oscillate with period pi/D in x = k/k_LQC (pi/(x D) in ln k, D ~ 1e3-1e4): any
grid of a few hundred modes aliases them. The exact decomposition of a background at nodes
x_j (:mod:`.transfer_decomposition`: smooth |alpha|, rho, residual phase theta and P_std,
interpolated in ln x) and the exact fast phase 2 x D give P at any x between the nodes
(:func:`reconstruct`), together with the period mean P_std |alpha|^2 (1 + rho^2) and the
envelopes P_std |alpha|^2 (1 -+ rho)^2 (:func:`period_mean`).
"""

from __future__ import annotations

import math

import numpy as np

from .transfer_decomposition import FIELDS, Decomposition, _theta, _tilt, decompose


def reconstruct(dec: Decomposition, x: np.ndarray) -> np.ndarray:
    """P(x) = P_std |alpha|^2 |1 + rho e^(i phi)|^2 between the nodes of ``dec``."""
    x = np.asarray(x, dtype=float)
    lg, lx = np.log(dec.x), np.log(x)
    tilt = _tilt(dec.x, dec.ln_standard)
    th = np.unwrap(_theta(dec, tilt))  # defined mod 2 pi: interpolate it continuously
    D = dec.duration
    phi = (2 * x * D - math.pi + np.interp(lx, lg, tilt) * math.pi / 2
           + np.interp(lx, lg, th))
    base = np.interp(lx, lg, dec.ln_standard + 2 * dec.ln_alpha)
    return np.exp(base) * np.abs(1 + np.interp(lx, lg, dec.rho) * np.exp(1j * phi)) ** 2


def period_mean(dec: Decomposition, x: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                            np.ndarray]:
    """(period mean, lower envelope, upper envelope) of P at ``x`` (interpolated in ln x)."""
    lx, lg = np.log(np.asarray(x, dtype=float)), np.log(dec.x)
    base = np.exp(np.interp(lx, lg, dec.ln_standard + 2 * dec.ln_alpha))
    rho = np.interp(lx, lg, dec.rho)
    return base * (1 + rho**2), base * (1 - rho) ** 2, base * (1 + rho) ** 2


def node_error(dec: Decomposition) -> float:
    """Max relative difference of :func:`reconstruct` from the integrated spectrum at the
    nodes (a check of the reconstruction)."""
    return float(np.max(np.abs(reconstruct(dec, dec.x) / np.exp(dec.ln_power) - 1)))


def dense_spectrum(tab, x_nodes: np.ndarray, prescription: str = "dressed_metric",
                   state: str = "remote_past", points_per_period: float = 5.0,
                   max_points: int = 120_000, visible: float = 1e-2) -> dict:
    """Spectra of one background between its integrated wavenumbers, for figures.

    The grid holds ``points_per_period`` points per oscillation where rho > ``visible``
    (relative modulation 2 rho; at most ``max_points``). ``node_error``: max relative
    difference from the integrated spectrum at the nodes.
    """
    x_nodes = np.asarray(x_nodes, dtype=float)
    decs = {f: decompose(tab, x_nodes, f, prescription, state) for f in FIELDS}
    D = decs["scalar"].duration
    lg = np.log(x_nodes)
    osc = np.zeros(len(x_nodes), bool)
    for f in FIELDS:
        osc |= decs[f].rho > visible
    pieces = [lg]
    n_need = 0.0
    if osc.any():
        lo, hi = lg[osc].min(), lg[osc].max()
        # d ln x per point = period / points_per_period = pi / (x D points_per_period)
        n_need = points_per_period * D * (math.exp(hi) - math.exp(lo)) / math.pi
        n = int(min(max(n_need, 2), max_points))
        pieces.append(np.log(np.linspace(math.exp(lo), math.exp(hi), n)))
    xd = np.exp(np.unique(np.concatenate(pieces)))
    out = {"x": xd, "conformal_duration": D,
           "node_error": max(node_error(decs[f]) for f in FIELDS),
           "resolved": bool(not osc.any() or n_need <= max_points)}
    for f in FIELDS:
        out[f] = reconstruct(decs[f], xd)
    return out
