"""Speed of posterior sampling: likelihood evaluation, time to convergence, pool efficiency.

Prints, each against a straightforward baseline measured in the same run:

1. log-posterior evaluation of a power-law model (prior + spectra object + likelihood fast
   path; target <= 50 us) against the full score of the same spectra (summaries, pulls,
   p-value: what a naive sampler would call);
2. a bounce model's evaluation (cached bounce transfer; target <= 5 ms median) against the
   full forward model (background and mode integration) of a bounce example; 2b. the same for
   the bounce model in physical parameters, background included (engine run from the bounce,
   e-folds, pivot spectrum, bounce scale, cached transfer, likelihood), and its variant that
   finds the potential fraction for a given number of inflationary e-folds;
3. wall time of the power-law posterior (Planck 2018 + BK18) to convergence, and the
   sampler's overhead as the ratio of wall time to the likelihood time it contains; the same
   for the bounce example's posterior (3b) and for the physical bounce example,
   examples/sample_bounce_physical.toml, on 2 worker processes (3c; target <= 5 min on 2
   cores);
4. process-pool efficiency on 2 workers, T_serial / (2 T_pool), for a likelihood of
   millisecond cost (tabulated spectra of 4000 points, summarised by the fitting path as a
   bounce model's spectra are) and for the physical bounce model (target >= 80%), with a
   check that both chains are identical, against a plain multiprocessing map of a CPU-bound
   task of the same cost.

Run: python3 benchmarks/sampling_speed.py [--quick]
"""

from __future__ import annotations

import os

# one BLAS thread per process, so that the serial run and the 2 worker processes compare like
# with like (2 workers x several BLAS threads oversubscribe 2 cores; common practice)
for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import shutil  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from bouncelike.models.powerlaw import PowerLawModel  # noqa: E402
from bouncelike.models.registry import forward_model  # noqa: E402
from bouncelike.parallel import ProcessPool  # noqa: E402
from bouncelike.sampling.driver import SamplerSettings, run_sampler  # noqa: E402
from bouncelike.sampling.posterior import ModelPosterior, install_posterior  # noqa: E402
from bouncelike.sampling.priors import SHIPPED_PRIORS, load_prior  # noqa: E402


def per_call(func, arg, repeat: int) -> float:
    best = np.inf
    for _ in range(5):
        t0 = time.perf_counter()
        for _ in range(repeat):
            func(arg)
        best = min(best, (time.perf_counter() - t0) / repeat)
    return best


class TabulatedPowerLaw(PowerLawModel):
    """The power law handed to the likelihood as a table (the path bounce spectra take)."""

    k = np.logspace(-6, 1, 4000)

    def spectra(self, p):
        from bouncelike.spectra.tabulated import TabulatedSpectra

        s = super().spectra(p)
        return TabulatedSpectra(self.k, s.scalar(self.k), s.tensor(self.k))


def _spin(reps: int) -> float:
    x = 0.0
    for i in range(reps):
        x += i * 1e-9
    return x


def _spin_reps(seconds: float) -> int:
    t0 = time.perf_counter()
    _spin(100000)
    return max(1, int(100000 * seconds / (time.perf_counter() - t0)))


def pool_efficiency(label, post, steps, tmp):
    """Serial vs 2 worker processes on one posterior, and a plain multiprocessing baseline."""
    import multiprocessing as mp

    s2 = SamplerSettings(walkers=32, max_steps=steps, min_steps=steps, tau_multiple=50,
                         tau_tolerance=0.05, checkpoint_every=steps, seed=2)
    name = label.split()[0]
    t0 = time.perf_counter()
    rs = run_sampler(post, s2, tmp / f"serial_{name}", show_progress=False)
    t_serial = time.perf_counter() - t0
    # mean cost of one evaluation in the serial run (distinct points: no cache hits)
    t_eval = t_serial / max(rs.evaluations, 1)
    pool = ProcessPool(2, install_posterior, (post,))  # each worker gets the posterior once
    try:
        t0 = time.perf_counter()
        run_sampler(post, s2, tmp / f"pool_{name}", pool=pool, show_progress=False)
        t_pool = time.perf_counter() - t0
    finally:
        pool.close()
    same = (tmp / f"serial_{name}" / "chain.csv").read_bytes() == (
        tmp / f"pool_{name}" / "chain.csv").read_bytes()
    eff = t_serial / (2 * t_pool)
    # baseline: a plain multiprocessing map of a CPU-bound task of the same cost, in maps of
    # the same size (walkers / 2) -- what the machine allows right now
    n_maps = rs.evaluations // 16
    reps = _spin_reps(t_eval)
    t0 = time.perf_counter()
    for _ in range(n_maps):
        [_spin(reps) for _ in range(16)]
    b_serial = time.perf_counter() - t0
    with mp.get_context("fork").Pool(2) as plain:
        t0 = time.perf_counter()
        for _ in range(n_maps):
            plain.map(_spin, [reps] * 16)
        b_pool = time.perf_counter() - t0
    b_eff = b_serial / (2 * b_pool)
    print(f"   {label}: evaluation {t_eval * 1e3:.2f} ms; serial {t_serial:.2f} s, 2 workers "
          f"{t_pool:.2f} s: speed-up {t_serial / t_pool:.2f}x, efficiency {eff:.0%} "
          f"(target >= 80%: {'met' if eff >= 0.8 else 'NOT met'}); chains identical: {same}")
    print(f"   baseline, plain multiprocessing map of a {t_eval * 1e3:.2f} ms CPU-bound task: "
          f"efficiency {b_eff:.0%}; ratio ours / baseline = {eff / b_eff:.2f}")


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="shorter runs")
    args = ap.parse_args()
    from bouncelike.likelihood.gaussian import GaussianLikelihood

    sets = ["planck2018_base", "bk18"]
    lk = GaussianLikelihood.from_names(sets)
    model = PowerLawModel()
    prior = load_prior(SHIPPED_PRIORS / "power_law.toml", model)
    post = ModelPosterior(prior, model, lk)
    theta = np.array([3.044, 0.965, 0.01])
    spectra = model.spectra(prior.full_parameters(theta))

    print("1. power-law evaluation")
    t_post = per_call(post, theta, 2000)
    t_ll = per_call(lk.log_likelihood, spectra, 5000)
    t_score = per_call(lk.score, spectra, 300)
    print(f"   log-posterior (prior + spectra + likelihood + derived): {t_post * 1e6:8.1f} us"
          f"   (target <= 50 us: {'met' if t_post <= 50e-6 else 'NOT met'})")
    print(f"   likelihood fast path alone:                             {t_ll * 1e6:8.1f} us")
    print(f"   baseline, full score of the same spectra:               {t_score * 1e6:8.1f} us")
    print(f"   ratio baseline / log-posterior: {t_score / t_post:.1f}x")

    print("2. bounce model evaluation (dressed metric, cached transfer)")
    bounce_post = None
    try:
        import bouncelike.perturbations.transfer  # noqa: F401
    except ImportError:
        print("   not available: bouncelike.perturbations.transfer is not in this build")
    else:
        bmodel = forward_model("bounce_dressed_metric")
        bprior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric.toml", bmodel)
        bounce_post = ModelPosterior(bprior, bmodel, lk)
        rng = np.random.default_rng(0)
        times = []
        for th in bprior.initial_walkers(rng, 200):
            t0 = time.perf_counter()
            bounce_post(th)
            times.append(time.perf_counter() - t0)
        med = float(np.median(times))
        print(f"   log-posterior, median over 200 points: {med * 1e3:.2f} ms (target <= 5 ms: "
              f"{'met' if med <= 5e-3 else 'NOT met'})")
        example = ROOT / "examples" / "bounce_features_quadratic.toml"
        if example.is_file():
            from bouncelike.config import load_run_config
            from bouncelike.models.registry import spectra_from_config

            t0 = time.perf_counter()
            lk.log_likelihood(spectra_from_config(load_run_config(example)))
            full = time.perf_counter() - t0
            print(f"   baseline, full forward model (background + modes) of "
                  f"{example.name}: {full:.2f} s; ratio {full / med:.0f}x")

    print("2b. bounce model in physical parameters, background included (dressed metric)")
    phys_post = None
    full_time = None
    if bounce_post is not None:
        from bouncelike.config import load_run_config
        from bouncelike.models.registry import spectra_from_config

        pmodel = forward_model("bounce_physical_dressed_metric")
        pprior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric_physical.toml", pmodel)
        phys_post = ModelPosterior(pprior, pmodel, lk)
        rng = np.random.default_rng(1)
        pts = pprior.draw(rng, 300)
        phys_post(pts[0])  # compile and load once
        times = []
        for th in pts:
            t0 = time.perf_counter()
            phys_post(th)
            times.append(time.perf_counter() - t0)
        med_p = float(np.median(times))
        print(f"   log-posterior, median over 300 prior draws: {med_p * 1e3:.2f} ms "
              f"(90th percentile {np.percentile(times, 90) * 1e3:.2f} ms; target <= 5 ms: "
              f"{'met' if med_p <= 5e-3 else 'NOT met'})")
        # baseline: the full forward model (background + exact mode integration) of the same
        # model at the first prior draws (median)
        tmpc = Path(tempfile.mkdtemp(prefix="bouncelike-bench-"))
        full_times = []
        try:
            for j, th in enumerate(pts[:3]):
                q = pprior.full_parameters(th)
                cfg_text = (
                    '[model]\nspectra = "bounce"\n[potential]\nname = "quadratic"\n'
                    f'mass = {q["mass"]!r}\n[background]\ndynamics = "isotropic"\n'
                    f'start = "bounce"\ncritical_density = {q["critical_density"]!r}\n'
                    '[background.bounce]\n'
                    f'potential_fraction = {10 ** q["log10_potential_fraction"]!r}\n'
                    'phidot_sign = 1\n[perturbations]\nprescription = "dressed_metric"\n'
                    f'[reheating]\nn_star = {q["N_star"]!r}\n')
                (tmpc / f"full{j}.toml").write_text(cfg_text)
                t0 = time.perf_counter()
                lk.log_likelihood(spectra_from_config(load_run_config(tmpc / f"full{j}.toml")))
                full_times.append(time.perf_counter() - t0)
        finally:
            shutil.rmtree(tmpc, ignore_errors=True)
        full_time = float(np.median(full_times))
        print(f"   baseline, full forward model (background + mode integration + likelihood), "
              f"median over the first 3 draws: {full_time:.2f} s; ratio baseline / physical "
              f"model {full_time / med_p:.0f}x")
        nprior = load_prior(SHIPPED_PRIORS / "bounce_dressed_metric_phase.toml", pmodel)
        npost = ModelPosterior(nprior, pmodel, lk)
        times = []
        for th in nprior.draw(np.random.default_rng(2), 100):
            t0 = time.perf_counter()
            npost(th)
            times.append(time.perf_counter() - t0)
        med_n = float(np.median(times))
        print(f"   variant with N_inflation sampled (phase prior; secant search of the potential "
              f"fraction): median {med_n * 1e3:.2f} ms (target <= 5 ms: "
              f"{'met' if med_n <= 5e-3 else 'NOT met'}); ratio baseline / variant "
              f"{full_time / med_n:.0f}x")
    else:
        print("   not available: bouncelike.perturbations.transfer is not in this build")

    print("3. power-law posterior to convergence (Planck 2018 + BK18)")
    tmp = Path(tempfile.mkdtemp(prefix="bouncelike-bench-"))
    try:
        settings = SamplerSettings(walkers=24, max_steps=6000, min_steps=300, tau_multiple=50,
                                   tau_tolerance=0.05, checkpoint_every=200, seed=1)
        t0 = time.perf_counter()
        r = run_sampler(post, settings, tmp / "conv", show_progress=False)
        wall = time.perf_counter() - t0
        in_like = r.evaluations * t_post
        print(f"   {r.status} after {r.steps} steps x {settings.walkers} walkers, "
              f"{r.evaluations} evaluations, max tau {np.max(r.tau):.1f}, min ESS "
              f"{np.min(r.ess):.0f}")
        print(f"   wall time {wall:.2f} s; likelihood share {in_like:.2f} s; "
              f"ratio wall / likelihood time = {wall / in_like:.1f}x (sampler, checkpoint "
              "and autocorrelation overhead)")

        if bounce_post is not None:
            print("3b. bounce posterior to convergence (examples/sample_bounce_dressed_metric"
                  ".toml settings)")
            bs = SamplerSettings(walkers=24, max_steps=6000, min_steps=400, tau_multiple=50,
                                 tau_tolerance=0.05, checkpoint_every=200, seed=5)
            t0 = time.perf_counter()
            rb = run_sampler(bounce_post, bs, tmp / "bounce", show_progress=False)
            wall_b = time.perf_counter() - t0
            print(f"   {rb.status} after {rb.steps} steps, {rb.evaluations} evaluations, "
                  f"wall time {wall_b:.1f} s (target <= 300 s: "
                  f"{'met' if wall_b <= 300 else 'NOT met'}); ratio to target "
                  f"{wall_b / 300:.2f}")

        if phys_post is not None:
            from bouncelike.config import load_run_config
            from bouncelike.sampling.setup import SAMPLING_KEYS, sampler_settings

            example = ROOT / "examples" / "sample_bounce_physical.toml"
            ps = sampler_settings(load_run_config(example).table("sampling", SAMPLING_KEYS))
            print(f"3c. physical bounce posterior to convergence ({example.name} settings: "
                  f"{ps.walkers} walkers, tau multiple {ps.tau_multiple:g}), 2 worker "
                  "processes")
            pool = ProcessPool(2, install_posterior, (phys_post,))
            try:
                t0 = time.perf_counter()
                rp = run_sampler(phys_post, ps, tmp / "physical", pool=pool,
                                 show_progress=False)
                wall_p = time.perf_counter() - t0
            finally:
                pool.close()
            t0 = time.perf_counter()
            run_sampler(phys_post, ps, tmp / "physical_serial", show_progress=False)
            wall_s = time.perf_counter() - t0
            print(f"   {rp.status} after {rp.steps} steps, {rp.evaluations} evaluations, "
                  f"max tau {np.max(rp.tau):.1f}, min ESS {np.min(rp.ess):.0f}, failed "
                  f"evaluations {sum(rp.failures.values())}")
            print(f"   wall time {wall_p:.1f} s (target <= 300 s: "
                  f"{'met' if wall_p <= 300 else 'NOT met'}); ratio to target "
                  f"{wall_p / 300:.2f}; baseline: the same evaluations with the full forward "
                  f"model would take ~{rp.evaluations * full_time / 2 / 3600:.0f} h on 2 "
                  "workers")
            print(f"   the same run serially: {wall_s:.1f} s; speed-up of the 2 workers "
                  f"{wall_s / wall_p:.2f}x")

        print("4. process-pool efficiency, 2 workers, millisecond likelihood")
        tab = TabulatedPowerLaw()
        post_tab = ModelPosterior(prior, tab, lk)
        steps = 15 if args.quick else 40
        pool_efficiency("tabulated power law (4000 points)", post_tab, steps, tmp)
        if phys_post is not None:
            pool_efficiency("physical bounce model (background included)", phys_post,
                            steps * 4, tmp)
        print("   (other load on the machine counts against both: compare with the baseline, "
              "or rerun on an idle machine)")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
