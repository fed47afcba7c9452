"""Cached transfer of the bounce: ratio of bounce to standard spectra vs x = k/k_LQC.

T(x) = P(k)/P_std(k), P_std the power law fitted to the same spectrum over x in [20, 100]
(where the bounce has left no trace, test_perturbation_spectra), computed for a set of
backgrounds (quadratic inflaton, masses and bounce field values spanning the sample below) and
averaged. What T really depends on was measured (this module's certificate and
tests/test_perturbation_transfer.py): above ~10 k_LQC it is universal, the same for every
background to < 1e-3; between ~3 and 10 k_LQC to ~5-9%; below ~3 k_LQC the oscillation phases
are set by the conformal time between the bounce and the onset of inflation, i.e. by the bounce
field value and the mass, and no function of x alone reproduces them (O(1) differences).
``x_certified`` is the smallest x above which the spread of T across the sample backgrounds stays
within ``tolerance`` (0.5%, half the 1% target); the fast model flags any window reaching below
it.

:class:`BounceSpectraModel` evaluates a power law times T in well under a millisecond.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError

SAMPLE_MASSES = (1.2e-6, 3.0e-6)
SAMPLE_BOUNCE_FIELDS = (0.7, 1.0, 1.5, 2.5)
X_GRID = np.geomspace(0.01, 100.0, 600)
UV_FIT = (20.0, 100.0)
DATA = Path(__file__).with_name("data")


@dataclass(frozen=True)
class TransferTable:
    prescription: str
    state: str
    x: np.ndarray
    ln_ts: np.ndarray          # mean over the sample of ln T_s
    ln_tt: np.ndarray
    spread: np.ndarray         # max |T_sample/T_mean - 1| over samples and both fields
    growth_per_x: float        # d ln T / dx in the UV (deformed algebra); 0 otherwise
    tolerance: float

    @property
    def x_certified(self) -> float:
        bad = np.nonzero(self.spread > self.tolerance)[0]
        return float(self.x[bad[-1] + 1]) if len(bad) and bad[-1] + 1 < len(self.x) else (
            float(self.x[0]) if not len(bad) else math.inf)

    def transfer(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(T_s, T_t) at x = k/k_LQC; above the grid: 1, or the WKB growth (deformed)."""
        lx = np.log(np.asarray(x, dtype=float))
        lg = np.log(self.x)
        ts = np.interp(lx, lg, self.ln_ts)
        tt = np.interp(lx, lg, self.ln_tt)
        above = lx > lg[-1]
        if above.any() and self.growth_per_x:
            xe = np.exp(np.minimum(lx[above], 700.0))
            extra = np.minimum(self.growth_per_x * (xe - self.x[-1]), 600.0)
            ts[above] = self.ln_ts[-1] + extra
            tt[above] = self.ln_tt[-1] + extra
        return np.exp(ts), np.exp(tt)

    def save(self, path: Path) -> None:
        np.savez(path, x=self.x, ln_ts=self.ln_ts, ln_tt=self.ln_tt, spread=self.spread,
                 growth=self.growth_per_x, tolerance=self.tolerance,
                 meta=np.array([self.prescription, self.state]))


def _ratio(sp) -> tuple[np.ndarray, np.ndarray]:
    x = sp.k / sp.k_lqc
    uv = (x >= UV_FIT[0]) & (x <= UV_FIT[1])
    out = []
    for p in (sp.scalar, sp.tensor):
        if np.all(np.isfinite(p[uv])):
            c = np.polyfit(np.log(x[uv]), np.log(p[uv]), 1)
        else:  # pragma: no cover
            raise InputError("transfer: non-finite ultraviolet spectrum")
        out.append(np.log(p) - np.polyval(c, np.log(x)))
    return out[0], out[1]


def exact_transfer(mass: float, phi_b: float, prescription: str, state: str,
                   x: np.ndarray = X_GRID) -> tuple[np.ndarray, np.ndarray, float]:
    """ln T_s, ln T_t of one quadratic bounce background (exact mode integration)."""
    from ..background.potentials import Quadratic
    from ..units import critical_density
    from .background import integrate_background
    from .forward import euclidean_growth_rate
    from .spectra import bounce_spectra

    rc = critical_density()
    pot = Quadratic(mass=mass)
    tab = integrate_background(pot, rc, phi_b, math.sqrt(2 * (rc - float(pot.V(phi_b)))),
                               past_density=1e-11)
    sp = bounce_spectra(tab, x * tab.k_lqc, prescription=prescription, state=state)
    if prescription == "deformed_algebra":
        # the ultraviolet rise is the physics here: reference = dressed-metric power law
        ref = bounce_spectra(tab, x * tab.k_lqc, state=state)
        ls, lt = _ratio(ref)
        ls = ls + np.log(sp.scalar / ref.scalar)
        lt = lt + np.log(sp.tensor / ref.tensor)
        return ls, lt, euclidean_growth_rate(tab) * tab.k_lqc
    ls, lt = _ratio(sp)
    return ls, lt, 0.0


def build_transfer(prescription: str = "dressed_metric", state: str = "remote_past",
                   tolerance: float = 0.005) -> TransferTable:
    """Average T over the sample; certify where the sample spread stays below ``tolerance``.

    The spread threshold (0.5%) is half the 1% target so that backgrounds outside the sample
    (the random points of :func:`certificate`) stay within the target.
    """
    rows = [exact_transfer(m, f, prescription, state) for m in SAMPLE_MASSES
            for f in SAMPLE_BOUNCE_FIELDS]
    ls = np.array([r[0] for r in rows])
    lt = np.array([r[1] for r in rows])
    ms, mt = ls.mean(axis=0), lt.mean(axis=0)
    spread = np.maximum(np.abs(np.exp(ls - ms) - 1).max(axis=0),
                        np.abs(np.exp(lt - mt) - 1).max(axis=0))
    growth = float(np.mean([r[2] for r in rows]))
    return TransferTable(prescription, state, X_GRID.copy(), ms, mt, spread, growth, tolerance)


@functools.lru_cache(maxsize=4)
def load_transfer(prescription: str = "dressed_metric",
                  state: str = "remote_past") -> TransferTable:
    """The shipped cache (bouncelike/perturbations/data/), built on the fly when absent."""
    path = DATA / f"transfer_{prescription}_{state}.npz"
    if path.is_file():
        d = np.load(path)
        return TransferTable(prescription, state, d["x"], d["ln_ts"], d["ln_tt"], d["spread"],
                             float(d["growth"]), float(d["tolerance"]))
    return build_transfer(prescription, state)


class BounceSpectraModel:
    """Fast bounce spectra for sampling: power law x cached transfer T(k/k_LQC).

    Parameters (``spectra(params)``): ``ln_1e10_As``, ``n_s``, ``r`` (standard slow-roll part at
    the pivot, n_t = -r/8) and ``log10_k_lqc`` (bounce scale in Mpc^-1). ``derived(params)``
    gives ``certified`` (the window 1e-4-0.2 Mpc^-1 lies above x_certified k_LQC) and
    ``x_window_min`` = 1e-4 Mpc^-1 / k_LQC.
    """

    parameter_names = ("ln_1e10_As", "n_s", "r", "log10_k_lqc")

    def __init__(self, prescription: str = "dressed_metric", state: str = "remote_past",
                 pivot: float = 0.05, k_grid: np.ndarray | None = None):
        self.table = load_transfer(prescription, state)
        self.pivot = pivot
        self.k = np.geomspace(1e-5, 1.0, 300) if k_grid is None else np.asarray(k_grid)

    def spectra(self, params: dict):
        from ..spectra.tabulated import TabulatedSpectra

        a_s = math.exp(params["ln_1e10_As"]) * 1e-10
        r = params.get("r", 0.0)
        x = self.k / 10 ** params["log10_k_lqc"]
        ts, tt = self.table.transfer(x)
        lk = np.log(self.k / self.pivot)
        ps = a_s * np.exp((params["n_s"] - 1) * lk) * ts
        pt = r * a_s * np.exp(-r / 8 * lk) * tt if r > 0 else np.zeros_like(ps)
        notes = () if self.derived(params)["certified"] else (
            "bounce transfer used below its certified range (features depend on the "
            "background there)",)
        return TabulatedSpectra(self.k, ps, pt, notes=notes, label="bounce transfer model")

    def derived(self, params: dict) -> dict:
        xmin = 1e-4 / 10 ** params["log10_k_lqc"]
        return {"certified": bool(xmin >= self.table.x_certified), "x_window_min": xmin}


def certificate(n_points: int = 4, seed: int = 0, prescription: str = "dressed_metric",
                state: str = "remote_past") -> dict:
    """Compare the cache with exact integration at random backgrounds and window positions.

    Draws mass in [1e-6, 4e-6] (log-uniform) and phi_B in [0.7, 2.5], a random placement of the
    7.5 e-fold observable window in x = k/k_LQC (its lower end uniform in ln x over [ln 0.02,
    ln 50]) and reports the max relative error of T over the certified part of each window and,
    separately, over the uncertified part.
    """
    rng = np.random.default_rng(seed)
    tab = load_transfer(prescription, state)
    worst_cert, worst_unc = 0.0, 0.0
    points = []
    for _ in range(n_points):
        m = float(np.exp(rng.uniform(np.log(1e-6), np.log(4e-6))))
        phi_b = float(rng.uniform(0.7, 2.5))
        lo = float(np.exp(rng.uniform(np.log(0.02), np.log(50.0))))
        x = np.geomspace(lo, min(lo * 2000.0, 100.0), 40)
        ls, lt, _ = exact_transfer(m, phi_b, prescription, state,
                                   np.unique(np.concatenate([x, np.geomspace(20, 100, 12)])))
        xs = np.unique(np.concatenate([x, np.geomspace(20, 100, 12)]))
        cs, ct = tab.transfer(xs)
        err = np.maximum(np.abs(cs / np.exp(ls) - 1), np.abs(ct / np.exp(lt) - 1))
        cert = xs >= tab.x_certified
        ec = float(err[cert].max()) if cert.any() else 0.0
        eu = float(err[~cert].max()) if (~cert).any() else 0.0
        worst_cert, worst_unc = max(worst_cert, ec), max(worst_unc, eu)
        points.append({"mass": m, "phi_b": phi_b, "x_min": lo, "max_error_certified": ec,
                       "max_error_uncertified": eu})
    return {"x_certified": tab.x_certified, "tolerance": 0.01, "spread_threshold": tab.tolerance,
            "max_error_certified": worst_cert, "max_error_uncertified": worst_unc,
            "points": points}
