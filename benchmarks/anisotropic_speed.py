"""Speed of the anisotropic (and other canonical) e-fold distributions against the isotropic one.

Run from the repository root::

    python3 benchmarks/anisotropic_speed.py [--samples 40] [--workers 1]

Times ``efolds_distribution`` for the same ``--samples`` flat-phase draws (V = m^2 phi^2 / 2,
m = 1.21e-6, rho_0 log-uniform in [1e-18, 1e-16], default tolerances rtol = 1e-10) with

* ``isotropic``: the compiled isotropic engine (the reference of the ratios);
* ``condensate (canonical)``: the same isotropic physics through the canonical-variable driver
  of the anisotropic dynamics (scipy DOP853 stepped from Python): the straightforward baseline
  that isolates the cost of the driver from the cost of the anisotropic equations;
* ``bianchi_i`` with shear_ratio 0 and 1e-3, and ``asymmetric`` (rho_0 window moved to
  [1e-12, 1e-10], the de Sitter-like branch).

Prints seconds per trajectory, right-hand-side evaluations per trajectory, the median e-folds
and the ratio time / time(isotropic) for each, and the agreement of the isotropic-limit cases
(canonical condensate and unsheared Bianchi I against the isotropic engine) on the same draws.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bouncelike.background.asymmetric import AsymmetricDynamics  # noqa: E402
from bouncelike.background.bianchi import BianchiIDynamics  # noqa: E402
from bouncelike.background.condensate import CondensateDynamics  # noqa: E402
from bouncelike.background.efolds import PhasePrior, efolds_distribution  # noqa: E402
from bouncelike.background.initial import ClassicalStart, IntegrationSettings  # noqa: E402
from bouncelike.background.isotropic import IsotropicDynamics  # noqa: E402
from bouncelike.background.potentials import Quadratic  # noqa: E402
from bouncelike.parallel import make_pool  # noqa: E402
from bouncelike.units import critical_density  # noqa: E402


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=40)
    ap.add_argument("--workers", type=int, default=1)
    args = ap.parse_args()
    rho_c = critical_density()
    pot = Quadratic(1.21e-6)
    prior = PhasePrior(1e-16, 2.0)
    iso = IsotropicDynamics(rho_c)
    # compile / load the isotropic kernel before timing
    iso.evolve(pot, ClassicalStart(1.0, 0.0), IntegrationSettings(max_time=1e-6, dense_points=0))
    cases = [
        ("isotropic (compiled)", iso, prior),
        ("condensate (canonical)", CondensateDynamics(rho_c, canonical=True), prior),
        ("bianchi_i shear 0", BianchiIDynamics(rho_c, 0.0), prior),
        ("bianchi_i shear 1e-3", BianchiIDynamics(rho_c, 1e-3, 30.0), prior),
        ("asymmetric", AsymmetricDynamics(rho_c), PhasePrior(1e-10, 2.0)),
    ]
    pool = make_pool(args.workers)
    results = {}
    try:
        for label, dyn, pr in cases:
            t0 = time.perf_counter()
            d = efolds_distribution(dyn, pot, pr, args.samples, seed=7, pool=pool,
                                    convergence_samples=0)
            dt = time.perf_counter() - t0
            results[label] = (d, dt)
    finally:
        pool.close()
    base = results["isotropic (compiled)"][1]
    print(f"{args.samples} draws, {args.workers} worker(s), rtol 1e-10")
    print(f"{'case':<24} {'s/traj':>9} {'rhs/traj':>9} {'median N':>9} {'ratio':>8}")
    for label, (d, dt) in results.items():
        print(f"{label:<24} {dt / args.samples:9.4f} {d.mean_rhs_evaluations:9.0f} "
              f"{d.median:9.2f} {dt / base:8.1f}")
    ref = results["isotropic (compiled)"][0].samples
    for label in ("condensate (canonical)", "bianchi_i shear 0"):
        diff = np.nanmax(np.abs(results[label][0].samples - ref))
        print(f"isotropic limit, {label}: max |N - N_isotropic| = {diff:.2e} e-folds")
    return 0


if __name__ == "__main__":
    sys.exit(main())
