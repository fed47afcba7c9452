"""Command-line front end: ``bouncelike <command> ...`` and ``python -m bouncelike``.

The commands are the modules listed in :data:`COMMANDS` (imported explicitly: nothing is
imported by a name read at run time). A command module defines::

    NAME = "efolds"                                  # the sub-command
    HELP = "one line shown in --help"
    OPTIONS = Options(config="[potential] and [efolds]", output="bouncelike-out/<config stem>/",
                      workers="[efolds] workers", compiles=True)   # shared options it takes
    def add_arguments(parser): ...                   # its own options only
    def run(args, session) -> CommandResult: ...     # compute, write, return the result

and imports its heavy modules inside ``run`` so that ``bouncelike --help`` stays fast. The
shared options, the :class:`~bouncelike.commands._layer.Session` (configuration, checked output
folder, workers, notices, provenance, timing) and the result object are in
:mod:`bouncelike.commands._layer`.

This front end prints the result: its text, or with ``--json`` one JSON object on stdout with
the ``provenance`` block (:mod:`bouncelike.provenance`) and ``timing``. Notices, progress bars
and errors go to stderr, so ``--json`` output stays parseable. Errors become one line
``bouncelike: error: <message>``, never a traceback:

* :class:`~bouncelike.errors.InputError` (bad configuration, data file, option, or an output
  folder that cannot be written) -- exit code 2, before any computation, nothing written;
* a file-system error while writing (:class:`OSError` naming a file) -- exit code 2;
* :class:`~bouncelike.errors.NotEvaluable` and other
  :class:`~bouncelike.errors.NumericalFailure` -- exit code 1;
* Ctrl-C -- ``bouncelike: interrupted: ...``, exit code 130.

Commands that compile numba kernels (``Options.compiles``) get a writable kernel cache
(:func:`bouncelike.kernel_cache.configure`) and, while kernels compile, the notice
``bouncelike: compiling kernels (first run only; ...)`` on stderr (hidden by ``--quiet``).
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Sequence

from . import __version__
from .commands import (
    compare,
    constraints,
    demo,
    efolds,
    report,
    sample,
    score,
    spectrum,
    transfer_check,
)
from .commands._layer import CommandResult, Session, add_shared_options
from .errors import EXIT_INPUT_ERROR, InputError, NotEvaluable, NumericalFailure

COMMANDS = (compare, constraints, demo, efolds, report, sample, score, spectrum, transfer_check)
EXIT_NUMERICAL_FAILURE = 1
EXIT_INTERRUPTED = 130


class UsageError(Exception):
    """A command line argparse refuses (unknown command or option, a value of the wrong type):
    reported as one line like any other bad input."""


class _Parser(argparse.ArgumentParser):
    """An argument parser whose refusals are one line (``bouncelike: error: ...``, exit code
    2) instead of argparse's usage block; ``--help`` and ``--version`` are unchanged."""

    def error(self, message: str):  # argparse calls this on a refused command line
        raise UsageError(f"{message} (see '{self.prog} --help')")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="bouncelike",
        description="Confront quantum-gravity bounce models with CMB constraints on the "
        "primordial spectra.",
        epilog="exit codes: 0 done; 1 numerical failure or not evaluable; 2 bad input or an "
        "output that cannot be written (nothing written); 130 interrupted",
    )
    parser.add_argument("--version", action="version", version=f"bouncelike {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for mod in COMMANDS:
        p = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP)
        mod.add_arguments(p)
        add_shared_options(p, mod.OPTIONS)
        p.set_defaults(_command=mod)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except UsageError as exc:
        return _error(str(exc), EXIT_INPUT_ERROR)
    mod = getattr(args, "_command", None)
    if mod is None:
        parser.print_help()
        return EXIT_INPUT_ERROR
    try:
        return _run(mod, args)
    except InputError as exc:
        return _error(str(exc), EXIT_INPUT_ERROR)
    except NotEvaluable as exc:
        return _error(f"not evaluable: {exc}", EXIT_NUMERICAL_FAILURE)
    except NumericalFailure as exc:
        return _error(f"numerical failure: {exc}", EXIT_NUMERICAL_FAILURE)
    except KeyboardInterrupt as exc:  # RunInterrupted says where it stopped
        print("bouncelike: interrupted" + (f": {exc}" if str(exc) else ""), file=sys.stderr)
        return EXIT_INTERRUPTED
    except BrokenPipeError:  # output piped into a pager or head that closed early
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except OSError as exc:
        if exc.filename is None:
            raise
        return _error(f"cannot write or read '{exc.filename}': {exc.strerror or exc}",
                      EXIT_INPUT_ERROR)


def _error(message: str, code: int) -> int:
    print(f"bouncelike: error: {' '.join(message.split())}", file=sys.stderr)
    return code


def _run(mod, args: argparse.Namespace) -> int:
    import contextlib

    from .plugins import load_plugin

    quiet = bool(args.quiet)
    announce = None if quiet else (lambda text: print(f"bouncelike: {text}", file=sys.stderr,
                                                      flush=True))
    with contextlib.ExitStack() as stack:
        watch = None
        if mod.OPTIONS.compiles:
            from .kernel_cache import CompileWatch, configure

            where, notice = configure()
            if notice and announce is not None:
                announce(f"note: {notice}")
            watch = stack.enter_context(CompileWatch(where, announce))
        session = Session(mod.NAME, mod.OPTIONS, args, watch)
        for plugin in args.plugin:
            load_plugin(plugin)
        result = mod.run(args, session)
        return emit(result, session)


def emit(result: CommandResult, session: Session) -> int:
    """Print ``result``: one JSON object with --json, else its text; its message on stderr."""
    from .io import _jsonable, json_safe

    if session.json:
        payload = {**result.data,
                   "provenance": dict(result.provenance or session.provenance()),
                   "timing": session.timing()}
        print(json.dumps(json_safe(payload), indent=2, default=_jsonable), flush=True)
    elif result.text:
        print(result.text, flush=True)
    if result.message:
        print(result.message, file=sys.stderr, flush=True)
    return int(result.exit_code)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
