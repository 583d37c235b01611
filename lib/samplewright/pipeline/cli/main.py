"""The ``samplewright`` command: the parser, the dispatch and the error contract.

Every command validates its input before it writes anything; errors print one line
(``samplewright: error: ...``) and exit with status 2 (a command line that does not parse, input
errors, unusable files, a failed write such as a full disk) or 3 (artifact integrity). The
command groups import numpy, scipy or pandas only inside their commands, so
``samplewright --version`` and ``--help`` stay fast, and a command line that starts with a
command imports and builds the parser of that command's group alone.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence
from types import ModuleType
from typing import NoReturn

from samplewright import __version__
from samplewright.core.errors import IntegrityError, SamplewrightError
from samplewright.pipeline.cli.common import EXIT_INPUT, EXIT_INTEGRITY

__all__ = ["COMMANDS", "GROUPS", "UsageError", "build_parser", "main"]

# the command groups (modules of this package), in the order `samplewright --help` lists them
GROUPS = (
    "fitting",
    "joint",
    "elicit",
    "draws",
    "resample",
    "inspect",
    "store_tools",
    "data",
    "tables",
    "workflow",
)
# which group adds each command: a command line that starts with one of these builds (and
# imports) only that group's parser, ~20 ms less start-up for every rule job. A command missing
# here still works, through the whole parser (tests/unit/test_perf_paths.py checks the table).
COMMANDS = {
    "fit": "fitting",
    "knots": "fitting",
    "fit-joint": "joint",
    "elicit": "elicit",
    "draw": "draws",
    "interval": "resample",
    "replicate": "resample",
    "spread": "resample",
    "mc-error": "resample",
    "show": "inspect",
    "verify": "inspect",
    "store": "store_tools",
    "fingerprint": "data",
    "snapshot": "data",
    "snapshot-table": "tables",
    "select": "workflow",
    "check": "workflow",
    "report": "workflow",
}


def _group(name: str) -> ModuleType:
    return importlib.import_module(f"samplewright.pipeline.cli.{name}")


class UsageError(Exception):
    """A command line argparse cannot parse (reported in one line by :func:`main`)."""


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error becomes one line (``--help`` still shows the usage)."""

    def error(self, message: str) -> NoReturn:
        raise UsageError(f"{message} (see {self.prog} --help)")


def build_parser(groups: Sequence[str] = GROUPS) -> argparse.ArgumentParser:
    """The parser of every command (each group adds its own subcommands); ``groups`` limits it
    to the commands of those groups (see :data:`COMMANDS`)."""
    parser = _Parser(
        prog="samplewright",
        description="Fit, store, check and draw from input distributions for Monte Carlo models.",
    )
    parser.add_argument("--version", action="version", version=f"samplewright {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for name in groups:
        _group(name).add_commands(sub)
    return parser


def _os_error(exc: OSError) -> str:
    reason = exc.strerror or str(exc)
    return f"{exc.filename}: {reason}" if exc.filename else reason


def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; return its exit status (0, 2 or 3)."""
    if argv is None:
        argv = sys.argv[1:]
    first = COMMANDS.get(argv[0]) if argv else None
    parser = build_parser(GROUPS if first is None else (first,))
    try:
        args = parser.parse_args(argv)
    except UsageError as exc:
        print(f"samplewright: error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    try:
        return int(args.func(args))
    except IntegrityError as exc:
        print(f"samplewright: error: {exc}", file=sys.stderr)
        return EXIT_INTEGRITY
    except SamplewrightError as exc:
        print(f"samplewright: error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except OSError as exc:
        print(f"samplewright: error: {_os_error(exc)}", file=sys.stderr)
        return EXIT_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
