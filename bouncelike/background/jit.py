"""Compilation of the background engine: numba decorators, the uncompiled copy, stale caches.

Every compiled function of the engine is decorated with :func:`jit` (numba, ``cache=True``,
numpy error model: a division by zero gives inf or NaN, never an exception) or :func:`inline`.

User potentials written in Python (registered with
:func:`bouncelike.background.potentials.register_potential`) cannot be compiled. For them
:func:`python_copy` rebuilds the engine's call graph from the *same* function objects'
Python code (``Dispatcher.py_func``), with the compiled potential replaced by a Python one:
literally the same solver and systems, run by the interpreter (about a hundred times slower).

numba's on-disk cache of a function does not notice edits to the functions it calls in other
files. :func:`drop_stale_caches` (called when the engine is imported) removes the cache files
of the engine whenever any engine source file is newer than them, so an edit anywhere in the
engine recompiles it on the next run (one to two minutes).
"""

from __future__ import annotations

import types
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

from numba import njit
from numba.core.dispatcher import Dispatcher

from ..kernel_cache import numba_imported

numba_imported()  # a command's compile watch starts listening (kernel_cache.py)


def jit(func: Callable) -> Any:
    """Compile ``func`` with numba (cached on disk, numpy floating-point error model)."""
    return njit(cache=True, error_model="numpy")(func)


def inline(func: Callable) -> Any:
    """Like :func:`jit`, inlined into its callers (small functions on the hot path)."""
    return njit(cache=True, error_model="numpy", inline="always")(func)


def python_copy(entry: Any, overrides: dict[Any, Callable]) -> Callable:
    """The uncompiled twin of the compiled function ``entry`` and everything it calls.

    Every global of a copied function that is a numba dispatcher is replaced by its own
    uncompiled copy, or by ``overrides[dispatcher]`` when given (e.g. the compiled potential
    replaced by a user's Python potential). Functions of one module share one copied namespace.
    """
    namespaces: dict[int, dict] = {}
    copies: dict[int, Callable] = {}

    def copy(dispatcher: Any) -> Callable:
        if dispatcher in overrides:
            return overrides[dispatcher]
        key = id(dispatcher)
        if key in copies:
            return copies[key]
        py = dispatcher.py_func
        g = namespaces.get(id(py.__globals__))
        if g is None:
            g = dict(py.__globals__)
            namespaces[id(py.__globals__)] = g
            pending = [(name, value) for name, value in g.items()
                       if isinstance(value, Dispatcher)]
        else:
            pending = []
        new = types.FunctionType(py.__code__, g, py.__name__, py.__defaults__, py.__closure__)
        copies[key] = new
        for name, value in pending:
            g[name] = copy(value)
        return new

    return copy(entry)


def drop_stale_caches(sources: Iterable[Path]) -> None:
    """Remove numba cache files of ``sources`` older than the newest of them (best effort)."""
    sources = [Path(s) for s in sources]
    try:
        newest = max(s.stat().st_mtime for s in sources)
    except (OSError, ValueError):
        return
    for src in sources:
        cache_dir = src.parent / "__pycache__"
        try:
            entries = list(cache_dir.glob(f"{src.stem}.*.nb[ic]"))
        except OSError:
            continue
        for entry in entries:
            try:
                if entry.stat().st_mtime < newest:
                    entry.unlink()
            except OSError:
                pass
