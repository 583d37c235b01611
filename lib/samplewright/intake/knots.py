"""Knots of a user-drawn CDF, read into plain arrays ``(x, p)``.

Sources: a CSV/TSV file with columns ``x`` and ``p`` (read with the same rules as data columns;
a missing cell comes back as NaN), a YAML file holding ``{x: [...], p: [...]}`` or a list of
``[x, p]`` pairs, or command-line text ``"x1:p1,x2:p2,..."``. Only the reading is checked here;
whether the points form a CDF (sorted, p from 0 to 1, finite) is checked where the sampler is
built, :func:`samplewright.distributions.piecewise.from_knots`.
"""

from __future__ import annotations

import numbers
from pathlib import Path
from typing import Any

import numpy as np

from samplewright.core.errors import InputDataError, KnotsError
from samplewright.intake.options import read_options

__all__ = ["KNOTS_SUFFIXES", "parse_knots_points", "read_knots_points"]

KNOTS_SUFFIXES = (".csv", ".tsv", ".tab", ".yaml", ".yml")


def read_knots_points(
    path: str | Path,
    *,
    separator: str | None = None,
    decimal: str = ".",
    encoding: str | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Knots ``(x, p)`` as float64 arrays from a CSV/TSV (columns ``x`` and ``p``) or YAML file.

    YAML forms: ``{x: [...], p: [...]}`` or a list of ``[x, p]`` pairs. ``separator``,
    ``decimal`` and ``encoding`` are the reading options of CSV/TSV files (``encoding`` also
    applies to YAML; default UTF-8).
    """
    path = Path(path)
    if path.is_dir() or not path.exists():
        raise KnotsError(f"{path}: knots file not found")
    suffix = path.suffix.lower()
    if suffix not in KNOTS_SUFFIXES:
        raise KnotsError(f"{path}: knots file must be .csv, .tsv or .yaml, found {suffix!r}")
    if suffix in (".yaml", ".yml"):
        return _yaml_points(path, encoding or "utf-8")
    from samplewright.intake.tables import read_numbers

    options = read_options(path, separator=separator, decimal=decimal, encoding=encoding)
    got, _ = read_numbers(path, ["x", "p"], options)
    return got["x"], got["p"]


def _yaml_points(path: Path, encoding: str) -> tuple[np.ndarray, np.ndarray]:
    import yaml

    try:
        text = path.read_bytes().decode(encoding)
    except UnicodeDecodeError as exc:
        raise InputDataError(
            f"{path}: not valid {encoding} text (byte {exc.start}); pass the file's encoding"
        ) from None
    except LookupError:
        raise InputDataError(f"option 'encoding': unknown text encoding {encoding!r}") from None
    try:
        doc = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        raise KnotsError(f"{path}: not valid YAML ({str(exc).splitlines()[0]})") from None
    if isinstance(doc, dict) and set(doc) >= {"x", "p"}:
        x, p = doc["x"], doc["p"]
        if not isinstance(x, list) or not isinstance(p, list):
            raise KnotsError(f"{path}: x and p must be lists of numbers")
    elif isinstance(doc, list) and all(isinstance(r, list | tuple) and len(r) == 2 for r in doc):
        x, p = [r[0] for r in doc], [r[1] for r in doc]
    else:
        raise KnotsError(f"{path}: expected a mapping with keys x and p, or a list of [x, p] pairs")
    return _numbers(path, "x", x), _numbers(path, "p", p)


def _numbers(path: Path, name: str, items: list[Any]) -> np.ndarray:
    """float64 array of YAML scalars; booleans and text that is not a number are refused."""
    out = np.empty(len(items), dtype=np.float64)
    for i, item in enumerate(items):
        if isinstance(item, numbers.Real) and not isinstance(item, bool):
            out[i] = float(item)
            continue
        try:
            if isinstance(item, bool) or not isinstance(item, str):
                raise ValueError
            out[i] = float(item)
        except ValueError:
            raise KnotsError(
                f"{path}: knots: x and p must be numbers (point {i + 1} has {name} = {item!r})"
            ) from None
    return out


def parse_knots_points(text: str) -> tuple[np.ndarray, np.ndarray]:
    """Knots ``(x, p)`` as float64 arrays from command-line text ``"x1:p1,x2:p2,..."``."""
    try:
        pairs = [item.split(":") for item in text.split(",") if item.strip()]
        x = np.array([float(a) for a, _ in pairs], dtype=np.float64)
        p = np.array([float(b) for _, b in pairs], dtype=np.float64)
    except (ValueError, AttributeError):
        raise KnotsError(
            f"--points: expected 'x1:p1,x2:p2,...' with numbers, found {text!r}"
        ) from None
    return x, p
