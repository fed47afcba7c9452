"""Chains on disk: the files of a run folder, and reading them back with damage checks.

A run folder ``chains/<run-name>/`` holds

``manifest.json``  full configuration, prior (and its file text), constraint sets (with the
                   text and SHA-256 of each set file used), seed, package and library versions,
                   tolerances, status, convergence figures, failure counts per reason and the
                   prior fraction each covers
``chain.csv``      every step of every walker: ``step, walker, <sampled>, log_likelihood,
                   <derived>, log_posterior`` -- ``pandas.read_csv(path)`` loads it; rows are
                   appended at each checkpoint
``failures.csv``   every evaluation that failed, was refused or was capped, with its
                   parameters (:mod:`bouncelike.sampling.failures`)
``samples.csv``    after the run: the chain without burn-in, thinned (same columns)
``state.npz``      the checkpoint a run resumes from (:mod:`bouncelike.sampling.storage`)
``.lock``          while a run writes here (:mod:`bouncelike.sampling.lock`)

The readers here check what they read: a damaged file gives one line saying what is damaged
and what to do, and a table whose last row was cut (a copy interrupted mid-line) is read
without that row, with a note saying so.
"""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..io import json_safe, write_json_atomic
from .failures import FAILURES
from .lock import LOCK

MANIFEST = "manifest.json"
CHAIN = "chain.csv"
SAMPLES = "samples.csv"
STATE = "state.npz"
__all__ = ["MANIFEST", "CHAIN", "SAMPLES", "STATE", "FAILURES", "LOCK", "csv_header",
           "csv_rows", "write_manifest", "read_manifest", "load_table", "load_samples"]

#: Manifest entries a report needs, with their JSON types.
MANIFEST_NEEDS = {"config": dict, "model": str, "prior": dict, "prior_file_text": str}


# -- tables -------------------------------------------------------------------------------

def csv_header(names: tuple[str, ...], blob_names: tuple[str, ...]) -> str:
    return ",".join(("step", "walker", *names, *blob_names, "log_posterior")) + "\n"


def csv_rows(coords: np.ndarray, log_prob: np.ndarray, blobs: np.ndarray,
             steps: np.ndarray) -> str:
    """CSV rows of (steps, walkers, ...) arrays; floats as Python's shortest round-trip
    repr, so :func:`read_csv_exact` recovers every value exactly."""
    n_steps, walkers = coords.shape[:2]
    if n_steps == 0:
        return ""
    values = np.concatenate([coords, blobs, log_prob[:, :, None]], axis=2)
    values = values.reshape(n_steps * walkers, -1).tolist()
    prefix = [f"{s},{w}," for s in np.asarray(steps).tolist() for w in range(walkers)]
    return "".join(p + ",".join(map(repr, row)) + "\n" for p, row in zip(prefix, values,
                                                                          strict=True))


def read_csv_exact(source: Any, **kwargs: Any) -> Any:
    """``pandas.read_csv`` recovering every float written by :func:`csv_rows` exactly (the
    round-trip parser; the default one from pandas 3 on)."""
    import pandas as pd

    if int(pd.__version__.split(".")[0]) < 3:
        kwargs.setdefault("float_precision", "round_trip")
    return pd.read_csv(source, **kwargs)


def load_table(path: str | Path, required: tuple[str, ...] = ()) -> tuple[Any, list[str]]:
    """A chain table (chain.csv, samples.csv) as a DataFrame, and notes on what was dropped.

    Raises :class:`InputError` naming the damage (empty, not text, not a table, a required
    column missing or not numeric, no rows). A last row cut mid-line is dropped with a note."""
    import pandas as pd

    path = Path(path)
    data = path.read_bytes()
    advice = _advice(path)
    if not data.strip():
        raise InputError(f"'{path}' is empty (damaged); {advice}")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(f"'{path}' is not a text table (damaged: binary content); "
                         f"{advice}") from None
    notes = []
    if not text.endswith("\n"):
        cut = text.rfind("\n") + 1
        if cut == 0:
            raise InputError(f"'{path}' holds only part of its header line (damaged); {advice}")
        if text[cut:].strip():
            notes.append(f"the last row of '{path}' was incomplete (cut mid-line) and was "
                         "dropped")
        text = text[:cut]
    try:
        frame = read_csv_exact(io.StringIO(text))
    except (pd.errors.ParserError, pd.errors.EmptyDataError, ValueError) as exc:
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"'{path}' is not a chain table (damaged: {first}); {advice}") from None
    missing = [c for c in required if c not in frame.columns]
    if missing:
        raise InputError(f"'{path}' lacks the column(s) {', '.join(missing)} (damaged, or not "
                         f"written by 'bouncelike sample'); {advice}")
    if len(frame) == 0:
        raise InputError(f"'{path}' holds no rows, only its header (damaged or written before "
                         f"any step); {advice}")
    bad = [c for c in required if not pd.api.types.is_numeric_dtype(frame[c])]
    if bad:
        raise InputError(f"'{path}': column(s) {', '.join(bad)} hold non-numbers (damaged); "
                         f"{advice}")
    return frame, notes


def load_samples(folder: str | Path, manifest: dict[str, Any], required: tuple[str, ...]
                 ) -> tuple[Any, list[str]]:
    """Posterior samples of a run: samples.csv, or chain.csv past burn-in while running."""
    folder = Path(folder)
    path = folder / SAMPLES
    if path.is_file():
        frame, notes = load_table(path, required)
    else:
        path = folder / CHAIN
        if not path.is_file():
            raise InputError(f"run folder '{folder}' has no chain yet ({CHAIN} missing)")
        frame, notes = load_table(path, ("step", *required))
        burn = int((manifest.get("run") or {}).get("burn_in", 0) or 0)
        frame = frame[frame["step"] > burn]
    # walkers only stand on finite points; the log columns may hold -inf (not evaluable)
    bad = [c for c in required if c not in ("log_likelihood", "log_posterior")
           and not np.all(np.isfinite(frame[c].to_numpy(dtype=float)))]
    if bad:
        raise InputError(f"'{path}': column(s) {', '.join(bad)} hold empty, NaN or infinite "
                         f"values (damaged); {_advice(path)}")
    return frame, notes


def _advice(path: Path) -> str:
    if path.name == SAMPLES:
        return (f"delete it to report from {CHAIN} instead, or rewrite it with 'bouncelike "
                "sample CONFIG --resume' (the run's configuration)")
    return ("restore it from a copy, or run the sampling again (a chain cannot be rebuilt "
            "from the other files)")


# -- manifest -------------------------------------------------------------------------------

def write_manifest(folder: Path, manifest: dict[str, Any]) -> None:
    write_json_atomic(Path(folder) / MANIFEST, json_safe(manifest))


def read_manifest(folder: str | Path, needs: dict[str, type] | None = None) -> dict[str, Any]:
    """The manifest of a run folder (a JSON object), checked for the entries ``needs`` names
    with their types (:data:`MANIFEST_NEEDS`: what a report needs)."""
    folder = Path(folder)
    path = folder / MANIFEST
    if not path.is_file():
        raise InputError(f"'{folder}' is not a run folder (no {MANIFEST}); give the folder "
                         "a 'bouncelike sample' run wrote")
    fix = ("rewrite it with 'bouncelike sample CONFIG --resume' (the run's configuration; the "
           "chain is kept)")
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"'{path}' is not valid JSON (damaged: {type(exc).__name__}); "
                         f"{fix}") from None
    if not isinstance(manifest, dict):
        raise InputError(f"'{path}' is damaged: it holds a JSON {type(manifest).__name__}, not "
                         f"the run's description (an object); {fix}")
    for key, kind in (needs or {}).items():
        if not isinstance(manifest.get(key), kind):
            what = "lacks" if key not in manifest else "has a wrong"
            raise InputError(f"'{path}' is damaged: it {what} entry '{key}'; {fix}")
    return manifest
