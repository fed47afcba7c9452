"""Projection of primordial spectra onto the temperature power at multipoles 2-29.

    D_ell = W_s @ P_s(k_j) + W_t @ P_t(k_j)      (micro-K^2, unanchored)

on fixed nodes k_j, ``NODES_PER_DECADE`` = 200 per decade, log-spaced over [``K_MIN``,
``K_MAX``] = [1e-5, 0.2] Mpc^-1 (861 nodes). Between nodes P is taken linear in ln k (hat
functions), and each matrix element is the exact integral of the kernel of :mod:`.kernels`
against one hat function:

    W_(ell j) = 2 ell (ell+1) T_CMB^2 int dln k Theta_ell(k)^2 hat_j(ln k),

by Gauss-Legendre panels no wider than a quarter period of j_ell(k chi_*)^2 (pi / chi_* in k).
The Sachs-Wolfe term is evaluated at every quadrature node; the late-ISW transfer (smooth in k,
evaluated on 60 nodes per decade, cubic spline of k I_ell(k) in ln k: 1e-5 of Theta) and the
tensor transfer (oscillating with period 2 pi/eta_0 in k: nodes 2e-5 Mpc^-1 apart above 1e-3,
none above 0.02 Mpc^-1, where its share of D_ell^T is below 3e-8) are interpolated.
Left out: power below 1e-5 Mpc^-1 (5e-6 of D_2 for a flat spectrum) and above 0.2 Mpc^-1
(6e-5 of D_29: Sachs-Wolfe tail 1/(4 (k chi_*)^2) and late-ISW Limber tail).

Resolution and oscillations: the projection is exact for spectra linear in ln k between
nodes. The primordial spectra are therefore read through the period-mean protocol of
:mod:`bouncelike.spectra.oscillations` with ``resolution`` = 4 node spacings (0.046 in ln k):
an oscillation whose local period in ln k is shorter is replaced by its period mean, a longer
one is integrated pointwise (at least 4 nodes per period). Criterion in k: at k = 7e-5 Mpc^-1
(the bottom of the ell = 2 kernel) periods below 3e-6 Mpc^-1 are averaged, at k = 1e-3 below
5e-5. The dressed-metric features (period pi k_LQC / D ~ 4e-6 Mpc^-1 for k_LQC ~ 1e-3 Mpc^-1,
D ~ 1e3) are far finer than the finest structure of any kernel (pi/chi_* = 2.3e-4 Mpc^-1, the
oscillation of j_ell(k chi_*)^2; the main lobe of ell = 2 spans ~7e-5-4e-4), so where they are
averaged the sky indeed sees only their mean; the neglected correlation is of order
period / (pi/chi_*) (4e-6 / 2.3e-4 ~ 2% for the example) of the oscillating part, which itself
averages out over the kernel (tests/test_sky_projection.py integrates such a spectrum
directly).
Doubling the nodes changes D_ell by <= 1.3e-4 (relative) for the fast bounce model's featured
spectra and by <= 5.3e-4 for the forward model's (aliased, smoothed) tables of the featured
examples (measured).

The matrices take ~3 s to build; they ship as ``data/low_ell_projection.npz`` (rebuild with
``python3 -m bouncelike.sky.projection``; a test checks the shipped file equals a fresh
build).
"""

from __future__ import annotations

import ast
import functools
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from scipy.interpolate import CubicSpline

from ..errors import InputError, NotEvaluable
from ..spectra.oscillations import averaged_power
from .cosmology import LateUniverse, planck18_late_universe
from .kernels import dell_prefactor, late_isw_transfer, sachs_wolfe_transfer, tensor_transfer

ELL_MIN, ELL_MAX = 2, 29
K_MIN, K_MAX = 1e-5, 0.2
NODES_PER_DECADE = 200
ISW_NODES_PER_DECADE = 60
TENSOR_K_MAX = 0.02
TENSOR_STEP = 2e-5
TENSOR_LOG_TOP = 1e-3
#: Periods (in ln k) shorter than this many node spacings are averaged.
RESOLVED_SPACINGS = 4.0
DATA = Path(__file__).with_name("data")
SHIPPED = DATA / "low_ell_projection.npz"
_GL_X, _GL_W = np.polynomial.legendre.leggauss(8)


@dataclass(frozen=True, eq=False)
class SkyProjection:
    """Matrices of the projection (see the module docstring); D_ell in micro-K^2."""

    ells: np.ndarray
    k: np.ndarray
    scalar: np.ndarray
    scalar_sachs_wolfe: np.ndarray
    tensor: np.ndarray
    nodes_per_decade: int
    universe: dict

    @property
    def spacing(self) -> float:
        """Node spacing in ln k."""
        return math.log(10.0) / self.nodes_per_decade

    @property
    def resolution(self) -> float:
        """Shortest period in ln k integrated pointwise (shorter ones: period mean)."""
        return RESOLVED_SPACINGS * self.spacing

    def dell(self, ps: np.ndarray, pt: np.ndarray) -> np.ndarray:
        """Unanchored D_ell from P_s and P_t on the nodes (Sachs-Wolfe + late ISW + tensors)."""
        return self.scalar @ ps + self.tensor @ pt

    def dell_sachs_wolfe(self, ps: np.ndarray, pt: np.ndarray) -> np.ndarray:
        """The same without the late ISW term of the scalars (anchoring-error estimate)."""
        return self.scalar_sachs_wolfe @ ps + self.tensor @ pt

    def power_on_nodes(self, spectra: Any) -> tuple[np.ndarray, np.ndarray]:
        """P_s, P_t on the nodes through the period-mean protocol; checks the k coverage.

        Raises :class:`InputError` when a table does not cover [K_MIN, K_MAX] and
        :class:`NotEvaluable` when the spectra are not positive and finite there.
        """
        k_lo, k_hi = getattr(spectra, "k_min", None), getattr(spectra, "k_max", None)
        if (k_lo is not None and k_hi is not None and not getattr(spectra, "extrapolate", False)
                and (k_lo > K_MIN * (1 + 1e-9) or k_hi < K_MAX * (1 - 1e-9))):
            raise InputError(
                f"the large-scale temperature term needs the primordial spectra on "
                f"{K_MIN:g}-{K_MAX:g} Mpc^-1, but they cover {k_lo:.4g}-{k_hi:.4g} Mpc^-1; "
                "extend the table")
        ps, pt = averaged_power(spectra, self.k, self.resolution)
        if not (np.all(np.isfinite(ps)) and np.all(ps > 0)):
            raise NotEvaluable("the scalar spectrum is not positive and finite on "
                               f"{K_MIN:g}-{K_MAX:g} Mpc^-1 (large-scale temperature term)")
        if not (np.all(np.isfinite(pt)) and np.all(pt >= 0)):
            raise NotEvaluable("the tensor spectrum is negative or not finite on "
                               f"{K_MIN:g}-{K_MAX:g} Mpc^-1 (large-scale temperature term)")
        return ps, pt

    def save(self, path: Path) -> None:
        """Matrices stored in single precision (6e-8 relative: far below every error here)."""
        f32 = np.float32
        np.savez_compressed(path, ells=self.ells, k=self.k, scalar=self.scalar.astype(f32),
                            scalar_sachs_wolfe=self.scalar_sachs_wolfe.astype(f32),
                            tensor=self.tensor.astype(f32),
                            nodes_per_decade=self.nodes_per_decade,
                            universe=np.array(repr(sorted(self.universe.items()))))


def node_grid(nodes_per_decade: int = NODES_PER_DECADE) -> np.ndarray:
    n = int(round(nodes_per_decade * math.log10(K_MAX / K_MIN))) + 1
    return np.geomspace(K_MIN, K_MAX, n)


@functools.lru_cache(maxsize=2)
def transfer_tables(isw_nodes_per_decade: int = ISW_NODES_PER_DECADE,
                    tensor_step: float = TENSOR_STEP) -> tuple:
    """Late-ISW and tensor transfers on their own grids (the slow part, ~3 s)."""
    universe = planck18_late_universe()
    ells = np.arange(ELL_MIN, ELL_MAX + 1)
    k_isw = np.geomspace(K_MIN, K_MAX,
                         int(round(isw_nodes_per_decade * math.log10(K_MAX / K_MIN))) + 1)
    isw = late_isw_transfer(ells, k_isw, universe)
    k_low = np.geomspace(K_MIN, TENSOR_LOG_TOP,
                         int(round(isw_nodes_per_decade * math.log10(TENSOR_LOG_TOP / K_MIN))))
    k_t = np.concatenate([k_low[:-1], np.arange(TENSOR_LOG_TOP, TENSOR_K_MAX + 0.5 * tensor_step,
                                                tensor_step)])
    tens = tensor_transfer(ells, k_t, universe)
    return universe, ells, (k_isw, isw), (k_t, tens)


def _quadrature_nodes(k_nodes: np.ndarray, chi_star: float) -> tuple[np.ndarray, ...]:
    """Fine nodes in ln k: (ln k, weight, interval index, fraction t within the interval)."""
    quarter = 0.25 * math.pi / chi_star
    ln_nodes = np.log(k_nodes)
    xs, ws, js, ts = [], [], [], []
    for j in range(len(k_nodes) - 1):
        n_panels = max(1, int(math.ceil((k_nodes[j + 1] - k_nodes[j]) / quarter)))
        edges = np.linspace(ln_nodes[j], ln_nodes[j + 1], n_panels + 1)
        half = 0.5 * np.diff(edges)
        mid = 0.5 * (edges[1:] + edges[:-1])
        x = (mid[:, None] + half[:, None] * _GL_X).ravel()
        xs.append(x)
        ws.append((half[:, None] * _GL_W).ravel())
        js.append(np.full(len(x), j))
        ts.append((x - ln_nodes[j]) / (ln_nodes[j + 1] - ln_nodes[j]))
    return tuple(np.concatenate(a) for a in (xs, ws, js, ts))


def build_projection(nodes_per_decade: int = NODES_PER_DECADE, *,
                     isw_nodes_per_decade: int = ISW_NODES_PER_DECADE,
                     tensor_step: float = TENSOR_STEP) -> SkyProjection:
    """Build the projection matrices (see the module docstring)."""
    universe, ells, (k_isw, isw), (k_t, tens) = transfer_tables(isw_nodes_per_decade,
                                                                tensor_step)
    k_nodes = node_grid(nodes_per_decade)
    x, w, j, t = _quadrature_nodes(k_nodes, universe.chi_star)
    kq = np.exp(x)
    sw = sachs_wolfe_transfer(ells, kq, universe.chi_star)
    isw_q = CubicSpline(np.log(k_isw), isw * k_isw, axis=1)(x) / kq
    full = sw + isw_q
    tensor_q = np.where(kq <= k_t[-1], CubicSpline(np.log(k_t), tens, axis=1)(
        np.minimum(x, math.log(k_t[-1]))), 0.0)
    pref = dell_prefactor(ells, universe.t_cmb_uK)[:, None]
    mats = []
    for theta in (full, sw, tensor_q):
        integrand = pref * theta**2 * w
        m = np.zeros((len(ells), len(k_nodes)))
        for col, weight in ((j, 1.0 - t), (j + 1, t)):
            for i in range(len(ells)):
                m[i] += np.bincount(col, weights=integrand[i] * weight, minlength=len(k_nodes))
        mats.append(m)
    return SkyProjection(ells=ells, k=k_nodes, scalar=mats[0], scalar_sachs_wolfe=mats[1],
                         tensor=mats[2], nodes_per_decade=nodes_per_decade,
                         universe=_provenance(universe))


def _provenance(universe: LateUniverse) -> dict:
    return {**universe.as_dict(), "k_min": K_MIN, "k_max": K_MAX,
            "isw_nodes_per_decade": ISW_NODES_PER_DECADE, "tensor_k_max": TENSOR_K_MAX,
            "tensor_step": TENSOR_STEP}


@functools.lru_cache(maxsize=1)
def load_projection() -> SkyProjection:
    """The shipped projection (``data/low_ell_projection.npz``), built when absent. The late
    universe it was built with is read from the file (no astropy import at scoring time);
    tests/test_sky_projection.py checks it against astropy's Planck18 of this installation."""
    if SHIPPED.is_file():
        d = np.load(SHIPPED, allow_pickle=False)
        universe = dict(ast.literal_eval(str(d["universe"])))  # a literal, never code
        f64 = np.float64
        return SkyProjection(ells=d["ells"], k=d["k"], scalar=d["scalar"].astype(f64),
                             scalar_sachs_wolfe=d["scalar_sachs_wolfe"].astype(f64),
                             tensor=d["tensor"].astype(f64),
                             nodes_per_decade=int(d["nodes_per_decade"]),
                             universe=universe)
    return build_projection()


def main() -> None:  # pragma: no cover - maintenance entry point
    """Rebuild the shipped matrices: python3 -m bouncelike.sky.projection."""
    proj = build_projection()
    proj.save(SHIPPED)
    print(f"wrote {SHIPPED.name}: {len(proj.ells)} multipoles x {len(proj.k)} nodes")


if __name__ == "__main__":  # pragma: no cover
    main()
