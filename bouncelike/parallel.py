"""Pools of workers with an ordered ``map``: serial, local processes, or MPI ranks.

Every parallel piece of the package (the duration-of-inflation distribution, posterior
sampling) takes "any object with ``.map``" and never builds a pool deep inside. Results are
returned in input order, and every task carries its own inputs (including any random draws made
beforehand from one seeded generator), so a computation is bit-identical whatever the number of
workers.

Under ``mpiexec`` (detected from the environment, mpi4py installed as the ``mpi`` extra) the
pool is a master/worker pool over MPI ranks: rank 0 runs the program and hands out chunks of each
``map``; the other ranks serve until the master closes the pool and then exit.

A pool takes an ``initializer`` (with ``initargs``) that runs once in every worker before its
first task -- e.g. :func:`bouncelike.sampling.posterior.install_posterior`, which puts the
posterior into each worker so that a task carries only its point. Serial pools run it in the
calling process. Workers ignore Ctrl-C (SIGINT): the main process alone decides what an
interruption means, and an interrupted or failed ``map`` ends the workers at once
(``terminate``) instead of waiting for queued tasks, so Ctrl-C gives one line and no hang.
"""

from __future__ import annotations

import contextlib
import multiprocessing as mp
import os
import signal
import sys
from collections.abc import Callable, Iterable, Iterator
from typing import Any

MAX_WORKERS = 256
"""Upper bound on local worker processes (``--workers`` and every configuration's ``workers``):
a guard against typos such as 2000; more processes than cores only slow a run down, and runs
beyond one machine use MPI ranks (``mpiexec -n N``), which this bound does not limit."""


def mpi_size() -> int:
    """Number of MPI ranks this process was started with (1 outside an MPI launcher)."""
    for var in ("OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "MPI_LOCALNRANKS"):
        value = os.environ.get(var, "")
        if value.isdigit() and int(value) > 1:
            return int(value)
    return 1


def resolve_workers(requested: int | None, table: Any = None, key: str = "workers") -> int:
    """How many workers a command runs with -- the one place that decides it.

    ``requested`` is ``--workers`` (None when not given); otherwise ``table`` (a
    :class:`bouncelike.config.Table`, e.g. ``[efolds]``) is asked for ``key``; default 1.
    Both must lie in 1..:data:`MAX_WORKERS` (else :class:`~bouncelike.errors.InputError`
    naming the option or key). Under an MPI launcher the MPI ranks are the workers whatever
    was asked (:func:`make_pool` builds an MPI pool), and their number is returned.
    """
    from .errors import InputError

    if requested is not None:
        if isinstance(requested, bool) or not 1 <= int(requested) <= MAX_WORKERS:
            raise InputError(f"'--workers' = {requested} is out of range; allowed: >= 1 and "
                             f"<= {MAX_WORKERS}")
        workers = int(requested)
    elif table is not None:
        workers = table.integer(key, 1, minimum=1, maximum=MAX_WORKERS)
    else:
        workers = 1
    return mpi_size() if running_under_mpi() else workers


def running_under_mpi() -> bool:
    """True when the process was started by an MPI launcher with more than one rank."""
    for var in ("OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "MPI_LOCALNRANKS"):
        if os.environ.get(var, "1") not in ("", "1", "0"):
            return True
    return "PMI_RANK" in os.environ and os.environ.get("PMI_SIZE", "1") != "1"


class SerialPool:
    """The trivial pool: runs tasks one after another in this process."""

    workers = 1

    def __init__(self, initializer: Callable[..., Any] | None = None,
                 initargs: tuple = ()) -> None:
        self.initializer = initializer
        self.initargs = tuple(initargs)
        if initializer is not None:
            initializer(*self.initargs)

    def map(self, func: Callable[[Any], Any], tasks: Iterable[Any]) -> list[Any]:
        return [func(t) for t in tasks]

    def is_master(self) -> bool:
        return True

    def close(self) -> None:
        """Finish: wait for the workers to end after their last task."""

    def terminate(self) -> None:
        """Stop at once (after an error or an interruption): queued tasks are dropped."""
        self.close()

    def __enter__(self) -> SerialPool:
        return self

    def __exit__(self, exc_type: object, *exc: object) -> None:
        if exc_type is None:
            self.close()
        else:
            self.terminate()


def _start_worker(initializer: Callable[..., Any] | None, initargs: tuple) -> None:
    """First code a worker process runs: ignore SIGINT, then the pool's initializer."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if hasattr(signal, "pthread_sigmask"):
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGINT})
    if initializer is not None:
        initializer(*initargs)


@contextlib.contextmanager
def _sigint_blocked() -> Iterator[None]:
    """Hold SIGINT back while workers are forked, so none is hit before it can ignore it.

    A Ctrl-C pressed meanwhile is delivered to this process when the block ends."""
    if not hasattr(signal, "pthread_sigmask"):  # pragma: no cover - not POSIX
        yield
        return
    old = signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT})
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


class ProcessPool(SerialPool):
    """Local worker processes (``fork`` where available so compiled code is inherited)."""

    def __init__(self, workers: int, initializer: Callable[..., Any] | None = None,
                 initargs: tuple = ()):
        self.workers = int(workers)
        self.initializer = initializer
        self.initargs = tuple(initargs)
        method = "fork" if "fork" in mp.get_all_start_methods() else "spawn"
        with _sigint_blocked():
            self._pool = mp.get_context(method).Pool(
                self.workers, initializer=_start_worker, initargs=(initializer, self.initargs))

    def map(self, func: Callable[[Any], Any], tasks: Iterable[Any]) -> list[Any]:
        tasks = list(tasks)
        n = len(tasks)
        if n <= 64 * self.workers:
            # small batches (an ensemble step): one chunk per worker; each message costs about a
            # millisecond of inter-process traffic, as much as a cheap likelihood evaluation
            chunk = -(-n // self.workers)
        else:
            # large batches of uneven cost (e-fold distributions): a few chunks per worker
            chunk = max(1, n // (4 * self.workers))
        try:
            return self._pool.map(func, tasks, chunksize=max(1, chunk))
        except BaseException:
            self.terminate()  # a failed or interrupted map: do not wait for queued tasks
            raise

    def close(self) -> None:
        self._pool.close()
        self._pool.join()

    def terminate(self) -> None:
        self._pool.terminate()
        self._pool.join()


class MPIPool(SerialPool):
    """Master/worker pool over MPI ranks; the master computes a share too."""

    _TAG_TASK, _TAG_RESULT, _TAG_STOP = 11, 12, 13

    def __init__(self, initializer: Callable[..., Any] | None = None,
                 initargs: tuple = ()) -> None:
        from mpi4py import MPI

        self.comm = MPI.COMM_WORLD
        self.rank = self.comm.Get_rank()
        self.workers = self.comm.Get_size()
        self.initializer = initializer
        self.initargs = tuple(initargs)

    def start(self) -> None:
        """Run the initializer on this rank (every rank, the master included, computes)."""
        if self.rank != 0:
            signal.signal(signal.SIGINT, signal.SIG_IGN)
        if self.initializer is not None:
            self.initializer(*self.initargs)

    def is_master(self) -> bool:
        return self.rank == 0

    def wait(self) -> None:
        """Worker loop: serve chunks until the master stops the pool."""
        status = None
        from mpi4py import MPI

        status = MPI.Status()
        while True:
            msg = self.comm.recv(source=0, tag=MPI.ANY_TAG, status=status)
            if status.Get_tag() == self._TAG_STOP:
                return
            func, indexed = msg
            self.comm.send([(i, func(t)) for i, t in indexed], dest=0, tag=self._TAG_RESULT)

    def map(self, func: Callable[[Any], Any], tasks: Iterable[Any]) -> list[Any]:
        tasks = list(tasks)
        n = self.workers
        shares = [[(i, t) for i, t in enumerate(tasks) if i % n == r] for r in range(n)]
        for r in range(1, n):
            self.comm.send((func, shares[r]), dest=r, tag=self._TAG_TASK)
        results: list[Any] = [None] * len(tasks)
        for i, t in shares[0]:
            results[i] = func(t)
        for r in range(1, n):
            for i, value in self.comm.recv(source=r, tag=self._TAG_RESULT):
                results[i] = value
        return results

    def close(self) -> None:
        if self.is_master():
            for r in range(1, self.workers):
                self.comm.send(None, dest=r, tag=self._TAG_STOP)


def make_pool(workers: int | None = 1, use_mpi: bool | None = None, *,
              initializer: Callable[..., Any] | None = None, initargs: tuple = ()
              ) -> SerialPool:
    """Build the pool a command asked for.

    Parameters
    ----------
    workers : int or None
        Local worker processes; 1 means serial, None means all cores.
    use_mpi : bool or None
        None: use MPI when started under an MPI launcher with several ranks.
    initializer, initargs : callable and its arguments, run once in every worker (and, for a
        serial pool or on the MPI master, in this process) before the first task.

    Under MPI the worker ranks enter their service loop here and leave the program when the
    master closes the pool, so code after ``make_pool`` runs on rank 0 only.
    """
    if use_mpi is None:
        use_mpi = running_under_mpi()
    if use_mpi:
        try:
            pool = MPIPool(initializer, initargs)
        except ImportError as exc:  # pragma: no cover - depends on the environment
            from .errors import InputError

            raise InputError(
                "started under an MPI launcher but mpi4py is not installed "
                "(pip install 'bouncelike[mpi]')"
            ) from exc
        if pool.workers > 1:
            pool.start()
            if not pool.is_master():
                pool.wait()
                sys.exit(0)
            return pool
    if workers is None:
        workers = os.cpu_count() or 1
    if workers <= 1:
        return SerialPool(initializer, initargs)
    return ProcessPool(workers, initializer, initargs)
