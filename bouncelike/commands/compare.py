"""``bouncelike compare CONFIG.toml``: duration of inflation under several dynamics, side by side.

How robust is the predicted number of inflationary e-folds to the quantisation scheme and to
anisotropy? Runs the e-fold distribution (:func:`bouncelike.background.efolds.efolds_distribution`,
same prior, seed and potential for every case) for each case and writes one table and one figure.

Reads ``[potential]``, ``[background]`` (critical density or gamma, ``[background.integration]``;
the dynamics of ``[background]`` is not used: the cases name theirs) and ``[compare]``::

    [compare]
    n_samples = 200           # draws of the prior per case (the same draws for every case)
    seed = 0
    threshold = 60.0          # e-folds; the fraction of draws above it is reported
    bins = 40
    workers = 1               # local processes, 1..256 (MPI ranks under mpiexec)
    prior = "phase"           # prior keys as in [efolds]: phase | bounce_fraction
    start_density = 1e-16
    start_density_decades = 2.0
    cases = [                 # each: label, dynamics, and that dynamics' own keys
      { label = "LQC", dynamics = "isotropic" },
      { label = "condensate rho_c/2", dynamics = "condensate", rescale = 0.5 },
      { label = "asymmetric", dynamics = "asymmetric" },
    ]
    shear_ratios = [1e-4, 1e-3]   # adds one bianchi_i case per value (a shear scan)
    shear_direction = 0.0         # degrees, for the shear scan

Writes ``compare_table.csv``, ``compare.pdf``, ``compare.png`` and ``compare_summary.json`` (with
the provenance block) to ``--output`` (default ``bouncelike-out/<config stem>/``, checked before
any computation), after every case is computed.
"""

from __future__ import annotations

import json
import math
import time
from typing import Any

from ..io import table_figure_summary_names, write_table_figure_summary
from ._layer import CommandResult
from .efolds import DISTRIBUTION_KEYS, PRIOR_KEYS, distribution_options

NAME = "compare"
HELP = "e-fold distributions of several bounce dynamics or shear values side by side"
OPTIONS = distribution_options("compare")
FILES = table_figure_summary_names("compare", "compare_table.csv")

COMPARE_KEYS = (*DISTRIBUTION_KEYS, "cases", "shear_ratios", "shear_direction", *PRIOR_KEYS)


def add_arguments(parser: Any) -> None:
    """No options of its own: CONFIG, --output, --workers, --json, --quiet are shared."""


def cases_from_config(table: Any, critical_density: float) -> list[tuple[str, Any]]:
    """(label, dynamics) for every case of ``[compare]`` (``cases`` then the shear scan)."""
    from ..background.dynamics import DYNAMICS_REGISTRY, dynamics_class
    from ..config import Table
    from ..errors import InputError

    raw_cases = table.raw("cases", [])
    if not isinstance(raw_cases, list) or not all(isinstance(c, dict) for c in raw_cases):
        raise InputError("'compare.cases' must be a list of tables "
                         "({ label = ..., dynamics = ..., <keys of that dynamics> })")
    out: list[tuple[str, Any]] = []
    for i, case in enumerate(raw_cases):
        where = f"compare.cases[{i}]"
        name = case.get("dynamics")
        if name is None:
            raise InputError(f"missing key '{where}.dynamics'; allowed: "
                             + ", ".join(sorted(DYNAMICS_REGISTRY)))
        if name not in DYNAMICS_REGISTRY:
            raise InputError(f"'{where}.dynamics' = {name!r} is not known; allowed: "
                             + ", ".join(sorted(DYNAMICS_REGISTRY)))
        cls = dynamics_class(name)
        keys = {k: v for k, v in case.items() if k not in ("label", "dynamics")}
        sub = Table(keys, where, getattr(cls, "CONFIG_KEYS", ()))
        label = case.get("label", name)
        if not isinstance(label, str):
            raise InputError(f"'{where}.label' must be a string, got {label!r}")
        out.append((label, cls.from_config(sub, critical_density)))
    ratios = table.numbers("shear_ratios", [])
    direction = table.number("shear_direction", 0.0)
    if ratios:
        from ..background.bianchi import BianchiIDynamics

        for r in ratios:
            if r < 0:
                raise InputError(f"'compare.shear_ratios' contains {r:g}; allowed: values >= 0")
            out.append((f"Bianchi I, shear {r:g}",
                        BianchiIDynamics(critical_density, r, direction)))
    if not out:
        raise InputError("[compare] has no case: give 'compare.cases' and/or "
                         "'compare.shear_ratios'")
    labels = [label for label, _ in out]
    if len(set(labels)) != len(labels):
        raise InputError("'compare.cases' labels must be distinct; got " + ", ".join(labels))
    return out


def _row(label: str, dynamics: Any, dist: Any, seconds: float) -> dict[str, Any]:
    pct = dist.percentiles
    counts = dist.status_counts
    return {
        "label": label,
        "dynamics": dynamics.NAME,
        "parameters": json.dumps({k: v for k, v in dynamics.describe().items()
                                  if isinstance(v, (int, float)) and not isinstance(v, bool)}),
        "n_samples": dist.n_samples,
        "median": dist.median,
        "mode": dist.mode,
        "p5": pct["5"], "p16": pct["16"], "p84": pct["84"], "p95": pct["95"],
        "fraction_above_threshold": dist.fraction_above_threshold,
        "n_inflated": counts.get("inflated", 0),
        "n_no_inflation": counts.get("no_inflation", 0),
        "n_efold_cap": counts.get("efold_cap", 0),
        "n_failed": counts.get("failed", 0),
        "max_constraint_residual": dist.max_constraint_residual,
        "seconds": seconds,
    }


def make_figure(results: list[tuple[str, Any]], threshold: float, title: str) -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    fig, ax = plt.subplots(figsize=(7.0, 4.2))
    finite = [d.samples[np.isfinite(d.samples)] for _, d in results]
    allv = np.concatenate([f for f in finite if len(f)]) if any(len(f) for f in finite) else [0]
    edges = np.linspace(float(np.min(allv)), float(np.max(allv)) + 1e-9, 41)
    for (label, dist), values in zip(results, finite, strict=True):
        if not len(values):
            continue
        hist = ax.hist(values, bins=edges, density=True, histtype="step", lw=1.6,
                       label=f"{label} (median {dist.median:.1f})")
        ax.axvline(dist.median, color=hist[2][0].get_edgecolor(), ls="--", lw=1.0)
    ax.axvline(threshold, color="0.5", ls=":", lw=1.0)
    ax.set_xlabel("inflationary e-folds")
    ax.set_ylabel("probability density")
    ax.set_title(title)
    ax.legend(fontsize=8)
    fig.tight_layout()
    return fig


def run(args: Any, session: Any) -> CommandResult:
    from ..background.dynamics import DYNAMICS_REGISTRY
    from ..background.efolds import (
        efolds_distribution,
        prior_from_config,
        start_density_ceiling,
    )
    from ..background.potentials import potential_from_config
    from ..background.setup import (
        BACKGROUND_KEYS,
        critical_density_from_config,
        settings_from_config,
    )
    from ..config import Table
    from ..errors import InputError
    from ..parallel import make_pool

    config = session.config()
    raw_bg = config.raw("background", {}) or {}
    if not isinstance(raw_bg, dict):
        raise InputError("[background] must be a table of keys")
    # every key of [background] is checked (the dynamics and start are the cases' business)
    Table(raw_bg, "background", BACKGROUND_KEYS + tuple(DYNAMICS_REGISTRY))
    bg = Table({k: v for k, v in raw_bg.items() if k in ("gamma", "critical_density",
                                                         "integration")},
               "background", ("gamma", "critical_density", "integration"))
    rho_c = critical_density_from_config(bg)
    settings = settings_from_config(bg)
    potential = potential_from_config(config)
    table = config.table("compare", COMPARE_KEYS, required=True)
    n_samples = table.integer("n_samples", 200, minimum=1, maximum=10**6)
    seed = table.integer("seed", 0, minimum=0)
    threshold = table.number("threshold", 60.0, minimum=0.0)
    bins = table.integer("bins", 40, minimum=2, maximum=10**4)
    workers = session.workers(table)
    cases = cases_from_config(table, rho_c)
    ceilings = [c for c in (start_density_ceiling(d) for _, d in cases) if c is not None]
    prior = prior_from_config(Table({k: v for k, v in table.data.items() if k in PRIOR_KEYS},
                                    "compare", PRIOR_KEYS), min(ceilings) if ceilings else None)
    out_dir = session.output_folder(FILES.values())

    from .efolds import warm_up

    for _, dynamics in cases:  # compile before any worker process is forked
        warm_up(dynamics, potential, prior)
    results: list[tuple[str, Any]] = []
    rows = []
    pool = make_pool(workers)
    try:
        for label, dynamics in cases:
            started = time.perf_counter()
            dist = efolds_distribution(dynamics, potential, prior, n_samples, seed, pool=pool,
                                       settings=settings, threshold=threshold, bins=bins,
                                       convergence_samples=0, progress=session.progress)
            seconds = time.perf_counter() - started
            results.append((label, dist))
            rows.append(_row(label, dynamics, dist, seconds))
    finally:
        pool.close()

    import pandas as pd

    frame = pd.DataFrame(rows)
    pot = ", ".join(f"{k} = {v:g}" if isinstance(v, float) else f"{k} = {v}"
                    for k, v in potential.parameters.items())
    title = f"{potential.name} ({pot}); {n_samples} draws per case, seed {seed}"
    fig = make_figure(results, threshold, title)
    files = {k: out_dir / v for k, v in FILES.items()}
    timing = session.timing()
    summary = {
        "potential": {"name": potential.name, **potential.parameters},
        "prior": prior.describe(),
        "n_samples": n_samples,
        "seed": seed,
        "threshold": threshold,
        "critical_density": rho_c,
        "settings": settings.as_dict(),
        "cases": [{**row, "describe": dyn.describe()}
                  for row, (_, dyn) in zip(rows, cases, strict=True)],
        "files": {k: str(v) for k, v in files.items()},
        "elapsed_seconds": timing["wall_seconds"],
        "compile_seconds": timing["compile_seconds"],
    }
    provenance = session.provenance()
    write_table_figure_summary(files, frame, "%.8g", fig, {**summary, "provenance": provenance})
    lines = [f"Duration of inflation by dynamics: {title}"]
    lines.append(f"  {'case':<28} {'median':>8} {'5%':>8} {'95%':>8} {f'>{threshold:g}':>7} "
                 f"{'cap':>4} {'fail':>4} {'residual':>9} {'time':>7}")
    for r in rows:
        lines.append(
            f"  {r['label'][:28]:<28} {_f(r['median'])} {_f(r['p5'])} {_f(r['p95'])} "
            f"{r['fraction_above_threshold']:7.2f} {r['n_efold_cap']:4d} {r['n_failed']:4d} "
            f"{r['max_constraint_residual']:9.1e} {r['seconds']:6.1f}s")
    lines.append(f"\n  time {session.time_text()}; wrote "
                 + ", ".join(str(p) for p in files.values()))
    return CommandResult(data=summary, text="\n".join(lines), provenance=provenance,
                         files=tuple(str(p) for p in files.values()))


def _f(x: float) -> str:
    return f"{x:8.1f}" if math.isfinite(x) else f"{'-':>8}"
