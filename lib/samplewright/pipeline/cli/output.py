"""Writing a command's text: to a pipe that may close early, warnings on stderr, and tables.

:func:`emit` writes to stdout and stops quietly when the reader has gone (``samplewright show
... | head``): the rest of the output is dropped, stdout is pointed at the null device so that
Python's final flush cannot fail again, and the command ends normally, without a traceback.
:func:`warn` prints one ``samplewright: warning: ...`` line per warning on stderr.
:func:`table` lays rows out in aligned columns.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover - the CLI's help must not import numpy
    from samplewright.check.report_model import ReportWarning

__all__ = ["emit", "table", "warn"]


def _drop_stdout() -> None:
    """Point stdout's file descriptor at the null device (Python's documented EPIPE advice)."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):  # pragma: no cover - no real stdout
        pass


def emit(text: str) -> bool:
    """Write ``text`` and a newline to stdout; False when the reader closed the pipe."""
    try:
        sys.stdout.write(text + "\n")
        sys.stdout.flush()
    except BrokenPipeError:
        _drop_stdout()
        return False
    return True


def warn(warnings: Iterable[ReportWarning], *, prefix: str = "") -> int:
    """One ``samplewright: warning: [kind] message`` line per warning on stderr; their number."""
    n = 0
    for w in warnings:
        print(f"samplewright: warning: {prefix}[{w.kind}] {w.message}", file=sys.stderr)
        n += 1
    return n


def table(head: Sequence[str], rows: Iterable[Sequence[str]], *, right: Sequence[int] = ()) -> str:
    """Rows as aligned text columns under ``head``; columns in ``right`` are right-aligned.

    >>> print(table(["name", "n"], [["gamma", "12"], ["lognormal", "3"]], right=[1]))
    name        n
    gamma      12
    lognormal   3
    """
    body = [list(map(str, r)) for r in rows]
    widths = [max(len(str(h)), *(len(r[i]) for r in body)) for i, h in enumerate(head)]

    def line(cells: Sequence[str]) -> str:
        out = [
            c.rjust(widths[i]) if i in right else c.ljust(widths[i]) for i, c in enumerate(cells)
        ]
        return "  ".join(out).rstrip()

    return "\n".join([line(list(map(str, head))), *(line(r) for r in body)])
