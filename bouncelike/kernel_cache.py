"""Where the compiled kernels are cached, and what the user sees while they compile.

The numerical kernels are compiled by numba on first use and cached on disk (``cache=True``);
a first run of ``efolds`` or ``compare`` spends most of its time compiling (about a minute on
two cores), later runs load the cache in a second or two.

:func:`configure` chooses the cache folder before numba is imported, so that compiling never
fails for want of a writable place ("cannot cache function ..."):

1. ``NUMBA_CACHE_DIR`` when the user set it and it is writable;
2. otherwise, when ``NUMBA_CACHE_DIR`` is not set, numba's default: the ``__pycache__``
   folders next to the package's kernel modules, when they are writable;
3. the user's cache folder, ``$XDG_CACHE_HOME/bouncelike/numba`` or
   ``$HOME/.cache/bouncelike/numba`` (an installed package in a read-only location);
4. a temporary folder, ``<tempdir>/bouncelike-numba-<uid>`` (kept until the system clears it);
5. none: caching is switched off and every run compiles.

Steps 4 and 5, and a ``NUMBA_CACHE_DIR`` that cannot be used, come with a one-line notice.
:class:`CompileWatch` listens to numba's compile events (which fire only when a kernel is
really compiled, never when it is loaded from the cache), announces the first one with
"compiling kernels (first run only) ..." on standard error and adds up the compile time.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from collections.abc import Callable, Mapping, MutableMapping
from pathlib import Path

PACKAGE_DIR = Path(__file__).resolve().parent
KERNEL_DIRS = (PACKAGE_DIR / "background", PACKAGE_DIR / "perturbations")


def writable(folder: Path) -> bool:
    """True when a file can be created in ``folder`` (created with its parents if needed)."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, probe = tempfile.mkstemp(prefix=".bouncelike-probe-", dir=folder)
        os.close(fd)
        os.unlink(probe)
        return True
    except OSError:
        return False


def user_cache_folder(environ: Mapping[str, str]) -> Path | None:
    """``$XDG_CACHE_HOME/bouncelike/numba`` or ``$HOME/.cache/bouncelike/numba`` (None
    without either variable)."""
    if environ.get("XDG_CACHE_HOME"):
        return Path(environ["XDG_CACHE_HOME"]) / "bouncelike" / "numba"
    if environ.get("HOME"):
        return Path(environ["HOME"]) / ".cache" / "bouncelike" / "numba"
    return None


def temporary_cache_folder() -> Path:
    uid = os.getuid() if hasattr(os, "getuid") else "user"
    return Path(tempfile.gettempdir()) / f"bouncelike-numba-{uid}"


def choose_cache(environ: Mapping[str, str], can_write: Callable[[Path], bool] = writable,
                 kernel_dirs: tuple[Path, ...] = KERNEL_DIRS,
                 temporary: Callable[[], Path] = temporary_cache_folder
                 ) -> tuple[Path | None, str, str | None]:
    """The cache folder by the rules of the module docstring.

    Returns ``(folder, where, notice)``: ``folder`` to put in ``NUMBA_CACHE_DIR`` (None: leave
    numba's default, or no cache when ``where`` is "none"), ``where`` a short description for
    messages, ``notice`` the one line to show (None when nothing unusual happened).
    """
    notice_head = ""
    given = environ.get("NUMBA_CACHE_DIR")
    if given:
        if can_write(Path(given)):
            return Path(given), given, None
        notice_head = f"NUMBA_CACHE_DIR '{given}' is not writable; "
    elif all(can_write(d / "__pycache__") for d in kernel_dirs):
        return None, f"{PACKAGE_DIR}/*/__pycache__", None
    user = user_cache_folder(environ)
    if user is not None and can_write(user):
        notice = (notice_head + f"compiled kernels are cached in '{user}'") if notice_head \
            else None
        return user, str(user), notice
    tmp = temporary()
    if can_write(tmp):
        return tmp, str(tmp), (notice_head + f"compiled kernels are cached in the temporary "
                               f"folder '{tmp}' (set NUMBA_CACHE_DIR or HOME to a writable "
                               "folder to keep them)")
    return None, "none", (notice_head + "no writable folder for compiled kernels (package "
                          "folder, user cache, temporary folder); caching is off and every run "
                          "compiles (set NUMBA_CACHE_DIR to a writable folder)")


def configure(environ: MutableMapping[str, str] | None = None) -> tuple[str, str | None]:
    """Choose the cache (module docstring) and set it up for numba; call before numba is
    imported. Returns ``(where, notice)``. When numba is already imported (an embedding
    program chose its cache), nothing is changed."""
    env = os.environ if environ is None else environ
    if "numba" in sys.modules:
        return env.get("NUMBA_CACHE_DIR") or "numba's default cache folder", None
    folder, where, notice = choose_cache(env)
    if folder is not None:
        env["NUMBA_CACHE_DIR"] = str(folder)
    elif where == "none":
        env.pop("NUMBA_CACHE_DIR", None)
        _disable_caching()
    return where, notice


def _disable_caching() -> None:
    """Compile without caching: ``cache=True`` kernels skip the on-disk cache."""
    from numba.core import dispatcher

    dispatcher.Dispatcher.enable_caching = lambda self: None


class CompileWatch:
    """Announces the first kernel compile of this process and adds up compile wall time.

    Use as a context manager around a command; ``announce`` receives the one-line notice
    (None: no notice, the time is still counted)."""

    def __init__(self, where: str, announce: Callable[[str], None] | None):
        self.where = where
        self.announce = announce
        self.seconds = 0.0
        self.compiled = False
        self._depth = 0
        self._started = 0.0
        self._listener = None

    def _start(self) -> None:
        if self._depth == 0:
            self._started = time.perf_counter()
            if not self.compiled and self.announce is not None:
                cached = ("caching is off, every run compiles" if self.where == "none"
                          else f"first run only; cached in {self.where}")
                self.announce(f"compiling kernels ({cached}) ...")
            self.compiled = True
        self._depth += 1

    def _end(self) -> None:
        self._depth -= 1
        if self._depth == 0:
            self.seconds += time.perf_counter() - self._started

    def _listen(self) -> None:
        from numba.core import event

        watch = self

        class _Listener(event.Listener):
            def on_start(self, ev: object) -> None:
                watch._start()

            def on_end(self, ev: object) -> None:
                watch._end()

        self._listener = _Listener()
        event.register("numba:compile", self._listener)

    def __enter__(self) -> CompileWatch:
        # a command that never compiles never imports numba (0.2 s): the watch waits for
        # the package's compiled modules to import it (numba_imported)
        if "numba" in sys.modules:
            self._listen()
        else:
            _WAITING.append(self)
        return self

    def __exit__(self, *exc: object) -> None:
        if self in _WAITING:
            _WAITING.remove(self)
        if self._listener is not None:
            from numba.core import event

            event.unregister("numba:compile", self._listener)
            self._listener = None


#: watches entered before numba was imported
_WAITING: list[CompileWatch] = []


def numba_imported() -> None:
    """Called by the package's compiled modules right after importing numba: the watches
    entered before start listening to compile events."""
    while _WAITING:
        _WAITING.pop()._listen()
