"""Speed of the anisotropic (and other canonical) e-fold distributions against the isotropic one.

Run from the repository root::

    python3 benchmarks/anisotropic_speed.py [--samples 40] [--scipy-samples 10] [--workers 1]

Times ``efolds_distribution`` for the same flat-phase draws (V = m^2 phi^2 / 2, m = 1.21e-6,
rho_0 log-uniform in [1e-18, 1e-16], default tolerances rtol = 1e-10) with

* ``isotropic``: the compiled isotropic engine (the reference of the ratios);
* ``bianchi_i`` with shear_ratio 0 and 1e-3, ``asymmetric`` (rho_0 window moved to
  [1e-12, 1e-10], the de Sitter-like branch), ``condensate`` with its extra term
  (q = 3e-12) and ``condensate (canonical)`` (the isotropic physics through the canonical
  driver), each through the compiled canonical driver (``--samples`` draws) and through the
  scipy-stepped reference driver (DOP853 stepped from Python: the straightforward baseline,
  ``--scipy-samples`` draws).

Prints seconds per trajectory of both drivers, right-hand-side evaluations per trajectory, the
median e-folds, the ratio compiled / isotropic and the speed-up compiled / scipy, the largest
difference of the e-folds between the two drivers on the same ``--scipy-samples`` draws, and
the agreement of the isotropic-limit cases with the isotropic engine.
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
from bouncelike.background.initial import (  # noqa: E402
    ClassicalStart,
    ContractingStart,
    IntegrationSettings,
)
from bouncelike.background.isotropic import IsotropicDynamics  # noqa: E402
from bouncelike.background.potentials import Quadratic  # noqa: E402
from bouncelike.parallel import make_pool  # noqa: E402
from bouncelike.units import critical_density  # noqa: E402


def _timed(dyn, pot, prior, n, pool):
    t0 = time.perf_counter()
    d = efolds_distribution(dyn, pot, prior, n, seed=7, pool=pool, convergence_samples=0)
    return d, (time.perf_counter() - t0) / n


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=40)
    ap.add_argument("--scipy-samples", type=int, default=10)
    ap.add_argument("--workers", type=int, default=1)
    args = ap.parse_args()
    rho_c = critical_density()
    pot = Quadratic(1.21e-6)
    prior = PhasePrior(1e-16, 2.0)
    iso = IsotropicDynamics(rho_c)
    start = ContractingStart(1e-16, 1.0)
    fast = IntegrationSettings(max_time=1e-6, dense_points=0)
    iso.evolve(pot, ClassicalStart(1.0, 0.0), fast)  # compile / load before timing
    cases = [
        ("bianchi_i shear 0", lambda e: BianchiIDynamics(rho_c, 0.0, engine=e), prior),
        ("bianchi_i shear 1e-3", lambda e: BianchiIDynamics(rho_c, 1e-3, 30.0, engine=e), prior),
        ("asymmetric", lambda e: AsymmetricDynamics(rho_c, engine=e), PhasePrior(1e-10, 2.0)),
        ("condensate q=3e-12", lambda e: CondensateDynamics(
            rho_c, condensate_term=3e-12, canonical_engine=e), prior),
        ("condensate (canonical)", lambda e: CondensateDynamics(
            rho_c, canonical=True, canonical_engine=e), prior),
    ]
    for _, make, _ in cases:  # compile / load the canonical kernel before timing
        make("compiled").evolve_summary(pot, start, IntegrationSettings(max_time=1.0))
    # first distribution pays one-off imports (scipy.stats for the mode): keep it out of timing
    efolds_distribution(iso, pot, prior, 5, seed=1, convergence_samples=0)
    pool = make_pool(args.workers)
    results = {}
    try:
        d_iso, t_iso = _timed(iso, pot, prior, args.samples, pool)
        for label, make, pr in cases:
            dc, tc = _timed(make("compiled"), pot, pr, args.samples, pool)
            ds, ts = _timed(make("scipy"), pot, pr, args.scipy_samples, pool)
            # the prior draws depend on their number: the same count for the comparison
            same = _timed(make("compiled"), pot, pr, args.scipy_samples, pool)[0]
            diff = float(np.nanmax(np.abs(same.samples - ds.samples)))
            results[label] = (dc, tc, ts, diff)
    finally:
        pool.close()
    print(f"{args.samples} draws compiled / {args.scipy_samples} draws scipy, "
          f"{args.workers} worker(s), rtol 1e-10")
    print(f"{'case':<24} {'compiled':>10} {'scipy':>10} {'rhs/traj':>9} {'median N':>9} "
          f"{'/isotropic':>10} {'speed-up':>9} {'max|dN|':>9}")
    print(f"{'isotropic (compiled)':<24} {t_iso:9.5f}s {'-':>10} "
          f"{d_iso.mean_rhs_evaluations:9.0f} {d_iso.median:9.2f} {1.0:10.2f} {'-':>9} {'-':>9}")
    for label, (dc, tc, ts, diff) in results.items():
        print(f"{label:<24} {tc:9.5f}s {ts:9.5f}s {dc.mean_rhs_evaluations:9.0f} "
              f"{dc.median:9.2f} {tc / t_iso:10.2f} {ts / tc:9.1f} {diff:9.1e}")
    ref = d_iso.samples
    for label in ("condensate (canonical)", "bianchi_i shear 0"):
        diff = np.nanmax(np.abs(results[label][0].samples - ref))
        print(f"isotropic limit, {label} (compiled): max |N - N_isotropic| = {diff:.2e} e-folds")
    return 0


if __name__ == "__main__":
    sys.exit(main())
