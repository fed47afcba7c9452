"""``bouncelike sample CONFIG.toml``: run (or resume) a posterior run into chains/<run-name>/.

With ``--workers N`` (N > 1) the likelihood runs in N forked processes; give each one BLAS
thread (``OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1``) so the workers do not oversubscribe the
cores. Under ``mpiexec -n N`` the MPI ranks are the workers. The chain is the same whatever
the number of workers.
"""

from __future__ import annotations

import argparse
from typing import Any

from ._layer import CommandResult, Options

NAME = "sample"
HELP = "sample the posterior of a forward model against constraint sets (emcee)"
OPTIONS = Options(config="a [sampling] section",
                  output="<chains_dir>/<run_name> from [sampling]",
                  workers="[sampling] workers", compiles=True)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--resume", action="store_true",
                        help="continue the run in the run folder from its last checkpoint")


def run(args: argparse.Namespace, session: Any) -> CommandResult:
    from ..io import check_output_folder
    from ..parallel import make_pool
    from ..sampling.convergence import result_summary
    from ..sampling.driver import run_sampler
    from ..sampling.posterior import install_posterior
    from ..sampling.setup import build_run

    setup = build_run(args.config, workers=args.workers, quiet=session.quiet,
                      output=args.output, config=session.config())
    check_output_folder(setup.folder, option="--output" if args.output else "the run folder")
    session.check_cores(setup.workers)
    # each worker (process or MPI rank) gets the posterior once, from the pool's initializer
    with make_pool(setup.workers, initializer=install_posterior,
                   initargs=(setup.posterior,)) as pool:
        result = run_sampler(setup.posterior, setup.settings, setup.folder, pool=pool,
                             resume=args.resume, manifest=setup.manifest,
                             fingerprint=setup.fingerprint, show_progress=setup.show_progress,
                             elsewhere=setup.elsewhere)
    summary = result_summary(result)
    summary["run_folder"] = str(setup.folder)
    summary["wall_time_s"] = result.wall_time
    summary["likelihood_evaluations"] = result.evaluations
    return CommandResult(data=summary, text=format_summary(summary),
                         provenance=setup.manifest["provenance"])


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
    fs = s.get("failure_summary") or {}
    rows = [e for e in fs.get("by_reason", []) if e["count"] or e["survey_count"]]
    if rows:
        survey = fs["prior_survey"]["draws"]
        lines.append(f"evaluations without a log-likelihood: {s['failed_evaluations']} in the "
                     f"run (no posterior weight; listed in failures.csv); prior fraction from "
                     f"{survey} prior draws:")
        lines.extend(f"  {e['count']:6d}  {_fraction(e)}  {e['kind']}: {e['reason']}"
                     for e in rows)
    lines.append(f"next: bouncelike report {s['run_folder']}")
    return "\n".join(lines)


def _fraction(e: dict) -> str:
    f = e["prior_fraction"]
    if f is None or f != f:  # no prior survey
        return "   -   "
    return f"{f:7.1%}"
