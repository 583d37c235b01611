#!/usr/bin/env python3
"""Artifacts and fingerprints: loading a stored sampler, hashing a large data column.

Rows (baseline measured in the same run; time ratios interleaved A B A B, median of the per-pair
ratios, unless the row says otherwise):

* ``load_sampler`` of an empirical artifact (1e7 values; ``--quick`` 1e6) against
  ``pyarrow.parquet.read_table`` of the same file plus ``to_numpy`` of its value column: the
  least any reader does. Ours also verifies the content and record hashes and rebuilds the
  sampler.
* the fingerprint of one float64 column of a Parquet file (1e8 values, 800 MB; ``--quick``
  1e7), memo cold, so the file is read and cleaned by ``read_column`` and then hashed:
  its throughput in GB/s of float64 values (absolute, target >= 1 GB/s), the same with the file
  first evicted from the page cache (``posix_fadvise(DONTNEED)``, where the platform has it),
  the time against ``pyarrow.parquet.read_table(columns) + to_numpy`` of that column, and the
  peak memory growth in a fresh process over the column's size.
* hashing alone: ``fingerprint_arrays`` of the in-memory column against ``hashlib.sha256`` of
  its bytes (the hash used before; it needs a contiguous copy but no normalisation).

Data come from numpy's Generator with a fixed seed (benchmark data, not reference values).

    python benchmarks/artifacts.py [--quick] [--repeat 5]
"""

from __future__ import annotations

import argparse
import hashlib
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
from _timing import interleaved_ratio, row

from samplewright.distributions.empirical import EmpiricalSampler
from samplewright.store.artifacts import load_sampler, write_sampler
from samplewright.store.fingerprints import fingerprint_arrays, fingerprint_file

SEED = 20240613


def _show(r: dict[str, Any]) -> None:
    print(f"{r['name']} | {r['baseline']} | {r['ratio']:.3g} | {r['target']}", flush=True)


def _evict(path: Path) -> bool:
    """Drop ``path`` from the page cache (clean pages only); False where not supported."""
    advise = getattr(os, "posix_fadvise", None)
    if advise is None:
        return False
    fd = os.open(path, os.O_RDONLY)
    try:
        advise(fd, 0, 0, os.POSIX_FADV_DONTNEED)
    finally:
        os.close(fd)
    return True


def _peak_ratio(path: Path, n: int) -> float:
    """Peak memory growth of ``fingerprint_file`` in a fresh process (VmHWM less the resident
    size before, after a warm-up on a small file), over the column's size. Linux only."""
    code = (
        "import sys, tempfile, pathlib\n"
        "import numpy, pyarrow, pyarrow.parquet as pq\n"
        "from samplewright.store.fingerprints import fingerprint_file\n"
        "def status(key):\n"
        "    line = [ln for ln in open('/proc/self/status') if ln.startswith(key)][0]\n"
        "    return int(line.split()[1]) * 1024\n"
        "with tempfile.TemporaryDirectory() as tmp:\n"
        "    small = pathlib.Path(tmp) / 'small.parquet'\n"
        "    pq.write_table(pyarrow.table({'value': numpy.arange(1000.0)}), small)\n"
        "    fingerprint_file(small, 'value')\n"
        "before = status('VmRSS:')\n"
        "fingerprint_file(sys.argv[1], 'value')\n"
        "print(status('VmHWM:') - before)\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code, str(path)], check=True, capture_output=True, text=True
    )
    return int(out.stdout.strip()) / (8.0 * n)


def _load_row(tmp: Path, n: int, repeat: int) -> dict[str, Any]:
    values = np.random.default_rng(SEED).lognormal(0.0, 1.0, n)
    path = tmp / "empirical.parquet"
    write_sampler(EmpiricalSampler(values), path, fingerprint="0" * 64, key="bench")
    del values

    def plain() -> np.ndarray:
        return np.asarray(pq.read_table(path).column("value").to_numpy())

    got = interleaved_ratio(plain, lambda: load_sampler(path), repeat=repeat)
    ratio = got.pop("ratio")
    return row(
        f"load_sampler, empirical artifact of {n:.0e} values",
        "pyarrow.parquet.read_table + to_numpy",
        ratio,
        "<= 1.5x",
        **got,
    )


def _fingerprint_rows(tmp: Path, n: int, repeat: int) -> list[dict[str, Any]]:
    path = tmp / "values.parquet"
    x = np.random.default_rng(SEED + 1).lognormal(0.0, 1.0, n)
    pq.write_table(pa.table({"value": x}), path, use_dictionary=False)
    del x
    size_gb = 8.0 * n / 1e9
    rows: list[dict[str, Any]] = []

    warm = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fingerprint_file(path, "value")  # no cache_dir: the memo is always cold
        warm.append(time.perf_counter() - t0)
    speed = size_gb / statistics.median(warm)
    rows.append(
        row(
            f"fingerprint, Parquet column of {n:.0e} values, memo cold (GB/s)",
            "absolute, read and clean included, file in page cache",
            speed,
            ">= 1 GB/s",
            unit="GB/s",
            seconds=statistics.median(warm),
        )
    )
    if _evict(path):
        cold = []
        for _ in range(max(1, repeat // 2)):
            _evict(path)
            t0 = time.perf_counter()
            fingerprint_file(path, "value")
            cold.append(time.perf_counter() - t0)
        rows.append(
            row(
                f"fingerprint, Parquet column of {n:.0e} values, page cache evicted (GB/s)",
                "absolute, disk read included",
                size_gb / statistics.median(cold),
                "(for information)",
                unit="GB/s",
                seconds=statistics.median(cold),
            )
        )

    def plain() -> np.ndarray:
        return np.asarray(pq.read_table(path, columns=["value"]).column("value").to_numpy())

    got = interleaved_ratio(plain, lambda: fingerprint_file(path, "value"), repeat=repeat)
    rows.append(
        row(
            f"fingerprint, Parquet column of {n:.0e} values, memo cold",
            "pyarrow.parquet.read_table(columns) + to_numpy",
            got.pop("ratio"),
            "(for information)",
            **got,
        )
    )
    rows.append(
        row(
            f"fingerprint, Parquet column of {n:.0e} values: peak memory",
            "the column's size (8 bytes a value)",
            _peak_ratio(path, n),
            "<= 2x",
            unit="memory",
        )
    )
    column = pq.read_table(path, columns=["value"]).column("value").to_numpy()
    got = interleaved_ratio(
        lambda: hashlib.sha256(np.ascontiguousarray(column)).hexdigest(),
        lambda: fingerprint_arrays(column),
        repeat=repeat,
    )
    rows.append(
        row(
            f"fingerprint_arrays, {n:.0e} values in memory",
            "hashlib.sha256 of the bytes",
            got.pop("ratio"),
            "(for information)",
            **got,
        )
    )
    return rows


def rows(quick: bool, repeat: int = 5) -> list[dict[str, Any]]:
    """Every row of this benchmark (printed as it is measured)."""
    n_load, n_fp = (10**6, 10**7) if quick else (10**7, 10**8)
    out: list[dict[str, Any]] = []
    with tempfile.TemporaryDirectory(prefix="sw-bench-artifacts-") as name:
        tmp = Path(name)
        r = _load_row(tmp, n_load, repeat)
        _show(r)
        out.append(r)
        for r in _fingerprint_rows(tmp, n_fp, 3 if not quick else repeat):
            _show(r)
            out.append(r)
    return out


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="1e6 / 1e7 values (seconds)")
    parser.add_argument("--repeat", type=int, default=5, help="A B pairs per row (default 5)")
    args = parser.parse_args()
    rows(args.quick, args.repeat)
