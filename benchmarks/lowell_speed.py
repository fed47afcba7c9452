"""Cost of the large-scale temperature term (multipoles 2-29): per likelihood call and per
posterior run.

1. Per call: for a power law, a power law handed over as a table (the path featured spectra
   take), the fast bounce model and the physical bounce on the Starobinsky plateau, times one
   log-likelihood call with the pivot sets alone and with the low-ell set added; the
   difference is what the term adds (target: <= 0.3 ms per call). For featured spectra it
   includes the projection of the spectra and of the power law of their pivot summary (the low
   multipoles counted once, likelihood/combined.py). Baseline in the same run: the same
   prediction by direct line-of-sight quadrature per call (the late-ISW and tensor transfers
   integrated along the line of sight, the Sachs-Wolfe term evaluated, and P Theta^2
   integrated over k, without the precomputed matrices); its D_ell are compared with the fast
   ones.
2. Per posterior run: the physical bounce posterior on the Starobinsky plateau
   (priors/bounce_dressed_metric_physical_non_oscillating_starobinsky.toml), a fixed number of
   emcee steps with the same seed, with and without the term (target: with / without <= 1.5).

Run: python3 benchmarks/lowell_speed.py [--steps N]
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # one BLAS thread: like the sampling benchmark

import numpy as np  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from scipy.interpolate import CubicSpline  # noqa: E402

from bouncelike.config import Table  # noqa: E402
from bouncelike.likelihood.gaussian import likelihood_from_config  # noqa: E402
from bouncelike.models.registry import forward_model  # noqa: E402
from bouncelike.perturbations.transfer import BounceSpectraModel  # noqa: E402
from bouncelike.sampling.driver import SamplerSettings, run_sampler  # noqa: E402
from bouncelike.sampling.posterior import ModelPosterior  # noqa: E402
from bouncelike.sampling.priors import load_prior, resolve_prior_path  # noqa: E402
from bouncelike.sky import kernels  # noqa: E402
from bouncelike.sky.cosmology import planck18_late_universe  # noqa: E402
from bouncelike.sky.projection import (  # noqa: E402
    K_MAX,
    K_MIN,
    TENSOR_K_MAX,
    _quadrature_nodes,
    node_grid,
)
from bouncelike.spectra import PowerLawSpectra  # noqa: E402
from bouncelike.spectra.oscillations import averaged_power  # noqa: E402
from bouncelike.spectra.tabulated import TabulatedSpectra  # noqa: E402

PIVOT_SETS = ["planck2018_base", "bk18"]
PHYSICAL_PRIOR = "bounce_dressed_metric_physical_non_oscillating_starobinsky"
PHYSICAL_POINT = {"log10_potential_fraction": -7.35, "mass": 2.45e-6, "N_star": 55.0,
                  "critical_density": 0.40937}


def per_call(func, min_time=0.5):
    n, elapsed = 1, 0.0
    while elapsed < min_time:
        n *= 4
        t0 = time.perf_counter()
        for _ in range(n):
            func()
        elapsed = time.perf_counter() - t0
    best = elapsed / n
    for _ in range(2):  # best of three
        t0 = time.perf_counter()
        for _ in range(n):
            func()
        best = min(best, (time.perf_counter() - t0) / n)
    return best


def direct_dell(spectra, term) -> np.ndarray:
    """Baseline: line-of-sight quadrature per call, anchored like the term."""
    u = planck18_late_universe()
    ells = np.arange(2, 30)
    k_isw = np.geomspace(K_MIN, K_MAX, 261)
    isw = kernels.late_isw_transfer(ells, k_isw, u)
    k_t = np.concatenate([np.geomspace(K_MIN, 1e-3, 120)[:-1],
                          np.arange(1e-3, TENSOR_K_MAX + 1e-5, 2e-5)])
    tens = kernels.tensor_transfer(ells, k_t, u)
    x, w, _, _ = _quadrature_nodes(node_grid(), u.chi_star)
    k = np.exp(x)
    theta_s = (kernels.sachs_wolfe_transfer(ells, k, u.chi_star)
               + CubicSpline(np.log(k_isw), isw * k_isw, axis=1)(x) / k)
    theta_t = np.where(k <= k_t[-1], CubicSpline(np.log(k_t), tens, axis=1)(
        np.minimum(x, np.log(k_t[-1]))), 0.0)
    ps, pt = averaged_power(spectra, k, term.projection.resolution)
    raw = kernels.dell_prefactor(ells, u.t_cmb_uK) * ((theta_s**2 * ps + theta_t**2 * pt) @ w)
    rows = [list(ells).index(int(e)) for e in term.ells]
    return raw[rows] * (term.reference_dell / term.reference_unanchored)


def likelihood(sets):
    return likelihood_from_config(Table({"likelihood": {"sets": sets}}, "", ("likelihood",)))


def per_call_table(without, with_term, term) -> None:
    bounce = BounceSpectraModel().spectra({"ln_1e10_As": 3.044, "n_s": 0.9649, "r": 0.08,
                                           "log10_k_lqc": -3.5,
                                           "log10_conformal_duration": 3.7})
    k = np.geomspace(1e-5, 1.0, 300)
    pl = PowerLawSpectra(3.044, 0.9649, r=0.01)
    physical = forward_model("bounce_physical_dressed_metric_non_oscillating_starobinsky")
    cases = {"power law (exact pivot re-expansion)": pl,
             "power law as a table (pivot fit)": TabulatedSpectra(k, pl.scalar(k),
                                                                  pl.tensor(k)),
             "bounce transfer model, k_LQC = 10^-3.5": bounce,
             "physical bounce, Starobinsky plateau": physical.spectra(PHYSICAL_POINT)}
    print("1. per likelihood call")
    print(f"{'case':40s} {'pivot sets':>11s} {'+ low ell':>10s} {'added':>8s} "
          f"{'term':>8s} {'baseline':>10s} {'ratio':>8s}  max |dD/D|")
    print(f"{'':40s} {'[us]':>11s} {'[us]':>10s} {'[us]':>8s} {'[us]':>8s} {'[s]':>10s}")
    added = []
    for label, spectra in cases.items():
        a = per_call(lambda s=spectra: without.log_likelihood(s))
        b = per_call(lambda s=spectra: with_term.log_likelihood(s))
        t = per_call(lambda s=spectra: term.chi2(term.predict(s)))
        t0 = time.perf_counter()
        direct = direct_dell(spectra, term)
        base = time.perf_counter() - t0
        dev = float(np.max(np.abs(direct / term.predict(spectra) - 1)))
        added.append(b - a)
        print(f"{label:40s} {a * 1e6:11.1f} {b * 1e6:10.1f} {(b - a) * 1e6:8.1f} "
              f"{t * 1e6:8.1f} {base:10.2f} {base / t:8.0f}  {dev:.1e}")
    worst = max(added)
    print(f"   the term adds at most {worst * 1e3:.3f} ms per likelihood call (target <= 0.3 "
          f"ms: {'met' if worst <= 3e-4 else 'NOT met'})")


def posterior_time(sets, steps: int, folder: Path) -> tuple[float, int]:
    model = forward_model("bounce_physical_dressed_metric_non_oscillating_starobinsky")
    prior = load_prior(resolve_prior_path(PHYSICAL_PRIOR), model)
    post = ModelPosterior(prior, model, likelihood(sets))
    settings = SamplerSettings(walkers=16, max_steps=steps, min_steps=steps, tau_multiple=50,
                               tau_tolerance=0.05, checkpoint_every=steps, seed=5,
                               prior_survey_draws=0)
    t0 = time.perf_counter()
    r = run_sampler(post, settings, folder, show_progress=False)
    return time.perf_counter() - t0, r.evaluations


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--steps", type=int, default=400,
                        help="emcee steps of each posterior run (16 walkers)")
    args = parser.parse_args()
    without = likelihood(PIVOT_SETS)
    with_term = likelihood([*PIVOT_SETS, "planck2018_lowell_tt"])
    per_call_table(without, with_term, with_term.low_ell)
    print(f"\n2. physical bounce posterior (Starobinsky plateau), {args.steps} steps x 16 "
          "walkers, same seed, serial")
    tmp = Path(tempfile.mkdtemp(prefix="lowell_speed_"))
    try:
        posterior_time(PIVOT_SETS, 5, tmp / "warm")  # kernels and tables loaded once
        t_without, n_without = posterior_time(PIVOT_SETS, args.steps, tmp / "without")
        t_with, n_with = posterior_time([*PIVOT_SETS, "planck2018_lowell_tt"], args.steps,
                                        tmp / "with")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    ratio = t_with / t_without
    print(f"   without the term: {t_without:6.1f} s ({n_without} evaluations, "
          f"{t_without / n_without * 1e3:.2f} ms each)")
    print(f"   with the term:    {t_with:6.1f} s ({n_with} evaluations, "
          f"{t_with / n_with * 1e3:.2f} ms each)")
    print(f"   ratio with / without: {ratio:.2f} (target <= 1.5: "
          f"{'met' if ratio <= 1.5 else 'NOT met'})")


if __name__ == "__main__":
    main()
