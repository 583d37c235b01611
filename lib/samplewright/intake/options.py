"""Reading options shared by every reader of the intake stage, checked in one place.

The missing-value rule (the same for CSV/TSV cells and for Parquet text columns): a cell is
*missing* when, after removing the whitespace around it, it is empty or exactly (case matters)
one of :data:`MISSING_TOKENS` or one of the caller's extra ``missing_markers``. A Parquet null and
a floating-point NaN stored in a Parquet column are missing too. Every other cell must be a
decimal number -- an optional sign, digits with at most one decimal mark (``decimal``), an
optional exponent (``1e-3``, ``2.5E+07``) -- or ``inf`` / ``infinity`` in any case with an
optional sign. Anything else (``NAN``, ``None``, ``n/a`` unless declared, ``1,5`` when the decimal
mark is ``.``) is an error naming the column and the first row.
"""

from __future__ import annotations

import codecs
import re
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from samplewright.core.errors import InputDataError

__all__ = [
    "DECIMALS",
    "MISSING_TOKENS",
    "POLICIES",
    "SEPARATORS",
    "Decimal",
    "Policy",
    "ReadOptions",
    "Separator",
    "check_policy",
    "read_options",
]

Policy = Literal["error", "drop"]
POLICIES: tuple[Policy, ...] = ("error", "drop")
Separator = Literal[",", ";", "\t", "|", ":", " "]
SEPARATORS: tuple[Separator, ...] = (",", ";", "\t", "|", ":", " ")
Decimal = Literal[".", ","]
DECIMALS: tuple[Decimal, ...] = (".", ",")

#: Cells that are missing values by default (compared after trimming whitespace, case-sensitive).
MISSING_TOKENS = ("", "NA", "NaN", "nan", "null")

CSV_SUFFIXES: dict[str, Separator] = {".csv": ",", ".tsv": "\t", ".tab": "\t"}
PARQUET_SUFFIXES = (".parquet", ".pq")

# The number grammar of the missing-value rule above (RE2 and Python `re` syntax alike).
_INF = r"(?i:inf|infinity)"


def number_pattern(decimal: Decimal) -> str:
    """Regular expression of one accepted number, with ``decimal`` as the decimal mark."""
    d = re.escape(decimal)
    return rf"^[+-]?(?:(?:[0-9]+{d}?[0-9]*|{d}[0-9]+)(?:[eE][+-]?[0-9]+)?|{_INF})$"


INF_PATTERN = rf"^[+-]?{_INF}$"
INTEGER_PATTERN = r"^[+-]?[0-9]+$"


@dataclass(frozen=True)
class ReadOptions:
    """Checked reading options (built by :func:`read_options`).

    Attributes
    ----------
    separator : field separator of a CSV/TSV file (None for Parquet).
    decimal : decimal mark of numbers written as text.
    markers : every missing-value marker: :data:`MISSING_TOKENS` then the extra ones.
    encoding : text encoding declared by the caller, or None (UTF-8 unless a byte-order mark
        says otherwise).
    """

    separator: Separator | None
    decimal: Decimal
    markers: tuple[str, ...]
    encoding: str | None

    @property
    def numeric_markers(self) -> tuple[float, ...]:
        """The markers that read as numbers too (sentinels like ``-999``), as floats."""
        pattern = re.compile(number_pattern(self.decimal))
        return tuple(float(m.replace(",", ".")) for m in self.markers if m and pattern.fullmatch(m))


def file_kind(path: Path) -> Literal["csv", "parquet"]:
    """'csv' or 'parquet' from the file suffix, or an error listing the accepted ones."""
    if path.is_dir():
        raise InputDataError(f"{path}: is a folder, expected a data file")
    suffix = path.suffix.lower()
    if suffix in CSV_SUFFIXES:
        return "csv"
    if suffix in PARQUET_SUFFIXES:
        return "parquet"
    raise InputDataError(
        f"{path}: unknown file type {suffix!r}; expected .csv, .tsv, .tab, .parquet or .pq"
    )


def check_policy(name: str, value: object) -> Policy:
    """``value`` if it is 'error' or 'drop', else an error naming the option."""
    if value not in POLICIES:
        raise InputDataError(f"option {name!r}: expected 'error' or 'drop', found {value!r}")
    return value  # type: ignore[return-value]


def read_options(
    path: Path,
    *,
    separator: str | None = None,
    decimal: str = ".",
    missing_markers: Iterable[str] = (),
    encoding: str | None = None,
) -> ReadOptions:
    """Check the reading options for ``path`` and return them as one :class:`ReadOptions`.

    ``separator`` defaults to the suffix's (``,`` for .csv, tab for .tsv/.tab); ``separator`` and
    ``encoding`` describe text files and are refused for Parquet.
    """
    kind = file_kind(path)
    if decimal not in DECIMALS:
        raise InputDataError(f"option 'decimal': expected '.' or ',', found {decimal!r}")
    if kind == "parquet":
        for name, value in (("separator", separator), ("encoding", encoding)):
            if value is not None:
                raise InputDataError(
                    f"option {name!r} applies to CSV/TSV files, not to Parquet ({path.name})"
                )
        sep: Separator | None = None
    else:
        if separator is None:
            sep = CSV_SUFFIXES[path.suffix.lower()]
        elif separator in SEPARATORS:
            sep = separator  # type: ignore[assignment]
        else:
            shown = ", ".join(repr(s) for s in SEPARATORS)
            raise InputDataError(
                f"option 'separator': expected one of {shown}, found {separator!r}"
            )
        if sep == decimal:
            raise InputDataError(
                f"option 'decimal': {decimal!r} is also the field separator; "
                "pass another separator (e.g. separator=';')"
            )
    return ReadOptions(
        separator=sep,
        decimal=decimal,  # type: ignore[arg-type]
        markers=_check_markers(missing_markers),
        encoding=None if encoding is None else _check_encoding(encoding),
    )


def _check_markers(markers: Iterable[str]) -> tuple[str, ...]:
    if isinstance(markers, str | bytes):
        raise InputDataError(
            f"option 'missing_markers': expected a list of strings, found the string {markers!r} "
            f"(write [{markers!r}])"
        )
    try:
        extra = list(markers)
    except TypeError:
        raise InputDataError(
            f"option 'missing_markers': expected a list of strings, found {markers!r}"
        ) from None
    for m in extra:
        if not isinstance(m, str):
            raise InputDataError(f"option 'missing_markers': expected strings, found {m!r}")
        if m != m.strip():
            raise InputDataError(
                f"option 'missing_markers': {m!r} has whitespace around it; cells are compared "
                f"after trimming, so write {m.strip()!r}"
            )
        if "\n" in m or "\r" in m or '"' in m:
            raise InputDataError(
                f"option 'missing_markers': {m!r} holds a line break or a quote, "
                "which no cell can equal"
            )
    return tuple(dict.fromkeys((*MISSING_TOKENS, *extra)))


def _check_encoding(encoding: str) -> str:
    if not isinstance(encoding, str):
        raise InputDataError(
            f"option 'encoding': expected a name like 'latin-1', found {encoding!r}"
        )
    try:
        info = codecs.lookup(encoding)
        if not getattr(info, "_is_text_encoding", True):  # base64, rot13, zlib...
            raise LookupError(encoding)
    except LookupError:
        raise InputDataError(
            f"option 'encoding': unknown text encoding {encoding!r} (e.g. 'utf-8', 'latin-1', "
            "'cp1252', 'utf-16')"
        ) from None
    return info.name
