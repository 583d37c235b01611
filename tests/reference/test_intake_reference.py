"""Intake numbers against outside parsers: Python's float(), pandas and pyarrow.

Python's ``float(str)`` is correctly rounded (source: "What's New In Python 3.1": string to
float conversions use David Gay's correctly rounded algorithm), so it is the reference for every
hard case below; pandas (``float_precision="round_trip"``, which hands each cell to Python's
parser -- source: pandas ``read_csv`` documentation) and ``pyarrow.csv.read_csv`` are the
reference readers for whole files, with the same options where both have them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.parquet as pq
import pytest

from samplewright.intake.columns import MISSING_TOKENS, read_column
from samplewright.intake.tables import read_table

# Decimal texts whose float64 is hard to get right, each read with Python's float() as the
# reference (correct rounding). Sources of the cases: from memory of the literature on decimal
# to binary conversion (denormal boundaries, exact halfway points, the largest double).
HARD = [
    "2.2250738585072011e-308",  # just below the smallest normal double
    "2.2250738585072012e-308",  # rounds up to the smallest normal double
    "4.9406564584124654e-324",  # the smallest denormal
    "2.4703282292062327e-324",  # just below half the smallest denormal: rounds to 0
    "2.4703282292062328e-324",  # just above it: rounds to the smallest denormal
    "1.7976931348623157e308",  # the largest double
    "1.7976931348623158e308",  # still rounds down to it
    "9007199254740993.0",  # 2**53 + 1 written as a decimal: ties to even, 2**53
    "9007199254740995.0",  # ties to even, 2**53 + 4
    "0.1000000000000000055511151231257827021181583404541015625",  # the exact double of 0.1
    "1.00000000000000011102230246251565404236316680908203125",  # halfway 1 / next: to 1
    "1.00000000000000011102230246251565404236316680908203126",  # just above: the next double
    "7.038531e-26",
    "1e-300",
    "1e300",
    "-0.0",
    "+.5",
    "5.",
    "1E+05",
]


def _write_column(path: Path, cells: list[str], *, sep: str = ",") -> Path:
    rows = [f"{i}{sep}{c}{sep}note {i}" for i, c in enumerate(cells)]
    path.write_text(f"id{sep}v{sep}text\n" + "\n".join(rows) + "\n")
    return path


def test_hard_decimal_cases_match_python_float(tmp_path: Path) -> None:
    """Every hard case reads to the double Python's correctly rounded float() gives."""
    f = _write_column(tmp_path / "hard.csv", HARD)
    got = read_column(f, "v").values
    expected = np.array([float(c) for c in HARD])  # source: Python float(), correctly rounded
    np.testing.assert_array_equal(got, expected)
    assert np.array_equal(np.signbit(got), np.signbit(expected))  # -0.0 keeps its sign


def _random_cells(n: int, seed: int) -> list[str]:
    """Decimal texts of many shapes: 1-25 significant digits, exponents to 1e300, signs."""
    g = np.random.default_rng(seed)
    cells = []
    for _ in range(n):
        digits = "".join(g.choice(list("0123456789"), int(g.integers(1, 26))))
        point = int(g.integers(0, len(digits) + 1))
        mant = digits[:point] + "." + digits[point:] if g.random() < 0.8 else digits
        sign = ("", "-", "+")[int(g.integers(0, 3))]
        if g.random() < 0.6 or "." not in mant:  # bare digits are integers: refused past 2**53
            mant += ("e", "E")[int(g.integers(0, 2))] + str(
                int(g.integers(-320, 300 - len(digits)))
            )
        cells.append(sign + mant)
    return cells


@pytest.mark.parametrize("seed", [0, 1])
def test_random_decimals_match_float_pandas_and_pyarrow(tmp_path: Path, seed: int) -> None:
    """4000 random decimal texts: same doubles as float(), pandas round_trip and pyarrow."""
    cells = _random_cells(4000, seed)
    f = _write_column(tmp_path / "r.csv", cells)
    got = read_column(f, "v").values
    # source: Python float() (correctly rounded)
    np.testing.assert_array_equal(got, [float(c) for c in cells])
    # source: pandas.read_csv with Python's round-trip parser
    ref = pd.read_csv(f, float_precision="round_trip")["v"].to_numpy(dtype=np.float64)
    np.testing.assert_array_equal(got, ref)
    # source: pyarrow.csv.read_csv, the reader of the baseline
    np.testing.assert_array_equal(got, pacsv.read_csv(f).column("v").to_numpy())


def test_span_1e_minus_300_to_1e300_reads_exactly(tmp_path: Path) -> None:
    """Values from 1e-300 to 1e300 written with repr() read back bit for bit."""
    x = np.concatenate([np.logspace(-300, 300, 601), -np.logspace(-300, 300, 601)])
    f = tmp_path / "span.csv"
    f.write_text("v\n" + "\n".join(repr(float(v)) for v in x) + "\n")
    # source: Python docs (floating-point tutorial): repr(float) reads back to the same float
    np.testing.assert_array_equal(read_column(f, "v").values, x)
    p = tmp_path / "span.parquet"
    pq.write_table(pa.table({"v": [repr(float(v)) for v in x]}), p)
    np.testing.assert_array_equal(read_column(p, "v").values, x)


def test_decimal_comma_semicolon_file_matches_pandas(tmp_path: Path) -> None:
    """A ';' file with decimal commas reads as pandas reads it with sep=';', decimal=','."""
    g = np.random.default_rng(3)
    x = g.lognormal(2.0, 2.0, 500)
    cells = [repr(float(v)).replace(".", ",") for v in x]
    f = tmp_path / "eu.csv"
    f.write_text("id;v\n" + "\n".join(f"{i};{c}" for i, c in enumerate(cells)) + "\n")
    got = read_column(f, "v", separator=";", decimal=",").values
    # source: pandas.read_csv(sep=";", decimal=",", float_precision="round_trip")
    ref = pd.read_csv(f, sep=";", decimal=",", float_precision="round_trip")["v"].to_numpy()
    np.testing.assert_array_equal(got, ref)
    np.testing.assert_array_equal(got, x)


def test_missing_markers_match_pandas_na_values(tmp_path: Path) -> None:
    """Declared markers drop the rows pandas marks NaN with the same na_values."""
    g = np.random.default_rng(4)
    tokens = [*MISSING_TOKENS, "n/a", "-", "#N/V"]
    cells = [
        tokens[int(g.integers(0, len(tokens)))] if g.random() < 0.2 else repr(float(v))
        for v in g.normal(size=1000)
    ]
    f = tmp_path / "m.csv"
    f.write_text("v,k\n" + "\n".join(f"{c},{i}" for i, c in enumerate(cells)) + "\n")
    data = read_column(f, "v", missing="drop", missing_markers=["n/a", "-", "#N/V"])
    # source: pandas.read_csv(na_values=..., keep_default_na=False), an outside reader
    ref = pd.read_csv(f, na_values=tokens, keep_default_na=False, float_precision="round_trip")[
        "v"
    ].to_numpy(dtype=np.float64)
    np.testing.assert_array_equal(data.values, ref[~np.isnan(ref)])
    assert data.dropped == {"missing": int(np.isnan(ref).sum())}


def test_parquet_column_matches_pyarrow(tmp_path: Path) -> None:
    """A float64 Parquet column of several row groups equals pyarrow's own read."""
    x = np.random.default_rng(5).standard_t(3, 100_000)
    f = tmp_path / "t.parquet"
    pq.write_table(pa.table({"v": x, "w": np.ones(x.size)}), f, row_group_size=7_000)
    ref = pq.read_table(f, columns=["v"]).column("v").to_numpy()  # source: pyarrow
    np.testing.assert_array_equal(read_column(f, "v").values, ref)


def test_integers_up_to_2_53_are_exact(tmp_path: Path) -> None:
    """Integer text up to 2**53 in magnitude reads as exactly that integer."""
    ints = [0, 1, -1, 2**31, 2**52 + 1, 2**53 - 1, 2**53, -(2**53), 10**15 + 7]
    f = tmp_path / "i.csv"
    f.write_text("v\n" + "\n".join(str(i) for i in ints) + "\n")
    # source: Python int -> float conversion, exact below 2**53 (IEEE 754 binary64)
    np.testing.assert_array_equal(read_column(f, "v").values, [float(i) for i in ints])


def test_table_matches_pandas_rows(tmp_path: Path) -> None:
    """read_table's kept rows equal pandas' rows after dropna on the same columns."""
    g = np.random.default_rng(6)
    n = 800
    a = np.where(g.random(n) < 0.1, np.nan, g.normal(size=n))
    b = np.where(g.random(n) < 0.1, np.nan, g.gamma(2.0, size=n))
    f = tmp_path / "ab.csv"
    pd.DataFrame({"a": a, "b": b, "c": np.arange(n)}).to_csv(f, index=False, na_rep="NA")
    t = read_table(f, ["a", "b"], missing="drop")
    # source: pandas.read_csv + dropna
    ref = pd.read_csv(f, float_precision="round_trip")[["a", "b"]].dropna().to_numpy()
    np.testing.assert_array_equal(t.values, ref)
    assert t.dropped == {"missing": n - ref.shape[0]}
