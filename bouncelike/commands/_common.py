"""Arguments and output folder shared by the commands that read a configuration and write files."""

from __future__ import annotations

from pathlib import Path
from typing import Any

DEFAULT_OUTPUT_ROOT = Path("bouncelike-out")


def add_config_output_arguments(parser: Any, sections: str) -> None:
    """CONFIG, --output, --json and --quiet; ``sections`` names the tables the command reads."""
    parser.add_argument("config", help=f"run configuration (TOML) with {sections}")
    parser.add_argument("--output", metavar="DIR", default=None,
                        help="output folder (default bouncelike-out/<config stem>/)")
    parser.add_argument("--json", action="store_true",
                        help="print one JSON object instead of the table")
    parser.add_argument("--quiet", action="store_true", help="hide the progress bar")


def output_dir(args: Any) -> Path:
    """The folder a command writes into: ``--output`` or bouncelike-out/<config stem>/."""
    return Path(args.output) if args.output else DEFAULT_OUTPUT_ROOT / Path(args.config).stem
