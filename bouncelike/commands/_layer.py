"""What every command shares: its options, its session, its result.

A command module declares which shared options it takes (:class:`Options`), adds its own
arguments, and computes a :class:`CommandResult` in ``run(args, session)``; the front end
(:mod:`bouncelike.cli`) declares the options, builds the :class:`Session`, prints the result
(text, or one JSON object with ``--json``) and turns errors into one line.

Shared options (declared once, in :func:`add_shared_options`):

``CONFIG``      the run configuration (when ``Options.config`` says what it holds)
``--output``    output folder, checked before any computation (``Options.output``)
``--workers``   local worker processes (``Options.workers``), resolved by
                :func:`bouncelike.parallel.resolve_workers` (1..256; MPI ranks under mpiexec)
``--json``      one JSON object on stdout (with the provenance block)
``--quiet``     no progress bars and no notices on stderr (errors, and warnings about the
                inputs or results, are always shown)
``--plugin``    Python files run first (user potentials), named in the provenance
"""

from __future__ import annotations

import sys
import time
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

DEFAULT_OUTPUT_ROOT = Path("bouncelike-out")


@dataclass(frozen=True)
class Options:
    """Which shared options a command takes.

    config:   what the CONFIG positional holds (e.g. "[potential] and [efolds]"); None: none
    output:   the default output folder as shown in --help; None: no --output
    workers:  where a configuration sets the worker count (e.g. "[efolds] workers"); None: no
              --workers
    compiles: the command may compile numba kernels (the front end chooses the kernel cache
              and announces a first-run compile)
    """

    config: str | None = None
    output: str | None = None
    workers: str | None = None
    compiles: bool = False


@dataclass(frozen=True)
class CommandResult:
    """What a command hands back to the front end.

    data:       the JSON object printed with --json (the front end adds "provenance" and
                "timing")
    text:       what a person reads on stdout otherwise
    provenance: the command's provenance block (with its constraint sets); None: the front
                end builds one without sets
    exit_code:  0 on success
    message:    one line for stderr, shown in both modes (e.g. "bouncelike: not evaluable: ...")
    files:      paths written
    """

    data: Mapping[str, Any]
    text: str = ""
    provenance: Mapping[str, Any] | None = None
    exit_code: int = 0
    message: str = ""
    files: tuple[str, ...] = field(default=())


def add_shared_options(parser: Any, options: Options) -> None:
    """Declare the shared options ``options`` asks for (and --json, --quiet, --plugin)."""
    if options.config is not None:
        parser.add_argument("config", help=f"run configuration (TOML) with {options.config}")
    if options.output is not None:
        parser.add_argument("--output", metavar="DIR", default=None,
                            help=f"output folder (default {options.output}); checked before "
                            "any computation")
    if options.workers is not None:
        parser.add_argument("--workers", type=int, default=None, metavar="N",
                            help=f"local worker processes, 1..256 (overrides "
                            f"{options.workers}); under mpiexec the MPI ranks are the workers")
    parser.add_argument("--json", action="store_true",
                        help="print one JSON object (with provenance) instead of the text")
    parser.add_argument("--quiet", action="store_true",
                        help="no progress bars and no notices on stderr (errors still shown)")
    parser.add_argument("--plugin", action="append", default=[], metavar="FILE.py",
                        help="run this Python file first (it may register user potentials "
                        "with bouncelike.background.potentials.register_potential); named in "
                        "the provenance of the outputs; repeatable")


class Session:
    """One invocation of a command: its options, clock, notices and provenance."""

    def __init__(self, name: str, options: Options, args: Any, watch: Any = None):
        self.name = name
        self.options = options
        self.args = args
        self.watch = watch
        self.started = time.perf_counter()
        self._config = None

    # -- what was asked ---------------------------------------------------------------------
    @property
    def quiet(self) -> bool:
        return bool(getattr(self.args, "quiet", False))

    @property
    def progress(self) -> bool:
        """Show progress bars (on stderr)."""
        return not self.quiet

    @property
    def json(self) -> bool:
        return bool(getattr(self.args, "json", False))

    @property
    def config_path(self) -> Path | None:
        value = getattr(self.args, "config", None)
        return Path(value) if value is not None else None

    def config(self) -> Any:
        """The run configuration (:func:`bouncelike.config.load_run_config`), read once."""
        if self._config is None:
            from ..config import load_run_config

            self._config = load_run_config(self.config_path)
        return self._config

    def output_folder(self, files: Iterable[str] = (), default: str | Path | None = None
                      ) -> Path:
        """``--output``, else ``default``, else bouncelike-out/<config stem>/; checked now
        (:func:`bouncelike.io.check_output_folder`) so that a bad folder costs no work."""
        from ..io import check_output_folder

        given = getattr(self.args, "output", None)
        if given is not None:
            return check_output_folder(given, files)
        if default is None:
            default = DEFAULT_OUTPUT_ROOT / self.config_path.stem
        return check_output_folder(default, files, option="the default output folder")

    def workers(self, table: Any = None, key: str = "workers") -> int:
        """``--workers``, else ``table[key]``, else 1 (:func:`bouncelike.parallel.resolve_workers`);
        a notice when more than the cores this process may use."""
        from ..parallel import resolve_workers

        n = resolve_workers(getattr(self.args, "workers", None), table, key)
        self.check_cores(n)
        return n

    def check_cores(self, workers: int) -> None:
        """A notice when ``workers`` local processes outnumber the cores available."""
        import os

        from ..parallel import running_under_mpi

        cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else \
            (os.cpu_count() or 1)
        if workers > cores and not running_under_mpi():
            self.notice(f"{workers} workers on {cores} cores: the workers share the cores, "
                        "which is slower than one worker per core")

    # -- what is told -----------------------------------------------------------------------
    def notice(self, text: str) -> None:
        """One line on stderr, ``bouncelike: <text>`` (hidden by --quiet)."""
        if not self.quiet:
            print(f"bouncelike: {text}", file=sys.stderr, flush=True)

    def warn(self, text: str) -> None:
        """One line on stderr, ``bouncelike: note: <text>``, shown even with --quiet: something
        about the inputs or results the user must know (e.g. a damaged row that was dropped)."""
        print(f"bouncelike: note: {text}", file=sys.stderr, flush=True)

    def say(self, text: str) -> None:
        """A line of running commentary on stdout (long multi-step commands; not with --json)."""
        if not self.json:
            print(text, flush=True)

    def provenance(self, constraint_sets: Iterable[Any] = (),
                   config: str | Path | None = None, upstream: Any = None) -> dict[str, Any]:
        """The provenance block (:func:`bouncelike.provenance.provenance`) of this command."""
        from ..provenance import provenance

        return provenance(config if config is not None else self.config_path,
                          constraint_sets, command=self.name, upstream=upstream)

    def timing(self) -> dict[str, float]:
        """Wall time since the command started and the part spent compiling kernels."""
        compile_s = self.watch.seconds if self.watch is not None else 0.0
        return {"wall_seconds": time.perf_counter() - self.started,
                "compile_seconds": compile_s}

    def time_text(self) -> str:
        """"12.3 s" plus, when kernels were compiled, "(compiling kernels 10.1 s, first run
        only)"."""
        t = self.timing()
        text = f"{t['wall_seconds']:.2f} s"
        if t["compile_seconds"] > 0:
            text += f" (compiling kernels {t['compile_seconds']:.1f} s, first run only)"
        return text
