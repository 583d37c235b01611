"""What the command groups share: data-reading options, option parsing and output checks.

Every command checks its outputs with :func:`check_outputs` before it reads or writes anything:
an output that is a folder, lies under a file, has a name too long for the file system, or is
(or resolves to) one of the command's inputs is refused with a one-line error naming the option.
"""

from __future__ import annotations

import argparse
import json
import sys
import warnings
from collections.abc import Iterable, Iterator, Mapping
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from samplewright.core.errors import MethodError, SamplewrightError
from samplewright.intake.options import DECIMALS, SEPARATORS
from samplewright.store.atomic import same_file, target_problem

__all__ = [
    "EXIT_INPUT",
    "EXIT_INTEGRITY",
    "add_data_args",
    "add_reading_args",
    "add_seed_args",
    "check_expected",
    "check_outputs",
    "check_seed",
    "notes",
    "parse_option",
    "reading",
    "table_reading",
]

EXIT_INPUT = 2
EXIT_INTEGRITY = 3
PathArg = str | Path | None


def add_data_args(p: argparse.ArgumentParser, *, column_required: bool = True) -> None:
    """The data file and the options that say how to read its column (see :func:`reading`)."""
    p.add_argument("data", help="data file: .csv, .tsv, .tab, .parquet or .pq")
    p.add_argument("--column", "-c", required=column_required, help="name of the value column")
    p.add_argument("--weights", help="name of a column of positive (frequency) weights")
    p.add_argument("--censor", help="name of a 0/1 column; 1 = value is right-censored")
    add_reading_args(p)


def add_reading_args(p: argparse.ArgumentParser) -> None:
    """The cleaning policies and file-format options of reading a data file."""
    p.add_argument(
        "--missing",
        choices=["error", "drop"],
        default="error",
        help="what to do with missing values (default: error)",
    )
    p.add_argument(
        "--infinite",
        choices=["error", "drop"],
        default="error",
        help="what to do with infinite values (default: error)",
    )
    p.add_argument(
        "--separator",
        choices=SEPARATORS,
        help="field separator of a CSV/TSV file: , ; | : a tab or a space (default: by suffix)",
    )
    p.add_argument(
        "--decimal", choices=DECIMALS, default=".", help="decimal mark of numbers (default: .)"
    )
    p.add_argument(
        "--missing-marker",
        action="append",
        metavar="TEXT",
        help="a cell text that also means 'missing' (e.g. n/a), repeatable",
    )
    p.add_argument("--encoding", help="text encoding of a CSV/TSV file (default: UTF-8)")


def reading(args: argparse.Namespace) -> dict[str, Any]:
    """The data-reading options every data command shares (see :func:`add_data_args`).

    The file-format options appear only when given, so the result also suits readers of
    snapshots and caches that take the column roles alone.
    """
    return {"weights": args.weights, "censor": args.censor, **table_reading(args)}


def table_reading(args: argparse.Namespace) -> dict[str, Any]:
    """The options of :func:`add_reading_args`: policies, and the format options when given."""
    out: dict[str, Any] = {"missing": args.missing, "infinite": args.infinite}
    if args.separator is not None:
        out["separator"] = args.separator
    if args.decimal != ".":
        out["decimal"] = args.decimal
    if args.missing_marker:
        out["missing_markers"] = list(args.missing_marker)
    if args.encoding is not None:
        out["encoding"] = args.encoding
    return out


def parse_option(text: str) -> tuple[str, Any]:
    """``KEY=VALUE`` of ``--option``, the value read as JSON when it is JSON.

    >>> parse_option("loc=0.5"), parse_option("body=gamma")
    (('loc', 0.5), ('body', 'gamma'))
    """
    if "=" not in text:
        raise MethodError(f"--option: expected KEY=VALUE, found {text!r}")
    key, raw = text.split("=", 1)
    try:
        value = json.loads(raw)
    except ValueError:
        value = raw
    return key.strip(), value


def check_outputs(outputs: Mapping[str, PathArg], inputs: Iterable[PathArg]) -> None:
    """Refuse outputs that cannot be written, or that would overwrite an input.

    ``outputs`` maps the option that names each output (``--out``) to its path; None entries
    are skipped. Raises :class:`MethodError` naming the option, before anything is written.
    """
    sources = [Path(p) for p in inputs if p is not None]
    for option, out in outputs.items():
        if out is None:
            continue
        problem = target_problem(out)
        if problem is not None:
            raise MethodError(f"{option} {out}: {problem}")
        for source in sources:
            if same_file(out, source):
                raise MethodError(
                    f"{option} {out}: is the input {source}; refusing to overwrite an input"
                )


def add_seed_args(p: argparse.ArgumentParser, *, required: bool = True, default: str) -> None:
    """``--seed`` (the root seed) and ``--stream`` (stable names under it, repeatable)."""
    p.add_argument("--seed", type=int, required=required, help="root seed, a non-negative int")
    p.add_argument(
        "--stream",
        action="append",
        metavar="NAME",
        help=f"stream name under the root seed, repeatable (default: {default})",
    )


def check_seed(seed: int | None) -> None:
    """Refuse a negative ``--seed`` in one line."""
    if seed is not None and seed < 0:
        raise MethodError(f"--seed: expected a non-negative int, found {seed}")


@contextmanager
def notes() -> Iterator[None]:
    """Print the warnings raised inside as ``samplewright: note: ...`` lines on stderr.

    A command's warnings (a repaired correlation matrix, a Sobol' size that is not a power of
    two) are part of its report, not a Python traceback, and reach the job's log once each.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield
    seen: set[str] = set()
    for w in caught:
        text = str(w.message)
        if text not in seen:
            seen.add(text)
            print(f"samplewright: note: {text}", file=sys.stderr)


def check_expected(label: str, fp: str, expected: str | None) -> None:
    """Fail if the data's fingerprint is not the one the workflow planned with (a prefix)."""
    if expected and not fp.startswith(expected):
        raise SamplewrightError(
            f"{label} changed after the workflow was planned (fingerprint {fp[:20]}, planned "
            f"{expected[:20]}); run snakemake again to plan with the new data"
        )
