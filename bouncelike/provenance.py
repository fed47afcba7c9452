"""Provenance of an output: which program, configuration, data sets and plugins made it.

Every JSON output of the command line (``efolds_summary.json``, ``spectrum.json``,
``compare_summary.json``, ``score --json``, the report's ``verdicts.json``, a posterior run's
``manifest.json`` and every ``--json`` object) carries the block built by :func:`provenance`::

    "provenance": {
      "package": "bouncelike",
      "version": "0.1.0",                         # bouncelike.__version__
      "command": "efolds",                         # the sub-command, when run from the CLI
      "config": {"path": "/abs/run.toml",          # the file the settings were read from
                 "sha256": "..."},                 # SHA-256 of its bytes (null without a file)
      "constraint_sets": [                         # the data sets scored against (may be [])
        {"name": "bk18", "citation": "...", "arxiv": "...", "forecast": false,
         "path": "/abs/.../bk18.toml", "sha256": "..."}],
      "plugins": [{"path": "/abs/my.py", "sha256": "..."}],   # plugins.loaded_plugins()
      "python": "3.11.7",
      "upstream": null                             # the provenance of the input this output
    }                                              # was made from (report: the run's)

The configuration's hash is of the file's bytes (``hashlib.sha256(path.read_bytes())``), so two
outputs with the same hash were made from byte-identical configurations. For ``report`` the
settings come from the run's ``manifest.json``; that file is the ``config`` recorded.
"""

from __future__ import annotations

import hashlib
import platform
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from . import __version__

PROVENANCE_KEYS = ("package", "version", "command", "config", "constraint_sets", "plugins",
                   "python", "upstream")


def file_digest(path: str | Path) -> str:
    """SHA-256 (hex) of the bytes of ``path``."""
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def constraint_sets_of(likelihood: Any) -> tuple[Any, ...]:
    """Every data set a likelihood scores against: its pivot sets, then its large-scale
    temperature set (``likelihood.low_ell.data``) when it has one."""
    sets = tuple(getattr(likelihood, "sets", ()) or ())
    low = getattr(likelihood, "low_ell", None)
    data = getattr(low, "data", None)
    if data is None or any(s is data for s in sets):  # a combined likelihood lists it itself
        return sets
    return sets + (data,)


def describe_set(s: Any) -> dict[str, Any]:
    """Name, citation, arXiv number, forecast flag and file (path, SHA-256) of one set; ``s``
    is a set object (``ConstraintSet``, ``LowEllData``) or a dict with the same keys (a dict
    may carry the ``sha256`` recorded when the set was read, e.g. from a run's manifest)."""
    get = s.get if isinstance(s, dict) else (lambda k, d=None: getattr(s, k, d))
    path = get("path", "") or ""
    digest = get("sha256")
    if digest is None and path and Path(path).is_file():
        digest = file_digest(path)
    return {"name": get("name"), "citation": get("citation"), "arxiv": get("arxiv"),
            "forecast": bool(get("is_forecast", get("forecast", False))),
            "path": str(Path(path).resolve()) if path else None, "sha256": digest}


def provenance(config: str | Path | None = None, constraint_sets: Iterable[Any] = (),
               command: str | None = None, upstream: Any = None) -> dict[str, Any]:
    """The provenance block (module docstring) of an output made now in this process.

    ``config`` is the configuration file read (None when the command reads none);
    ``constraint_sets`` the set objects (or their dicts) scored against; ``command`` the
    sub-command's name; ``upstream`` the provenance block of the input the output was made
    from (a posterior run's, for its report)."""
    from .plugins import loaded_plugins

    cfg = None
    if config is not None:
        p = Path(config)
        cfg = {"path": str(p.resolve()), "sha256": file_digest(p) if p.is_file() else None}
    return {
        "package": "bouncelike",
        "version": __version__,
        "command": command,
        "config": cfg,
        "constraint_sets": [describe_set(s) for s in constraint_sets],
        "plugins": loaded_plugins(),
        "python": platform.python_version(),
        "upstream": upstream,
    }
