"""``bouncelike sample CONFIG.toml``: run (or resume) a posterior run into chains/<run-name>/.

With ``--workers N`` (N > 1) the likelihood runs in N forked processes; give each one BLAS
thread (``OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1``) so the workers do not oversubscribe the
cores. Under ``mpiexec -n N`` the MPI ranks are the workers. The chain is the same whatever
the number of workers.
"""

from __future__ import annotations

import argparse
import json
import sys

from ..io import json_safe

NAME = "sample"
HELP = "sample the posterior of a parametric model against constraint sets (emcee)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("config", help="run configuration (TOML) with a [sampling] section")
    parser.add_argument("--resume", action="store_true",
                        help="continue the run in the run folder from its last checkpoint")
    parser.add_argument("--workers", type=int, default=None,
                        help="local worker processes for the likelihood (default: "
                        "[sampling] workers); under mpiexec the MPI ranks are used")
    parser.add_argument("--output", default=None,
                        help="run folder (default: <chains_dir>/<run_name> from [sampling])")
    parser.add_argument("--quiet", action="store_true", help="hide the progress bar")
    parser.add_argument("--json", action="store_true", help="print the run summary as JSON")


def run(args: argparse.Namespace) -> int:
    from ..errors import InputError
    from ..parallel import make_pool
    from ..sampling.driver import install_posterior, result_summary, run_sampler
    from ..sampling.setup import build_run

    if args.workers is not None and args.workers < 1:
        raise InputError(f"'--workers' = {args.workers} is out of range; allowed: >= 1")
    setup = build_run(args.config, workers=args.workers, quiet=args.quiet, output=args.output)
    install_posterior(setup.posterior)  # before the pool: workers inherit it
    pool = make_pool(setup.workers)
    try:
        result = run_sampler(setup.posterior, setup.settings, setup.folder, pool=pool,
                             resume=args.resume, manifest=setup.manifest,
                             fingerprint=setup.fingerprint, show_progress=setup.show_progress)
    finally:
        pool.close()
    summary = result_summary(result, setup.settings)
    summary["run_folder"] = str(setup.folder)
    summary["wall_time_s"] = result.wall_time
    summary["likelihood_evaluations"] = result.evaluations
    if args.json:
        print(json.dumps(json_safe(summary), indent=2))
    else:
        print(format_summary(summary), file=sys.stdout)
    return 0


def format_summary(s: dict) -> str:
    lines = [f"run folder   {s['run_folder']}",
             f"status       {s['status']} after {s['steps']} steps x {s['walkers']} walkers "
             f"({s['wall_time_s']:.1f} s)",
             f"acceptance   {s['acceptance_fraction']:.3f}",
             f"burn-in      {s['burn_in']} steps, thinning {s['thin']}"]
    rel = "" if s["tau_reliable"] else "  (chain shorter than tau_multiple x tau: estimate "\
        "unreliable)"
    lines.append("tau          " + ", ".join(f"{k} {v:.1f}" for k, v in s["tau"].items()) + rel)
    lines.append("ESS          " + ", ".join(f"{k} {v:.0f}" for k, v in
                                             s["effective_sample_size"].items()))
    if s["failures"]:
        lines.append(f"failed model evaluations: {s['failed_evaluations']} (log-likelihood "
                     "-inf):")
        lines.extend(f"  {n:6d}  {t}" for t, n in s["failures"].items())
    lines.append(f"next: bouncelike report {s['run_folder']}")
    return "\n".join(lines)
