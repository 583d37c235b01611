"""A one-line progress report for long loops: shown on a terminal, silent in logs.

:func:`progress` returns a :class:`ProgressLine` that a loop advances as it goes. It writes to
standard error, and only when that is a terminal: a job whose standard error goes to a log file
or a pipe writes nothing at all. The environment variable ``SAMPLEWRIGHT_PROGRESS`` overrides
the check: ``0`` turns progress off everywhere, ``1`` turns it on even when standard error is
not a terminal (then the last state is left on its own line at the end, for a log to keep).

On a terminal the line is redrawn in place (a carriage return, no escape codes), at most
:data:`MAX_RATE` times a second (plus the finished count) and never within :data:`DELAY`
seconds of the start, so short loops show nothing; at the end the line is blanked out. The
line reads ``<label>: <what> <done>/<total> (<percent>%, <elapsed> s)``, where ``label`` comes
from the enclosing :func:`progress_label` blocks (a command names the column and statistic it is
working on) and ``what`` from the loop.

Nothing here touches random streams or results: progress is pure reporting.

Examples
--------
>>> import io
>>> out = io.StringIO()
>>> with progress(3, "resamples", stream=out, enabled=True) as line:
...     for _ in range(3):
...         line.advance()
>>> out.getvalue().strip()
'resamples 3/3 (100%, 0 s)'
"""

from __future__ import annotations

import contextlib
import os
import sys
import time
from collections.abc import Callable, Iterator
from contextvars import ContextVar
from types import TracebackType
from typing import TextIO

__all__ = [
    "DELAY",
    "ENV_VAR",
    "MAX_RATE",
    "ProgressLine",
    "progress",
    "progress_enabled",
    "progress_label",
]

ENV_VAR = "SAMPLEWRIGHT_PROGRESS"
MAX_RATE = 5.0  # redraws per second at most
DELAY = 0.5  # seconds before the first redraw (short loops stay silent)

_LABEL: ContextVar[str] = ContextVar("samplewright_progress_label", default="")


def progress_enabled(stream: TextIO | None = None) -> bool:
    """Whether progress goes to ``stream`` (default: standard error): ``SAMPLEWRIGHT_PROGRESS``
    when it is ``0`` or ``1``, else whether the stream is a terminal."""
    forced = os.environ.get(ENV_VAR, "").strip()
    if forced in ("0", "1"):
        return forced == "1"
    return _is_tty(sys.stderr if stream is None else stream)


def _is_tty(stream: TextIO) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, OSError, ValueError):  # no isatty, or a closed stream
        return False


@contextlib.contextmanager
def progress_label(label: str) -> Iterator[None]:
    """Prefix the progress lines of loops run inside with ``label`` (nested labels: ``a / b``)."""
    outer = _LABEL.get()
    token = _LABEL.set(f"{outer} / {label}" if outer else label)
    try:
        yield
    finally:
        _LABEL.reset(token)


class ProgressLine:
    """The progress of one loop of ``total`` steps; see :func:`progress`.

    Attributes
    ----------
    total : int
        Steps the loop will take.
    done : int
        Steps reported so far.
    enabled : bool
        Whether anything is written.
    """

    def __init__(
        self,
        total: int,
        what: str,
        *,
        stream: TextIO | None = None,
        enabled: bool | None = None,
        clock: Callable[[], float] = time.monotonic,
        max_rate: float = MAX_RATE,
        delay: float = DELAY,
    ) -> None:
        self.total = max(int(total), 0)
        self.done = 0
        self._stream = sys.stderr if stream is None else stream
        self._tty = _is_tty(self._stream)
        self.enabled = progress_enabled(self._stream) if enabled is None else bool(enabled)
        label = _LABEL.get()
        self._prefix = f"{label}: {what}" if label else what
        self._clock = clock
        self._start = clock()
        self._gap = 1.0 / max_rate
        self._delay = max(delay, 0.0)
        self._next = self._start + self._delay
        self._width = 0  # characters of the line on screen (0: nothing drawn yet)
        self._closed = False

    def advance(self, steps: int = 1) -> None:
        """Report ``steps`` more steps done."""
        self.update(self.done + steps)

    def update(self, done: int) -> None:
        """Report ``done`` steps done; redraws only when the rate limit allows."""
        self.done = int(done)
        if not self.enabled or self._closed:
            return
        now = self._clock()
        # the rate limit holds back redraws, never the last one (once the first delay is over)
        finished = self.done >= self.total and now >= self._start + self._delay
        if now >= self._next or finished:
            self._next = now + self._gap
            self._draw(now)

    def close(self) -> None:
        """End the report: on a terminal the line is blanked; a forced report on another stream
        ends with the final state on its own line."""
        if self._closed:
            return
        self._closed = True
        if not self.enabled:
            return
        if self._tty:
            if self._width:
                self._write("\r" + " " * self._width + "\r")
            return
        self._write(f"\r{self._text(self._clock())}\n")

    def _text(self, now: float) -> str:
        share = 100.0 * self.done / self.total if self.total else 100.0
        return f"{self._prefix} {self.done}/{self.total} ({share:.0f}%, {now - self._start:.0f} s)"

    def _draw(self, now: float) -> None:
        text = self._text(now)
        pad = max(self._width - len(text), 0)
        self._write("\r" + text + " " * pad)
        self._width = len(text)

    def _write(self, text: str) -> None:
        try:
            self._stream.write(text)
            self._stream.flush()
        except (OSError, ValueError):  # a closed or broken stream: progress is not worth failing
            self.enabled = False

    def __enter__(self) -> ProgressLine:
        return self

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.close()


def progress(
    total: int,
    what: str,
    *,
    stream: TextIO | None = None,
    enabled: bool | None = None,
    clock: Callable[[], float] = time.monotonic,
) -> ProgressLine:
    """A progress line for a loop of ``total`` steps described by ``what`` (e.g. "resamples").

    Parameters
    ----------
    total : int
        Steps the loop will take.
    what : str
        What a step is, shown before the count.
    stream : text stream, optional
        Where to write; standard error by default.
    enabled : bool, optional
        Force the report on or off; by default :func:`progress_enabled` decides.
    clock : callable
        Seconds as a float (``time.monotonic``); tests pass a fake clock.

    Returns
    -------
    ProgressLine
        Use it as a context manager, or call :meth:`ProgressLine.close` at the end.
    """
    return ProgressLine(total, what, stream=stream, enabled=enabled, clock=clock)
