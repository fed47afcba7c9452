"""Command-line front end: ``bouncelike <command> ...`` and ``python -m bouncelike``.

Each command lives in its own module under :mod:`bouncelike.commands` and is discovered
automatically. A command module defines::

    NAME = "score"                       # the sub-command
    HELP = "one line shown in --help"
    def add_arguments(parser): ...       # argparse options
    def run(args) -> int: ...            # exit code

Bad input raises :class:`~bouncelike.errors.InputError`; it is printed here as one line,
``bouncelike: error: <message>``, with exit code 2. Commands compute before they write, and
write atomically (:mod:`bouncelike.io`), so an error leaves no half-written output.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys
from collections.abc import Sequence

from . import __version__
from .errors import EXIT_INPUT_ERROR, InputError, NumericalFailure


def _command_modules() -> list:
    from . import commands

    mods = []
    for info in sorted(pkgutil.iter_modules(commands.__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        mod = importlib.import_module(f"{commands.__name__}.{info.name}")
        if hasattr(mod, "NAME") and hasattr(mod, "run"):
            mods.append(mod)
    return mods


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="bouncelike",
        description="Confront quantum-gravity bounce models with CMB constraints on the "
        "primordial spectra.",
    )
    parser.add_argument("--version", action="version", version=f"bouncelike {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for mod in _command_modules():
        p = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP)
        mod.add_arguments(p)
        p.add_argument("--plugin", action="append", default=[], metavar="FILE.py",
                       help="run this Python file first (it may register user potentials "
                       "with bouncelike.background.potentials.register_potential); named in "
                       "the provenance of the outputs; repeatable")
        p.set_defaults(_run=mod.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return EXIT_INPUT_ERROR
    try:
        from .plugins import load_plugin

        for plugin in getattr(args, "plugin", []):
            load_plugin(plugin)
        return int(args._run(args) or 0)
    except InputError as exc:
        print(f"bouncelike: error: {exc}", file=sys.stderr)
        return EXIT_INPUT_ERROR
    except NumericalFailure as exc:  # a configuration the model cannot evaluate
        print(f"bouncelike: numerical failure: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt as exc:  # RunInterrupted says where it stopped
        print("bouncelike: interrupted" + (f": {exc}" if str(exc) else ""), file=sys.stderr)
        return 130
    except BrokenPipeError:  # output piped into a pager or head that closed early
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
