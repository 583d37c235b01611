#!/usr/bin/env python3
"""Start-up: the time of each command a workflow rule runs, on inputs too small to matter.

Each row times one ``samplewright`` command line (the console script of this environment, as a
rule job runs it) against ``python -c pass`` of the same interpreter, interleaved A B A B. The
ratio column holds the median extra CPU time in seconds (user + system of the child process,
command less baseline): on an idle machine that is the extra wall time of a single-threaded
start-up, and unlike wall time it hardly moves when other jobs load the machine. The median
extra wall time is kept beside it (``wall_s``). The target is 0.3 s for every command that needs
no scipy. Each row also lists the heavy libraries the command loads (checked in a separate run):
scipy must appear only where the command fits, ranks or checks a parametric family.

Byte code: an installed package runs from compiled ``.pyc`` files, but a source checkout run with
``PYTHONDONTWRITEBYTECODE`` set compiles every samplewright module on every start (~0.03 s).
The commands therefore run with that variable removed and ``PYTHONPYCACHEPREFIX`` pointing into
the benchmark's temporary folder, so that the warm-up run leaves the byte code an installation
would have (and nothing is written into the source tree).

    python benchmarks/startup.py [--quick] [--repeat 7]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
from _timing import row

HEAVY = ("scipy", "pandas", "matplotlib", "pyarrow", "numpy", "snakemake")
TARGET = "<= 0.3 s"
_PROBE = (
    "import sys\n"
    "from samplewright.pipeline.cli.main import main\n"
    "try:\n"
    "    code = main(sys.argv[1:])\n"
    "except SystemExit as exc:\n"
    "    code = exc.code\n"
    f"print(','.join(m for m in {HEAVY!r} if m in sys.modules), file=sys.stderr)\n"
    "sys.exit(code)\n"
)


def _script() -> str:
    """The ``samplewright`` console script beside this interpreter (else ``-m samplewright``)."""
    here = Path(sys.executable).with_name("samplewright")
    return str(here) if here.exists() else ""


def _command(args: list[str]) -> list[str]:
    script = _script()
    return [script, *args] if script else [sys.executable, "-m", "samplewright", *args]


def _env(tmp: Path) -> dict[str, str]:
    """The environment of the timed runs: byte code cached under ``tmp`` (see the docstring)."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPYCACHEPREFIX"] = str(tmp / "pycache")
    return env


def _run(cmd: list[str], cwd: Path) -> tuple[float, float]:
    """Wall time and CPU time (user + system) of one run of ``cmd``."""
    before = os.times()
    t0 = time.perf_counter()
    subprocess.run(cmd, cwd=cwd, check=True, capture_output=True, env=_env(cwd))
    wall = time.perf_counter() - t0
    after = os.times()
    cpu = (after.children_user - before.children_user) + (
        after.children_system - before.children_system
    )
    return wall, cpu


def _loaded(args: list[str], cwd: Path) -> str:
    """The heavy libraries one run of the command loads."""
    proc = subprocess.run(
        [sys.executable, "-c", _PROBE, *args],
        cwd=cwd,
        check=True,
        capture_output=True,
        text=True,
        env=_env(cwd),
    )
    return proc.stderr.strip().splitlines()[-1] if proc.stderr.strip() else ""


def _extra_seconds(
    args: list[str], cwd: Path, repeat: int, before: Callable[[], None]
) -> tuple[float, float]:
    """Medians over A B pairs of (command - python -c pass): CPU seconds, wall seconds."""
    base = [sys.executable, "-c", "pass"]
    before()
    _run(_command(args), cwd)  # warm-up: file cache, byte-code
    cpu, wall = [], []
    for _ in range(repeat):
        a_wall, a_cpu = _run(base, cwd)
        before()
        b_wall, b_cpu = _run(_command(args), cwd)
        cpu.append(b_cpu - a_cpu)
        wall.append(b_wall - a_wall)
    return statistics.median(cpu), statistics.median(wall)


def _setup(tmp: Path) -> None:
    """Small inputs: a Parquet column, its snapshot, candidate artifacts, a fingerprint memo.
    A step that fails (a parametric fit, while that code is being changed) only drops the rows
    that need its output."""
    values = np.random.default_rng(20240614).lognormal(1.0, 0.5, 2000)
    pq.write_table(pa.table({"hours": values}), tmp / "data.parquet")
    steps = [
        ["snapshot", "data.parquet", "-c", "hours", "--out", "snap.parquet"],
        ["fit", "snap.parquet", "--method", "empirical", "--out", "emp.parquet"],
        ["fit", "snap.parquet", "--method", "interpolated", "--out", "interp.parquet"],
        ["knots", "--points", "0:0,1:0.5,3:1", "--out", "knots.parquet"],
        ["fit", "snap.parquet", "--method", "lognormal", "--out", "logn.parquet"],
        ["fingerprint", "data.parquet", "-c", "hours", "--cache-dir", "memo"],
    ]
    for args in steps:
        subprocess.run(_command(args), cwd=tmp, check=False, capture_output=True)


def _nothing() -> None:
    return None


def rows(quick: bool, repeat: int = 7) -> list[dict[str, Any]]:
    """One row per command (printed as it is measured)."""
    repeat = 3 if quick else repeat
    out: list[dict[str, Any]] = []
    with tempfile.TemporaryDirectory(prefix="sw-bench-startup-") as name:
        tmp = Path(name)
        _setup(tmp)

        def drop_snapshot() -> None:
            (tmp / "snap2.parquet").unlink(missing_ok=True)

        fp_cold = ["fingerprint", "data.parquet", "-c", "hours"]
        fp_hit = [*fp_cold, "--cache-dir", "memo"]
        snap = ["snapshot", "data.parquet", "-c", "hours", "--out", "snap2.parquet"]
        fit_e = ["fit", "snap.parquet", "--method", "empirical", "--out", "e2.parquet"]
        fit_l = ["fit", "snap.parquet", "--method", "lognormal", "--out", "l2.parquet"]
        knots = ["knots", "--points", "0:0,1:0.5,3:1", "--out", "k2.parquet"]
        # candidates of one dataset (select refuses artifacts fitted to other data)
        select = ["select", "emp.parquet", "interp.parquet", "--out", "sel.parquet"]
        draw_e = ["draw", "emp.parquet", "-n", "1000", "--seed", "1", "--out", "d.parquet"]
        draw_l = ["draw", "logn.parquet", "-n", "1000", "--seed", "1", "--out", "d2.parquet"]
        verify = ["verify", "emp.parquet", "knots.parquet"]
        cases: list[tuple[str, list[str], Callable[[], None], bool]] = [
            ("--version", ["--version"], _nothing, False),
            ("fingerprint (memo cold)", fp_cold, _nothing, False),
            ("fingerprint (memo hit)", fp_hit, _nothing, False),
            ("snapshot", snap, drop_snapshot, False),
            ("fit empirical", fit_e, _nothing, False),
            ("knots", knots, _nothing, False),
            ("select", select, _nothing, False),
            ("draw empirical", draw_e, _nothing, False),
            ("verify", verify, _nothing, False),
            ("fit lognormal", fit_l, _nothing, True),
            ("draw lognormal", draw_l, _nothing, True),
        ]
        for label, args, before, needs_scipy in cases:
            try:
                loaded = _loaded(args, tmp)
                before()
                cpu, wall = _extra_seconds(args, tmp, repeat, before)
            except subprocess.CalledProcessError as exc:
                raw = exc.stderr or ""
                text = raw.decode(errors="replace") if isinstance(raw, bytes) else raw
                err = text.strip().splitlines()
                print(f"startup: {label} failed: {err[-1] if err else exc}", flush=True)
                continue
            r = row(
                f"samplewright {label}: start-up, CPU s",
                "python -c pass (subtracted)",
                cpu,
                "(needs scipy)" if needs_scipy else TARGET,
                unit="s",
                wall_s=wall,
                loads=loaded or "-",
            )
            print(
                f"{r['name']} | {cpu:.3f} s CPU, {wall:.3f} s wall | loads {r['loads']}",
                flush=True,
            )
            out.append(r)
    return out


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="3 pairs per command")
    parser.add_argument("--repeat", type=int, default=7, help="A B pairs per command")
    args = parser.parse_args()
    rows(args.quick, args.repeat)
