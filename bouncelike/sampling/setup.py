"""From a run configuration to a ready posterior run (and back from a run's manifest).

The ``[sampling]`` section::

    [sampling]
    prior = "power_law"          # shipped prior name (priors/<name>.toml) or a path, relative
                                 # to the configuration file
    model = "power_law"          # forward model; default: the prior file's [prior] model
    walkers = 24                 # >= 2 x sampled parameters
    max_steps = 4000             # hard stop
    min_steps = 200              # no convergence claim before this many steps
    tau_multiple = 50            # converged when steps > tau_multiple x tau ...
    tau_tolerance = 0.05         # ... and tau changed by less than this (relative)
    checkpoint_every = 100       # steps between checkpoints (and convergence checks)
    seed = 1                     # reproducibility: same seed, same chain
    run_name = "my_run"          # default: the configuration file's stem
    chains_dir = "chains"        # run folder = <chains_dir>/<run_name>, relative to the
                                 # working directory and inside it (no absolute path, no
                                 # '..'); write elsewhere with --output DIR
    workers = 1                  # local worker processes, 1..256 (MPI ranks under mpiexec)
    progress = true
    require_summary_fit = true   # featured spectra the pivot summary cannot represent are
                                 # not evaluable (recorded), see ModelPosterior
    prior_survey_draws = 200     # prior draws evaluated first: the prior fraction each
                                 # failure reason covers (0: none)

Sizes: walkers from 2 x the sampled parameters to 4096, max_steps and checkpoint_every up to
10^6, walkers x max_steps at most 5 x 10^7 chain rows, prior_survey_draws up to 10^5.

The likelihood comes from ``[likelihood]`` (:func:`bouncelike.likelihood.gaussian.
likelihood_from_config`). The manifest keeps the text, resolved path and SHA-256 of every
constraint-set file the run used, and :func:`rebuild_from_manifest` rebuilds the likelihood
from that text, wherever the report is made. ``[report]`` is described in
:mod:`bouncelike.reporting.settings`.
"""

from __future__ import annotations

import hashlib
import json
import platform
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .. import __version__
from ..config import Table, load_run_config, read_toml, tomllib
from ..errors import InputError
from ..models.registry import forward_model
from ..parallel import resolve_workers
from ..provenance import constraint_sets_of, provenance
from ..reporting.settings import report_settings
from .driver import MAX_STEPS, MAX_SURVEY_DRAWS, MAX_WALKERS, SamplerSettings
from .posterior import ModelPosterior
from .priors import Prior, load_prior, prior_from_text, resolve_prior_path

SAMPLING_KEYS = ("prior", "model", "walkers", "max_steps", "min_steps", "tau_multiple",
                 "tau_tolerance", "checkpoint_every", "seed", "run_name", "chains_dir",
                 "workers", "progress", "require_summary_fit", "prior_survey_draws")


@dataclass
class RunSetup:
    config: Table
    prior: Prior
    model: Any
    likelihood: Any
    posterior: ModelPosterior
    settings: SamplerSettings
    folder: Path
    workers: int
    show_progress: bool
    fingerprint: str
    manifest: dict[str, Any]
    elsewhere: str = "choose another run folder"


def sampler_settings(t: Table) -> SamplerSettings:
    """``[sampling]`` sizes and convergence settings, each checked against its allowed range."""
    walkers = t.integer("walkers", 32, minimum=2, maximum=MAX_WALKERS)
    max_steps = t.integer("max_steps", 5000, minimum=1, maximum=MAX_STEPS)
    checkpoint = t.integer("checkpoint_every", 100, minimum=1, maximum=MAX_STEPS)
    return SamplerSettings(
        walkers=walkers, max_steps=max_steps,
        min_steps=t.integer("min_steps", min(200, max_steps), minimum=0, maximum=MAX_STEPS),
        tau_multiple=t.number("tau_multiple", 50.0, minimum=1.0, maximum=1000.0),
        tau_tolerance=t.number("tau_tolerance", 0.05, minimum=0.0, exclusive_minimum=True,
                               maximum=1.0),
        checkpoint_every=checkpoint, seed=t.integer("seed", 0, minimum=0, maximum=2**63 - 1),
        prior_survey_draws=t.integer("prior_survey_draws", 200, minimum=0,
                                     maximum=MAX_SURVEY_DRAWS))


def chains_folder(value: str, output_given: bool) -> Path:
    """``sampling.chains_dir``: a folder inside the working directory.

    A configuration travels between collaborators, so its values may not send output anywhere
    on the machine: the folder must be relative, without '..', and (symbolic links resolved)
    inside the working directory. Another place is chosen on the command line (``--output``),
    in which case the configured value is not used.
    """
    path = Path(value)
    if output_given:
        return path
    cwd = Path.cwd().resolve()
    inside = (cwd / path).resolve()
    if (not value or path.is_absolute() or ".." in path.parts
            or (inside != cwd and cwd not in inside.parents)):
        raise InputError(f"'sampling.chains_dir' = '{value}' must be a relative folder inside "
                         "the working directory (no absolute path, no '..'); to write "
                         "elsewhere give --output DIR on the command line")
    return path


def likelihood_of(config: Table, base_dir: Path | None) -> Any:
    try:
        from ..likelihood.gaussian import likelihood_from_config
    except ImportError as exc:  # pragma: no cover - only before the likelihood package lands
        raise InputError(f"the likelihood package is not available in this build ({exc})"
                         ) from None
    return likelihood_from_config(config, base_dir)


def build_run(config_path: str | Path, *, workers: int | None = None,
              quiet: bool = False, output: str | Path | None = None,
              config: Table | None = None) -> RunSetup:
    """Validate a configuration and assemble everything a run needs (writes nothing)."""
    path = Path(config_path)
    if config is None:
        config = load_run_config(path)
    base = path.parent
    t = config.table("sampling", SAMPLING_KEYS, required=True)
    prior_name = t.string("prior")
    prior_path = resolve_prior_path(prior_name, base)
    settings = sampler_settings(t)
    run_name = t.string("run_name", path.stem)
    if not run_name or "/" in run_name or run_name.startswith("."):
        raise InputError(f"'sampling.run_name' = '{run_name}' must be a plain folder name")
    chains_dir = chains_folder(t.string("chains_dir", "chains"), output is not None)
    n_workers = resolve_workers(workers, t)
    show = t.boolean("progress", True) and not quiet
    # the prior file names its model; [sampling] model may restate it
    head = Table(read_toml(prior_path, "prior file"), "", ("prior", "parameters"))
    head_model = head.table("prior", ("model", "title", "description"), required=True).string(
        "model")
    forward_model(head_model, "prior.model", sampled=True)
    model_name = t.string("model", head_model)
    if model_name != head_model:
        raise InputError(f"'sampling.model' = '{model_name}' but prior file '{prior_path}' is "
                         f"for model '{head_model}'")
    model = forward_model(model_name, "sampling.model", sampled=True)
    prior = load_prior(prior_path, model)
    if settings.walkers < 2 * prior.ndim:
        raise InputError(f"'sampling.walkers' = {settings.walkers} is too small; allowed: >= "
                         f"{2 * prior.ndim} (2 x the {prior.ndim} sampled parameters)")
    report_settings(config.data, prior.sampled_names)  # a bad [report] fails now, not later
    likelihood = likelihood_of(config, base)
    require_fit = t.boolean("require_summary_fit", True)
    posterior = ModelPosterior(prior, model, likelihood, require_fit)
    folder = Path(output) if output is not None else chains_dir / run_name
    elsewhere = ("give another --output folder" if output is not None else
                 "choose another sampling.run_name (or give --output DIR)")
    fingerprint = _fingerprint(prior.text, model_name,
                               {"likelihood": config.data.get("likelihood", {}),
                                "require_summary_fit": require_fit}, settings)
    manifest = {
        "format": "bouncelike posterior run, version 1",
        "run_name": folder.name,
        "package_version": __version__,
        "library_versions": _versions(),
        "config_file": str(path),
        "config": config.data,
        "model": model_name,
        "prior": prior.as_dict(),
        "prior_file_text": prior.text,
        "seed": settings.seed,
        "sampler": {"library": "emcee", "moves": "affine-invariant stretch move (a = 2)",
                    "settings": {**settings.fingerprint_items(),
                                 "max_steps": settings.max_steps}},
        "require_summary_fit": require_fit,
        "tolerances": {
            "tau_multiple": settings.tau_multiple, "tau_tolerance": settings.tau_tolerance,
            "autocorrelation_window_c": 5,
            "likelihood_fit_tolerance": getattr(likelihood, "tolerance", None),
        },
        "provenance": provenance(path, constraint_sets_of(likelihood), command="sample"),
        "constraint_sets": [s.as_dict() for s in likelihood.sets],
        "likelihood_sources": likelihood_sources(likelihood),
        "likelihood_settings": {"allow_overlap": likelihood.allow_overlap,
                                "fit_tolerance": likelihood.tolerance,
                                "fit_half_width": likelihood.half_width,
                                "low_ell_range": _ell_range_of(likelihood)},
        "fingerprint": fingerprint,
        "loading": "pandas.read_csv('<run>/samples.csv') (burn-in removed, thinned) or "
                   "chain.csv (every step; drop step <= run.burn_in)",
    }
    return RunSetup(config=config, prior=prior, model=model, likelihood=likelihood,
                    posterior=posterior, settings=settings, folder=folder,
                    workers=n_workers, show_progress=show, fingerprint=fingerprint,
                    manifest=manifest, elsewhere=elsewhere)


def likelihood_sources(likelihood: Any) -> list[dict[str, Any]]:
    """What the likelihood was built from: per constraint set the resolved path of its file,
    whether it is a shipped set, its SHA-256 and its text."""
    from importlib import resources

    data_dir = Path(str(resources.files("bouncelike.likelihood") / "data")).resolve()
    shipped_dirs = (data_dir, data_dir / "low_ell")
    out = []
    for s in likelihood.sets:  # pivot sets and the large-scale temperature set
        path = Path(s.path).resolve()
        data = path.read_bytes()
        out.append({"name": s.name, "path": str(path), "shipped": path.parent in shipped_dirs,
                    "sha256": hashlib.sha256(data).hexdigest(),
                    "text": data.decode("utf-8")})
    return out


def likelihood_from_manifest(manifest: dict[str, Any]) -> Any:
    """The likelihood a run used, from the set texts its manifest keeps (older manifests
    without them: from the configuration, with set files relative to its folder)."""
    sources = manifest.get("likelihood_sources")
    if sources is None:
        config = Table(manifest["config"], "", tuple(manifest["config"]))
        return likelihood_of(config, Path(manifest.get("config_file", ".")).parent)
    from ..likelihood.combined import likelihood_from_sets
    from ..likelihood.lowell_data import KIND as LOW_ELL_KIND
    from ..likelihood.lowell_data import parse_low_ell_set
    from ..likelihood.sets import parse_constraint_set

    where = "run manifest"
    try:
        sets = []
        for src in sources:
            text = str(src["text"])
            if hashlib.sha256(text.encode("utf-8")).hexdigest() != src["sha256"]:
                raise InputError(f"{where}: the stored text of constraint set "
                                 f"'{src['name']}' does not match its SHA-256 (damaged)")
            data = tomllib.loads(text)
            parse = (parse_low_ell_set if data.get("kind") == LOW_ELL_KIND
                     else parse_constraint_set)
            sets.append(parse(data, str(src["path"])))
        opts = manifest["likelihood_settings"]
        ell_range = opts.get("low_ell_range")
        return likelihood_from_sets(sets, bool(opts["allow_overlap"]),
                                    tolerance=float(opts["fit_tolerance"]),
                                    half_width=float(opts["fit_half_width"]),
                                    ell_range=tuple(ell_range) if ell_range else None)
    except (KeyError, TypeError, tomllib.TOMLDecodeError) as exc:
        raise InputError(f"{where}: the record of the constraint sets is damaged "
                         f"({type(exc).__name__}: {exc}); rewrite it with 'bouncelike sample "
                         "CONFIG --resume' (the run's configuration)") from None


def rebuild_from_manifest(manifest: dict[str, Any]) -> tuple[Prior, Any, Any, ModelPosterior]:
    """Prior, model, likelihood and posterior of a finished run, from its manifest alone."""
    config = Table(manifest["config"], "", tuple(manifest["config"]))
    model = forward_model(manifest["model"], "model", sampled=True)
    prior = prior_from_text(manifest["prior_file_text"], manifest["prior"].get("source", ""),
                            model, renamed_keys_allowed=True)
    report_settings(config.data, prior.sampled_names, stored=True)  # a bad [report] fails now
    likelihood = likelihood_from_manifest(manifest)
    require_fit = bool(manifest.get("require_summary_fit", True))
    return prior, model, likelihood, ModelPosterior(prior, model, likelihood, require_fit)


def _ell_range_of(likelihood: Any) -> list[int] | None:
    """The multipole range of a large-scale temperature term (None: all of its set's, or no
    such term)."""
    r = getattr(likelihood, "ell_range", None)
    return None if r is None else [int(r[0]), int(r[1])]


def _fingerprint(prior_text: str, model: str, likelihood: Any, s: SamplerSettings) -> str:
    blob = json.dumps({"prior": prior_text, "model": model, "likelihood": likelihood,
                       "settings": s.fingerprint_items()}, sort_keys=True, default=str)
    return hashlib.sha256(blob.encode()).hexdigest()


def _versions() -> dict[str, str]:
    import emcee
    import numpy

    return {"python": platform.python_version(), "numpy": numpy.__version__,
            "emcee": emcee.__version__}
