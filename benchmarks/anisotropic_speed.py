"""Speed of the anisotropic (and other canonical) e-fold distributions against the isotropic one.

Run from the repository root::

    python3 benchmarks/anisotropic_speed.py [--samples 40] [--baseline-samples 10] [--workers 1]

Times ``efolds_distribution`` for the same flat-phase draws (V = m^2 phi^2 / 2, m = 1.21e-6,
rho_0 log-uniform in [1e-18, 1e-16], default tolerances rtol = 1e-10) with

* ``isotropic``: the engine's isotropic system (the reference of the ratios);
* ``bianchi_i`` with shear_ratio 0 and 1e-3, ``asymmetric`` (rho_0 window moved to
  [1e-12, 1e-10], the de Sitter-like branch), ``condensate`` with its extra term (q = 3e-12)
  and ``condensate (canonical)`` (the isotropic physics in the loop variables), through the
  engine (``--samples`` draws) and through a straightforward baseline on the first
  ``--baseline-samples`` draws: ``scipy.integrate.solve_ivp`` (DOP853, same tolerances)
  stepping the same compiled right-hand side from Python, one call per stretch (before the
  bounce, after it, after the late switch to the constraint), events by solve_ivp's root
  finding, the first end of inflation.

Prints seconds per trajectory of the engine and of the baseline, right-hand-side evaluations per
trajectory, the median e-folds, the ratio engine / isotropic and the speed-up engine / baseline,
the largest difference of the e-folds between them on the same draws, and the agreement of the
isotropic-limit cases with the isotropic engine.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bouncelike.background import engine, systems  # noqa: E402
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


def baseline_efolds(dyn, pot, initial, settings) -> tuple[float, int]:
    """(inflationary e-folds, right-hand-side evaluations) by solve_ivp on the compiled RHS."""
    system, y0, mode, atol, _, _ = dyn.start(pot, initial, settings)
    kind, pp, _ = engine._kernel(pot)
    n = len(y0)
    out, obs = np.empty(n), np.empty(systems.N_OBS)
    calls = [0]

    def observe(y, m):
        systems.evaluate(system.code, system.parameters, kind, pp, y, m, out, obs)
        return obs

    def rhs(m):
        def f(_t, y):
            calls[0] += 1
            systems.evaluate(system.code, system.parameters, kind, pp, y, m, out, obs)
            return out.copy()
        return f

    def event(fun, direction):
        fun.terminal, fun.direction = True, direction
        return fun

    def acc(y, m):
        o = observe(y, m)
        return o[systems.HUB] ** 2 + o[systems.HDOT]

    kw = {"method": "DOP853", "rtol": settings.rtol}
    t0, y = 0.0, y0
    if mode == systems.PRE:
        sol = solve_ivp(rhs(systems.PRE), (0.0, settings.max_time), y, atol=atol[systems.PRE],
                        events=event(lambda t, y: observe(y, systems.PRE)[systems.HUB], 1), **kw)
        t0 = sol.t[-1]
        y6 = tuple(sol.y[:, -1]) + (0.0,) * (6 - n)
        y = np.array(systems.bounce_switch(system.code, system.parameters, y6, systems.PRE)[0])[:n]
    m = systems.POST
    late = systems._late_density(system.code, system.parameters)
    ln_a_start = None
    while True:
        def start_or_end(_t, y, mm=m, starting=ln_a_start is None):
            o = observe(y, mm)
            if starting:  # start: addot > 0 and V > phidot^2/2
                return min(acc(y, mm), o[systems.POT] - 0.5 * o[systems.PHIDOT] ** 2)
            return -acc(y, mm)  # end: addot < 0

        evs = [event(start_or_end, 1)]
        if m == systems.POST:
            evs.append(event(lambda t, y: observe(y, systems.POST)[systems.RHO] - late, -1))
        sol = solve_ivp(rhs(m), (t0, settings.max_time), y, atol=atol[m], events=evs, **kw)
        t0, y = sol.t[-1], sol.y[:, -1]
        if sol.status != 1:
            return float("nan"), calls[0]
        if len(evs) > 1 and len(sol.t_events[1]):  # the constraint fixes the angle from here
            y6 = tuple(y) + (0.0,) * (6 - n)
            y = np.array(systems.apply_switch(system.code, system.parameters, kind, pp, y6,
                                              m)[0])[:n]
            m = systems.LATE
            continue
        if ln_a_start is None:
            ln_a_start = observe(y, m)[systems.LN_A]
            continue
        return float(observe(y, m)[systems.LN_A] - ln_a_start), calls[0]


def _timed(dyn, pot, prior, n, pool):
    t0 = time.perf_counter()
    d = efolds_distribution(dyn, pot, prior, n, seed=7, pool=pool, convergence_samples=0)
    return d, (time.perf_counter() - t0) / n


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=40)
    ap.add_argument("--baseline-samples", type=int, default=10)
    ap.add_argument("--workers", type=int, default=1)
    args = ap.parse_args()
    rho_c = critical_density()
    pot = Quadratic(1.21e-6)
    prior = PhasePrior(1e-16, 2.0)
    iso = IsotropicDynamics(rho_c)
    start = ContractingStart(1e-16, 1.0)
    settings = IntegrationSettings()
    fast = IntegrationSettings(max_time=1e-6, dense_points=0)
    iso.evolve(pot, ClassicalStart(1.0, 0.0), fast)  # compile / load before timing
    cases = [
        ("bianchi_i shear 0", BianchiIDynamics(rho_c, 0.0), prior),
        ("bianchi_i shear 1e-3", BianchiIDynamics(rho_c, 1e-3, 30.0), prior),
        ("asymmetric", AsymmetricDynamics(rho_c), PhasePrior(1e-10, 2.0)),
        ("condensate q=3e-12", CondensateDynamics(rho_c, condensate_term=3e-12), prior),
        ("condensate (canonical)", CondensateDynamics(rho_c, canonical=True), prior),
    ]
    for _, dyn, _ in cases:  # compile / load before timing
        dyn.evolve_summary(pot, start, IntegrationSettings(max_time=1.0))
    # first distribution pays one-off imports (scipy.stats for the mode): keep it out of timing
    efolds_distribution(iso, pot, prior, 5, seed=1, convergence_samples=0)
    pool = make_pool(args.workers)
    results = {}
    try:
        d_iso, t_iso = _timed(iso, pot, prior, args.samples, pool)
        for label, dyn, pr in cases:
            dc, tc = _timed(dyn, pot, pr, args.samples, pool)
            draws = pr.draw(np.random.default_rng(7), args.samples)
            t0 = time.perf_counter()
            base = [baseline_efolds(dyn, pot, pr.initial(draws, i), settings)
                    for i in range(args.baseline_samples)]
            tb = (time.perf_counter() - t0) / args.baseline_samples
            diff = float(np.nanmax(np.abs(dc.samples[:args.baseline_samples]
                                          - np.array([b[0] for b in base]))))
            results[label] = (dc, tc, tb, np.mean([b[1] for b in base]), diff)
    finally:
        pool.close()
    print(f"{args.samples} draws engine / {args.baseline_samples} draws baseline, "
          f"{args.workers} worker(s), rtol 1e-10")
    print(f"{'case':<24} {'engine':>10} {'baseline':>10} {'rhs/traj':>9} {'base rhs':>9} "
          f"{'median N':>9} {'/isotropic':>10} {'speed-up':>9} {'max|dN|':>9}")
    print(f"{'isotropic':<24} {t_iso:9.5f}s {'-':>10} {d_iso.mean_rhs_evaluations:9.0f} "
          f"{'-':>9} {d_iso.median:9.2f} {1.0:10.2f} {'-':>9} {'-':>9}")
    for label, (dc, tc, tb, rhs_b, diff) in results.items():
        print(f"{label:<24} {tc:9.5f}s {tb:9.5f}s {dc.mean_rhs_evaluations:9.0f} {rhs_b:9.0f} "
              f"{dc.median:9.2f} {tc / t_iso:10.2f} {tb / tc:9.1f} {diff:9.1e}")
    ref = d_iso.samples
    for label in ("condensate (canonical)", "bianchi_i shear 0"):
        diff = np.nanmax(np.abs(results[label][0].samples - ref))
        print(f"isotropic limit, {label}: max |N - N_isotropic| = {diff:.2e} e-folds")
    return 0


if __name__ == "__main__":
    sys.exit(main())
