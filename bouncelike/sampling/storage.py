"""Storage of a posterior run: an emcee backend that writes the run folder as it goes.

:class:`RunBackend` implements emcee's backend interface (``reset``, ``grow``, ``save_step``,
``get_chain``, ``get_log_prob``, ``get_blobs``, ``get_last_sample``, ``random_state``,
``accepted``, ``iteration``): the chain is held in memory as emcee's own backend holds it, and
:meth:`RunBackend.checkpoint` writes what is new since the last checkpoint:

1. the new steps are *appended* to ``chain.csv`` and the new failure rows to
   ``failures.csv`` (flushed to disk);
2. ``state.npz`` -- small: the walkers' current positions, log-probabilities and blobs,
   emcee's random state, accepted counts, the sizes in bytes of ``chain.csv`` and
   ``failures.csv`` at this checkpoint and the loop's bookkeeping -- is replaced atomically.

A run killed at any moment (SIGKILL included) therefore leaves a complete checkpoint, possibly
followed by rows appended after it; :meth:`RunBackend.open` cuts both files back to the sizes
the checkpoint recorded, reads the chain back from ``chain.csv`` (floats written as shortest
round-trip text, so exactly) and returns an initialised backend: resuming is passing it to
``emcee.EnsembleSampler(..., backend=backend)``. Since the random state is restored too, the
resumed run draws exactly the numbers an uninterrupted one would have drawn.
"""

from __future__ import annotations

import io
import os
import zipfile
from pathlib import Path
from typing import Any

import emcee
import numpy as np

from ..errors import InputError
from ..io import append_text, write_bytes_atomic, write_text_atomic
from .chains import CHAIN, STATE, csv_header, csv_rows, read_csv_exact
from .failures import FAILURES, FailureRow, failures_header, failures_text

FORMAT = "bouncelike run state 2"
_OWN_KEYS = ("format", "steps", "coords", "log_prob", "blobs", "accepted", "chain_bytes",
             "failures_bytes", "rng_name", "rng_key", "rng_pos", "rng_has_gauss", "rng_gauss")


class RunBackend(emcee.backends.Backend):
    """emcee backend of a run folder (module docstring).

    Create it with :meth:`create` (a new run, after its walkers are placed) or :meth:`open`
    (resume); ``meta`` holds the sampling loop's bookkeeping (plain arrays), stored with every
    checkpoint. ``current`` is the ensemble's latest state (with emcee's random state).
    """

    def __init__(self, folder: str | Path, names: tuple[str, ...], blob_names: tuple[str, ...]):
        super().__init__()
        self.folder = Path(folder)
        self.names = tuple(names)
        self.blob_names = tuple(blob_names)
        self.current: emcee.State | None = None
        self.meta: dict[str, Any] = {}
        self.written = 0          # steps already in chain.csv
        self.chain_bytes = 0
        self.failures_bytes = 0

    # -- emcee's interface ----------------------------------------------------------------
    def save_step(self, state: emcee.State, accepted: np.ndarray) -> None:
        super().save_step(state, accepted)
        self.current = emcee.State(np.array(state.coords, dtype=float),
                                   log_prob=np.array(state.log_prob, dtype=float),
                                   blobs=self._blobs2d(state.blobs),
                                   random_state=state.random_state)

    # -- arrays -----------------------------------------------------------------------------
    def _blobs2d(self, blobs: Any) -> np.ndarray:
        return np.asarray(blobs, dtype=float).reshape(self.nwalkers, len(self.blob_names))

    def _emcee_blobs(self, blobs: np.ndarray) -> np.ndarray:
        """Blobs shaped as emcee holds them (a single blob per walker is squeezed)."""
        return blobs[..., 0] if len(self.blob_names) == 1 else blobs

    def arrays(self, start: int = 0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """coords (steps, walkers, ndim), log_prob (steps, walkers), blobs (steps, walkers,
        nblobs) of the steps from ``start`` on."""
        n = self.iteration
        coords = self.chain[start:n]
        blobs = (np.empty((n - start, self.nwalkers, len(self.blob_names))) if self.blobs is None
                 else np.asarray(self.blobs[start:n], dtype=float).reshape(
                     n - start, self.nwalkers, len(self.blob_names)))
        return coords, self.log_prob[start:n], blobs

    def initial_state(self) -> emcee.State:
        """Where the next step starts from (the walkers' state and emcee's random state)."""
        c = self.current
        return emcee.State(c.coords.copy(), log_prob=c.log_prob.copy(),
                           blobs=self._emcee_blobs(c.blobs.copy()),
                           random_state=self.random_state)

    # -- the run folder ---------------------------------------------------------------------
    @classmethod
    def create(cls, folder: str | Path, names: tuple[str, ...], blob_names: tuple[str, ...],
               coords: np.ndarray, log_prob: np.ndarray, blobs: np.ndarray,
               random_state: tuple, failure_rows: list[FailureRow], meta: dict[str, Any]
               ) -> RunBackend:
        """A new run: empty chain, walkers placed, first checkpoint written."""
        b = cls(folder, names, blob_names)
        b.reset(*np.shape(coords))
        b.random_state = random_state
        b.current = emcee.State(np.array(coords, float), log_prob=np.array(log_prob, float),
                                blobs=b._blobs2d(blobs), random_state=random_state)
        header = csv_header(names, blob_names)
        write_text_atomic(b.folder / CHAIN, header)
        b.chain_bytes = len(header.encode())
        fhead = failures_header(names)
        write_text_atomic(b.folder / FAILURES, fhead)
        b.failures_bytes = len(fhead.encode())
        b.meta = dict(meta)
        b.checkpoint(failure_rows)
        return b

    def checkpoint(self, failure_rows: list[FailureRow], meta: dict[str, Any] | None = None
                   ) -> None:
        """Append the new steps and failure rows, then replace state.npz (module docstring)."""
        if meta is not None:
            self.meta = dict(meta)
        if self.iteration > self.written:
            coords, lp, blobs = self.arrays(self.written)
            rows = csv_rows(coords, lp, blobs, np.arange(self.written + 1, self.iteration + 1))
            self.chain_bytes = append_text(self.folder / CHAIN, rows)
            self.written = self.iteration
        if failure_rows:
            self.failures_bytes = append_text(self.folder / FAILURES,
                                              failures_text(failure_rows))
        c = self.current
        name, key, pos, has_gauss, gauss = self.random_state
        buf = io.BytesIO()
        np.savez(buf, format=np.array(FORMAT), steps=np.array(self.iteration),
                 coords=c.coords, log_prob=c.log_prob, blobs=c.blobs,
                 accepted=np.asarray(self.accepted, dtype=float),
                 chain_bytes=np.array(self.chain_bytes, dtype=np.int64),
                 failures_bytes=np.array(self.failures_bytes, dtype=np.int64),
                 rng_name=np.array(str(name)), rng_key=np.asarray(key, dtype=np.uint32),
                 rng_pos=np.array(int(pos)), rng_has_gauss=np.array(int(has_gauss)),
                 rng_gauss=np.array(float(gauss)), **self.meta)
        write_bytes_atomic(self.folder / STATE, buf.getvalue())

    @classmethod
    def open(cls, folder: str | Path, names: tuple[str, ...], blob_names: tuple[str, ...],
             meta_keys: tuple[str, ...] = (), elsewhere: str = "choose another run folder"
             ) -> RunBackend:
        """The initialised backend of an existing run, ready to continue (module docstring)."""
        folder = Path(folder)
        d = read_state(folder, meta_keys, elsewhere)
        b = cls(folder, names, blob_names)
        walkers, ndim = d["coords"].shape
        nb = len(blob_names)
        if ndim != len(names) or d["blobs"].shape != (walkers, nb):
            raise InputError(f"checkpoint '{folder / STATE}' does not match this run's "
                             f"parameters ({ndim} sampled, {d['blobs'].shape[1]} stored per "
                             f"sample); --resume needs the same prior and model, or "
                             f"{elsewhere}")
        b.reset(walkers, ndim)
        steps = int(d["steps"])
        b.chain_bytes, b.failures_bytes = int(d["chain_bytes"]), int(d["failures_bytes"])
        for fname, size in ((CHAIN, b.chain_bytes), (FAILURES, b.failures_bytes)):
            path = folder / fname
            have = path.stat().st_size if path.is_file() else -1
            if have < size:
                raise InputError(
                    f"'{path}' is shorter than its checkpoint says ({max(have, 0)} < {size} "
                    f"bytes: damaged or replaced); the run cannot continue from it: restore "
                    f"the file from a copy, or start the run again ({elsewhere})")
            if have > size:
                os.truncate(path, size)  # rows appended after the last checkpoint
        coords, lp, blobs = _read_chain(folder / CHAIN, b.chain_bytes, names, blob_names,
                                        steps, walkers, elsewhere)
        b.chain, b.log_prob = coords, lp
        b.blobs = b._emcee_blobs(blobs) if steps else None
        b.iteration = b.written = steps
        b.accepted = np.asarray(d["accepted"], dtype=float)
        b.random_state = (str(d["rng_name"]), d["rng_key"].astype(np.uint32),
                          int(d["rng_pos"]), int(d["rng_has_gauss"]), float(d["rng_gauss"]))
        b.current = emcee.State(d["coords"], log_prob=d["log_prob"], blobs=d["blobs"],
                                random_state=b.random_state)
        b.meta = {k: d[k] for k in meta_keys}
        return b


def has_checkpoint(folder: str | Path) -> bool:
    return (Path(folder) / STATE).is_file()


def read_state(folder: str | Path, meta_keys: tuple[str, ...] = (),
               elsewhere: str = "choose another run folder") -> dict[str, np.ndarray]:
    """The arrays of ``state.npz``, checked: a damaged file gives one line saying so."""
    path = Path(folder) / STATE
    advice = (f"the run cannot continue from it: move the folder away and start the run "
              f"again, or {elsewhere}")
    try:
        with np.load(path, allow_pickle=False) as z:
            d = {k: z[k] for k in z.files}
    except (OSError, ValueError, EOFError, zipfile.BadZipFile, KeyError) as exc:
        kind = "empty" if path.is_file() and path.stat().st_size == 0 else (
            "truncated or not a checkpoint")
        raise InputError(f"checkpoint '{path}' is damaged ({kind}: {type(exc).__name__}); "
                         f"{advice}") from None
    if "format" not in d and "state_coords" in d:
        raise InputError(f"checkpoint '{path}' was written by an older bouncelike (chain "
                         f"kept inside the checkpoint); {advice}")
    missing = [k for k in (*_OWN_KEYS, *meta_keys) if k not in d]
    if missing or str(d.get("format")) != FORMAT:
        what = f"missing {', '.join(missing)}" if missing else f"format {d.get('format')}"
        raise InputError(f"checkpoint '{path}' is damaged ({what}); {advice}")
    return d


def _read_chain(path: Path, size: int, names: tuple[str, ...], blob_names: tuple[str, ...],
                steps: int, walkers: int, elsewhere: str
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    import pandas as pd

    with open(path, "rb") as fh:
        data = fh.read(size)
    columns = csv_header(names, blob_names).strip().split(",")
    try:
        frame = read_csv_exact(io.BytesIO(data))
        ok = list(frame.columns) == columns and len(frame) == steps * walkers
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, ValueError):
        ok = False
    if not ok:
        raise InputError(f"'{path}' does not hold the {steps} steps x {walkers} walkers its "
                         f"checkpoint records (damaged); the run cannot continue from it: "
                         f"restore the file from a copy, or start the run again "
                         f"({elsewhere})")
    ndim, nb = len(names), len(blob_names)
    values = frame[list(columns[2:])].to_numpy(dtype=float).reshape(steps, walkers, ndim + nb + 1)
    return values[:, :, :ndim].copy(), values[:, :, -1].copy(), values[:, :, ndim:ndim + nb].copy()
