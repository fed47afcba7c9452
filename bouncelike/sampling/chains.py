"""Chains on disk: the run folder, its lock, checkpoints and the tables a user loads.

A run folder ``chains/<run-name>/`` holds

``manifest.json``  full configuration, prior, seed, package and library versions, constraint
                   sets with citations, tolerances, status, convergence figures, failure counts
``chain.csv``      every step of every walker: ``step, walker, <sampled>, <derived>,
                   log_likelihood, log_posterior`` -- ``pandas.read_csv(path)`` loads it
``samples.csv``    after the run: the chain without burn-in, thinned (same columns)
``state.npz``      the checkpoint the run resumes from: chain arrays so far, current walker
                   positions, log-probabilities and blobs, the sampler's random state, accepted
                   counts, failure counts, the last autocorrelation estimate (plain arrays; no
                   pickle)
``.lock``          ``<pid> <host>`` while a run writes here

Every file is written to a temporary name and renamed into place, so a run killed at any
moment (SIGKILL included) leaves the last complete checkpoint and nothing half-written.
"""

from __future__ import annotations

import io
import json
import os
import socket
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError
from ..io import json_safe, write_bytes_atomic, write_json_atomic

MANIFEST = "manifest.json"
CHAIN = "chain.csv"
SAMPLES = "samples.csv"
STATE = "state.npz"
LOCK = ".lock"


# -- lock ---------------------------------------------------------------------------------

def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class RunLock:
    """Exclusive claim of a run folder by one process (lock file holding PID and host).

    A lock left by a process that no longer exists on this host (killed, crashed) is stale and
    is taken over; a live holder makes the second run fail with an :class:`InputError`.
    """

    def __init__(self, folder: Path):
        self.path = Path(folder) / LOCK
        self.held = False

    def acquire(self) -> None:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        me = f"{os.getpid()} {socket.gethostname()}\n"
        for _ in range(3):
            try:
                fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                holder = self._holder()
                if holder is None:
                    continue
                pid, host = holder
                if host == socket.gethostname() and not _pid_alive(pid):
                    try:
                        os.unlink(self.path)  # stale lock of a dead process
                    except FileNotFoundError:
                        pass
                    continue
                raise InputError(
                    f"run folder '{self.path.parent}' is in use by process {pid} on {host} "
                    f"(lock file {self.path}); wait for it or choose another sampling.run_name"
                ) from None
            with os.fdopen(fd, "w") as fh:
                fh.write(me)
            self.held = True
            return
        raise InputError(f"could not lock run folder '{self.path.parent}'")

    def _holder(self) -> tuple[int, str] | None:
        try:
            text = self.path.read_text().split()
        except FileNotFoundError:
            return None
        try:
            return int(text[0]), (text[1] if len(text) > 1 else socket.gethostname())
        except (ValueError, IndexError):
            return 0, socket.gethostname()  # unreadable lock: treat as stale

    def release(self) -> None:
        if self.held:
            try:
                os.unlink(self.path)
            except FileNotFoundError:
                pass
            self.held = False

    def __enter__(self) -> RunLock:
        self.acquire()
        return self

    def __exit__(self, *exc: object) -> None:
        self.release()


# -- checkpoint ---------------------------------------------------------------------------

@dataclass
class Checkpoint:
    """Everything a run needs to continue exactly where it stopped."""

    coords: np.ndarray          # (steps, walkers, ndim) chain so far
    log_prob: np.ndarray        # (steps, walkers)
    blobs: np.ndarray           # (steps, walkers, nblobs)
    state_coords: np.ndarray    # (walkers, ndim) current positions
    state_log_prob: np.ndarray  # (walkers,)
    state_blobs: np.ndarray     # (walkers, nblobs)
    random_state: tuple         # numpy RandomState state tuple of the sampler
    accepted: np.ndarray        # (walkers,) accepted proposals per walker
    failure_codes: np.ndarray   # (n,) int64 codes of failure reasons
    failure_counts: np.ndarray  # (n,) int64
    failure_texts: np.ndarray   # (n,) str
    tau_history: np.ndarray     # (checks, ndim) autocorrelation estimates at each check
    tau_steps: np.ndarray       # (checks,) step counts of those estimates
    fingerprint: str            # hash of the configuration that produced the run
    finished: bool = False

    @property
    def steps(self) -> int:
        return int(self.coords.shape[0])

    def save(self, folder: Path) -> None:
        name, key, pos, has_gauss, gauss = self.random_state
        buf = io.BytesIO()
        np.savez(
            buf, coords=self.coords, log_prob=self.log_prob, blobs=self.blobs,
            state_coords=self.state_coords, state_log_prob=self.state_log_prob,
            state_blobs=self.state_blobs, rng_name=np.array(str(name)),
            rng_key=np.asarray(key, dtype=np.uint32), rng_pos=np.array(int(pos)),
            rng_has_gauss=np.array(int(has_gauss)), rng_gauss=np.array(float(gauss)),
            accepted=self.accepted, failure_codes=self.failure_codes,
            failure_counts=self.failure_counts,
            failure_texts=np.asarray(self.failure_texts, dtype=str),
            tau_history=self.tau_history, tau_steps=self.tau_steps,
            fingerprint=np.array(self.fingerprint), finished=np.array(self.finished),
        )
        write_bytes_atomic(Path(folder) / STATE, buf.getvalue())

    @classmethod
    def load(cls, folder: Path) -> Checkpoint:
        path = Path(folder) / STATE
        try:
            with np.load(path, allow_pickle=False) as z:
                d = {k: z[k] for k in z.files}
        except (OSError, ValueError, KeyError) as exc:
            raise InputError(f"checkpoint '{path}' cannot be read ({exc}); start a new run "
                             "with another sampling.run_name") from None
        rs = (str(d["rng_name"]), d["rng_key"].astype(np.uint32), int(d["rng_pos"]),
              int(d["rng_has_gauss"]), float(d["rng_gauss"]))
        return cls(
            coords=d["coords"], log_prob=d["log_prob"], blobs=d["blobs"],
            state_coords=d["state_coords"], state_log_prob=d["state_log_prob"],
            state_blobs=d["state_blobs"], random_state=rs, accepted=d["accepted"],
            failure_codes=d["failure_codes"], failure_counts=d["failure_counts"],
            failure_texts=d["failure_texts"], tau_history=d["tau_history"],
            tau_steps=d["tau_steps"], fingerprint=str(d["fingerprint"]),
            finished=bool(d["finished"]),
        )


def has_checkpoint(folder: Path) -> bool:
    return (Path(folder) / STATE).is_file()


# -- tables -------------------------------------------------------------------------------

def csv_header(names: tuple[str, ...], blob_names: tuple[str, ...]) -> str:
    return ",".join(("step", "walker", *names, *blob_names, "log_posterior")) + "\n"


def csv_rows(coords: np.ndarray, log_prob: np.ndarray, blobs: np.ndarray,
             steps: np.ndarray) -> str:
    """CSV rows of (steps, walkers, ...) arrays; floats as Python's shortest round-trip
    repr, so ``pandas.read_csv`` recovers every value exactly."""
    n_steps, walkers = coords.shape[:2]
    if n_steps == 0:
        return ""
    values = np.concatenate([coords, blobs, log_prob[:, :, None]], axis=2)
    values = values.reshape(n_steps * walkers, -1).tolist()
    prefix = [f"{s},{w}," for s in np.asarray(steps).tolist() for w in range(walkers)]
    return "".join(p + ",".join(map(repr, row)) + "\n" for p, row in zip(prefix, values,
                                                                          strict=True))


def write_manifest(folder: Path, manifest: dict[str, Any]) -> None:
    write_json_atomic(Path(folder) / MANIFEST, json_safe(manifest))


def read_manifest(folder: Path) -> dict[str, Any]:
    path = Path(folder) / MANIFEST
    if not path.is_file():
        raise InputError(f"'{folder}' is not a run folder (no {MANIFEST}); give the folder "
                         "a 'bouncelike sample' run wrote")
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except json.JSONDecodeError as exc:
        raise InputError(f"'{path}' is not valid JSON ({exc})") from None
