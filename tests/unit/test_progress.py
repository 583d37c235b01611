"""Progress lines: silent off a terminal, forced by SAMPLEWRIGHT_PROGRESS, rate-limited."""

from __future__ import annotations

import io

import numpy as np
import pytest

from samplewright.core import progress as prog
from samplewright.fitting.replicates import fit_replicates
from samplewright.resample.intervals import bootstrap_interval


class FakeTerminal(io.StringIO):
    """A text stream that says it is a terminal and keeps every write."""

    def __init__(self) -> None:
        super().__init__()
        self.writes: list[str] = []

    def isatty(self) -> bool:
        return True

    def write(self, s: str) -> int:
        self.writes.append(s)
        return super().write(s)


class FakeClock:
    """A clock that the test moves by hand."""

    def __init__(self) -> None:
        self.now = 100.0

    def __call__(self) -> float:
        return self.now


@pytest.fixture
def no_override(monkeypatch: pytest.MonkeyPatch) -> None:
    """Progress decided by the stream alone (no SAMPLEWRIGHT_PROGRESS)."""
    monkeypatch.delenv(prog.ENV_VAR, raising=False)


def test_nothing_is_written_when_stderr_is_not_a_terminal(
    no_override: None, capsys: pytest.CaptureFixture[str]
) -> None:
    """Captured stderr is not a terminal: a long loop and real commands write nothing there."""
    clock = FakeClock()
    with prog.progress(1000, "steps", clock=clock) as line:
        for _ in range(1000):
            clock.now += 0.5
            line.advance()
    x = np.random.default_rng(1).lognormal(size=200)
    bootstrap_interval(x, "mean", n_resamples=300, batch=10, rng=2)
    fit_replicates(x, "lognormal", n_replicates=5, rng=3)
    assert capsys.readouterr().err == ""


def test_forced_on_reports_the_completed_count(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    """SAMPLEWRIGHT_PROGRESS=1 writes even to a log; its last line is the finished count."""
    monkeypatch.setenv(prog.ENV_VAR, "1")
    x = np.random.default_rng(4).normal(size=50)
    with prog.progress_label("hours mean"):
        bootstrap_interval(x, "mean", n_resamples=240, batch=7, rng=5)
    err = capsys.readouterr().err
    assert err.endswith("\n")
    last = err.rstrip("\n").split("\r")[-1]
    assert last.startswith("hours mean: resamples 240/240 (100%, ")


def test_forced_off_silences_a_terminal(monkeypatch: pytest.MonkeyPatch) -> None:
    """SAMPLEWRIGHT_PROGRESS=0 keeps even a terminal quiet."""
    monkeypatch.setenv(prog.ENV_VAR, "0")
    term, clock = FakeTerminal(), FakeClock()
    with prog.progress(50, "fits", stream=term, clock=clock) as line:
        for _ in range(50):
            clock.now += 1.0
            line.advance()
    assert term.writes == []


def test_terminal_redraws_are_rate_limited_and_cleared(no_override: None) -> None:
    """10 s of updates every 10 ms give at most 5 redraws a second, none in the first 0.5 s,
    and the line is blanked at the end (the redraw rate is common practice, no source)."""
    term, clock = FakeTerminal(), FakeClock()
    with prog.progress(1000, "resamples", stream=term, clock=clock) as line:
        for i in range(1000):
            clock.now += 0.01
            line.update(i + 1)
            if clock.now - 100.0 < prog.DELAY - 1e-9:
                assert term.writes == []
    draws = [w for w in term.writes if w.strip()]
    assert 40 <= len(draws) <= 10 * prog.MAX_RATE
    assert draws[-1].startswith("\rresamples 1000/1000 (100%, 10 s)")
    assert term.writes[-1].strip() == "" and term.writes[-1].endswith("\r")
    assert term.getvalue().endswith(" " * len(draws[-1].rstrip()[1:]) + "\r")


def test_a_short_loop_on_a_terminal_shows_nothing(no_override: None) -> None:
    """A loop that ends within the first half second draws nothing and clears nothing."""
    term, clock = FakeTerminal(), FakeClock()
    with prog.progress(10, "fits", stream=term, clock=clock) as line:
        for _ in range(10):
            clock.now += 0.01
            line.advance()
    assert term.writes == []


def test_labels_nest_and_a_broken_stream_is_ignored(no_override: None) -> None:
    """Nested labels prefix the line; a stream that fails to write turns progress off."""

    class Broken(FakeTerminal):
        def write(self, s: str) -> int:
            raise OSError("gone")

    clock = FakeClock()
    with prog.progress_label("interval"), prog.progress_label("mean"):
        term = FakeTerminal()
        line = prog.progress(4, "resamples", stream=term, clock=clock)
        clock.now += 1.0
        line.update(2)
        assert term.writes[0] == "\rinterval / mean: resamples 2/4 (50%, 1 s)"
        broken = prog.progress(4, "resamples", stream=Broken(), clock=clock)
        clock.now += 1.0
        broken.update(1)
        assert broken.enabled is False
        broken.close()
