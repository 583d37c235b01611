"""Knots of a user-drawn CDF read into plain arrays (x, p) from CSV, YAML or text."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from samplewright.core.errors import InputDataError, KnotsError
from samplewright.intake.knots import parse_knots_points, read_knots_points


def _write(path: Path, text: str) -> Path:
    path.write_text(text)
    return path


def test_csv_knots(tmp_path: Path) -> None:
    """A CSV with columns x and p gives float64 arrays in file order."""
    f = _write(tmp_path / "k.csv", "x,p\n0,0\n2.5,0.4\n10,1\n")
    x, p = read_knots_points(f)
    np.testing.assert_array_equal(x, [0.0, 2.5, 10.0])
    np.testing.assert_array_equal(p, [0.0, 0.4, 1.0])


def test_csv_knots_with_reading_options(tmp_path: Path) -> None:
    """Knots files written with semicolons and decimal commas read with the same options."""
    f = _write(tmp_path / "k.csv", "x;p\n0;0\n2,5;0,4\n10;1\n")
    x, p = read_knots_points(f, separator=";", decimal=",")
    np.testing.assert_array_equal(x, [0.0, 2.5, 10.0])
    np.testing.assert_array_equal(p, [0.0, 0.4, 1.0])


def test_missing_knot_cell_comes_back_as_nan(tmp_path: Path) -> None:
    """A missing cell is NaN here; the CDF check downstream names the point."""
    f = _write(tmp_path / "k.tsv", "x\tp\n0\t0\n\t0.5\n4\t1\n")
    x, _ = read_knots_points(f)
    assert np.isnan(x[1]) and x[2] == 4.0


@pytest.mark.parametrize(
    "text",
    ["x: [0, 2.5, 10]\np: [0, 0.4, 1]\n", "- [0, 0]\n- [2.5, 0.4]\n- [10, 1]\n"],
    ids=["mapping", "pairs"],
)
def test_yaml_knots(tmp_path: Path, text: str) -> None:
    """Both YAML forms give the same arrays."""
    x, p = read_knots_points(_write(tmp_path / "k.yaml", text))
    np.testing.assert_array_equal(x, [0.0, 2.5, 10.0])
    np.testing.assert_array_equal(p, [0.0, 0.4, 1.0])


@pytest.mark.parametrize(
    ("name", "text", "error", "message"),
    [
        ("k.yaml", "x: [0, 1\n", KnotsError, r"k.yaml: not valid YAML"),
        ("k.yaml", "a: 1\n", KnotsError, "expected a mapping with keys x and p, or a list of"),
        ("k.yaml", "x: 1\np: 1\n", KnotsError, "x and p must be lists of numbers"),
        ("k.yaml", "x: [0, 1]\np: [0, yes]\n", KnotsError, r"point 2 has p = True"),
        ("k.yaml", "x: [0, abc]\np: [0, 1]\n", KnotsError, r"point 2 has x = 'abc'"),
        ("k.json", "{}", KnotsError, r"knots file must be .csv, .tsv or .yaml, found '.json'"),
        ("k.csv", "x,q\n0,0\n", InputDataError, r"no column 'p'"),
        ("k.csv", "x,p\n0,0\n1,abc\n", InputDataError, r"column 'p' in k.csv has 1 non-numeric"),
        ("k.csv", "x,p\n0,0,1\n", InputDataError, r"row 1 has 3 field"),
    ],
)
def test_bad_knots_files(
    tmp_path: Path, name: str, text: str, error: type[Exception], message: str
) -> None:
    """Each malformed knots file gives one error naming the file and what is wrong."""
    with pytest.raises(error, match=message):
        read_knots_points(_write(tmp_path / name, text))


def test_missing_knots_file(tmp_path: Path) -> None:
    """An absent file is 'knots file not found'."""
    with pytest.raises(KnotsError, match="k.csv: knots file not found"):
        read_knots_points(tmp_path / "k.csv")


def test_text_knots() -> None:
    """'x1:p1,x2:p2' text gives the points in order; spaces and empty items are ignored."""
    x, p = parse_knots_points("0:0, 2.5:0.4,,10:1")
    np.testing.assert_array_equal(x, [0.0, 2.5, 10.0])
    np.testing.assert_array_equal(p, [0.0, 0.4, 1.0])


@pytest.mark.parametrize("text", ["0:0,1", "0:0,1:x", "0:0:1", "a:b"])
def test_bad_text_knots(text: str) -> None:
    """Text that is not 'x:p' pairs of numbers is refused, quoting the text."""
    with pytest.raises(KnotsError, match=r"--points: expected 'x1:p1,x2:p2,...' with numbers"):
        parse_knots_points(text)
