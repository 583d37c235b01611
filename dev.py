#!/usr/bin/env python3
"""Project entry point for people and CI: sets up ./.venv on first use, then runs a task.

    python3 dev.py demo            run the example pipeline end to end (example_pipeline/)
    python3 dev.py test [ARGS]     run the whole test suite (slow cases included); ARGS go to pytest
    python3 dev.py check           ruff (lint and format), mypy on lib/, the package-shape tests
    python3 dev.py bench [--quick] every benchmark, one table of ratios against named baselines

Only the Python standard library is used here, so it runs on a machine that has nothing but
Python 3.11+ and pip. The environment is rebuilt when pyproject.toml changes.
"""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
import venv
from pathlib import Path

ROOT = Path(__file__).resolve().parent
VENV = ROOT / ".venv"
BIN = VENV / ("Scripts" if os.name == "nt" else "bin")
PY = BIN / "python"
STAMP = VENV / ".samplewright-stamp"


def _wanted_stamp() -> str:
    return hashlib.sha256((ROOT / "pyproject.toml").read_bytes()).hexdigest()


def ensure_venv() -> None:
    """Create ./.venv and install the project with its test extra, unless already current."""
    if sys.version_info < (3, 11):  # noqa: UP036 - dev.py itself may run on an older Python
        sys.exit(f"dev.py: Python 3.11 or newer is needed, found {sys.version.split()[0]}")
    current = STAMP.exists() and STAMP.read_text() == _wanted_stamp()
    if current and PY.exists():
        return
    print("dev.py: setting up .venv (first use or pyproject.toml changed) ...", flush=True)
    if not PY.exists():
        venv.EnvBuilder(with_pip=True).create(VENV)
    pip = [str(PY), "-m", "pip", "install", "--disable-pip-version-check", "-q"]
    subprocess.run([*pip, "--upgrade", "pip"], check=True)
    subprocess.run([*pip, "-e", f"{ROOT}[test,slurm]"], check=True)
    STAMP.write_text(_wanted_stamp())


def run(cmd: list[str], cwd: Path = ROOT) -> int:
    env = dict(os.environ)
    env["PATH"] = f"{BIN}{os.pathsep}{env.get('PATH', '')}"
    env["VIRTUAL_ENV"] = str(VENV)
    return subprocess.run(cmd, cwd=cwd, env=env).returncode


def check() -> int:
    """Lint, format check, type check and the package-shape tests; stops at the first failure."""
    paths = ["lib", "tests", "benchmarks", "dev.py"]
    steps = [
        [str(BIN / "ruff"), "check", *paths],
        [str(BIN / "ruff"), "format", "--check", *paths],
        [str(BIN / "mypy"), "lib"],
        [
            str(PY),
            "-m",
            "pytest",
            "-q",
            "-p",
            "no:cacheprovider",
            "tests/unit/test_layers.py",
            "tests/unit/test_public_api.py",
        ],
    ]
    for step in steps:
        print(
            "dev.py check:",
            " ".join(Path(step[0]).name if i == 0 else a for i, a in enumerate(step)),
            flush=True,
        )
        rc = run(step)
        if rc:
            return rc
    print("dev.py check: all green")
    return 0


def main(argv: list[str]) -> int:
    if not argv or argv[0] not in {"demo", "test", "check", "bench"}:
        print(__doc__)
        return 2
    ensure_venv()
    task, rest = argv[0], argv[1:]
    if task == "test":
        # The whole suite (no arguments): test files spread over the cores by xdist, files that
        # share the example pipeline's run kept on one worker (tests/conftest.py), slowest listed.
        whole = [] if rest else ["-n", str(min(2, os.cpu_count() or 1)), "--dist", "loadgroup"]
        whole += [] if rest else ["--durations=25"]
        return run([str(PY), "-m", "pytest", *whole, *rest])
    if task == "check":
        return check()
    if task == "bench":
        return run([str(PY), str(ROOT / "benchmarks" / "run.py"), *rest])
    demo = ROOT / "example_pipeline"
    rc = run([str(PY), "make_data.py"], cwd=demo)  # invented data, fixed seed, only if missing
    if rc:
        return rc
    cores = os.environ.get("SAMPLEWRIGHT_CORES", "2")
    rc = run(
        [str(BIN / "snakemake"), "--cores", cores, "--workflow-profile", "profiles/laptop", *rest],
        cwd=demo,
    )
    found = sorted((demo / "results").glob("*/season_risk.json"), key=lambda p: p.stat().st_mtime)
    if rc == 0 and found:
        print(
            f"\ndev.py: risk figures in {found[-1].relative_to(ROOT)} (and .png beside it); "
            "selected samplers in example_pipeline/store/selected/"
        )
    return rc


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
