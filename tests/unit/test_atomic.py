"""Atomic writes (samplewright.store.atomic): permissions, stale temporary files, kills, targets."""

from __future__ import annotations

import os
import random
import signal
import stat
import subprocess
import sys
import time
from collections.abc import Callable, Iterator
from pathlib import Path

import numpy as np
import pytest

from samplewright.core.errors import IntegrityError
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.distributions.piecewise import from_knots
from samplewright.store import atomic
from samplewright.store.artifacts import load_sampler, write_sampler
from samplewright.store.atomic import (
    atomic_write,
    clean_stale_temps,
    is_temp_name,
    same_file,
    target_problem,
    write_text,
)
from samplewright.store.fingerprints import fingerprint_file
from samplewright.store.tables import write_table


@pytest.fixture
def umask() -> Iterator[Callable[[int], None]]:
    """Set the process umask for one test and put the old one back afterwards."""
    old = os.umask(0o022)
    os.umask(old)
    yield lambda mask: os.umask(mask) and None
    os.umask(old)


def _mode(path: Path) -> int:
    return stat.S_IMODE(path.stat().st_mode)


def _writers(tmp: Path) -> dict[str, Callable[[], Path]]:
    """Every kind of file samplewright writes, each written once into ``tmp``."""
    import pyarrow as pa

    def artifact() -> Path:
        write_sampler(from_knots([0, 1], [0, 1]), tmp / "a.parquet")
        return tmp / "a.parquet"

    def table() -> Path:
        write_table(tmp / "t.parquet", pa.table({"value": [1.0]}), {b"k": b"{}"})
        return tmp / "t.parquet"

    def text() -> Path:
        write_text(tmp / "c.json", "{}\n")
        return tmp / "c.json"

    def cache() -> Path:
        data = tmp / "d.csv"
        data.write_text("v\n1\n2\n")
        os.utime(data, (1e9, 1e9))
        fingerprint_file(data, "v", cache_dir=tmp / "cache")
        return tmp / "cache" / "fingerprints.json"

    return {"artifact": artifact, "table": table, "text": text, "cache": cache}


@pytest.mark.parametrize("mask", [0o022, 0o002, 0o077, 0o027])
@pytest.mark.parametrize("kind", ["artifact", "table", "text", "cache"])
def test_files_follow_the_umask(
    tmp_path: Path, umask: Callable[[int], None], mask: int, kind: str
) -> None:
    """A written file has the permissions a plain open() under the same umask gives."""
    umask(mask)
    made = _writers(tmp_path)[kind]()
    reference = tmp_path / "plain.txt"
    with open(reference, "w") as fh:  # the operating system's own rule for new files
        fh.write("x")
    # source: POSIX open(2): a new file gets mode 0o666 & ~umask (what open(..., "w") asks for)
    assert _mode(made) == _mode(reference) == 0o666 & ~mask


def _temp(
    folder: Path, pid: int, *, host: str | None = None, age_s: float = 0.0, token: str = "0badc0de"
) -> Path:
    """A temporary file named as a writer with ``pid`` on ``host`` would name it."""
    tag = host or atomic._host_tag()
    path = folder / f"{atomic.TEMP_PREFIX}{tag}.{pid}.{token}.a.parquet"
    path.write_bytes(b"PAR1 half")
    if age_s:
        t = time.time() - age_s
        os.utime(path, (t, t))
    return path


def _dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def test_temp_names_are_recognisable() -> None:
    """Temporary names carry the prefix, host tag and pid; other dot files are not temps."""
    name = atomic._temp_name("x.parquet")
    assert is_temp_name(name) and f".{os.getpid()}." in name
    assert not is_temp_name(".x.parquet.abc123.tmp")  # the old, unrecognisable form
    assert not is_temp_name("x.parquet")


def test_a_dead_writers_temp_is_removed_by_the_next_write(tmp_path: Path) -> None:
    """The next write in a folder removes the temp of a writer on this host that is gone."""
    stale = _temp(tmp_path, _dead_pid())
    write_text(tmp_path / "b.json", "{}")
    assert not stale.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b.json"]


def test_a_zombie_writers_temp_is_removed(tmp_path: Path) -> None:
    """A killed writer not yet reaped (a zombie) counts as gone."""
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    deadline = time.time() + 30
    while Path(f"/proc/{proc.pid}/stat").read_text().rsplit(")", 1)[1].split()[0] != "Z":
        assert time.time() < deadline
        time.sleep(0.01)
    stale = _temp(tmp_path, proc.pid)
    try:
        assert clean_stale_temps(tmp_path) == [stale]
    finally:
        proc.wait()


def test_live_and_foreign_temps_are_kept_until_old(tmp_path: Path) -> None:
    """A live writer's temp stays; another host's temp stays until it is older than the limit."""
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        live = _temp(tmp_path, sleeper.pid)
        mine = _temp(tmp_path, os.getpid())
        foreign = _temp(tmp_path, 12345, host="ffffffff")
        old_foreign = _temp(tmp_path, 23456, host="eeeeeeee", age_s=atomic.STALE_AFTER_S + 60)
        old_live = _temp(tmp_path, sleeper.pid, age_s=atomic.STALE_AFTER_S + 60, token="0ddba11a")
        other = tmp_path / ".hidden.parquet.tmp"
        other.write_text("not ours")
        assert sorted(clean_stale_temps(tmp_path)) == sorted([old_foreign, old_live])
        assert live.exists() and mine.exists() and foreign.exists() and other.exists()
    finally:
        sleeper.kill()
        sleeper.wait()


def test_failed_write_keeps_the_old_file_and_names_the_target(tmp_path: Path) -> None:
    """A writer that fails leaves the old file as it was, no temp, and the error names it."""
    target = tmp_path / "c.json"
    write_text(target, "old")

    def fail(tmp: str) -> None:
        Path(tmp).write_text("half")
        raise OSError(28, "No space left on device")

    with pytest.raises(OSError, match="No space left") as info:
        atomic_write(target, fail)
    assert info.value.filename == str(target)
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.json"]


def test_a_name_at_the_file_system_limit_can_be_written(tmp_path: Path) -> None:
    """A final name of the longest allowed length still gets a temporary name that fits."""
    limit = os.pathconf(tmp_path, "PC_NAME_MAX")
    target = tmp_path / ("n" * limit)
    write_text(target, "x")
    assert target.read_text() == "x"


def test_target_problems_are_named(tmp_path: Path) -> None:
    """Folders, paths under files, over-long names and paths are refused; a plain path is fine."""
    data = tmp_path / "data.csv"
    data.write_text("v\n1\n")
    limit = os.pathconf(tmp_path, "PC_NAME_MAX")
    assert target_problem(tmp_path) == "is a folder"
    assert "which is a file" in str(target_problem(data / "out.parquet"))
    assert "which is a file" in str(target_problem(data / "sub" / "out.parquet"))
    assert "at most" in str(target_problem(tmp_path / ("x" * (limit + 1))))
    assert "longer than" in str(target_problem(tmp_path / "/".join(["d" * 200] * 30)))
    assert target_problem(tmp_path / "new" / "folder" / "out.parquet") is None
    assert target_problem(data) is None  # overwriting a file is allowed (inputs are checked apart)


def test_same_file_sees_through_links_and_dots(tmp_path: Path) -> None:
    """Equal paths, '..' detours, symbolic and hard links all name the same file."""
    data = tmp_path / "data.csv"
    data.write_text("v\n1\n")
    (tmp_path / "sub").mkdir()
    (tmp_path / "link.csv").symlink_to(data)
    os.link(data, tmp_path / "hard.csv")
    assert same_file(data, tmp_path / "sub" / ".." / "data.csv")
    assert same_file(data, tmp_path / "link.csv")
    assert same_file(data, tmp_path / "hard.csv")
    assert not same_file(data, tmp_path / "other.csv")


_WRITER = """
import sys
import numpy as np
from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.store.artifacts import write_sampler
folder = sys.argv[1]
samplers = [EmpiricalSampler(np.random.default_rng(i).gamma(2.0, 3.0, 200_000)) for i in range(2)]
write_sampler(samplers[0], f"{folder}/warm.parquet")  # imports done: every moment is a write
print("ready", flush=True)
i = 0
while True:
    write_sampler(samplers[i % 2], f"{folder}/a{i % 3}.parquet")
    i += 1
"""


@pytest.mark.slow
def test_killed_writers_never_leave_partial_artifacts_or_lasting_temps(tmp_path: Path) -> None:
    """60 writers SIGKILLed at random moments: every file under a final name loads and
    verifies, and the next write leaves no temporary file behind."""
    rng = random.Random(20261203)
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    kills, temps_seen = 0, 0
    for _ in range(60):
        with subprocess.Popen(
            [sys.executable, "-c", _WRITER, str(tmp_path)],
            stdout=subprocess.PIPE,
            text=True,
            env=env,
        ) as proc:
            assert proc.stdout is not None and proc.stdout.readline().strip() == "ready"
            time.sleep(rng.uniform(0.0, 0.3))
            os.kill(proc.pid, signal.SIGKILL)
            proc.wait()
        kills += 1
        names = sorted(p.name for p in tmp_path.iterdir())
        temps = [n for n in names if is_temp_name(n)]
        temps_seen += len(temps)
        assert len(temps) <= 1, names  # the last writer's at most: earlier ones were cleaned
        for name in set(names) - set(temps):
            try:
                load_sampler(tmp_path / name)  # verifies the content hash
            except IntegrityError as exc:  # pragma: no cover - the failure this test guards
                pytest.fail(f"partial artifact under a final name: {exc}")
    write_sampler(EmpiricalSampler(np.arange(3.0)), tmp_path / "next.parquet")
    assert not [p for p in tmp_path.iterdir() if is_temp_name(p.name)]
    assert kills == 60 and temps_seen > 0  # some kills did land mid-write
