"""``bouncelike efolds CONFIG.toml``: predicted distribution of inflationary e-folds.

Reads ``[potential]``, ``[background]`` (dynamics, critical density, integration settings; the
``start`` is ignored: the prior sets the initial data) and ``[efolds]``::

    [efolds]
    n_samples = 1000          # draws of the prior
    seed = 0                  # one generator, drawn up front: identical for any worker count
    threshold = 60.0          # e-folds observations need (fraction above is reported)
    prior = "phase"           # phase | bounce_fraction
    start_density = 1e-16     # phase prior: top of the rho_0 window (Planck units), < rho_c
    start_density_decades = 2.0  # phase prior: log-uniform width below it (0: fixed surface)
    # fraction_min = 1e-13    # bounce_fraction prior: x = V_B / rho_c range
    # fraction_max = 1e-9
    # fraction_scale = "log"  # log | linear
    workers = 1               # local processes, 1..256 (MPI ranks when run under mpiexec)
    bins = 60                 # histogram bins
    convergence_samples = 100 # re-run this many draws with rho_0 two decades lower

Writes ``efolds_samples.csv``, ``efolds.pdf``, ``efolds.png`` and ``efolds_summary.json`` (with
the provenance block) to ``--output`` (default ``bouncelike-out/<config stem>/``, checked
before any computation), after everything is computed; the time reported is the wall time of
the command, compiling included (said apart on a first run). The JSON
(key ``dynamics``) and the table (block "dynamics conventions") carry ``describe()`` of the
dynamics: its parameters and how it reads the initial data (e.g. the shear of Bianchi I, the
energy-angle start of the asymmetric bounce). The H/omega figure and its warning apply only to
dynamics whose field oscillates before the bounce.
"""

from __future__ import annotations

import math
from typing import Any

from ..io import table_figure_summary_names, write_table_figure_summary
from ._layer import CommandResult, Options

NAME = "efolds"
HELP = "distribution of the number of inflationary e-folds after the bounce"


def distribution_options(section: str) -> Options:
    """The options of the e-fold distribution commands (efolds, compare)."""
    return Options(config=f"[potential], [background] and [{section}]",
                   output="bouncelike-out/<config stem>/", workers=f"[{section}] workers",
                   compiles=True)


OPTIONS = distribution_options("efolds")
FILES = table_figure_summary_names("efolds", "efolds_samples.csv")

#: keys of the prior of the contracting-branch data ([efolds] and [compare];
#: background.efolds.prior_from_config reads them)
PRIOR_KEYS = ("prior", "start_density", "start_density_decades", "fraction_min", "fraction_max",
              "fraction_scale")
#: keys of an e-fold distribution's sampling ([efolds] and [compare])
DISTRIBUTION_KEYS = ("n_samples", "seed", "threshold", "bins", "workers")
EFOLDS_KEYS = (*DISTRIBUTION_KEYS, "convergence_samples", *PRIOR_KEYS)


def add_arguments(parser: Any) -> None:
    """No options of its own: CONFIG, --output, --workers, --json, --quiet are shared."""


def _options(config: Any, session: Any, critical_density: float | None = None
             ) -> dict[str, Any]:
    from ..background.efolds import prior_from_config

    table = config.table("efolds", EFOLDS_KEYS)
    return {
        "n_samples": table.integer("n_samples", 1000, minimum=1, maximum=10**7),
        "seed": table.integer("seed", 0, minimum=0),
        "threshold": table.number("threshold", 60.0, minimum=0.0),
        "workers": session.workers(table),
        "bins": table.integer("bins", 60, minimum=2, maximum=10**4),
        "convergence_samples": table.integer("convergence_samples", 100, minimum=0),
        "prior": prior_from_config(table, critical_density),
    }


def summary_lines(dist: Any, setup: Any) -> list[str]:
    """The human-readable summary table."""
    from ..background.efolds import nanmedian

    pot = setup.potential
    params = ", ".join(f"{k} = {v:g}" if isinstance(v, float) else f"{k} = {v}"
                       for k, v in pot.parameters.items())
    prior = dist.prior
    oscillates = getattr(dist, "field_oscillates", True)
    if prior["name"] == "phase":
        lo, hi = prior["window"]
        where = (f"rho_0 = {hi:.3g} (fixed surface)" if prior["start_density_decades"] == 0
                 else f"rho_0 log-uniform in [{lo:.3g}, {hi:.3g}]")
        if oscillates:
            prior_text = (f"flat phase on [0, 2 pi), {where}; "
                          f"H/omega at the top {dist.hubble_to_frequency:.3g}")
        else:
            prior_text = (f"flat energy angle on [0, 2 pi), {where} (the field does not "
                          "oscillate before this bounce: see contracting_start below)")
    else:
        prior_text = (f"{prior['fraction_scale']}-uniform V_B/rho_c in "
                      f"[{prior['fraction_min']:.3g}, {prior['fraction_max']:.3g}]")
    c = dist.status_counts
    pct = "  ".join(f"{q}%: {v:.2f}" for q, v in dist.percentiles.items())
    sq = dist.sqrt_potential_fraction_percentiles()
    lines = [
        f"Duration of inflation: {pot.name} ({params}), dynamics {dist.settings['dynamics']}, "
        f"rho_c = {dist.settings['critical_density']:.6g}",
        f"prior: {prior_text}",
        f"samples: {dist.n_samples} (inflated {c['inflated']}, no inflation {c['no_inflation']}, "
        f"e-fold cap {c['efold_cap']}, failed {c['failed']}), seed {dist.seed}",
        "",
        f"  inflationary e-folds     median {dist.median:.2f}   mode {dist.mode:.2f}",
        f"  percentiles              {pct}",
        f"  fraction above {dist.threshold:g}      {dist.fraction_above_threshold:.4f}",
        f"  sqrt(V_B / rho_c)        median {sq['50']:.3g}  "
        f"(5%-95%: {sq['5']:.3g} - {sq['95']:.3g})",
        f"  bounce -> end e-folds    median {nanmedian(dist.bounce_to_end):.2f}",
    ]
    if dist.convergence:
        cv = dist.convergence
        lines.append(
            f"  convergence in rho_0     window moved {cv['shift_decades']:g} decades lower: "
            f"median {cv['median']:.2f} -> {cv['median_shifted']:.2f} "
            f"(change {cv['median_change']:.2f} e-folds, {cv['n']} samples)"
        )
    lines.append(f"  max constraint residual  {dist.max_constraint_residual:.2g}")
    if c["efold_cap"]:
        lines.append(f"  note: {c['efold_cap']} runs reached the cap of "
                     f"{dist.settings['max_inflation_efolds']:g} e-folds; they count at the cap, "
                     "so statistics at or near it are lower bounds")
    lines.extend(dynamics_lines(getattr(dist, "dynamics", {})))
    if prior["name"] == "phase" and oscillates and not (dist.hubble_to_frequency < 0.1):
        lines.append("  warning: H/omega at the top of the rho_0 window is not small; lower "
                     "'efolds.start_density'")
    return lines


def dynamics_lines(description: dict[str, Any], width: int = 96) -> list[str]:
    """The dynamics' parameters and conventions (``describe()``), one wrapped entry each."""
    import textwrap

    if not description:
        return []
    lines = ["", "  dynamics conventions"]
    for key, value in description.items():
        if key in ("dynamics", "name"):
            continue
        if isinstance(value, float):
            text = f"{value:.6g}"
        elif isinstance(value, dict):
            text = ", ".join(f"{k} = {v:.6g}" if isinstance(v, float) else f"{k} = {v}"
                             for k, v in value.items())
        else:
            text = str(value)
        lines.extend(textwrap.wrap(f"{key}: {text}", width=width, initial_indent="    ",
                                   subsequent_indent="      "))
    return lines


def warm_up(dynamics: Any, potential: Any, prior: Any) -> None:
    """Compile (or load the compiled kernels of) ``dynamics`` before any worker process is
    forked: one very short run from a datum of ``prior`` (valid for every dynamics that
    accepts the prior; a classical start is not offered by all of them)."""
    import numpy as np

    from ..background.initial import IntegrationSettings

    draws = prior.draw(np.random.default_rng(0), 1)
    short = IntegrationSettings(max_time=1e-6, dense_points=0)
    dynamics.evolve(potential, prior.initial(draws, 0), short)
    dynamics.evolve_summaries(potential, [prior.initial(draws, 0)], short)  # the batch entry


def make_figure(dist: Any, title: str) -> Any:
    """Histogram with percentiles and the observational threshold marked."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import numpy as np

    values = dist.usable()
    fig, ax = plt.subplots(figsize=(6.4, 4.2))
    counts, edges = dist.histogram
    if len(values):
        ax.stairs(counts, edges, fill=True, alpha=0.5, color="C0", label="samples")
    styles = {"5": ":", "16": "--", "50": "-", "84": "--", "95": ":"}
    for q, v in dist.percentiles.items():
        if math.isfinite(v):
            ax.axvline(v, color="C0", ls=styles[q], lw=1.2,
                       label=f"{q}th percentile" if q != "50" else "median")
    ax.axvline(dist.threshold, color="C3", lw=1.6, ls="-.",
               label=f"threshold {dist.threshold:g} e-folds")
    if len(values):
        lo = min(float(np.min(values)), dist.threshold)
        hi = max(float(np.max(values)), dist.threshold)
        pad = 0.05 * (hi - lo if hi > lo else 1.0)
        ax.set_xlim(lo - pad, hi + pad)
    ax.set_xlabel("inflationary e-folds N")
    ax.set_ylabel("samples per bin")
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=8, loc="best")
    fig.tight_layout()
    return fig


def run(args: Any, session: Any) -> CommandResult:
    from ..background.efolds import efolds_distribution, start_density_ceiling
    from ..background.setup import background_from_config
    from ..parallel import make_pool

    config = session.config()
    setup = background_from_config(config)
    opts = _options(config, session, start_density_ceiling(setup.dynamics))
    out_dir = session.output_folder(FILES.values())

    warm_up(setup.dynamics, setup.potential, opts["prior"])
    pool = make_pool(opts["workers"])
    try:
        dist = efolds_distribution(
            setup.dynamics, setup.potential, opts["prior"], opts["n_samples"], opts["seed"],
            pool=pool, settings=setup.settings, threshold=opts["threshold"], bins=opts["bins"],
            convergence_samples=opts["convergence_samples"], progress=session.progress,
        )
    finally:
        pool.close()

    import pandas as pd

    columns = {"sample": range(dist.n_samples)}
    columns.update({k: v for k, v in dist.draws.items()})
    columns.update({
        "status": dist.statuses,
        "efolds_inflation": dist.samples,
        "efolds_bounce_to_end": dist.bounce_to_end,
        "potential_fraction_at_bounce": dist.potential_fractions,
    })
    frame = pd.DataFrame(columns)
    lines = summary_lines(dist, setup)
    fig = make_figure(dist, lines[0].replace("Duration of inflation: ", ""))
    timing = session.timing()
    result = dist.as_dict()
    result["elapsed_seconds"] = timing["wall_seconds"]
    result["compile_seconds"] = timing["compile_seconds"]
    result["workers"] = int(getattr(pool, "workers", 1))
    files = {k: out_dir / v for k, v in FILES.items()}
    result["files"] = {k: str(v) for k, v in files.items()}
    provenance = session.provenance()

    write_table_figure_summary(files, frame, "%.10g", fig, {**result, "provenance": provenance})
    text = "\n".join(lines) + (f"\n\n  time {session.time_text()} on {result['workers']} "
                               "worker(s); wrote " + ", ".join(str(p) for p in files.values()))
    return CommandResult(data=result, text=text, provenance=provenance,
                         files=tuple(str(p) for p in files.values()))
