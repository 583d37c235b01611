#!/usr/bin/env python3
"""Data intake: samplewright's column readers against Arrow's own readers on the same files.

Rows (ours / baseline in time unless the row says otherwise; baseline measured in the same run,
interleaved A B A B, median of the per-pair ratios):

* one numeric column of a CSV with four columns (integer id, two float columns, an integer
  column) via ``read_column`` against ``pyarrow.csv.read_csv`` of the whole file (the issue's
  baseline) and against ``read_csv`` of that column alone as float64 (the least Arrow can do);
  both must give the very same float64 numbers, which the benchmark checks;
* the same file with a quoted text column added (the quote-structure check then runs), and
  with one missing marker written with spaces around it (`` NA ``), which sends the column
  through the text path (cells trimmed, compared with the markers, cast by Arrow);
* three row-aligned columns via ``read_table`` against ``read_csv`` of the whole file;
* one float64 column of a Parquet file (several row groups) via ``read_column`` against
  ``pyarrow.parquet.read_table(columns=[...])`` plus ``to_numpy``;
* the peak memory of that Parquet read, measured in a fresh process (``ru_maxrss`` growth),
  divided by the column's size (8 bytes a value).

Sizes: 1e7 CSV rows and 1e8 Parquet values (minutes); ``--quick`` uses 1e6 and 1e7 (seconds).
Data come from numpy's Generator with a fixed seed (benchmark data, not reference values).

    python benchmarks/intake.py [--quick] [--repeat 3]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.parquet as pq
from _timing import interleaved_ratio, row

from samplewright.intake.columns import read_column
from samplewright.intake.tables import read_table

TARGET_TIME = "<= 2x"
TARGET_MEMORY = "<= 2x"


def _write_csv(path: Path, n: int, *, text: bool, padded: bool = False) -> None:
    g = np.random.default_rng(20240611)
    cols: dict[str, Any] = {
        "id": np.arange(n),
        "hours": g.lognormal(1.0, 1.0, n),
        "cost": np.round(g.gamma(2.0, 100.0, n), 2),
        "crew": g.integers(1, 9, n),
    }
    if text:
        cols["site"] = np.array(["north, upper", 'say "hi"', "plain"])[g.integers(0, 3, n)]
    pacsv.write_csv(pa.table(cols), path)
    if padded:  # one missing marker with spaces around it: the column takes the text path
        with path.open("ab") as fh:
            fh.write(b"%d, NA ,1.0,1\n" % n)


def _peak_ratio(path: Path, column: str, n: int) -> float:
    """Peak memory growth of read_column in a fresh process, after a warm-up read of a small
    file, over the column's size. Linux: the process's peak resident size (VmHWM, which unlike
    ru_maxrss does not carry the parent's peak across exec) less its resident size before."""
    code = (
        "import sys, tempfile, pathlib\n"
        "import numpy, pyarrow, pyarrow.parquet as pq\n"
        "from samplewright.intake.columns import read_column\n"
        "def status(key):\n"
        "    line = [ln for ln in open('/proc/self/status') if ln.startswith(key)][0]\n"
        "    return int(line.split()[1]) * 1024\n"
        "with tempfile.TemporaryDirectory() as tmp:\n"  # warm-up: lazy imports, memory pools
        "    small = pathlib.Path(tmp) / 'small.parquet'\n"
        "    pq.write_table(pyarrow.table({'v': numpy.arange(1000.0)}), small)\n"
        "    read_column(small, 'v')\n"
        "before = status('VmRSS:')\n"
        f"d = read_column(sys.argv[1], {column!r})\n"
        "print(status('VmHWM:') - before)\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", code, str(path)], check=True, capture_output=True, text=True
    )
    return int(out.stdout.strip()) / (8.0 * n)


def _show(r: dict[str, Any]) -> None:
    print(f"{r['name']} | {r['baseline']} | {r['ratio']:.3g} | {r['target']}", flush=True)


def main(quick: bool, repeat: int = 3) -> list[dict[str, Any]]:
    """Run every intake comparison; print and return one row each."""
    n_csv, n_pq = (10**6, 10**7) if quick else (10**7, 10**8)
    rows: list[dict[str, Any]] = []
    with tempfile.TemporaryDirectory(prefix="sw-bench-intake-") as tmp:
        csv_path = Path(tmp) / "repairs.csv"
        _write_csv(csv_path, n_csv, text=False)
        ours = read_column(csv_path, "hours").values
        theirs = pacsv.read_csv(csv_path).column("hours").to_numpy()
        if not np.array_equal(ours, theirs):
            raise SystemExit("intake benchmark: read_column and pyarrow disagree on the numbers")
        only = pacsv.ConvertOptions(include_columns=["hours"], column_types={"hours": pa.float64()})
        cases = [
            (
                f"CSV {n_csv:.0e} rows: read_column (same numbers)",
                "pyarrow.csv.read_csv, whole file",
                lambda: pacsv.read_csv(csv_path),
                lambda: read_column(csv_path, "hours"),
            ),
            (
                f"CSV {n_csv:.0e} rows: read_column",
                "pyarrow.csv.read_csv, that column only",
                lambda: pacsv.read_csv(csv_path, convert_options=only),
                lambda: read_column(csv_path, "hours"),
            ),
            (
                f"CSV {n_csv:.0e} rows: read_table, 3 columns",
                "pyarrow.csv.read_csv, whole file",
                lambda: pacsv.read_csv(csv_path),
                lambda: read_table(csv_path, ["hours", "cost", "crew"]),
            ),
        ]
        for name, base, a, b in cases:
            r = row(name, base, **_ratio(a, b, repeat))
            rows.append(r)
            _show(r)
        csv_path.unlink()

        padded = Path(tmp) / "padded.csv"
        _write_csv(padded, n_csv, text=False, padded=True)
        r = row(
            f"CSV {n_csv:.0e} rows, one ' NA ' cell: read_column (text path)",
            "pyarrow.csv.read_csv, whole file",
            **_ratio(
                lambda: pacsv.read_csv(padded),
                lambda: read_column(padded, "hours", missing="drop"),
                repeat,
            ),
        )
        rows.append(r)
        _show(r)
        padded.unlink()

        quoted = Path(tmp) / "quoted.csv"
        _write_csv(quoted, n_csv, text=True)
        r = row(
            f"CSV {n_csv:.0e} rows + quoted text: read_column",
            "pyarrow.csv.read_csv, whole file",
            **_ratio(lambda: pacsv.read_csv(quoted), lambda: read_column(quoted, "hours"), repeat),
        )
        rows.append(r)
        _show(r)
        quoted.unlink()

        pq_path = Path(tmp) / "values.parquet"
        x = np.random.default_rng(20240612).lognormal(0.0, 1.0, n_pq)
        pq.write_table(pa.table({"value": x}), pq_path, use_dictionary=False)
        del x

        def plain() -> np.ndarray:
            return pq.read_table(pq_path, columns=["value"]).column("value").to_numpy()

        r = row(
            f"Parquet {n_pq:.0e} values: read_column",
            "pyarrow.parquet.read_table(columns) + to_numpy",
            **_ratio(plain, lambda: read_column(pq_path, "value"), repeat),
        )
        rows.append(r)
        _show(r)
        r = row(
            f"Parquet {n_pq:.0e} values: read_column peak memory",
            "the column's size (8 bytes a value)",
            ratio=_peak_ratio(pq_path, "value", n_pq),
            target=TARGET_MEMORY,
            unit="memory",
        )
        rows.append(r)
        _show(r)
    return rows


def _ratio(baseline: Any, candidate: Any, repeat: int) -> dict[str, Any]:
    got = interleaved_ratio(baseline, candidate, repeat=repeat)
    return {"ratio": got["ratio"], "target": TARGET_TIME, **got}


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--quick", action="store_true", help="1e6-row CSV, 1e7-value Parquet (seconds)"
    )
    parser.add_argument("--repeat", type=int, default=3, help="A B pairs per row (default 3)")
    args = parser.parse_args()
    main(args.quick, args.repeat)
